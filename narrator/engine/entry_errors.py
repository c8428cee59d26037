"""Unusual values that are unusual: surprising for the shape the data have, and probable entry errors.

=============================  ==================================================
Name                           What it does
=============================  ==================================================
:func:`unusual_values`         Findings -> :class:`~narrator.findings.Unusual`
:func:`entry_error_reasons`    why one far-out value looks like a slip of typing
``INNER_RATE``, ``FAR_RATE``   shares of normal values beyond Tukey's fences
=============================  ==================================================

Everything here reads the findings only (the outlier rule's fences, its listed far-out values
and rows, the median and percentiles), so the in-memory and the stream engines give the same
answer.

**Surprising for the shape.** An outlier rule's list holds the ordinary tail too: of normal
values, 0.70 % lie beyond Tukey's inner fences Q1 - 1.5 IQR and Q3 + 1.5 IQR (``INNER_RATE``
= 2 (1 - Phi(4 z_0.75)), z_0.75 = 0.6745) and 2.3 per million beyond the far-out fences
at 3 IQR (``FAR_RATE`` = 2 (1 - Phi(7 z_0.75))); Tukey 1977 for the fences, the rates computed
from the normal distribution. The skew-adjusted boxplot was built to flag about the same share
of a skewed distribution as Tukey's rule flags of a normal one (Hubert & Vandervieren 2008,
*CSDA* 52, from memory), and we take the same two rates for it (our approximation). So:

- the values beyond the far-out fences stand out when a sample of this size would rarely show
  that many (P(X >= count) < ``SURPRISE_P`` = 0.05 for X ~ Binomial(n, FAR_RATE));
- there are *more values beyond the inner fences than the shape predicts* (``excess``) when
  P(X >= count) < ``EXCESS_P`` = 0.001 for X ~ Binomial(n, INNER_RATE) and the count is at
  least twice the expected one (our thresholds: a one-sided binomial test at a strict level,
  and a size that matters).

Tukey's fences chosen by hand for clearly skewed data (where the automatic choice is the
skew-adjusted rule) do not fit its shape: no value is then said to stand out (reason
``rule_ignores_skew``). The
modified z-score has no far-out band (``no_far_band``); the generalized ESD test already judges
against the size of the sample, so its flagged values are the ones that stand out.

**Probable entry errors.** A value beyond the far-out fence (or flagged by the ESD test) whose
size a slip of typing explains (our rules, after the common checks of data cleaning; the
ten-times rule is common practice):

- ``ten_times_median`` / ``tenth_of_median``: at least ``TEN_TIMES`` (10) times the median, or at
  most a tenth of it;
- ``decimal_shift``: moving the decimal point 1 to 3 places (dividing a high value, multiplying
  a low one, by 10, 100 or 1000) lands it between P10 and P90 of the values, among the typical
  ones: 1240 where the typical values are near 124.

Both need positive values (a ratio scale: every value and the median above 0). An entry error
is ``probable``; when the bulk of the data leans towards the value's side (the medcouple, a
robust skewness that a few extreme values cannot move (Brys, Hubert & Struyf 2004), beyond
``ROBUST_NEAR_ZERO`` = 0.1 towards it, the shape rule's own bound), a long tail can hold such
values for real (large gifts among small ones) and it is only ``possible``. When more
than ``MAX_ENTRY_ERRORS`` (3) or 0.5 % of the values qualify, it is a pattern (perhaps another
unit), not a few slips: the reason is ``many``, and the values are still listed.
"""

from __future__ import annotations

import math
from statistics import NormalDist

from narrator.engine.distributions import binomial_sf
from narrator.engine.shape import ROBUST_NEAR_ZERO, is_clearly_skewed
from narrator.findings import EntryError, Findings, Unusual

_Z75 = NormalDist().inv_cdf(0.75)
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


def unusual_values(findings: Findings) -> Unusual:
    """The values that stand out for the data's shape, and the probable entry errors among them."""
    flagged = findings.outliers
    if flagged is None or flagged.note == "not_run_too_few" or findings.center is None:
        return Unusual(fence_rule=None if flagged is None else flagged.rule, reason="not_run",
                       entry_error_reason="not_checked")
    n = findings.n
    rule = flagged.rule
    if rule == "modified-z":
        return Unusual(fence_rule=rule, reason="no_far_band", count_beyond_fences=flagged.count,
                       entry_error_reason="not_checked")
    if rule == "esd":
        values, rows = flagged.values, flagged.rows
        surprising = bool(values)
        base = dict(fence_rule=rule, reason="computed", count_far_out=flagged.count, far_out_surprising=surprising,
                    values=values, rows=rows, complete=flagged.complete, count_beyond_fences=flagged.count)
    else:
        values, rows = flagged.far_out_values, flagged.far_out_rows
        count = len(values)
        expected = n * FAR_RATE
        surprising = count > 0 and binomial_sf(count - 1, n, FAR_RATE) < SURPRISE_P
        reason = "computed"
        if rule == "tukey" and flagged.chosen_by == "user" and is_clearly_skewed(findings.shape):
            surprising, reason = False, "rule_ignores_skew"
        inner_expected = n * INNER_RATE
        excess_p = binomial_sf(flagged.count - 1, n, INNER_RATE) if flagged.count else 1.0
        excess = (reason == "computed" and excess_p < EXCESS_P and flagged.count >= EXCESS_RATIO * inner_expected)
        base = dict(
            fence_rule=rule, reason=reason, far_lower_fence=flagged.far_lower_fence,
            far_upper_fence=flagged.far_upper_fence, count_far_out=count, expected_far_out=expected,
            far_out_surprising=surprising, values=values if surprising else (), rows=rows if surprising else (),
            complete=_far_out_complete(flagged), count_beyond_fences=flagged.count,
            expected_beyond_fences=inner_expected, excess=excess, excess_p=excess_p,
        )
    errors, error_reason = _entry_errors(findings, values, rows)
    return Unusual(**base, entry_errors=errors[:LISTED_ENTRY_ERRORS], entry_error_count=len(errors),
                   entry_error_reason=error_reason)


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


def _entry_errors(findings: Findings, values, rows) -> tuple[tuple[EntryError, ...], str]:
    spread, center = findings.spread, findings.center
    median = center.median
    if spread is None or not (spread.min > 0 and median > 0):
        return (), "not_positive"
    medcouple = findings.shape.medcouple or 0.0
    found = []
    for value, row in zip(values, rows, strict=True):
        reasons, suggested, places = entry_error_reasons(value, median, spread.p10, spread.p90)
        if reasons:
            leaning = medcouple > ROBUST_NEAR_ZERO if value > median else medcouple < -ROBUST_NEAR_ZERO
            strength = "possible" if leaning else "probable"
            found.append(EntryError(value=value, row=row, reasons=reasons, ratio_to_median=value / median,
                                    suggested=suggested, shift_digits=places, strength=strength))
    if not found:
        return (), "none_found"
    limit = max(MAX_ENTRY_ERRORS, math.ceil(MAX_ENTRY_ERROR_SHARE * findings.n))
    return tuple(found), ("many" if len(found) > limit else "found")
