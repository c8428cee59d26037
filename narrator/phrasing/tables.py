"""Tables, already worded and formatted for the locale; the writer only lays them out.

=================  ==============================================================
Table key          Rows
=================  ==============================================================
``key_figures``    plain-word figures for a memo (memo rounding, units in cells)
``statistics``     n, missing, mean (SD), median (IQR), trimmed mean, range, P5-P95, MAD
``outliers``       flagged values with their row numbers (identifiers only when asked for)
``with_without``   n, mean, median, SD, IQR with all values, without the flagged, change
=================  ==============================================================

Each column holds one precision (APA Publication Manual, 7th ed., 2020):
statistics at the methods precision (one decimal beyond the data, Cole
2015), flagged values as recorded, counts as whole numbers.
"""

from __future__ import annotations

from narrator.phrasing.context import WordingContext
from narrator.phrasing.licences import TINY_N, has_spread, middle_half_holds_half
from narrator.phrasing.narrative import Table

OUTLIER_ROWS_SHOWN = 50  # longer lists are cut, and the caption says so


def key_figures_table(ctx: WordingContext) -> Table | None:
    findings = ctx.findings
    center, spread = findings.center, findings.spread
    if center is None:
        return None
    key = "tables.key_figures"
    left_out = findings.n_missing + findings.quality.n_non_numeric + findings.quality.n_impossible
    rows = [
        (ctx.text(f"{key}.n"), ctx.whole(findings.n)),
        (ctx.text(f"{key}.left_out"), ctx.text(f"{key}.left_out_groups", count=ctx.whole(left_out))
         if findings.quality.has("groups_suppressed") else ctx.whole(left_out)),
        (ctx.text(f"{key}.median"), ctx.memo(center.median)),
        (ctx.text(f"{key}.mean"), ctx.memo(center.mean)),
        *_quartile_rows(ctx, key),
        (ctx.text(f"{key}.lowest"), ctx.memo_recorded(spread.min)),
        (ctx.text(f"{key}.highest"), ctx.memo_recorded(spread.max)),
    ]
    if findings.outliers is not None and findings.outliers.note != "not_run_too_few":
        rows.append((ctx.text(f"{key}.unusual"), ctx.whole(findings.outliers.count)))
        unusual = findings.unusual
        if unusual is not None and unusual.reason == "computed" and unusual.complete and findings.outliers.count:
            # The memo names only the values that stand out for the shape: the table says how many of the
            # rule's values those are, so the two counts cannot be read as contradicting each other.
            rows.append((ctx.text(f"{key}.stand_out"), ctx.whole(len(unusual.values))))
    return Table(
        key="key_figures",
        caption=ctx.caption(f"{key}.caption", name=ctx.name),
        header=(ctx.text(f"{key}.measure"), ctx.text(f"{key}.value")),
        rows=tuple(rows),
        keys=("n", "center.median", "center.mean", "spread.q1", "spread.q3", "spread.min", "spread.max",
              "outliers.count", "unusual.values"),
        align=("left", "right"),
    )


def _quartile_rows(ctx: WordingContext, key: str) -> tuple[tuple[str, str], ...]:
    """Q1 to Q3 as "the middle half" only when about half the values lie there (the memo's licence);
    as the quartiles when not (few values, or many tied at a quartile); no row for one value or no spread."""
    spread = ctx.findings.spread
    if not has_spread(ctx) or ctx.findings.n < TINY_N:  # the quartiles of four values or fewer describe nothing
        return ()
    label = "middle_half" if middle_half_holds_half(ctx) else "quartiles"
    return ((ctx.text(f"{key}.{label}"), ctx.fmt.range_words(*ctx.memo_pair(spread.q1, spread.q3))),)


def trimmed_share(options: dict) -> float:
    """The share cut from each end for ``Center.trimmed_mean_20``: the engine's second trim proportion."""
    return float(options.get("trim_proportions", (0.1, 0.2))[-1])


def trimmed_label(ctx: WordingContext) -> str:
    """The one label of the trimmed mean the reports show ("Mean trimmed by 20% at each end")."""
    return ctx.text("tables.statistics.trimmed", share=ctx.fmt.percent(trimmed_share(ctx.findings.options)))


def statistics_table(ctx: WordingContext) -> Table | None:
    findings = ctx.findings
    center, spread = findings.center, findings.spread
    if center is None:
        return None
    key = "tables.statistics"
    x = ctx.exact
    excluded = findings.quality.n_non_numeric + findings.quality.n_impossible
    # Two to four values: no IQR, percentiles, MAD or trimmed mean (see licences.TINY_N); the median alone.
    tiny = findings.n < TINY_N
    median_row = (ctx.text(f"{key}.median"), x(center.median)) if tiny else (
        ctx.text(f"{key}.median_iqr"),
        ctx.text("format.median_iqr", median=x(center.median), iqr_range=ctx.exact_range(spread.q1, spread.q3)))
    rows = [
        (ctx.text(f"{key}.n"), ctx.whole(findings.n)),
        (ctx.text(f"{key}.missing"), ctx.whole(findings.n_missing)),
        (ctx.text(f"{key}.excluded"), ctx.text("tables.key_figures.left_out_groups", count=ctx.whole(excluded))
         if findings.quality.has("groups_suppressed") else ctx.whole(excluded)),
        (ctx.text(f"{key}.mean_sd"), ctx.text("format.mean_sd", mean=x(center.mean), sd=x(spread.sd))),
        median_row,
        (trimmed_label(ctx), x(center.trimmed_mean_20)),
        (ctx.text(f"{key}.range"), ctx.exact_range(spread.min, spread.max)),
        (ctx.text(f"{key}.p5_p95"), ctx.exact_range(spread.p5, spread.p95)),
        (ctx.text(f"{key}.mad"), x(spread.mad_scaled)),
    ]
    if tiny:
        rows = [row for k, row in enumerate(rows) if k not in (5, 7, 8)]
    name = ctx.axis_name
    return Table(
        key="statistics",
        caption=ctx.caption(f"{key}.caption", name=name),
        header=(ctx.text(f"{key}.statistic"), ctx.text(f"{key}.value")),
        rows=tuple(rows),
        keys=("n", "n_missing", "center.mean", "spread.sd", "center.median", "spread.min", "spread.max") if tiny else
        ("n", "n_missing", "center.mean", "spread.sd", "center.median", "spread.q1", "spread.q3",
         "center.trimmed_mean_20", "spread.min", "spread.max", "spread.p5", "spread.p95", "spread.mad_scaled"),
        align=("left", "right"),
    )


