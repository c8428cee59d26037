"""Messages before sentences: which findings a memo states, in which order. No words, no randomness.

Document planning (Reiter 2007, "An architecture for data-to-text systems": content
determination before microplanning) in one module. :func:`select_messages` turns one
variable's findings (and, when there are any, its groups' comparison and the previous build)
into candidate *messages*, scores each by how much a decision depends on it, and returns them
best first. A message is a code, its score, the findings keys it states and the numbers it
would state: the memo writer chooses words for them, never what to say.

=====================  ========  ===============================================  ===========================
Message                Score     When (threshold)                                  Source
=====================  ========  ===============================================  ===========================
``group_difference``   100       two groups clearly different, or with three or    Hodges & Lehmann 1963;
                                 more a group that stands apart                    Cohen 1988 (verdicts)
``entry_error``        95        a probable entry error whose removal moves the    Cohen 1988 (0.2 scales);
                                 lead measure by more than a small difference      common practice
``change_in_center``   90        the lead measure moved beyond the new build's     narrator.history.changes
                                 interval (or 0.1 SD for a whole population)
``share_at_one_value`` 85 / 70   one value holds at least half the values / at     Lambert 1992 (zeros
                                 least a quarter at the lowest or highest value    first); common practice
``concentration``      82        money, and the largest 1 % hold at least 20 %     common practice in
                                 of the total or the largest 10 % at least half    fundraising and income
                                                                                   statistics (Lorenz, Gini)
``clusters``           80        the values form two or more clusters              Silverman 1981
``groups_alike``       75        every pair of groups is about the same            Cohen 1988; Schuirmann 1987
``money_total``        65        money, the total not notably concentrated         common practice
``groups_unclear``     52        groups compared, none clearly different, not      our rule
                                 all alike: the data cannot tell
``center_range``       50 / 30   always; 30 when clusters or one value holding     Lang & Altman 2013 (SAMPL);
                                 half the values make a single middle misleading   common practice
``entry_error``        45        a probable entry error that does not move the     common practice
                                 lead measure materially
``change_other``       40        another change worth saying (count, spread,       narrator.history.changes
                                 shape, outliers)
``stand_out``          35        values beyond the far-out fences that the shape   Tukey 1977; Hubert &
                                 does not predict, more values beyond the fences   Vandervieren 2008
                                 than it predicts, or possible entry errors
=====================  ========  ===============================================  ===========================

Why this order (our judgement, written down so it can be argued with): a clear difference
between groups is the decision a grouped report exists for; a probable entry error that moves
the figure the memo leads with must be fixed before any figure is used; a change since the last
build is what a refreshed report is read for; a large share at one value (most clients made no
visit) and clusters change what "typical" means, so they come before the center, whose score
drops when they make a single middle misleading; where the money went is the question a total
of money raises; alike groups are an answer when nothing differs; the center and range are
always said; the rest supports.

Rules for the order: higher score first; equal scores keep the order of :data:`MESSAGE_CODES`
(a fixed order, never the data's labels or values). Within a code, several messages (several
differing pairs) keep the order of the findings they come from: pairs in the groups' reading
order. The same findings give the same messages in the same order, every time.

Groups whose values differ (not all alike): pooled over them, a group's ordinary values can look far
out for the pooled shape, so ``entry_error`` and ``stand_out`` keep only the values their own group's
values flag too (:class:`Within`, from each group's findings).

Money: the currency is given (``currency``), the unit is an ISO 4217 code (CLDR's list, through
babel), or the cells carried currency marks (the reading's ``currency_symbols``).

Keys are dotted paths into the variable's findings (``center.median``,
``clusters.parts.0.share``); keys into the groups' comparison start with ``comparison.``
(``comparison.pairs.0.difference.shift``), into the previous build with ``baseline.``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from narrator.engine.entry_errors import values_are_money
from narrator.findings import Findings, GroupComparison

SMALL_EFFECT = 0.2  # as narrator.engine.group_difference: Cohen's small standardized difference
HALF = 0.5
QUARTER = 0.25
TOP_PERCENT_NOTABLE = 0.20
TOP_TENTH_NOTABLE = 0.50

# (code, score): the fixed order breaks ties between equal scores.
SCORES = (
    ("group_difference", 100),
    ("entry_error", 95),
    ("change_in_center", 90),
    ("share_at_one_value", 85),
    ("concentration", 82),
    ("clusters", 80),
    ("groups_alike", 75),
    ("money_total", 65),
    ("groups_unclear", 52),
    ("center_range", 50),
    ("change_other", 40),
    ("stand_out", 35),
)
MESSAGE_CODES = tuple(code for code, _ in SCORES)
SCORE = dict(SCORES)
SHARE_AT_EDGE_SCORE = 70
CENTER_MISLEADING_SCORE = 30
ENTRY_ERROR_IMMATERIAL_SCORE = 45


@dataclass(frozen=True, slots=True)
class Message:
    """One thing the memo could say: its code, score, the findings keys it states, the numbers."""

    code: str
    score: int
    keys: tuple[str, ...]
    numbers: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True, slots=True)
class Within:
    """What the groups' own values flag, as (value, row) pairs: values that stand out for their own group's
    shape or may be entry errors there (``flagged``), and probable entry errors there (``probable``).

    Pooled over groups whose values differ, a group's ordinary values can look far out for the pooled
    shape (a wait of 100 days is no slip among waits around 60 days): a grouped memo names a value as
    standing out, or as a probable typing error, only when its own group's values say so too."""

    flagged: frozenset = frozenset()
    probable: frozenset = frozenset()


