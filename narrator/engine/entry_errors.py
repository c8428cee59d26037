"""Unusual values that are unusual: surprising for the shape the data have, and probable entry errors.

=============================  ==================================================
Name                           What it does
=============================  ==================================================
:func:`unusual_values`         Findings -> :class:`~narrator.findings.Unusual`
:func:`fitted_shape`           the normal or lognormal shape fitted to the quartiles
:class:`FittedShape`           a fitted shape's tail probabilities
:func:`entry_error_reasons`    why one far-out value looks like a slip of typing
:func:`strong_slip`            whether that evidence is strong enough to call it probable
:func:`values_are_money`       whether the findings' values are money (unit or cell marks)
:func:`shared_values`          far-out values that many values hold: no stray entries
``INNER_RATE``, ``FAR_RATE``   shares of normal values beyond Tukey's fences
=============================  ==================================================

Everything here reads the findings only (the outlier rule's fences, its listed far-out values
and rows, the median and percentiles), so the in-memory and the stream engines give the same
answer.

**Surprising for the shape.** An outlier rule's list holds the ordinary tail too. So the
values beyond the rule's far-out fences are judged against a shape fitted to the bulk of the
data, by its quartiles, which a few extreme values cannot move (our rule; the fits are the
textbook quantile matches):

- ``lognormal`` for clearly right-skewed positive data: mu = (ln Q1 + ln Q3) / 2,
  sigma = (ln Q3 - ln Q1) / (2 z_0.75), z_0.75 = 0.6745 (the quartiles of a lognormal are
  exp(mu -/+ z_0.75 sigma), so both quartiles are matched);
- ``normal`` otherwise (symmetric or two-peaked data): mu = (Q1 + Q3) / 2, sigma = IQR / (2 z_0.75);
- none for clearly left-skewed data or an IQR of 0 (``no_fitted_shape``): no value is then
  said to stand out;
- none when the lowest or the highest value is a spike the fitted shape cannot follow
  (``no_fitted_shape``, :func:`spike_at_an_end`): the values at that one value (no visit, no claim, a
  full score) outnumber what the shape matched to the quartiles gives the values recorded there (one
  recording step wide, 1 for whole numbers) by at least ``SHARED_SHARE`` (5 %) of all the values, and
  a one-sided binomial test of that count against the shape's share gives p < ``EXCESS_P`` (the test
  and level of the excess below). Such a shape is not the data's shape: how many values it puts
  beyond the fences, and which values it finds surprising, say nothing about these data, so no
  expected count is given and no value is said to stand out (our rule; the one place it is decided,
  for every engine, the memo and the full report);
- none for fewer than ``MIN_FOR_FIT`` (20) values (``too_few``): four quartile-matched values say
  too little about a shape to call a value surprising or ordinary for it (the same 20 below which
  the shape and the texts hedge, narrator.engine.shape; common practice). The rule's own list
  stays; no value is said to stand out or to be ordinary, and no value is called a possible or
  probable entry error (``entry_error_reason`` ``not_checked``): the memo names the rule's values
  with their rows, to be checked.

A far-out value *stands out* when a value at least that extreme is expected less than
``SURPRISE_P`` = 0.05 times in a sample of this size under the fitted shape
(n P(X >= x) < 0.05 on the high side, n P(X <= x) on the low side). There are *more values
beyond the inner fences than the shape predicts* (``excess``) when, with p the fitted shape's
share beyond them, P(X >= count) < ``EXCESS_P`` = 0.001 for X ~ Binomial(n, p) and the count is
at least twice n p (a one-sided binomial test at a strict level, and a size that matters).
For reference, a normal shape puts 0.70 % beyond Tukey's inner fences and 2.3 per million
beyond the far-out ones (``INNER_RATE``, ``FAR_RATE``; Tukey 1977, computed from the normal
distribution). Tukey's fences chosen by hand for clearly skewed data (where the automatic
choice is the skew-adjusted rule) do not fit its shape (reason ``rule_ignores_skew``): no value
is said to stand out. The modified z-score has no far-out band (``no_far_band``); the
generalized ESD test already judges against the size of the sample, so its flagged values are
the ones that stand out.

**Shared values.** A far-out value that at least ``SHARED_SHARE`` (5 %) of the values hold, three at
least (:func:`shared_values`), is a feature of the data (a cap, a common amount, a code), not a stray
entry: it is neither said to stand out nor checked as an entry error; ``Unusual.shared`` gives it with
its count, and the memo says its share (our rule).

**Probable entry errors.** A far-out value (or one flagged by the ESD test) whose size a slip
of typing explains (our rules, after the common checks of data cleaning; the ten-times rule is
common practice) is a *candidate*:

- ``ten_times_median`` / ``tenth_of_median``: at least ``TEN_TIMES`` (10) times the median, or at
  most a tenth of it;
- ``decimal_shift``: moving the decimal point 1 to 3 places (dividing a high value, multiplying
  a low one, by 10, 100 or 1000) lands it between P10 and P90 of the values, among the typical
  ones: 1240 where the typical values are near 124.

Both need positive values (a ratio scale: every value and the median above 0). A candidate is a
*probable* entry error only when the evidence is strong (:func:`strong_slip`, one rule for every
kind of data, our rule):

1. a digit shift: the value moved 1 to 3 places lands in the middle half of the values
   (between Q1 and Q3) *on a value the data could hold* (with no more decimals than the data
   are recorded with: 1240 for 124, 54750 for 54.75 in cents, never 158 whole days for 15.8),
   so it is 10, 100 or 1000 times a plausible typical value; a value that is only ten times the
   median is not enough (a long tail of large values reaches that far);
2. it stands out for the fitted shape (above), and, for right-skewed data (a lognormal fit) or
   money (:func:`values_are_money`), it lies beyond the far-out fence *on the log scale*: ln x
   above ln Q3 + 3 (ln Q3 - ln Q1), or below ln Q1 - 3 (ln Q3 - ln Q1) (Tukey's far-out fences,
   ``LOG_FAR_K`` = 3, applied to the logarithms). In a long right tail large values are ordinary:
   only one far beyond what the tail reaches on its own scale is called a slip;
3. the values are not money (:func:`values_are_money`). Large amounts are often real (a
   grant, a claim, a purchase), and a round amount such as 250,000 among awards near 2,500 is
   what a real large award looks like as much as a slip, so an amount of money is at most a
   *possible* entry error: the memo lists it with its row and asks for it to be checked, and
   never calls it a typing error (our rule, a caution for readers who will act on the words).

Every other candidate is a ``possible`` entry error: the memo asks for it to be checked against
the source records, it does not judge it. Without a fitted shape every candidate is only
possible. Large gifts among small ones in a long right tail are what the lognormal shape
predicts, so they are not called errors. When more than ``MAX_ENTRY_ERRORS`` (3) or 0.5 % of
the values are probable, it is a pattern (perhaps another unit), not a few slips: the reason is
``many``, and the values are still listed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from statistics import NormalDist

from narrator.engine.distributions import binomial_sf
from narrator.engine.shape import is_clearly_skewed
from narrator.findings import EntryError, Findings, Unusual

_NORMAL = NormalDist()
_Z75 = _NORMAL.inv_cdf(0.75)
INNER_RATE = 2.0 * (1.0 - NormalDist().cdf(4.0 * _Z75))  # 0.00698
FAR_RATE = 2.0 * NormalDist().cdf(-7.0 * _Z75)  # 2.3e-6
SURPRISE_P = 0.05
EXCESS_P = 0.001
EXCESS_RATIO = 2.0
TEN_TIMES = 10.0
DECIMAL_PLACES = (1, 2, 3)
MAX_ENTRY_ERRORS = 3
MAX_ENTRY_ERROR_SHARE = 0.005
LISTED_ENTRY_ERRORS = 20
LOG_FAR_K = 3.0
MIN_FOR_FIT = 20
SHARED_SHARE = 0.05  # a far-out value that 5 % of the values hold (3 at least) is shared, no stray entry (our rule)
SHARED_MIN_COUNT = 3


def entry_error_reasons(value: float, median: float, p10: float, p90: float) -> tuple[tuple[str, ...], float | None,
                                                                                       int | None]:
    """(reasons, suggested value, places moved) for one far-out value; no reasons when nothing fits.

    >>> entry_error_reasons(1240.0, 124.0, 112.0, 137.0)
    (('ten_times_median', 'decimal_shift'), 124.0, 1)
    >>> entry_error_reasons(160.0, 124.0, 112.0, 137.0)
    ((), None, None)
    """
    if not (value > 0 and median > 0):
        return (), None, None
    reasons = []
    high = value > median
    if high and value >= TEN_TIMES * median:
        reasons.append("ten_times_median")
    if not high and value * TEN_TIMES <= median:
        reasons.append("tenth_of_median")
    for places in DECIMAL_PLACES:
        moved = value / 10**places if high else value * 10**places
        if p10 <= moved <= p90:
            reasons.append("decimal_shift")
            return tuple(reasons), moved, places if high else -places
    return tuple(reasons), None, None


def values_are_money(findings: Findings) -> bool:
    """Whether the values are money as far as the findings tell: an ISO 4217 unit, or currency marks in the cells.

    >>> from narrator.engine.describe import describe
    >>> values_are_money(describe([1.0, 2.0, 3.0], unit="EUR")), values_are_money(describe([1.0, 2.0], unit="days"))
    (True, False)
    """
    if findings.provenance.get("currency_symbols"):
        return True
    unit = findings.variable.unit
    if unit and len(unit) == 3 and unit.isalpha() and unit.isupper():
        from babel.numbers import list_currencies

        return unit in list_currencies()
    return False


def strong_slip(value: float, q1: float, q3: float, *, stands_out: bool, log_scale: bool,
                decimals: int | None = None) -> bool:
    """Whether a far-out value is a *probable* slip of typing (the module docstring's rule).

    A digit shift of 1 to 3 places lands it between ``q1`` and ``q3``, on a value with at most
    ``decimals`` decimals (the data's own; None: not checked); it stands out for the fitted
    shape; and, on the log scale (skewed data, money), it lies beyond the far-out fence of the
    logarithms.

    >>> strong_slip(1240.0, 118.0, 130.0, stands_out=True, log_scale=False, decimals=0)
    True
    >>> strong_slip(146.0, 16.0, 31.0, stands_out=True, log_scale=True)  # a long tail reaches that far
    False
    >>> strong_slip(158.0, 12.0, 16.0, stands_out=True, log_scale=False, decimals=0)  # 15.8 is no whole day
    False
    """
    if not (stands_out and value > 0 and q1 > 0 and q3 >= q1):
        return False
    high = value > q3

    def holdable(number: float) -> bool:
        if decimals is None:
            return True
        scaled = number * 10**decimals
        return abs(scaled - round(scaled)) <= 1e-6 * max(1.0, abs(scaled))

    moved = (value / 10**places if high else value * 10**places for places in DECIMAL_PLACES)
    if not any(q1 <= number <= q3 and holdable(number) for number in moved):
        return False
    if not log_scale:
        return True
    low_log, high_log = math.log(q1), math.log(q3)
    reach = LOG_FAR_K * (high_log - low_log)
    return math.log(value) > high_log + reach if high else math.log(value) < low_log - reach


@dataclass(frozen=True, slots=True)
class FittedShape:
    """A shape fitted to the data's quartiles: its name and its two tail probabilities."""

    name: str  # "normal" or "lognormal"
    mu: float
    sigma: float

    def upper_tail(self, value: float) -> float:
        """P(X >= value)."""
        if self.name == "lognormal":
            return 1.0 if value <= 0 else _NORMAL.cdf(-(math.log(value) - self.mu) / self.sigma)
        return _NORMAL.cdf(-(value - self.mu) / self.sigma)

    def lower_tail(self, value: float) -> float:
        """P(X <= value)."""
        if self.name == "lognormal":
            return 0.0 if value <= 0 else _NORMAL.cdf((math.log(value) - self.mu) / self.sigma)
        return _NORMAL.cdf((value - self.mu) / self.sigma)

    def beyond(self, lower: float | None, upper: float | None) -> float:
        """The share of the shape below ``lower`` plus above ``upper`` (a None fence adds nothing)."""
        return (0.0 if lower is None else self.lower_tail(lower)) + (0.0 if upper is None else self.upper_tail(upper))


def fitted_shape(findings: Findings) -> FittedShape | None:
    """The shape the module docstring fits to the quartiles, or None (left-skewed data, an IQR of 0, a spike at
    an end the shape cannot follow).

    >>> from narrator.engine.describe import describe
    >>> fitted_shape(describe([0.0] * 12 + [1.0, 2, 2, 3, 3, 3, 4, 4, 5, 6, 7, 8])) is None  # half the values are 0
    True
    """
    fit = _quartile_fit(findings)
    return None if fit is None or spike_at_an_end(findings, fit) else fit


def spike_at_an_end(findings: Findings, fit: FittedShape) -> bool:
    """Whether the lowest or the highest value holds more of the values than ``fit`` can follow (the module
    docstring's rule: at least 5 % of all the values more than the shape gives one recording step there, and
    p < 0.001 for that count, one-sided binomial).

    >>> from narrator.engine.describe import describe
    >>> spike_at_an_end(describe([1.0, 2, 3, 4, 5, 6, 7, 8, 9, 10] * 3), FittedShape("normal", 5.5, 3.3))
    False
    """
    counts, spread, n = findings.order_counts, findings.spread, findings.n
    if counts is None or not n:
        return False
    half_step = 0.5 * 10.0 ** -findings.variable.decimals
    for value, count in ((spread.min, counts.at_min), (spread.max, counts.at_max)):
        held = min(max(fit.upper_tail(value - half_step) - fit.upper_tail(value + half_step), 0.0), 1.0)
        if count / n - held >= SHARED_SHARE and binomial_sf(count - 1, n, held) < EXCESS_P:
            return True
    return False


def _quartile_fit(findings: Findings) -> FittedShape | None:
    """The normal or lognormal shape matched to the quartiles (module docstring), before the spike check.

    >>> from narrator.engine.describe import describe
    >>> fitted_shape(describe([1.0, 2, 3, 4, 5, 6, 7, 8, 9, 10])).name
    'normal'
    """
    spread, center, shape = findings.spread, findings.center, findings.shape
    if spread is None or center is None or not spread.iqr > 0:
        return None
    clearly = is_clearly_skewed(shape)
    if clearly and shape.label == "right-skewed":
        if not (spread.min > 0 and spread.q1 > 0):
            return None
        low, high = math.log(spread.q1), math.log(spread.q3)
        sigma = (high - low) / (2.0 * _Z75)
        return FittedShape("lognormal", (low + high) / 2.0, sigma) if sigma > 0 else None
    if clearly:
        return None
    return FittedShape("normal", (spread.q1 + spread.q3) / 2.0, spread.iqr / (2.0 * _Z75))


def _stands_out(fit: FittedShape | None, value: float, median: float, n: int) -> bool:
    if fit is None:
        return False
    tail = fit.upper_tail(value) if value > median else fit.lower_tail(value)
    return n * tail < SURPRISE_P


def unusual_values(findings: Findings) -> Unusual:
    """The values that stand out for the data's shape, and the probable entry errors among them."""
    flagged = findings.outliers
    if flagged is None or flagged.note == "not_run_too_few" or findings.center is None:
        return Unusual(fence_rule=None if flagged is None else flagged.rule, reason="not_run",
                       entry_error_reason="not_checked")
    n = findings.n
    rule = flagged.rule
    median = findings.center.median
    if rule == "modified-z":
        return Unusual(fence_rule=rule, reason="no_far_band", count_beyond_fences=flagged.count,
                       entry_error_reason="not_checked")
    fit = fitted_shape(findings) if n >= MIN_FOR_FIT else None
    if n < MIN_FOR_FIT:
        values, rows = flagged.far_out_values, flagged.far_out_rows
        base = dict(fence_rule=rule, reason="too_few", far_lower_fence=flagged.far_lower_fence,
                    far_upper_fence=flagged.far_upper_fence, count_far_out=len(values),
                    complete=_far_out_complete(flagged), count_beyond_fences=flagged.count)
        standing = [False] * len(values)
    elif rule == "esd":
        shared = shared_values(flagged.values, n)
        values, rows = _without_shared(flagged.values, flagged.rows, shared)
        base = dict(fence_rule=rule, reason="computed", fitted_shape=None if fit is None else fit.name,
                    count_far_out=flagged.count, far_out_surprising=bool(values), values=values, rows=rows,
                    complete=flagged.complete, count_beyond_fences=flagged.count, shared=shared)
        standing = [True] * len(values)
    else:
        shared = shared_values(flagged.far_out_values, n)
        count_far_out = len(flagged.far_out_values)
        values, rows = _without_shared(flagged.far_out_values, flagged.far_out_rows, shared)
        reason = "computed"
        if rule == "tukey" and flagged.chosen_by == "user" and is_clearly_skewed(findings.shape):
            reason = "rule_ignores_skew"
        elif fit is None:
            reason = "no_fitted_shape"
        judged = fit if reason == "computed" else None
        standing = [_stands_out(judged, value, median, n) for value in values]
        shown = [(value, row) for (value, row), out in zip(zip(values, rows, strict=True), standing, strict=True)
                 if out]
        expected_far = expected_inner = excess_p = None
        excess = False
        if judged is not None:
            expected_far = n * judged.beyond(flagged.far_lower_fence, flagged.far_upper_fence)
            inner_rate = min(judged.beyond(flagged.lower_fence, flagged.upper_fence), 1.0)
            expected_inner = n * inner_rate
            excess_p = binomial_sf(flagged.count - 1, n, inner_rate) if flagged.count else 1.0
            excess = excess_p < EXCESS_P and flagged.count >= EXCESS_RATIO * expected_inner
        base = dict(
            fence_rule=rule, reason=reason, fitted_shape=None if judged is None else judged.name,
            far_lower_fence=flagged.far_lower_fence, far_upper_fence=flagged.far_upper_fence,
            count_far_out=count_far_out, expected_far_out=expected_far, far_out_surprising=bool(shown),
            values=tuple(value for value, _ in shown), rows=tuple(row for _, row in shown),
            complete=_far_out_complete(flagged), count_beyond_fences=flagged.count,
            expected_beyond_fences=expected_inner, excess=excess, excess_p=excess_p, shared=shared,
        )
    if base["reason"] == "too_few":
        # Too few values to tell a slip from the spread of the data: a small value ten times below the median, or
        # one a decimal shift would move among the others, is as likely an ordinary value of a short sample.
        return Unusual(**base, entry_error_reason="not_checked")
    has_fit = base["reason"] == "computed" and (rule == "esd" or fit is not None)
    errors, error_reason = _entry_errors(findings, values, rows, standing, has_fit)
    return Unusual(**base, entry_errors=errors[:LISTED_ENTRY_ERRORS], entry_error_count=len(errors),
                   entry_error_reason=error_reason,
                   entry_error_probable_count=sum(error.strength == "probable" for error in errors))


def shared_values(values, n: int) -> tuple[tuple[float, int], ...]:
    """(value, count) of the far-out ``values`` that many values share: at least ``SHARED_SHARE`` of the ``n``
    values and ``SHARED_MIN_COUNT`` of them hold it. A value that one in twenty cases share is a feature of the
    data (a cap, a common amount, a code), not a stray entry: it is not said to stand out or to be a typing
    error, and the memo gives its share instead (our rule). Counted among the listed far-out values (every
    far-out value is listed, up to ``LISTED_PER_SIDE`` on each side), so a count is never above the true one.

    >>> shared_values((99.0, 99.0, 99.0, 120.0), 40)
    ((99.0, 3),)
    """
    counts: dict[float, int] = {}
    for value in values:
        counts[value] = counts.get(value, 0) + 1
    return tuple((value, count) for value, count in sorted(counts.items())
                 if count >= SHARED_MIN_COUNT and count >= SHARED_SHARE * n)


def _without_shared(values, rows, shared) -> tuple[tuple, tuple]:
    held = {value for value, _ in shared}
    kept = [(value, row) for value, row in zip(values, rows, strict=True) if value not in held]
    return tuple(value for value, _ in kept), tuple(row for _, row in kept)


def _far_out_complete(flagged) -> bool:
    """Whether every far-out value is listed: a side is complete, or lists some value that is not far out."""
    if flagged.complete:
        return True
    far = set(zip(flagged.far_out_values, flagged.far_out_rows, strict=True))
    low = list(zip(flagged.low_values, flagged.rows[: flagged.listed_low], strict=True))
    high = list(zip(flagged.high_values, flagged.rows[flagged.listed_low :], strict=True))
    low_ok = len(low) == flagged.count_low or any(item not in far for item in low)
    high_ok = len(high) == flagged.count_high or any(item not in far for item in high)
    return low_ok and high_ok


def _entry_errors(findings: Findings, values, rows, standing, has_fit: bool) -> tuple[tuple[EntryError, ...], str]:
    spread, center = findings.spread, findings.center
    median = center.median
    if spread is None or not (spread.min > 0 and median > 0):
        return (), "not_positive"
    found = []
    fit = fitted_shape(findings) if has_fit else None
    money = values_are_money(findings)
    log_scale = (fit is not None and fit.name == "lognormal") or money
    for value, row, out in zip(values, rows, standing, strict=True):
        if has_fit and not out:
            continue  # the fitted shape expects a value this far out: no slip of typing is needed to explain it
        reasons, suggested, places = entry_error_reasons(value, median, spread.p10, spread.p90)
        if reasons:
            strong = has_fit and not money and strong_slip(
                value, spread.q1, spread.q3, stands_out=out, log_scale=log_scale,
                decimals=max(0, int(findings.variable.decimals)))
            found.append(EntryError(value=value, row=row, reasons=reasons, ratio_to_median=value / median,
                                    suggested=suggested, shift_digits=places,
                                    strength="probable" if strong else "possible"))
    if not found:
        return (), "none_found"
    probable = sum(error.strength == "probable" for error in found)
    limit = max(MAX_ENTRY_ERRORS, math.ceil(MAX_ENTRY_ERROR_SHARE * findings.n))
    return tuple(found), ("many" if probable > limit else "found")
