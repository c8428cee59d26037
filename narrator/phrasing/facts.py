"""The findings as a short, aligned table for a terminal (``narrator facts``), worded from the bank.

Labels and the words for the engine's reason codes come from the ``[facts]``
table of the phrase bank (codes stay in ``narrator facts --json``); numbers go
through the report's formatter with the methods text's precision (Cole 2015),
so the table shows the same statistic under the same label as a report (the
trimmed mean is the report's, labelled as the report labels it).

====================  =========================================================
Name                  What it does
====================  =========================================================
:func:`facts_rows`    Findings -> (label, value) rows in a locale
:func:`facts_table`   the rows as aligned plain text
====================  =========================================================
"""

from __future__ import annotations

from narrator.engine.center import MEAN_SHIFT_SHARE
from narrator.findings import Findings
from narrator.phrasing.context import WordingContext, make_context
from narrator.phrasing.numbers import parse_locale
from narrator.phrasing.tables import trimmed_label
from narrator.phrasing.typography import typeset

FLAGGED_SHOWN = 8  # flagged values listed by value and row; the rest are counted


def _word(ctx: WordingContext, table: str, code: str | None, **values: str) -> str:
    """The bank's words for an engine code, or the code itself when the bank has none for it."""
    if code is None:
        return ctx.text("facts.none")
    key = f"{table}.{code}"
    return ctx.text(key, **values) if ctx.bank.has(key) else code


def _pair(ctx: WordingContext, first: str, second: str) -> str:
    return ctx.text("facts.pair", first=first, second=second)


def facts_rows(findings: Findings, locale: str = "en_US") -> list[tuple[str, str]]:
    """The main findings as (label, value) rows, worded and formatted for ``locale``."""
    ctx = make_context(findings, locale, currency=None, unit=None, name=None)
    label = lambda key: ctx.text(f"facts.{key}")  # noqa: E731 - a local shorthand
    x, stat, whole = ctx.exact, ctx.stat, ctx.whole
    quality = findings.quality
    rows: list[tuple[str, str]] = [
        (label("variable"), ctx.axis_name),
        (label("rows_read"), whole(quality.n_rows)),
        (label("values_used"), whole(findings.n)),
        (label("missing"), whole(findings.n_missing)),
        (label("not_numbers"), whole(quality.n_non_numeric)),
        (label("impossible"), whole(quality.n_impossible)),
    ]
    center, spread = findings.center, findings.spread
    if center is not None and spread is not None:
        share = ctx.fmt.fixed(MEAN_SHIFT_SHARE, 1)
        reasons = ctx.fmt.list([_word(ctx, "words.lead_reason", code, share=share) for code in center.lead_reasons])
        rows += [
            (label("mean"), x(center.mean)),
            (label("median"), x(center.median)),
            (trimmed_label(ctx), x(center.trimmed_mean_20)),
            (label("lead"), ctx.text("facts.with_reasons", value=ctx.text(f"words.lead.{center.lead}"),
                                     reasons=reasons)),
            (label("sd"), x(spread.sd)),
            (label("quartiles"), _pair(ctx, x(spread.q1), x(spread.q3))),
            (label("iqr"), x(spread.iqr)),
            (label("mad"), x(spread.mad_scaled)),
            (label("min_max"), _pair(ctx, ctx.recorded(spread.min), ctx.recorded(spread.max))),
            (label("p5_p95"), _pair(ctx, x(spread.p5), x(spread.p95))),
            (label("cv"), stat(spread.cv)),
        ]
    shape = findings.shape
    shape_words = ctx.text(f"words.shape.{shape.label}")
    if shape.strength:
        shape_words = ctx.text("facts.shape_strength", strength=ctx.text(f"words.strength.{shape.strength}"),
                               shape=shape_words)
    rows += [
        (label("shape"), shape_words),
        (label("evidence"), ctx.text("facts.with_reasons", value=_word(ctx, "facts.evidence_level", shape.evidence),
                                     reasons=ctx.fmt.list([_word(ctx, "facts.shape_reason", code)
                                                           for code in shape.reasons]))),
        (label("skewness"), ctx.text("facts.with_se", estimate=stat(shape.skewness), se=stat(shape.skewness_se))),
        (label("skewness_p"), ctx.p_value(shape.skewness_test_p) if shape.skewness_test_p is not None
         else stat(None)),
        (label("bowley_medcouple"), _pair(ctx, stat(shape.bowley), stat(shape.medcouple))),
        (label("kurtosis"), stat(shape.excess_kurtosis)),
        (label("peaks"), whole(shape.density_peaks) if shape.density_peaks is not None else stat(None)),
        (label("bimodality"), ctx.fmt.fixed(shape.bimodality_coefficient, 3)
         if shape.bimodality_coefficient is not None else stat(None)),
    ]
    if shape.bin_sensitivity is not None:
        rows.append((label("bins"), ctx.text("format.yes" if shape.bin_sensitivity.sensitive else "format.no")))
    flagged = findings.outliers
    if flagged is not None:
        rows += [
            (label("rule"), ctx.text("facts.rule_chosen", rule=_word(ctx, "words.outlier_rule", flagged.rule),
                                     chosen=_word(ctx, "facts.chosen", flagged.chosen_by))),
            (label("fences"), _pair(ctx, x(flagged.lower_fence), x(flagged.upper_fence))),
            (label("outliers"), whole(flagged.count)),
        ]
        if flagged.values:
            shown = [ctx.text("facts.value_row", value=ctx.recorded(value), row=whole(row))
                     for value, row in zip(flagged.values[:FLAGGED_SHOWN], flagged.rows[:FLAGGED_SHOWN], strict=False)]
            if flagged.count > FLAGGED_SHOWN:
                shown.append(ctx.text("facts.more", count=whole(flagged.count - FLAGGED_SHOWN)))
            rows.append((label("flagged"), ctx.fmt.list(shown)))
    without = findings.without_outliers
    if without is not None and flagged is not None and flagged.count:
        rows += [
            (label("mean_without"), x(without.mean)),
            (label("median_without"), x(without.median)),
            (label("lead_change"), ctx.text("format.yes" if without.lead_would_change else "format.no")),
        ]
    for key, interval in (("mean_interval", findings.intervals.mean), ("median_interval", findings.intervals.median)):
        if interval is None:
            continue
        method = _word(ctx, "facts.interval_method", interval.method)
        if interval.coverage is not None:
            method = ctx.text("facts.with_coverage", method=method, coverage=ctx.fmt.percent(interval.coverage, 1))
        rows.append((label(key), ctx.text("facts.interval", low=x(interval.low), high=x(interval.high),
                                          level=ctx.fmt.percent(interval.level), method=method)))
    if findings.intervals.reason != "computed":
        rows.append((label("intervals"), _word(ctx, "facts.interval_reason", findings.intervals.reason)))
    for flag in quality.flags:
        rows.append((ctx.text("facts.quality", flag=_word(ctx, "facts.quality_flag", flag.code)), whole(flag.count)))
    return rows


def facts_table(findings: Findings, locale: str = "en_US") -> str:
    """The rows of :func:`facts_rows`, one per line, labels padded to one width."""
    locale_id = str(parse_locale(locale))
    rows = [(typeset(label, locale_id), typeset(value, locale_id)) for label, value in facts_rows(findings, locale)]
    width = max(len(label) for label, _ in rows)
    return "\n".join(f"{label.ljust(width)}  {value}" for label, value in rows) + "\n"
