"""The words around a report's narrative: title lines, caption numbering, "How this report was made".

Every label and every setting is worded from the phrase bank (``[report]``,
``[settings]``) and every number goes through the report's formatter, so the
appendix reads in the report's language ("Confidence level: 95%", "Outlier
rule: chosen from the data", "Cells read as missing: blank cells, “NA”...")
while the sidecar keeps the codes a recipe takes.

=========================  ====================================================
Name                       What it does
=========================  ====================================================
:class:`FrameWords`        the finished words (the writer's ReportFrame takes them)
:class:`VariableFacts`     one variable's findings and how its column was read
:func:`frame_words`        a report's frame from its variables' findings and reading facts
:func:`setting_label`      the label of one setting ("Confidence level")
:func:`setting_value`      the worded value of one setting ("95%")
=========================  ====================================================
"""

from __future__ import annotations

import datetime as dt
import functools
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from babel.numbers import get_currency_name

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.phrasing.bank import PhraseBank, load_bank
from narrator.phrasing.numbers import NumberFormatter
from narrator.phrasing.typography import typeset

# Reading options kept in Sample.source that a reader needs to read the file
# the same way again; the other source entries are diagnostics, not settings.
READING_SETTINGS = ("sheet", "encoding", "delimiter", "decimal_comma", "missing_tokens")
_MAX_DECIMALS = 15  # a setting's number is written with the decimals it was given, up to this many


@dataclass(frozen=True, slots=True)
class FrameWords:
    details: tuple[str, ...]
    figure_number: str
    table_number: str
    appendix_title: str
    appendix_intro: str
    appendix_header: tuple[str, str]
    appendix_rows: tuple[tuple[str, str], ...]
    appendix_lines: tuple[str, ...] = ()  # the memo's compact block, in place of the rows


COMPACT_LINES = 8  # the memo's "How this report was made" holds at most this many lines

def setting_label(bank: PhraseBank, name: str) -> str:
    """The bank's label for a setting; an unknown setting keeps its name inside the bank's words."""
    key = f"settings.{name}"
    return bank.format(key) if bank.has(key) else bank.format("settings.other", name=name)


def _given_decimals(value: float) -> int:
    """The decimals a number was given with ("0.25" -> 2), up to _MAX_DECIMALS."""
    for decimals in range(_MAX_DECIMALS + 1):
        if round(value, decimals) == value:
            return decimals
    return _MAX_DECIMALS


def _words(bank: PhraseBank, table: str, code: str) -> str:
    key = f"{table}.{code}"
    return bank.format(key) if bank.has(key) else code


def setting_value(fmt: NumberFormatter, bank: PhraseBank, name: str, value: Any) -> str:
    """One setting's value, worded and formatted for the report's locale."""
    quoted = lambda text: bank.format("numbers.quoted", text=text)  # noqa: E731 - a local shorthand
    if isinstance(value, bool):
        return bank.format("format.yes" if value else "format.no")
    if name == "outlier_rule":
        return bank.format("settings.value.auto") if value == "auto" else _words(bank, "words.outlier_rule", value)
    if name in ("quantile_method", "bin_rule", "bandwidth_rule"):
        return _words(bank, f"words.{name}", str(value))
    if name == "level":
        return fmt.percent(float(value), _given_decimals(float(value) * 100))
    if name == "trim_proportions":
        shares = [fmt.percent(float(share), _given_decimals(float(share) * 100)) for share in value]
        return bank.format("settings.value.trim_each_end", shares=fmt.list(shares))
    if name == "seed":
        return fmt.digits(int(value))
    if name == "audience":
        return _words(bank, "settings.audiences", str(value))
    if name == "locale":
        # "español de España (es_ES)", not CLDR's display name in brackets beside the code in brackets
        shown = NumberFormatter(str(value)).locale
        language = fmt.locale.languages.get(shown.language, shown.language)
        territory = fmt.locale.territories.get(shown.territory) if shown.territory else None
        if territory is None:
            return bank.format("settings.value.locale_language", code=str(shown), language=language)
        return bank.format("settings.value.locale", code=str(shown), language=language, territory=territory)
    if name == "currency":
        return bank.format("settings.value.currency", code=str(value),
                           name=get_currency_name(str(value), locale=fmt.locale))
    if name == "delimiter":
        named = {"\t": "tab", " ": "space"}.get(str(value))
        return bank.format(f"settings.value.{named}") if named else quoted(str(value))
    if name == "missing_tokens":
        unique = list(dict.fromkeys(str(token) for token in value))  # the defaults and the user's, once each
        return fmt.list([bank.format("settings.value.blank") if token == "" else quoted(token) for token in unique])
    if isinstance(value, int | float) and not isinstance(value, bool):
        number = float(value)
        if not math.isfinite(number):
            raise NarratorError(f"setting {name!r} is not a finite number: {value!r}")
        return fmt.fixed(number, _given_decimals(number))
    if isinstance(value, str):
        return value
    return json.dumps(value, ensure_ascii=False, sort_keys=True)


