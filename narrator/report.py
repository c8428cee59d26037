"""One report, start to finish: read, describe, narrate, draw, write.

=============================  ================================================
Name                           What it does
=============================  ================================================
:func:`build_report`           file + column -> report.docx and its sidecar
:func:`report_from_findings`   the same from a Sample and its Findings
:func:`report_from_collection` several variables and groups -> one report
:func:`collection_frame`       the frame of a report on several variables
:func:`report_frame`           the words around the narrative, from the bank
:func:`generation_time`        "now", or the pinned time (SOURCE_DATE_EPOCH)
:class:`ReportOutcome`         what was written, and what it was made from
=============================  ================================================

The command line (``narrator draft``) and the recipe runner both call these,
so a report made either way is the same report. A build holds its output's
lock from reading the previous pair to committing the new one
(:mod:`narrator.safe_io`), first finishing or removing what a killed build
left; the previous findings are read by the sidecar policy
(:func:`narrator.history.sidecar.previous_build`), and a previous sidecar that
was ignored becomes one of the outcome's ``notes``.
"""

from __future__ import annotations

import datetime as dt
import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.history.changes import baseline_for, compare
from narrator.history.sidecar import Previous, previous_build, set_sidecar, single_sidecar
from narrator.phrasing import narrate
from narrator.phrasing.bank import PhraseBank, load_bank
from narrator.phrasing.narrative import Narrative
from narrator.phrasing.numbers import parse_locale
from narrator.phrasing.what_changed import changes_section
from narrator.reading.sample import Sample
from narrator.request import ReadingOptions
from narrator.safe_io import check_output, clean_stale, output_lock, sidecar_path

if TYPE_CHECKING:
    from narrator.figures.helper_process import DrawingHelper
    from narrator.figures.rendered import RenderedFigure
    from narrator.groups.analysis import Collection
    from narrator.history.sidecar import FindingsSet
    from narrator.writer import ReportFrame



@dataclass(frozen=True, slots=True)
class ReportOutcome:
    report: Path
    sidecar: Path
    findings: Findings
    narrative: Narrative
    generated_at: dt.datetime
    notes: tuple[str, ...] = ()  # things the user should be told once, such as a previous sidecar ignored


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
    reading: ReadingOptions | None = None,
    variable: Mapping[str, Any] | None = None,
    **report_options: Any,
) -> ReportOutcome:
    """Read ``column`` of the file at ``path``, describe it and write the report to ``output``.

    ``reading`` says how the file is read and ``variable`` holds the other fields of a
    :class:`~narrator.request.VariableRequest` (label, unit, bounds...); the request is served
    by :func:`narrator.request.describe_request`. ``report_options`` go to
    :func:`report_from_findings` (audience, locale, currency, title, organisation, template,
    author, generated_at, force).
    """
    from narrator.request import ColumnRequest, VariableRequest, describe_request

    request = ColumnRequest(path, VariableRequest(column, **dict(variable or {})), reading or ReadingOptions())
    sample, findings = describe_request(request)
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
    drawing: DrawingHelper | None = None,
    protect: tuple[str | os.PathLike[str] | None, ...] = (),
    force: bool = False,
) -> ReportOutcome:
    """Narrate ``findings`` for the audience, draw the figures, write report and sidecar as one pair.

    The document's author property is ``author``, else ``organisation``, else
    empty: never the operating-system user. A started :class:`~narrator.figures.helper_process.DrawingHelper`
    draws the figures in its own process (the same figures); without one, or if it fails,
    they are drawn here. ``protect`` names inputs besides ``input_path`` and the template that
    must never be written (a recipe); ``force`` is the consent to replace an existing file that
    is not a narrator report.
    """
    inputs = (input_path, template, *protect)
    check_output(output, protect=inputs, force=force)
    with output_lock(output):
        clean_stale(output)
        moment = generation_time(generated_at)
        previous = previous_build(output)
        baseline = _single_baseline(findings, previous)
        narrative = narrate(findings, audience, locale, currency=currency, title=title, baseline=baseline)
        if baseline is not None:
            narrative = _with_changes_section(narrative, baseline, findings, locale=locale, currency=currency)
        if drawing is not None:
            drawing.send(findings, sample, narrative, locale=locale)  # drawn there while the rest is prepared here
        from narrator.writer import write_report

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
            settings=report_settings, sidecar=sidecar_path(output).name,
        )
        properties = {
            "title": narrative.title,
            "subject": frame.details[1] if organisation else frame.details[0],
            "author": author or organisation or "",
            "keywords": ", ".join(part for part in (findings.variable.name, audience) if part),
        }
        figures = drawing.collect() if drawing is not None else None
        if figures is None:
            from narrator.figures.charts import render_figures

            figures = render_figures(findings, sample, narrative, locale=locale)
        sidecar = write_report(
            output, narrative, figures, frame=frame, properties=properties, generated_at=moment,
            template=template, protect=(input_path, *protect), sidecar=single_sidecar(findings, baseline),
            force=force,
        )
    notes = (previous.note,) if previous.note else ()
    return ReportOutcome(Path(output), sidecar, findings, narrative, moment, notes)


