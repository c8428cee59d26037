"""The shape judgement: one label from a fixed vocabulary, with its evidence.

The label combines several signals, because each alone misleads:

==========================  =====================================================
Signal                      Role
==========================  =====================================================
G1 and its SE               strength of skew (Bulmer 1979: |G1| < 0.5 about
                            symmetric, 0.5 to 1 moderate, above 1 strong)
D'Agostino's test p         how firmly the data show any skew at all (n >= 8)
Bowley skewness, medcouple  robust direction: does the bulk of the data lean,
                            or only a few extreme values?
density peaks               how many prominent peaks the kernel estimate shows
bimodality coefficient      (g1^2 + 1) / (g2 + 3 (n-1)^2/((n-2)(n-3))) > 5/9
                            suggests two peaks (Pfister et al. 2013)
histogram peaks             visible peaks across bin widths and offsets
==========================  =====================================================

Rules (our own, documented so the methods text can state them):

1. Fewer than 8 values or no spread: ``undetermined``.
2. Several peaks: the density shows two or more prominent peaks, each holding
   at least 7.5 % of the values (:func:`substantial_peaks`), **and** a
   second signal agrees (bimodality coefficient above 5/9, or every
   histogram in the sensitivity grid shows at least two peaks). Two peaks give
   ``bimodal``, more give ``multimodal``.
3. Otherwise skew. Strength from |G1| by Bulmer's cut points; a skew under
   0.5 is labelled ``slight`` only when the test gives p < 0.05 and both robust
   measures lean the same way, else the label is ``symmetric``. When |G1| is
   0.5 or more but both robust measures are near zero (below 0.1 in size), and so
   is Hinkley's skewness at the 5th and 95th percentiles ((P95 + P5 - 2 M) /
   (P95 - P5), Hinkley 1975, *Biometrika* 62), the skew comes from a few extreme
   values, not the bulk: the label is ``symmetric`` with reason
   ``skew_from_few_values``. (The percentile check is there because the
   quartiles of rounded data can tie into a symmetric picture.)
4. Evidence: ``strong`` when p < 0.001 and the robust measures agree in
   direction, ``moderate`` when p < 0.05, ``weak`` otherwise; with fewer than
   20 values evidence is at most ``moderate``. When the rows are the whole
   population of interest, G1 is the population's own skewness, not an
   estimate, and no test judges it (the methods text says so): evidence is
   ``strong`` when the robust measures agree in direction, else ``moderate``
   (at most ``moderate`` below 20 values, as for a sample), and a skew under
   0.5 is ``symmetric`` (Bulmer's "about symmetric"; ``slight`` needs the test).

"Clearly skewed" (used to choose the outlier rule and the lead measure) means
a skewed label of moderate or strong strength with moderate or strong evidence.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from narrator.engine.clusters import peak_regions
from narrator.findings import BinSensitivity, Density, Shape

BULMER_MODERATE = 0.5
BULMER_STRONG = 1.0
ROBUST_NEAR_ZERO = 0.1
BIMODALITY_THRESHOLD = 5.0 / 9.0
P_STRONG = 0.001
P_MODERATE = 0.05
MIN_FOR_SHAPE = 8  # D'Agostino's test needs n >= 8 (D'Agostino 1970); the phrasing takes it from here
MIN_FOR_STRONG_EVIDENCE = 20
MIN_PEAK_MASS = 0.075  # a peak must hold this share of the values to count (our own cut)
HEAVY_TAIL_KURTOSIS = 1.0  # G2 above this: tails heavier than the normal's (our cut, common practice)


@dataclass(frozen=True, slots=True)
class ShapeSignals:
    n: int
    skewness: float | None
    skewness_se: float | None
    skewness_test_z: float | None
    skewness_test_p: float | None
    bowley: float | None
    medcouple: float | None
    medcouple_method: str
    excess_kurtosis: float | None
    density_peaks: int | None
    bin_sensitivity: BinSensitivity | None
    has_spread: bool
    tail_skewness: float | None = None  # Hinkley's skewness at the 5th and 95th percentiles
    population: bool = False  # the rows are the whole population: no test judges the skew (rule 4)


def bimodality_coefficient(skewness: float | None, kurtosis: float | None, n: int) -> float | None:
    """Sample bimodality coefficient (Pfister et al. 2013) from G1 and G2.

    >>> round(bimodality_coefficient(0.0, -1.2, 10**6), 3)  # a uniform distribution
    0.556
    """
    if skewness is None or kurtosis is None or n < 4:
        return None
    return (skewness**2 + 1) / (kurtosis + 3.0 * (n - 1) ** 2 / ((n - 2) * (n - 3)))


def substantial_peaks(density: Density | None, min_mass: float = MIN_PEAK_MASS) -> int | None:
    """How many of the density's prominent peaks hold at least ``min_mass`` of the values.

    Each peak's share is the area under the curve between the lowest points
    separating it from its neighbours. A small bump far out in a tail (a few
    long waits, a repeated code) is a cluster of unusual values, not a second
    peak of the distribution; the outlier and data-quality checks report it.
    """
    if density is None:
        return None
    if len(density.peaks) < 2:
        return len(density.peaks)
    shares = np.asarray(peak_regions(density)[2])
    if not shares.sum() > 0:
        return 1
    return max(1, int(np.count_nonzero(shares >= min_mass)))


def _sign(value: float | None) -> int:
    if value is None or abs(value) < 1e-12:
        return 0
    return 1 if value > 0 else -1


def classify_shape(signals: ShapeSignals) -> Shape:
    """Apply the documented rules to the signals and return the Shape finding."""
    bc = bimodality_coefficient(signals.skewness, signals.excess_kurtosis, signals.n)
    heavy = signals.excess_kurtosis is not None and signals.excess_kurtosis > HEAVY_TAIL_KURTOSIS

    def build(label: str, strength: str | None, evidence: str, reasons: tuple[str, ...]) -> Shape:
        return Shape(
            label=label,
            strength=strength,
            evidence=evidence,
            reasons=reasons,
            skewness=signals.skewness,
            skewness_se=signals.skewness_se,
            skewness_test_z=signals.skewness_test_z,
            skewness_test_p=signals.skewness_test_p,
            bowley=signals.bowley,
            medcouple=signals.medcouple,
            medcouple_method=signals.medcouple_method,
            excess_kurtosis=signals.excess_kurtosis,
            heavy_tails=heavy,
            density_peaks=signals.density_peaks,
            bimodality_coefficient=bc,
            bin_sensitivity=signals.bin_sensitivity,
            tail_skewness=signals.tail_skewness,
        )

    if not signals.has_spread:
        return build("undetermined", None, "none", ("no_spread",))
    if signals.n < MIN_FOR_SHAPE or signals.skewness is None:
        return build("undetermined", None, "none", ("too_few",))

    reasons: list[str] = []
    sensitivity = signals.bin_sensitivity
    if sensitivity is not None and sensitivity.sensitive:
        reasons.append("bins_change_picture")

    peaks = signals.density_peaks or 0
    if peaks >= 2:
        agree_bc = bc is not None and bc > BIMODALITY_THRESHOLD
        agree_hist = sensitivity is not None and sensitivity.min_peaks >= 2
        if agree_bc or agree_hist:
            reasons.append("density_peaks")
            if agree_bc:
                reasons.append("bimodality_coefficient")
            if agree_hist:
                reasons.append("histogram_peaks")
            evidence = "strong" if agree_bc and agree_hist else "moderate"
            if signals.n < MIN_FOR_STRONG_EVIDENCE:
                evidence = "weak"
            label = "bimodal" if peaks == 2 else "multimodal"
            return build(label, None, evidence, tuple(reasons))
        reasons.append("peaks_not_confirmed")

    g1 = signals.skewness
    p = signals.skewness_test_p
    direction = _sign(g1)
    robust_signs = {_sign(signals.bowley), _sign(signals.medcouple)}
    robust_agree = robust_signs == {direction}
    # "The skew comes from a few far values" needs the body of the data, out to the 5th and 95th
    # percentiles, to be symmetric: the quartiles alone can tie into a symmetric picture (whole-day
    # waits with quartiles 9, 15, 21 from a clearly skewed gamma shape gave Bowley's 0.00).
    robust_near_zero = all(
        value is not None and abs(value) < ROBUST_NEAR_ZERO for value in (signals.bowley, signals.medcouple)
    ) and (signals.tail_skewness is None or abs(signals.tail_skewness) < ROBUST_NEAR_ZERO)

    if signals.population:
        evidence = "strong" if robust_agree else "moderate"
    elif p is not None and p < P_STRONG and robust_agree:
        evidence = "strong"
    elif p is not None and p < P_MODERATE:
        evidence = "moderate"
    else:
        evidence = "weak"
    if signals.n < MIN_FOR_STRONG_EVIDENCE and evidence == "strong":
        evidence = "moderate"

    size = abs(g1)
    if size < BULMER_MODERATE:
        if p is not None and p < P_MODERATE and robust_agree and not signals.population:
            strength = "slight"
        else:
            return build("symmetric", None, evidence, (*reasons, "skew_small"))
    elif robust_near_zero:
        return build("symmetric", None, evidence, (*reasons, "skew_from_few_values"))
    else:
        strength = "moderate" if size < BULMER_STRONG else "strong"

    label = "right-skewed" if direction > 0 else "left-skewed"
    reasons.append("skewness")
    if robust_agree:
        reasons.append("robust_agree")
    else:
        reasons.append("robust_disagree")
    return build(label, strength, evidence, tuple(reasons))


def is_clearly_skewed(shape: Shape) -> bool:
    """A skewed label of moderate or strong strength, with moderate or strong evidence."""
    return (
        shape.label in ("right-skewed", "left-skewed")
        and shape.strength in ("moderate", "strong")
        and shape.evidence in ("moderate", "strong")
    )
