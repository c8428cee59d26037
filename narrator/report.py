"""One report, start to finish: read, describe, narrate, draw, write.

=============================  ================================================
Name                           What it does
=============================  ================================================
:func:`build_report`           file + column -> report.docx and its sidecar
:func:`report_from_findings`   the same from a Sample and its Findings
:func:`report_frame`           the words around the narrative, from the bank
:func:`generation_time`        "now", or the pinned time (SOURCE_DATE_EPOCH)
:class:`ReportOutcome`         what was written, and what it was made from
=============================  ================================================

The command line (``narrator draft``) and the recipe runner both call these,
so a report made either way is the same report.
"""

from __future__ import annotations

import datetime as dt
import json
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from babel.dates import format_date

from narrator.errors import NarratorError
from narrator.figures import render_figures
from narrator.findings import Findings
from narrator.phrasing import narrate
from narrator.phrasing.bank import PhraseBank, load_bank
from narrator.phrasing.narrative import Narrative
from narrator.phrasing.numbers import NumberFormatter, parse_locale
from narrator.sample import Sample
from narrator.writer import ReportFrame, write_report

# Reading options kept in Sample.source that a reader needs to read the file
# the same way again; the other source entries are diagnostics, not settings.
_READING_SETTINGS = ("sheet", "encoding", "delimiter", "decimal_comma", "missing_tokens")


@dataclass(frozen=True, slots=True)
class ReportOutcome:
    report: Path
    sidecar: Path
    findings: Findings
    narrative: Narrative
    generated_at: dt.datetime


def generation_time(pinned: dt.datetime | None = None) -> dt.datetime:
    """The time a report records as its generation time, in UTC, to the second.

    A pinned time (from a recipe) wins; else the ``SOURCE_DATE_EPOCH``
    environment variable (seconds since 1970, the reproducible-builds.org
    convention); else the clock.
    """
    if pinned is not None:
        if pinned.tzinfo is None:
            raise NarratorError("a pinned generation time must carry a time zone (for example UTC)")
        return pinned.astimezone(dt.UTC).replace(microsecond=0)
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch:
        try:
            return dt.datetime.fromtimestamp(int(epoch), tz=dt.UTC)
        except (ValueError, OverflowError):
            raise NarratorError(
                f"SOURCE_DATE_EPOCH must be whole seconds since 1970, not {epoch!r}"
            ) from None
    return dt.datetime.now(dt.UTC).replace(microsecond=0)


def build_report(
    path: str | os.PathLike[str],
    column: str | int,
    output: str | os.PathLike[str],
    *,
    read_options: Mapping[str, Any] | None = None,
    describe_options: Mapping[str, Any] | None = None,
    **report_options: Any,
) -> ReportOutcome:
    """Read ``column`` of the file at ``path``, describe it and write the report to ``output``.

    ``read_options`` go to :func:`narrator.data.read_column`, ``describe_options``
    to :func:`narrator.engine.describe.describe`, and ``report_options`` to
    :func:`report_from_findings` (audience, locale, currency, title,
    organisation, template, author, generated_at).
    """
    from narrator.data import read_column
    from narrator.engine.describe import describe

    sample = read_column(path, column, **dict(read_options or {}))
    findings = describe(sample, **dict(describe_options or {}))
    return report_from_findings(sample, findings, output, input_path=path, **report_options)