@dataclass(frozen=True, slots=True)
class VariableFacts:
    """What the frame needs of one variable: its findings and how its column was read."""

    findings: Findings
    source: Mapping[str, Any]  # Sample.source: file, column, sha256, reading settings
    sample_name: str
    n_rows: int
    exclusions: Sequence[tuple[str, int]]  # (reason code, count) of each kind of row left out


# Appendix rows about one column: repeated per variable in a report on several variables.
_PER_VARIABLE = ("report.column", "report.rows_read", "report.values_used", "report.left_out")


def _appendix_rows(fmt: NumberFormatter, bank: PhraseBank, part: VariableFacts,
                   settings: Mapping[str, Any]) -> list[tuple[str, str, str]]:
    """(key, label, value) rows of the appendix for one variable, without the generation time."""
    findings, source = part.findings, part.source
    file_name = source.get("file")
    libraries = findings.provenance.get("libraries", {})
    software = fmt.list([bank.format("format.library", name=name, version=str(version))
                         for name, version in libraries.items()])
    rows: list[tuple[str, str, str]] = [("report.software", bank.format("report.software"), software)]
    if file_name:
        rows.append(("report.input_file", bank.format("report.input_file"), str(file_name)))
    if source.get("sha256"):
        rows.append(("report.sha256", bank.format("report.sha256"), str(source["sha256"])))
    rows.append(("report.column", bank.format("report.column"), str(source.get("column") or part.sample_name)))
    # With groups too small to show, the rows counted are those of the groups shown (their own number is
    # never given): the labels say so.
    suppressed = findings.quality.has("groups_suppressed")
    rows.append(("report.rows_read", bank.format("report.rows_read_shown" if suppressed else "report.rows_read"),
                 fmt.fixed(part.n_rows or findings.quality.n_rows, 0)))
    rows.append(("report.values_used", bank.format("report.values_used"), fmt.fixed(findings.n, 0)))
    left_out = [bank.format("report.left_out_item", count=fmt.fixed(count, 0), reason=_reason(bank, code))
                for code, count in part.exclusions if count]
    if suppressed:
        left_out.append(bank.format("report.left_out_groups"))
    rows.append(("report.left_out", bank.format("report.left_out"), fmt.list(left_out) or bank.format("report.none")))
    every_setting = {**findings.options, **{k: source[k] for k in READING_SETTINGS if k in source}}
    every_setting.update(settings)
    for name, setting in every_setting.items():
        if setting is None:  # not set: the default applied, and the other rows say what it gave
            continue
        rows.append((f"settings.{name}", setting_label(bank, name), setting_value(fmt, bank, name, setting)))
    return rows