def groups_may_mix(comparison: GroupComparison | None) -> bool:
    """Whether pooling the groups may mix values of different sizes: they are not all alike."""
    return comparison is not None and bool(comparison.pairs) and not all(
        pair.difference.verdict == "alike" for pair in comparison.pairs)


def within_groups(groups) -> Within | None:
    """The :class:`Within` of a variable's groups (``GroupFindings``), or None when a group's judgement
    is not known (an engine that did not compute it)."""
    flagged, probable = set(), set()
    for group in groups:
        unusual = group.findings.unusual
        if unusual is None or unusual.rows is None:
            return None
        flagged.update(zip(unusual.values, unusual.rows, strict=True))
        for error in unusual.entry_errors:
            flagged.add((error.value, error.row))
            if error.strength == "probable":
                probable.add((error.value, error.row))
    return Within(frozenset(flagged), frozenset(probable))


def is_money(findings: Findings, currency: str | None = None) -> bool:
    """Whether the values are money: a currency given, an ISO 4217 unit, or currency marks in the cells
    (the last two as the engine decides them, narrator.engine.entry_errors.values_are_money)."""
    return bool(currency) or values_are_money(findings)


def select_messages(findings: Findings, *, comparison: GroupComparison | None = None,
                    baseline: Findings | None = None, currency: str | None = None,
                    within: Within | None = None) -> tuple[Message, ...]:
    """The candidate messages for one variable, best first (see the module docstring for the rules).

    ``within``: what the groups' own values flag; when the groups differ, only those pooled values are
    named as standing out or as probable entry errors (:class:`Within`)."""
    if within is not None and not groups_may_mix(comparison):
        within = None
    if findings.center is None or findings.spread is None:
        return ()
    found: list[Message] = []
    found += _group_messages(comparison)
    found += _change_messages(findings, baseline)
    share = _share_at_one_value(findings)
    if share is not None:
        found.append(share)
    money = is_money(findings, currency)
    if money and findings.concentration is not None:
        found.append(_money_message(findings))
    clustered = findings.clusters is not None and findings.clusters.count >= 2
    if clustered:
        found.append(_clusters_message(findings))
    found += _entry_error_messages(findings, money, within)
    misleading = clustered or (share is not None and share.numbers["share"] >= HALF)
    found.append(_center_message(findings, misleading))
    stand_out = _stand_out_message(findings, money, within)
    if stand_out is not None:
        found.append(stand_out)
    order = {code: index for index, code in enumerate(MESSAGE_CODES)}
    ranked = sorted(enumerate(found), key=lambda item: (-item[1].score, order[item[1].code], item[0]))
    return tuple(message for _, message in ranked)


def _difference_numbers(difference) -> dict[str, Any]:
    return {"shift": difference.shift, "low": difference.low, "high": difference.high, "level": difference.level,
            "direction": difference.direction, "lead_difference": difference.lead_difference}


def _difference_keys(prefix: str) -> tuple[str, ...]:
    return tuple(f"{prefix}.difference.{name}" for name in ("shift", "low", "high", "level", "direction"))