def _single_baseline(findings: Findings, previous: Previous) -> Findings | None:
    """The earlier findings this build is compared with, from the previous build's sidecar, if any.

    A previous sidecar of another kind (a report on several variables) or on another
    variable is not comparable with this build: no comparison, rather than a wrong one.
    """
    if previous.findings_set is None or not previous.single:
        return None
    earlier = previous.findings_set.variables[0]
    if earlier.findings.variable.name != findings.variable.name or \
            (earlier.findings.variable.unit or None) != (findings.variable.unit or None):
        return None
    return baseline_for(findings, earlier.findings, earlier.baseline, say_unchanged=True)


def _with_changes_section(
    narrative: Narrative, baseline: Findings, findings: Findings, *, locale: str, currency: str | None
) -> Narrative:
    """The narrative with "what changed since the previous data" right after its first section."""
    section = changes_section(compare(baseline, findings), baseline, findings, locale=locale, currency=currency)
    sections = (*narrative.sections[:1], section, *narrative.sections[1:])
    return replace(narrative, sections=sections)


def report_frame(
    bank: PhraseBank,
    findings: Findings,
    sample: Sample,
    *,
    locale: str,
    organisation: str | None,
    generated_at: dt.datetime,
    settings: Mapping[str, Any],
    sidecar: str | None = None,
) -> ReportFrame:
    """Title lines, caption numbering and the reproducibility appendix (worded by narrator.phrasing.frame).

    Every setting is worded for the reader ("Confidence level: 95%"); the
    sidecar keeps the codes a recipe takes. Settings left unset (the default
    applied) are not listed. ``bank`` is the report's bank (kept for callers;
    the frame takes the bank of ``locale``'s language).
    """
    return _frame([_variable_facts(findings, sample)], locale=locale, organisation=organisation,
                  generated_at=generated_at, settings=settings, sidecar=sidecar)


def _variable_facts(findings: Findings, sample: Sample):
    from narrator.phrasing.frame import VariableFacts

    return VariableFacts(findings=findings, source=dict(sample.source or {}), sample_name=sample.name,
                         n_rows=sample.n_rows, exclusions=[(item.reason, item.count) for item in sample.exclusions])


def _frame(parts, **options) -> ReportFrame:
    from narrator.phrasing.frame import frame_words
    from narrator.writer import ReportFrame

    words = frame_words(parts, **options)
    return ReportFrame(
        compact=options.get("settings", {}).get("audience") == "memo",
        details=words.details,
        figure_number=words.figure_number,
        table_number=words.table_number,
        appendix_title=words.appendix_title,
        appendix_intro=words.appendix_intro,
        appendix_header=words.appendix_header,
        appendix_rows=words.appendix_rows,
        appendix_lines=words.appendix_lines,
    )


