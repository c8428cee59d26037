"""The hedge ladder: a documented, data-driven mapping from the evidence about shape to words.

The engine states a shape label and how firmly the data support it
(``findings.shape.evidence``, reason codes). This module turns that, the
sample size and the agreement between signals into one *hedge level*; the
phrase bank holds one fixed wording per level (and per shape label), so the
same evidence always gets the same words (Kent 1964, "Words of estimative
probability": a word must mean the same degree of certainty every time).

Levels, from the firmest:

==========  ============================================  =====================
Level       When (the first row that applies wins)        Wording (English)
==========  ============================================  =====================
too_few     fewer than 8 values, no spread, or the        "too few values to
            engine's label is ``undetermined``            judge the shape"
unclear     score 0 (see below), or signals disagree      "the shape is unclear"
            with only weak evidence
tentative   score 1, or fewer than 20 values              "may", "seem to"
likely      score 2                                       "probably", "suggest"
clear       score 3                                       plain statement
==========  ============================================  =====================

Score. Start from the engine's evidence (none 0, weak 1, moderate 2,
strong 3) for a skewed or peaked label. For a ``symmetric`` label the
engine's evidence measures the case *for skew*, so the score is read the
other way: no sign of skew (the test gives p >= 0.05, or no test) scores 3;
some sign of skew that the label set aside (``skew_from_few_values`` or a
test p < 0.05) scores 2. Then subtract one for each disagreement between
signals: the robust measures lean another way (``robust_disagree``), or the
histogram's peak count changes with bin width and offset
(``bins_change_picture``) for a label about peaks whose evidence counted every
histogram as agreeing (when some histograms showed fewer peaks, the engine's
evidence is already a level lower for that, and it is not taken off twice).
Fewer than 20 values cap
the level at ``tentative``.

Sources. The IPCC AR5 guidance note on consistent treatment of uncertainties
(Mastrandrea et al. 2010) asks authors to judge confidence from the *amount
of evidence* and the *agreement* between lines of evidence and to use a
fixed, calibrated vocabulary; our score is evidence minus disagreement and
our words are fixed per level. Kent (1964) is the origin of fixed words of
estimative probability. The levels are ordinal, not probabilities: we do not
attach a percentage to any word. The cut points (8 values for any shape
claim, 20 for an unhedged one, one step down per disagreement, p >= 0.05 as
"no sign of skew") are our own choices; 8 is the smallest sample for
D'Agostino's skewness test (D'Agostino 1970, scipy.stats.skewtest) and 20 is
common practice. Nothing at any level implies a cause: the words describe
the values, never why they are so.

==========================  ====================================================
Name                        What it is
==========================  ====================================================
:data:`HEDGE_LEVELS`        the levels, firmest last
:class:`Hedge`              a level and the reason codes that set it
:func:`shape_hedge`         the hedge for the shape statement
:func:`sample_size_hedge`   whether statements about the center need a size caveat
==========================  ====================================================
"""

from __future__ import annotations

from dataclasses import dataclass

from narrator.engine.shape import MIN_FOR_SHAPE  # D'Agostino's test needs n >= 8 (D'Agostino 1970)
from narrator.findings import Findings

HEDGE_LEVELS = ("too_few", "unclear", "tentative", "likely", "clear")
MIN_FOR_UNHEDGED = 20  # our choice, common practice
NO_SKEW_P = 0.05  # a skewness test p at or above this is "no sign of skew" (our choice)
_EVIDENCE_SCORE = {"none": 0, "weak": 1, "moderate": 2, "strong": 3}
_SCORE_LEVEL = {0: "unclear", 1: "tentative", 2: "likely", 3: "clear"}
_PEAK_LABELS = ("bimodal", "multimodal")


@dataclass(frozen=True, slots=True)
class Hedge:
    level: str  # one of HEDGE_LEVELS
    reasons: tuple[str, ...]  # codes: "n_below_8", "n_below_20", "robust_disagree", ...

    @property
    def firm(self) -> bool:
        """True for "likely" and "clear": the shape may be stated (with "probably" at "likely")."""
        return self.level in ("likely", "clear")


def shape_hedge(findings: Findings) -> Hedge:
    """The hedge level for the shape statement, by the ladder in the module docstring.

    Reads ``findings.n``, ``findings.shape`` (label, evidence, reasons,
    skewness test p) and nothing else; the same findings give the same level.
    """
    shape = findings.shape
    n = findings.n
    if n < MIN_FOR_SHAPE:
        return Hedge("too_few", ("n_below_8",))
    if shape.label == "undetermined" or findings.spread is None or findings.spread.range == 0:
        return Hedge("too_few", tuple(shape.reasons) or ("undetermined",))

    reasons: list[str] = []
    if shape.label == "symmetric":
        p = shape.skewness_test_p
        some_skew = "skew_from_few_values" in shape.reasons or (p is not None and p < NO_SKEW_P)
        score = 2 if some_skew else 3
        reasons.append("some_skew_set_aside" if some_skew else "no_sign_of_skew")
    else:
        score = _EVIDENCE_SCORE.get(shape.evidence, 0)
        reasons.append(f"evidence_{shape.evidence}")
        if "robust_disagree" in shape.reasons:
            score -= 1
            reasons.append("robust_disagree")
        # A peak count that changes with the bins lowers the hedge once: when the histograms did not all
        # show the peaks, the evidence is already a level lower for it (narrator.engine.shape, rule 2).
        if shape.label in _PEAK_LABELS and "bins_change_picture" in shape.reasons \
                and "histogram_peaks" in shape.reasons:
            score -= 1
            reasons.append("bins_change_picture")
    level = _SCORE_LEVEL[max(0, min(3, score))]
    if n < MIN_FOR_UNHEDGED and level in ("likely", "clear"):
        level = "tentative"
        reasons.append("n_below_20")
    return Hedge(level, tuple(reasons))


def sample_size_hedge(findings: Findings) -> bool:
    """True when statements about the center and spread need a caveat about the small sample (n < 20)."""
    return 0 < findings.n < MIN_FOR_UNHEDGED