def frame_words(
    parts: Sequence[VariableFacts],
    *,
    locale: str,
    organisation: str | None,
    generated_at: dt.datetime,
    settings: Mapping[str, Any],
    sidecar: str | None = None,
) -> FrameWords:
    """Title lines, caption numbering and the reproducibility appendix of a report on ``parts``.

    One variable: one data line and its rows. Several (or one broken down by
    groups): the rows about one column (column, rows read, values used, rows
    left out, and any setting that differs between variables) repeat for
    every variable, prefixed with its name; settings all share are listed
    once. Settings left unset (the default applied) are not listed.

    A memo (``settings["audience"] == "memo"``) gets a compact block of at most
    :data:`COMPACT_LINES` lines in place of the table: software, the input file with its
    SHA-256 on one line (a no-break space joins the label to the hash, which has no break
    inside), rows read and values used, the generation time, and where every setting is
    kept: the sidecar ``sidecar`` beside the report.
    """
    if not parts:
        raise NarratorError("a report frame needs at least one variable")
    fmt = NumberFormatter(locale)
    bank = load_bank(fmt.locale.language)
    first = parts[0]
    file_name = first.source.get("file")
    columns = [str(part.source.get("column") or part.sample_name) for part in parts]
    if file_name and len(parts) > 1 and len(set(columns)) > 1:
        data_line = bank.format("collection.data_columns", columns=fmt.list(columns), file=str(file_name))
    elif file_name:  # one variable, perhaps broken down by groups: "column hours", not "columns hours"
        data_line = bank.format("report.data_file", column=columns[0], file=str(file_name))
    else:
        data_line = bank.format("report.data_values", name=first.findings.variable.name)
    date_text = fmt.long_date(generated_at.date())
    details = tuple(line for line in (organisation, data_line, bank.format("report.prepared", date=date_text)) if line)

    rows = [(label, value) for _key, label, value in _appendix_rows(fmt, bank, first, settings)]
    if len(parts) > 1:
        per_variable = set(_PER_VARIABLE)
        for name in {name for part in parts for name in part.findings.options}:
            values = {json.dumps(part.findings.options.get(name), sort_keys=True) for part in parts}
            if len(values) > 1:  # a setting that differs is listed per variable
                per_variable.add(f"settings.{name}")
        shared = [(label, value) for key, label, value in _appendix_rows(fmt, bank, first, settings)
                  if key not in per_variable]
        variable_rows = [
            (bank.format("collection.for_variable", item=label, name=part.findings.variable.name), value)
            for part in parts for key, label, value in _appendix_rows(fmt, bank, part, {}) if key in per_variable
        ]
        rows = [*shared, *variable_rows]
    moment = generated_at if generated_at.tzinfo is not None else generated_at.replace(tzinfo=dt.UTC)
    rows.append((bank.format("report.generated"),
                 fmt.long_datetime(moment)))
    t = functools.partial(typeset, locale=fmt.locale_id)  # the language's punctuation spacing, as in the narrative
    lines: tuple[str, ...] = ()
    if settings.get("audience") == "memo":
        lines = tuple(t(line) for line in _compact_lines(fmt, bank, parts, moment, sidecar))
    return FrameWords(
        details=tuple(t(line) for line in details),
        figure_number=t(bank.format("report.figure_number", number="{number}")),
        table_number=t(bank.format("report.table_number", number="{number}")),
        appendix_title=t(bank.format("report.appendix_title")),
        appendix_intro=t(bank.format("report.appendix_intro")),
        appendix_header=(t(bank.format("report.item")), t(bank.format("report.value"))),
        appendix_rows=tuple((t(label), t(value)) for label, value in rows),
        appendix_lines=lines,
    )


NO_BREAK_SPACE = "\u00a0"
NO_BREAK_HYPHEN = "\u2011"


def _compact_lines(fmt: NumberFormatter, bank: PhraseBank, parts: Sequence[VariableFacts], moment: dt.datetime,
                   sidecar: str | None) -> list[str]:
    """The memo's "How this report was made": at most COMPACT_LINES lines."""
    first = parts[0]
    libraries = first.findings.provenance.get("libraries", {})
    software = fmt.list([bank.format("format.library", name=name, version=str(version))
                         for name, version in libraries.items()])
    lines = [bank.format("report.compact.software", software=software)]
    file_name, sha = first.source.get("file"), first.source.get("sha256")
    if file_name and sha:
        line = bank.format("report.compact.input", file=str(file_name), sha256=str(sha))
        # The hash never breaks: a no-break space before it, no-break hyphens in the label before it.
        label_end = line.index(str(sha))
        label = line[:label_end].rstrip(" ")
        cut = label.rfind(" ", 0, len(label))
        label = label[:cut + 1] + label[cut + 1:].replace("-", NO_BREAK_HYPHEN)
        lines.append(label + NO_BREAK_SPACE + line[label_end:])
    elif file_name:
        lines.append(bank.format("report.compact.input_file", file=str(file_name)))
    used = [(str(part.source.get("column") or part.sample_name), part) for part in parts]
    rows_read = fmt.fixed(first.n_rows or first.findings.quality.n_rows, 0)
    time = fmt.long_datetime(moment)
    # With groups too small to show, the rows counted are those of the groups shown, as in the full appendix: the
    # line says so (the number of rows of a group left out for privacy is never given, not even by subtraction).
    shown = "_shown" if any(part.findings.quality.has("groups_suppressed") for part in parts) else ""
    if len(used) == 1:
        lines.append(bank.format(f"report.compact.rows{shown}", rows=rows_read, used=fmt.fixed(first.findings.n, 0),
                                 time=time))
    else:
        items = fmt.list([bank.format("report.compact.used_item", column=column, used=fmt.fixed(part.findings.n, 0))
                          for column, part in used])
        lines.append(bank.format(f"report.compact.rows_several{shown}", rows=rows_read, items=items, time=time))
    if sidecar:
        lines.append(bank.format("report.compact.settings", sidecar=sidecar))
    else:
        lines.append(bank.format("report.compact.settings_unnamed"))
    return lines[:COMPACT_LINES]


def _reason(bank: PhraseBank, code: str) -> str:
    key = f"report.reason.{code}"
    if not bank.has(key):
        raise NarratorError(f"phrase bank {bank.language!r} has no words for excluded rows of kind {code!r}")
    return bank.format(key)