def report_from_findings(
    sample: Sample,
    findings: Findings,
    output: str | os.PathLike[str],
    *,
    input_path: str | os.PathLike[str] | None = None,
    audience: str = "full",
    locale: str = "en_US",
    currency: str | None = None,
    title: str | None = None,
    organisation: str | None = None,
    template: str | os.PathLike[str] | None = None,
    author: str | None = None,
    generated_at: dt.datetime | None = None,
) -> ReportOutcome:
    """Narrate ``findings`` for the audience, draw the figures, write report and sidecar.

    The document's author property is ``author``, else ``organisation``, else
    empty: never the operating-system user.
    """
    moment = generation_time(generated_at)
    narrative = narrate(findings, audience, locale, currency=currency, title=title)
    figures = render_figures(findings, sample, narrative, locale=locale)
    bank = load_bank(parse_locale(locale).language)
    report_settings = {
        "audience": audience,
        "locale": locale,
        "currency": currency,
        "title": title,
        "organisation": organisation,
        "template": Path(template).name if template is not None else None,
    }
    frame = report_frame(
        bank, findings, sample, locale=locale, organisation=organisation, generated_at=moment,
        settings=report_settings,
    )
    properties = {
        "title": narrative.title,
        "subject": frame.details[1] if organisation else frame.details[0],
        "author": author or organisation or "",
        "keywords": ", ".join(part for part in (findings.variable.name, audience) if part),
    }
    sidecar = write_report(
        output, narrative, figures, findings=findings, frame=frame, properties=properties,
        generated_at=moment, template=template, protect=(input_path,),
    )
    return ReportOutcome(Path(output), sidecar, findings, narrative, moment)


def report_frame(
    bank: PhraseBank,
    findings: Findings,
    sample: Sample,
    *,
    locale: str,
    organisation: str | None,
    generated_at: dt.datetime,
    settings: Mapping[str, Any],
) -> ReportFrame:
    """Title lines, caption numbering and the reproducibility appendix, worded from ``bank.report``.

    Settings are shown as a recipe or the command line takes them (``0.95``,
    ``tukey``, ``[0.1, 0.2]``), so a reader can repeat them exactly; settings
    left unset (the default applied) are not listed.
    """
    numbers = NumberFormatter(locale)
    source = dict(sample.source or {})
    file_name = source.get("file")
    column = source.get("column") or sample.name
    if file_name:
        data_line = bank.format("report.data_file", column=str(column), file=str(file_name))
    else:
        data_line = bank.format("report.data_values", name=findings.variable.name)
    date_text = format_date(generated_at.date(), format="long", locale=parse_locale(locale))
    details = tuple(
        line for line in (organisation, data_line, bank.format("report.prepared", date=date_text)) if line
    )

    libraries = findings.provenance.get("libraries", {})
    software = ", ".join(f"{name} {version}" for name, version in libraries.items())
    rows: list[tuple[str, str]] = [(bank.format("report.software"), software)]
    if file_name:
        rows.append((bank.format("report.input_file"), str(file_name)))
    if source.get("sha256"):
        rows.append((bank.format("report.sha256"), str(source["sha256"])))
    rows.append((bank.format("report.column"), str(column)))
    rows.append((bank.format("report.rows_read"), numbers.fixed(sample.n_rows or findings.quality.n_rows, 0)))
    rows.append((bank.format("report.values_used"), numbers.fixed(findings.n, 0)))
    left_out = [
        bank.format(
            "report.left_out_item", count=numbers.fixed(exclusion.count, 0),
            reason=_reason(bank, exclusion.reason),
        )
        for exclusion in sample.exclusions
        if exclusion.count
    ]
    rows.append((bank.format("report.left_out"), "; ".join(left_out) or bank.format("report.none")))
    every_setting = {**findings.options, **{k: source[k] for k in _READING_SETTINGS if k in source}}
    every_setting.update(settings)
    for name, setting in every_setting.items():
        if setting is None:  # not set: the default applied, and the other rows say what it gave
            continue
        value = setting if isinstance(setting, str) else json.dumps(setting, ensure_ascii=False, sort_keys=True)
        rows.append((bank.format("report.setting", name=name), value))
    rows.append((bank.format("report.generated"), generated_at.strftime("%Y-%m-%dT%H:%M:%SZ")))

    return ReportFrame(
        details=details,
        figure_number=bank.format("report.figure_number", number="{number}"),
        table_number=bank.format("report.table_number", number="{number}"),
        appendix_title=bank.format("report.appendix_title"),
        appendix_intro=bank.format("report.appendix_intro"),
        appendix_header=(bank.format("report.item"), bank.format("report.value")),
        appendix_rows=tuple(rows),
    )


def _reason(bank: PhraseBank, code: str) -> str:
    key = f"report.reason.{code}"
    if not bank.has(key):
        raise NarratorError(f"phrase bank {bank.language!r} has no words for excluded rows of kind {code!r}")
    return bank.format(key)