def outliers_table(ctx: WordingContext) -> Table | None:
    flagged = ctx.findings.outliers
    if flagged is None or flagged.count == 0:
        return None
    key = "tables.outliers"
    far = set(zip(flagged.far_out_rows, flagged.far_out_values, strict=False))
    # Identifiers appear only when the reader was asked to carry an id column.
    ids = tuple(flagged.ids) if len(flagged.ids) == len(flagged.rows) else ()
    rows = []
    for index in _farthest_out(flagged, OUTLIER_ROWS_SHOWN):
        value, row = flagged.values[index], flagged.rows[index]
        high = index >= flagged.listed_low
        rows.append((
            *((ids[index],) if ids else ()),
            ctx.whole(row),
            ctx.recorded(value),
            ctx.text(f"words.side.{'high' if high else 'low'}"),
            ctx.text("format.yes") if (row, value) in far else ctx.text("format.no"),
        ))
    rule = ctx.text(f"words.outlier_rule.{flagged.rule}")
    if flagged.count > OUTLIER_ROWS_SHOWN:
        caption = ctx.caption(f"{key}.caption_farthest", rule=rule, shown=ctx.whole(OUTLIER_ROWS_SHOWN),
                           total=ctx.whole(flagged.count))
    else:
        caption = ctx.caption(f"{key}.caption", rule=rule)
    return Table(
        key="outliers",
        caption=caption,
        header=(*((ctx.text(f"{key}.identifier"),) if ids else ()), ctx.text(f"{key}.row"),
                ctx.text(f"{key}.value"), ctx.text(f"{key}.side"), ctx.text(f"{key}.far_out")),
        rows=tuple(rows),
        keys=("outliers.values", "outliers.rows", "outliers.far_out_values", *(("outliers.ids",) if ids else ())),
        align=(*(("left",) if ids else ()), "right", "right", "left", "left"),
    )


def _farthest_out(flagged, limit: int) -> list[int]:
    """Indices into the listed values of the ``limit`` farthest out, ascending by value.

    Each side's listed values run from the farthest out inwards (the low side ascending, the high
    side descending), so the table takes from both sides in turn, nearest to its fence last.
    """
    low = list(range(flagged.listed_low))
    high = list(range(len(flagged.values) - 1, flagged.listed_low - 1, -1))
    if len(low) + len(high) <= limit:
        return low + high[::-1]
    def beyond(index: int) -> float:  # how far past its fence, in the data's units
        value = flagged.values[index]
        if index < flagged.listed_low:
            return (flagged.lower_fence if flagged.lower_fence is not None else value) - value
        return value - (flagged.upper_fence if flagged.upper_fence is not None else value)

    chosen, i, j = [], 0, 0
    while len(chosen) < limit:
        take_low = j >= len(high) or (i < len(low) and beyond(low[i]) >= beyond(high[j]))
        if take_low:
            chosen.append(low[i])
            i += 1
        else:
            chosen.append(high[j])
            j += 1
    return sorted(chosen)


def with_without_table(ctx: WordingContext) -> Table | None:
    findings = ctx.findings
    flagged, without = findings.outliers, findings.without_outliers
    if flagged is None or flagged.count == 0 or without is None or without.n == 0 or without.mean is None:
        return None
    key = "tables.with_without"
    x = ctx.exact
    d = ctx.methods_decimals
    center, spread = findings.center, findings.spread

    def optional(value):
        return "–" if value is None else x(value)

    def change(value):
        return "–" if value is None else ctx.signed(value, d)

    rows = (
        (ctx.text(f"{key}.n"), ctx.whole(findings.n), ctx.whole(without.n), ctx.signed(without.n - findings.n, 0)),
        (ctx.text(f"{key}.mean"), x(center.mean), optional(without.mean), change(without.mean_change)),
        (ctx.text(f"{key}.median"), x(center.median), optional(without.median), change(without.median_change)),
        (ctx.text(f"{key}.sd"), x(spread.sd), optional(without.sd), change(without.sd_change)),
        (ctx.text(f"{key}.iqr"), x(spread.iqr), optional(without.iqr), change(without.iqr_change)),
    )
    return Table(
        key="with_without",
        caption=ctx.caption(f"{key}.caption", name=ctx.axis_name),
        header=(ctx.text(f"{key}.measure"), ctx.text(f"{key}.all"), ctx.text(f"{key}.without"),
                ctx.text(f"{key}.change")),
        rows=rows,
        keys=("without_outliers.n", "without_outliers.mean", "without_outliers.median", "without_outliers.sd",
              "without_outliers.iqr"),
        align=("left", "right", "right", "right"),
    )


TABLE_BUILDERS = {
    "key_figures": key_figures_table,
    "statistics": statistics_table,
    "outliers": outliers_table,
    "with_without": with_without_table,
}