def report_from_collection(
    collection: Collection,
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
    step: Callable[[str], None] | None = None,
    protect: tuple[str | os.PathLike[str] | None, ...] = (),
    force: bool = False,
) -> ReportOutcome:
    """One report on several variables and/or groups: overview, a part per variable, the set sidecar.

    The narrative comes from :func:`narrator.phrasing.sets.narrate_set`;
    each variable's figures are drawn from its own findings and sample, the
    side-by-side group figure from the shown groups only. The sidecar is the
    findings set (:mod:`narrator.history.sidecar`). ``ReportOutcome.findings`` is
    the first variable's overall findings.

    The previous build of this report (its sidecar, of either kind) is read by the sidecar
    policy. Each variable is matched with the previous variable of the same name; the build
    it is compared with follows :func:`narrator.history.changes.baseline_for` (unchanged data
    keep the last comparison, so a rebuild gives the same text), and its part of the report
    gets a "what changed" section. ``protect`` and ``force`` are those of
    :func:`report_from_findings`.
    """
    from narrator.phrasing.sets import SetOptions, narrate_set

    announce = step or (lambda _what: None)
    inputs = (input_path, template, *protect)
    check_output(output, protect=inputs, force=force)
    with output_lock(output):
        clean_stale(output)
        moment = generation_time(generated_at)
        previous = previous_build(output)
        findings_set = collection.findings_set(*_baselines(collection, previous.findings_set))
        narrative = narrate_set(findings_set, SetOptions(audience=audience, locale=locale, currency=currency,
                                                         title=title))
        announce("drawing the figures")
        figures = _collection_figures(collection, narrative, locale=locale)
        bank = load_bank(parse_locale(locale).language)
        settings = {
            "audience": audience, "locale": locale, "currency": currency, "title": title,
            "organisation": organisation, "template": Path(template).name if template is not None else None,
            "group_by": collection.group_by, "privacy_threshold": collection.privacy_threshold,
        }
        frame = collection_frame(bank, collection, locale=locale, organisation=organisation, generated_at=moment,
                                 settings=settings, sidecar=sidecar_path(output).name)
        names = [part.findings.variable.name for part in collection.variables]
        properties = {
            "title": narrative.title,
            "subject": frame.details[1] if organisation else frame.details[0],
            "author": author or organisation or "",
            "keywords": ", ".join(part for part in (*names, collection.group_by, audience) if part),
        }
        announce("writing the report")
        from narrator.writer import write_report

        sidecar = write_report(
            output, narrative, figures, frame=frame, properties=properties, generated_at=moment,
            template=template, protect=(input_path, *protect), sidecar=set_sidecar(findings_set), force=force,
        )
    notes = (previous.note,) if previous.note else ()
    return ReportOutcome(Path(output), sidecar, collection.variables[0].findings, narrative, moment, notes)


def _baselines(collection: Collection, previous: FindingsSet | None) -> tuple[list[Findings | None], list[tuple]]:
    """Per variable, the earlier findings it is compared with, and the shown groups of that earlier build
    (grouped by the same column; the last build's, or, for unchanged data, those it was compared with)."""
    if previous is None:
        return [], []
    earlier = {item.findings.variable.name: item for item in previous.variables}
    same_grouping = previous.group_by is not None and previous.group_by == collection.group_by
    chosen, groups = [], []
    for part in collection.variables:
        match = earlier.get(part.findings.variable.name)
        if match is not None and (match.findings.variable.unit or None) != (part.findings.variable.unit or None):
            match = None  # another unit: no comparison, rather than a wrong one
        baseline = None if match is None else baseline_for(part.findings, match.findings, match.baseline,
                                                           say_unchanged=True)
        chosen.append(baseline)
        if baseline is None or not same_grouping:
            groups.append(())
        else:
            groups.append(match.groups if baseline is match.findings else match.group_baselines)
    return chosen, groups


def _collection_figures(collection: Collection, narrative: Narrative, *, locale: str) -> list[RenderedFigure]:
    from narrator.figures.charts import DRAWERS, figure_size
    from narrator.figures.group_chart import group_rows

    size = figure_size(narrative.audience)
    rendered = []
    for text in narrative.figures:
        prefix, _, key = text.key.partition("-")
        part = collection.variables[int(prefix.removeprefix("v")) - 1]
        if key == "groups":
            shown = [(group.findings, group.sample) for group in part.groups if group.findings.center is not None]
            rendered.append(group_rows(shown, text, locale=locale, size=size))
            continue
        drawer = DRAWERS.get(key)
        if drawer is None:
            raise NarratorError(f"figure {key!r} is not one narrator draws (known: {', '.join(sorted(DRAWERS))})")
        figure = drawer(part.findings, part.sample, replace(text, key=key), locale=locale, size=size)
        rendered.append(replace(figure, key=text.key))
    return rendered


def collection_frame(
    bank: PhraseBank,
    collection: Collection,
    *,
    locale: str,
    organisation: str | None,
    generated_at: dt.datetime,
    settings: Mapping[str, Any],
    sidecar: str | None = None,
) -> ReportFrame:
    """The frame of a report on several variables: one data line, and per-variable rows in the appendix.

    Built on :func:`report_frame` for the first variable, so both kinds of
    report word their frame the same way; the rows that are about one column
    (column, rows read, values used, rows left out, and any setting that
    differs between variables) repeat for every variable, prefixed with its
    name; settings all variables share are listed once.
    """
    parts = [_variable_facts(part.findings, part.sample) for part in collection.variables]
    return _frame(parts, locale=locale, organisation=organisation, generated_at=generated_at, settings=settings,
                  sidecar=sidecar)