def _group_messages(comparison: GroupComparison | None) -> list[Message]:
    if comparison is None or comparison.reason != "computed" or not comparison.pairs:
        return []
    messages = []
    if len(comparison.pairs) == 1:
        (pair,) = comparison.pairs
        verdict = pair.difference.verdict
        if verdict == "different":
            messages.append(Message("group_difference", SCORE["group_difference"],
                                    ("comparison.pairs.0.first", "comparison.pairs.0.second",
                                     *_difference_keys("comparison.pairs.0")),
                                    {"first": pair.first, "second": pair.second,
                                     **_difference_numbers(pair.difference)}))
        elif verdict == "alike":
            messages.append(Message("groups_alike", SCORE["groups_alike"], ("comparison.pairs.0.difference.verdict",),
                                    {"groups": (pair.first, pair.second)}))
        else:
            messages.append(Message("groups_unclear", SCORE["groups_unclear"],
                                    ("comparison.pairs.0.difference.verdict",),
                                    {"groups": (pair.first, pair.second), "verdict": verdict}))
        return messages
    for index, rest in enumerate(comparison.versus_rest):
        prefix = f"comparison.versus_rest.{index}"
        messages.append(Message("group_difference", SCORE["group_difference"],
                                (f"{prefix}.group", f"{prefix}.others", *_difference_keys(prefix)),
                                {"group": rest.group, "others": rest.others,
                                 "together": _together_with(comparison, rest.others),
                                 **_difference_numbers(rest.difference)}))
    if not comparison.stand_apart:
        verdicts = [pair.difference.verdict for pair in comparison.pairs]
        for index, pair in enumerate(comparison.pairs):
            if pair.difference.verdict == "different":
                prefix = f"comparison.pairs.{index}"
                messages.append(Message("group_difference", SCORE["group_difference"],
                                        (f"{prefix}.first", f"{prefix}.second", *_difference_keys(prefix)),
                                        {"first": pair.first, "second": pair.second,
                                         **_difference_numbers(pair.difference)}))
        if all(verdict == "alike" for verdict in verdicts):
            messages.append(Message("groups_alike", SCORE["groups_alike"], ("comparison.together",),
                                    {"groups": comparison.together[0] if comparison.together else ()}))
        elif not any(verdict == "different" for verdict in verdicts):
            messages.append(Message("groups_unclear", SCORE["groups_unclear"], ("comparison.pairs",),
                                    {"together": comparison.together}))
    return messages


def _together_with(comparison: GroupComparison, others: tuple[str, ...]) -> bool:
    """Whether the groups a standing-apart group is compared with are all alike (they go together)."""
    return any(set(others) <= set(group) for group in comparison.together)


def _change_messages(findings: Findings, baseline: Findings | None) -> list[Message]:
    if baseline is None:
        return []
    from narrator.history.changes import compare

    changes = compare(baseline, findings)
    messages = []
    center_key = f"center.{changes.lead}"
    center = changes.item(center_key)
    if center is not None and center.mention:
        messages.append(Message("change_in_center", SCORE["change_in_center"], (center_key, f"baseline.{center_key}"),
                                {"old": center.old, "new": center.new, "difference": center.difference,
                                 "reason": center.reason}))
    others = [item for item in changes.items if item.mention and item.key != center_key]
    if others:
        messages.append(Message("change_other", SCORE["change_other"], tuple(item.key for item in others),
                                {item.key: (item.old, item.new) for item in others}))
    return messages


def _share_at_one_value(findings: Findings) -> Message | None:
    flag = findings.quality.get("many_ties")
    if flag is None or flag.share is None or not flag.values:
        return None
    value = flag.values[0]
    at_edge = value in (findings.spread.min, findings.spread.max)
    if flag.share >= HALF:
        score = SCORE["share_at_one_value"]
    elif flag.share >= QUARTER and at_edge:
        score = SHARE_AT_EDGE_SCORE
    else:
        return None
    index = findings.quality.flags.index(flag)
    return Message("share_at_one_value", score, (f"quality.flags.{index}.share", f"quality.flags.{index}.values"),
                   {"value": value, "share": flag.share, "count": flag.count,
                    "edge": "lowest" if value == findings.spread.min else "highest" if at_edge else "none"})


def _money_message(findings: Findings) -> Message:
    found = findings.concentration
    notable = found.top_percent_share >= TOP_PERCENT_NOTABLE or found.top_tenth_share >= TOP_TENTH_NOTABLE
    code = "concentration" if notable else "money_total"
    keys = ("concentration.total", "concentration.top_percent_share", "concentration.top_tenth_share",
            "concentration.top_counts")
    return Message(code, SCORE[code], keys, {
        "total": found.total, "top_percent_count": found.top_percent_count,
        "top_percent_share": found.top_percent_share, "top_tenth_count": found.top_tenth_count,
        "top_tenth_share": found.top_tenth_share, "top_counts": found.top_counts, "gini": found.gini})


