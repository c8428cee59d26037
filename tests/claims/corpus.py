"""A generated corpus of data sets (fixed seeds) for the claim checker: every family of data a report meets.

Each :class:`Case` holds the raw column as a user would give it (NaN for a blank cell, infinities,
values outside a declared range), the options it is described with, and, for two families, the
groups of each value or the earlier build of a refreshed column. Everything is generated from
``numpy.random.default_rng(seed)`` with the seed recorded, so a counter-example names its case.

==================  ====================================================================
Family              What it is
==================  ====================================================================
zero_inflated       counts, 35 to 90 % of them 0 (visits per client), a lower bound of 0 half the time
heavy_ties          scores on a 3- to 7-point scale, often with a declared valid range
heaped              whole numbers where most were rounded to multiples of 5 or 10
mixture2            two normal components, well or barely apart
mixture3            three normal components
money               lognormal amounts in cents with one to three huge gifts, in USD
typo10x             a symmetric column with one value typed ten times too large
tiny                1 to 12 values of assorted kinds
constant            every value the same, some blanks
population          a whole population (``population=True``), symmetric or skewed
ceiling             scores near 100 with a long tail of low ones, bound or valid maximum 100
missing_codes       waits with a repeated code (-99, 999), or a lone 99 among real values in the 90s
grouped             two to four groups, alike or with one shifted, some too small to show
refresh             two builds of one column: the same data, a shift, a wider spread, more rows
==================  ====================================================================
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

FAMILIES = ("zero_inflated", "heavy_ties", "heaped", "mixture2", "mixture3", "money", "typo10x", "tiny",
            "constant", "population", "ceiling", "missing_codes", "grouped", "refresh")


@dataclass
class Case:
    family: str
    seed: int
    values: np.ndarray  # the raw column: NaN for missing, maybe infinities and values outside the range
    options: dict = field(default_factory=dict)  # describe() keyword arguments
    currency: str | None = None
    labels: list | None = None  # grouped: the group of each raw value
    previous: np.ndarray | None = None  # refresh: the earlier build's raw column
    previous_labels: list | None = None

    @property
    def name(self) -> str:
        return f"{self.family}#{self.seed}"


def _with_blanks(rng, values: np.ndarray, share: float) -> np.ndarray:
    values = values.astype(float).copy()
    if share > 0 and values.size > 3:
        blanks = rng.random(values.size) < share
        values[blanks] = np.nan
    return values


def zero_inflated(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(15, 400))
    zeros = rng.uniform(0.35, 0.9)
    positive = rng.poisson(rng.uniform(1, 8), n) + 1
    values = np.where(rng.random(n) < zeros, 0, positive).astype(float)
    options = {"lower_bound": 0.0} if rng.random() < 0.5 else {}
    return _with_blanks(rng, values, 0.03 if rng.random() < 0.3 else 0), options


def heavy_ties(rng) -> tuple[np.ndarray, dict]:
    levels = int(rng.integers(3, 8))
    n = int(rng.integers(20, 400))
    weights = rng.dirichlet(np.full(levels, rng.uniform(0.4, 3)))
    values = rng.choice(np.arange(1, levels + 1), size=n, p=weights).astype(float)
    options = {"valid_min": 1.0, "valid_max": float(levels)} if rng.random() < 0.6 else {}
    if options and rng.random() < 0.4:
        values[rng.integers(0, n)] = float(levels + 3)  # a value outside the valid range
    return values, options


def heaped(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(30, 500))
    exact = rng.gamma(rng.uniform(2, 5), rng.uniform(5, 20), n).round()
    base = 10.0 if rng.random() < 0.5 else 5.0
    rounded = np.round(exact / base) * base
    values = np.where(rng.random(n) < rng.uniform(0.5, 0.9), rounded, exact)
    return values, {"lower_bound": 0.0}


def mixture2(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(40, 500))
    sd = rng.uniform(2, 10)
    gap = rng.uniform(1.5, 7) * sd
    weight = rng.uniform(0.2, 0.8)
    centre = rng.uniform(20, 200)
    values = np.where(rng.random(n) < weight, rng.normal(centre, sd, n), rng.normal(centre + gap, sd, n))
    return values.round(int(rng.integers(0, 2))), {}


def mixture3(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(60, 500))
    sd = rng.uniform(2, 6)
    centres = rng.uniform(30, 60) + np.cumsum(rng.uniform(3, 8, 3)) * sd
    which = rng.choice(3, size=n, p=rng.dirichlet([3, 3, 3]))
    return rng.normal(centres[which], sd).round(1), {}


def money(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(20, 400))
    values = rng.lognormal(rng.uniform(3, 6), rng.uniform(0.6, 1.5), n)
    huge = int(rng.integers(1, 4))
    values[rng.choice(n, huge, replace=False)] *= rng.uniform(20, 100, huge)
    return values.round(2), {"lower_bound": 0.0}


def typo10x(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(20, 300))
    centre = rng.uniform(50, 500)
    values = rng.normal(centre, centre * rng.uniform(0.05, 0.2), n).round(int(rng.integers(0, 2)))
    values[int(rng.integers(0, n))] *= 10
    return values, {}


def tiny(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(1, 13))
    kind = int(rng.integers(0, 4))
    if kind == 0:
        values = rng.normal(50, 5, n).round()
    elif kind == 1:
        values = rng.lognormal(2, 1, n).round(1)
    elif kind == 2:
        values = rng.integers(0, 4, n).astype(float)
    else:
        values = np.array([49.0, 51.0] * 6)[:n]
    options = {"lower_bound": 0.0} if kind in (1, 2) else {}
    if rng.random() < 0.2:
        options["population"] = True
    return values, options


def constant(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(2, 60))
    values = np.full(n, float(rng.choice([0.0, 7.0, 12.5, 100.0])))
    return _with_blanks(rng, values, 0.1 if rng.random() < 0.5 else 0), {}


def population(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(10, 300))
    values = rng.normal(100, 15, n) if rng.random() < 0.5 else rng.gamma(2, 10, n)
    return values.round(1), {"population": True}


def ceiling(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(20, 400))
    values = np.clip(100 - rng.gamma(rng.uniform(0.6, 2), rng.uniform(3, 12), n), 0, 100).round()
    options = {"upper_bound": 100.0} if rng.random() < 0.5 else {"valid_max": 100.0}
    return values, options


def missing_codes(rng) -> tuple[np.ndarray, dict]:
    n = int(rng.integers(40, 300))
    waits = rng.gamma(2.0, 6.0, n).round()
    kind = int(rng.integers(0, 4))
    if kind == 0:
        values = np.append(waits, [-99.0] * int(rng.integers(2, 9)))
    elif kind == 1:  # a lone 99 among real long waits in the 80s and 90s
        values = np.concatenate([waits, rng.uniform(80, 98, int(rng.integers(2, 8))).round(), [99.0]])
    elif kind == 2:
        values = np.append(waits, [999.0] * int(rng.integers(2, 6)))
    else:
        values = np.append(waits, [99.0, 99.0])  # two 99s far out
    return rng.permutation(values), {"lower_bound": 0.0} if kind == 1 else {}


GENERATORS = {
    "zero_inflated": zero_inflated, "heavy_ties": heavy_ties, "heaped": heaped, "mixture2": mixture2,
    "mixture3": mixture3, "money": money, "typo10x": typo10x, "tiny": tiny, "constant": constant,
    "population": population, "ceiling": ceiling, "missing_codes": missing_codes,
}


def grouped(rng) -> Case:
    groups = int(rng.integers(2, 5))
    names = [f"Office {chr(ord('A') + k)}" if rng.random() < 0.5 else str(k + 1) for k in range(groups)]
    sizes = rng.integers(8, 80, groups)
    shift = rng.uniform(0, 4) if rng.random() < 0.5 else 0.0  # alike groups, or one shifted
    skewed = rng.random() < 0.5
    values, labels = [], []
    for k, (label, size) in enumerate(zip(names, sizes, strict=True)):
        base = rng.gamma(2.0, 5.0, size) if skewed else rng.normal(30, 4, size)
        scale = 5.0 if skewed else 4.0
        values.append((base + (shift * scale if k == groups - 1 else 0)).round(1))
        labels.extend([label] * int(size))
    return Case("grouped", 0, np.concatenate(values), {"lower_bound": 0.0} if skewed else {}, labels=labels)


def refresh(rng) -> Case:
    n = int(rng.integers(30, 300))
    skewed = rng.random() < 0.5
    old = (rng.gamma(2.0, 8.0, n) if skewed else rng.normal(40, 6, n)).round(1)
    kind = int(rng.integers(0, 4))
    extra = (rng.gamma(2.0, 8.0, int(rng.integers(5, 60))) if skewed else rng.normal(40, 6, 30)).round(1)
    if kind == 0:
        new = old.copy()
    elif kind == 1:
        new = np.concatenate([old, extra]) + rng.uniform(0.2, 1.5) * (8.0 if skewed else 6.0)
    elif kind == 2:
        centre = np.median(old)
        new = (centre + (np.concatenate([old, extra]) - centre) * rng.uniform(1.3, 2.0)).round(1)
    else:
        new = np.concatenate([old, extra])
    options = {"lower_bound": 0.0} if skewed else {}
    if skewed:
        new = np.clip(new, 0, None)
    case = Case("refresh", 0, new.round(1), options, previous=old)
    if rng.random() < 0.4:  # a grouped refresh: each value's site, the same sites in both builds
        sites = ["North", "South"]
        case.labels = [sites[int(k)] for k in rng.integers(0, 2, new.size)]
        case.previous_labels = [sites[int(k)] for k in rng.integers(0, 2, old.size)]
    return case


def make_case(family: str, seed: int) -> Case:
    rng = np.random.default_rng(seed)
    if family == "grouped":
        case = grouped(rng)
    elif family == "refresh":
        case = refresh(rng)
    else:
        values, options = GENERATORS[family](rng)
        case = Case(family, 0, values, options)
        if family == "money":
            case.currency = "USD"
        if family not in ("tiny", "population") and rng.random() < 0.15:
            case.options["outlier_rule"] = str(rng.choice(["tukey", "adjusted", "modified-z", "esd"]))
    case.seed = seed
    return case


def corpus(per_family: int, first_seed: int = 120_000) -> list[Case]:
    """``per_family`` cases of every family; case k of family f has seed first_seed + 1000 f + k."""
    return [make_case(family, first_seed + 1000 * index + k)
            for index, family in enumerate(FAMILIES) for k in range(per_family)]