def _clusters_message(findings: Findings) -> Message:
    clusters = findings.clusters
    keys = tuple(f"clusters.parts.{k}.{name}" for k in range(clusters.count) for name in ("share", "median", "low",
                                                                                          "high"))
    separating = [item.column for item in clusters.separation if item.separates]
    return Message("clusters", SCORE["clusters"], keys, {
        "count": clusters.count,
        "parts": tuple((part.share, part.median, part.low, part.high) for part in clusters.parts),
        "separated_by": tuple(separating)})


def _strength(error, money: bool) -> str:
    """An entry error's strength as the memo says it: money is never probably a typing error (a large amount is
    often real), whether the engine knew it was money (an ISO 4217 unit, currency marks) or only the report does
    (``--currency``, a unit word such as "dollars"); see narrator.engine.entry_errors, rule 3."""
    return "possible" if money else error.strength


def _entry_error_messages(findings: Findings, money: bool, within: Within | None = None) -> list[Message]:
    unusual = findings.unusual
    if unusual is None:
        return []
    probable = [(k, error) for k, error in enumerate(unusual.entry_errors) if _strength(error, money) == "probable"
                and (within is None or (error.value, error.row) in within.probable)]
    if not probable:
        return []
    score = SCORE["entry_error"] if _moves_lead(findings, [error.value for _, error in probable]) \
        else ENTRY_ERROR_IMMATERIAL_SCORE
    keys = tuple(f"unusual.entry_errors.{k}.{name}" for k, _ in probable for name in ("value", "row"))
    return [Message("entry_error", score, keys, {
        "errors": tuple((error.value, error.row, error.suggested) for _, error in probable),
        "count": unusual.entry_error_probable_count, "pattern": unusual.entry_error_reason == "many"})]


def _moves_lead(findings: Findings, values: list[float]) -> bool:
    """Whether leaving ``values`` out moves the lead measure by more than a small difference.

    The median moves by at most the gap between neighbouring middle values when a few far-out
    values go; only a mean lead can move materially. The mean without them is
    (n mean - sum) / (n - k); "small" is 0.2 of the spread (IQR / 1.349, or the SD).
    """
    if findings.center.lead != "mean" or findings.n - len(values) < 2:
        return False
    n, mean = findings.n, findings.center.mean
    without = (n * mean - math.fsum(values)) / (n - len(values))
    spread = findings.spread
    scale = spread.iqr / 1.349 if spread.iqr > 0 else spread.sd
    return abs(without - mean) > SMALL_EFFECT * scale


def _center_message(findings: Findings, misleading: bool) -> Message:
    lead = findings.center.lead
    spread = findings.spread
    return Message("center_range", CENTER_MISLEADING_SCORE if misleading else SCORE["center_range"],
                   (f"center.{lead}", "spread.q1", "spread.q3", "n"),
                   {"lead": lead, "center": getattr(findings.center, lead), "q1": spread.q1, "q3": spread.q3,
                    "n": findings.n})


def _stand_out_message(findings: Findings, money: bool, within: Within | None = None) -> Message | None:
    unusual = findings.unusual
    if unusual is None:
        return None

    # A probable error its group does not confirm is no probable error: at most one that may be worth checking.
    def confirmed(error) -> bool:
        return _strength(error, money) == "probable" and (within is None or (error.value, error.row) in within.probable)

    possible = tuple((error.value, error.row) for error in unusual.entry_errors if not confirmed(error)
                     and (within is None or (error.value, error.row) in within.flagged))
    probable = {error.value for error in unusual.entry_errors if confirmed(error)}
    kept = [(value, row) for value, row in zip(unusual.values, unusual.rows or (None,) * len(unusual.values),
                                                strict=True) if value not in probable
            and (within is None or (value, row) in within.flagged)]
    values = tuple(value for value, _ in kept)
    if not values and not unusual.excess and not possible:
        return None
    return Message("stand_out", SCORE["stand_out"], ("unusual.values", "unusual.excess", "unusual.entry_errors"), {
        "values": values, "rows": tuple(row for _, row in kept) if all(row is not None for _, row in kept) else (),
        "excess": unusual.excess, "count_beyond_fences": unusual.count_beyond_fences,
        "expected_beyond_fences": unusual.expected_beyond_fences, "possible_errors": possible, "money": money})
