"""The ``narrator`` command.

=============  ==============================================================
Command        What it does
=============  ==============================================================
``facts``      read one column and print the findings (a table, or ``--json``)
``tell``       read one column and print the narrative as plain text
``draft``      read one column and write the Word report and its findings sidecar
               (for both, ``--group-by`` breaks it down by a grouping column, through
               :func:`grouped_collection`, the one path every grouping command takes)
``recipe``     write a starter report recipe (TOML) for a data file
``redraft``    build every report a recipe names, each with its sidecar
``fill``       fill the marked places of your own Word document from the data
``mark``       turn the ``[narrator:...]`` markers typed in a document into places
=============  ==============================================================

Every command reports bad input as one line, ``narrator: <message>``, and
exits with status 2; no traceback reaches the user (set ``NARRATOR_DEBUG=1``
to see one for an internal error). Messages are one line, with terminal
control characters escaped and long names cut; running out of memory is said
to be that, with the stream engine suggested. A build that ignored something
the user should know (a damaged previous sidecar) says it once on stderr as
``narrator: note: <what>`` and still exits 0.
"""

from __future__ import annotations

import argparse
import contextlib
import errno
import os
import re
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from narrator import findings as findings_module
from narrator.errors import NarratorError

EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 1


def add_reading_options(parser: argparse.ArgumentParser) -> None:
    """Options that say how to read the column and what it means; shared by every command that reads data."""
    parser.add_argument("file", help="CSV, TSV, Excel (.xlsx) or Parquet file, or a folder or glob of Parquet files")
    parser.add_argument("--column", required=True,
                        help="column header, or its 1-based position; a header that is a number wins "
                             "(in a file with columns site,1,x, --column 1 is the column named 1)")
    parser.add_argument("--sheet", help="Excel sheet name, or its position (default: the first sheet)")
    parser.add_argument("--encoding", metavar="CODEC",
                        help="text encoding of a CSV/TSV file, e.g. cp1252, latin-1, utf-16 (default: a byte-order "
                             "mark decides, else UTF-8, cp1252 or latin-1 is detected from the start of the file)")
    parser.add_argument("--unit", help="unit of the values, e.g. days, litres, USD (nothing later changes it)")
    parser.add_argument("--label", help="how the report names the variable (default: the column name)")
    parser.add_argument("--valid-min", type=float, help="smallest possible value; smaller ones are impossible")
    parser.add_argument("--valid-max", type=float, help="largest possible value; larger ones are impossible")
    parser.add_argument(
        "--lower-bound", type=float, help="a bound the quantity cannot cross, such as 0 for a wait"
    )
    parser.add_argument("--upper-bound", type=float, help="an upper bound the quantity cannot cross")
    parser.add_argument(
        "--outlier-rule",
        choices=findings_module.OUTLIER_RULES,
        help="rule for flagging outliers (default: adjusted when clearly skewed, else tukey)",
    )
    parser.add_argument(
        "--population", action="store_true", help="the rows are the whole population: no intervals"
    )
    parser.add_argument(
        "--decimal-comma", action="store_true", help="numbers are written with a decimal comma (1.234,5)"
    )
    parser.add_argument(
        "--missing", action="append", default=[], metavar="TOKEN",
        help="an extra cell text that means missing (repeatable), e.g. --missing -99",
    )
    parser.add_argument(
        "--id-column", metavar="NAME",
        help="a column of record identifiers to show beside flagged values (none are read otherwise)",
    )
    parser.add_argument(
        "--engine", choices=("memory", "stream", "dask"),
        help="memory: read the file whole; stream: read in chunks on this machine (the default for a folder "
             "or glob of Parquet files); dask: on a Dask cluster (needs --scheduler)",
    )
    parser.add_argument("--scheduler", metavar="ADDRESS", help="Dask scheduler address, e.g. tcp://scheduler.example:8786")
    parser.add_argument("--chunk-rows", type=int, metavar="N", help="rows per chunk for the stream and dask engines")


def request_from_arguments(args: argparse.Namespace):
    """The :class:`~narrator.request.ColumnRequest` the reading options of a command describe."""
    from dataclasses import fields

    from narrator.request import ColumnRequest, ReadingOptions, VariableRequest

    def taken(kind) -> dict:
        return {item.name: getattr(args, item.name) for item in fields(kind) if hasattr(args, item.name)}

    reading = taken(ReadingOptions)
    reading["missing"] = tuple(reading.get("missing") or ())
    return ColumnRequest(path=args.file, variable=VariableRequest(**taken(VariableRequest)),
                         reading=ReadingOptions(**reading), id_column=args.id_column)


def read_and_describe(args: argparse.Namespace):
    """Read the column the options name and describe it: (sample, findings); a column with no number stops here."""
    from narrator.reading.files import shown_name
    from narrator.request import describe_request

    sample, findings = describe_request(request_from_arguments(args))
    require_numbers(sample, findings, f"{shown_name(Path(args.file).name)}: column {shown_name(repr(args.column))}")
    return sample, findings


def require_numbers(sample, findings, where: str) -> None:
    """One clear message, not a report with n = 0, when a column holds no number at all."""
    from narrator.reading.sample import no_numbers

    if findings.n == 0:
        raise NarratorError(f"{where} has no numbers to describe: {no_numbers(sample)}")


def facts_table(findings, locale: str = "en_US") -> str:
    """The findings as an aligned table for a terminal, worded from the phrase bank (narrator.phrasing.facts)."""
    from narrator.phrasing.facts import facts_table as worded_table

    return worded_table(findings, locale)


def command_facts(args: argparse.Namespace) -> int:
    _, found = read_and_describe(args)
    if args.json:
        sys.stdout.write(findings_module.dumps(found) + "\n")
    else:
        sys.stdout.write(facts_table(found, args.locale))
    return 0


def command_tell(args: argparse.Namespace) -> int:
    if args.group_by is not None:
        from narrator.phrasing.sets import SetOptions, narrate_set

        _, collection = grouped_collection(args)
        narrative = narrate_set(collection.findings_set(), SetOptions(audience=args.audience, locale=args.locale,
                                                                      currency=args.currency))
    else:
        from narrator.phrasing import narrate

        _, found = read_and_describe(args)
        narrative = narrate(found, args.audience, args.locale, currency=args.currency)
    sys.stdout.write(narrative.plain_text())
    return 0


def add_group_options(parser: argparse.ArgumentParser, group_help: str) -> None:
    """``--group-by`` and ``--privacy-threshold``, the one definition for every command that groups.

    The threshold's default is the groups' own (``narrator.groups.analysis.DEFAULT_PRIVACY_THRESHOLD``,
    applied by :func:`grouped_collection`): importing it here would load the numeric libraries for
    every command, ``--help`` included. :data:`PRIVACY_HELP_DEFAULT` is the number the help shows
    (tests/test_cli.py checks that it is that default)."""
    parser.add_argument("--group-by", metavar="COLUMN", help=group_help)
    parser.add_argument("--privacy-threshold", type=int, default=None, metavar="N",
                        help="with --group-by, groups with fewer than N values are not shown "
                             f"(default: {PRIVACY_HELP_DEFAULT})")


PRIVACY_HELP_DEFAULT = 10


def grouped_collection(args: argparse.Namespace, step=None):
    """The column the options name, broken down by ``--group-by``: (request, collection).

    The one path for every command that groups (tell, draft, fill): the request from the reading
    options, the engine check (grouping needs the memory engine), the groups with the privacy
    threshold, and one clear message for a column with no number.
    """
    from narrator.groups.analysis import analyse_file
    from narrator.reading.files import shown_name
    from narrator.request import engine_for

    request = request_from_arguments(args)
    engine_for(request, group_by=args.group_by)
    threshold = {} if args.privacy_threshold is None else {"privacy_threshold": args.privacy_threshold}
    collection = analyse_file(args.file, [request.variable], reading=request.reading, group_by=args.group_by,
                              step=step, **threshold)
    for part in collection.variables:
        require_numbers(part.sample, part.findings,
                        f"{shown_name(Path(args.file).name)}: column {shown_name(repr(args.column))}")
    return request, collection


def command_draft(args: argparse.Namespace) -> int:
    from narrator.safe_io import refuse_same_file

    refuse_same_file(args.output, args.file)  # before any work, not only at the end
    if args.group_by is not None:
        return _draft_by_group(args)
    from narrator.figures.helper_process import DrawingHelper, worth_a_helper
    from narrator.safe_io import check_output

    check_output(args.output, protect=(args.file, args.template), force=args.force)
    # A large input: a helper process loads the plotting library while this one reads (narrator.figures.helper_process).
    # It starts before this process imports the engine and the phrase builders, so those imports overlap it too.
    helper = DrawingHelper.start() if worth_a_helper(args.file) else None
    try:
        from narrator.report import report_from_findings
        from narrator.request import naming_the_input

        request = request_from_arguments(args)
        sample, found = read_and_describe(args)
        with naming_the_input(request):
            outcome = report_from_findings(
                sample, found, args.output, input_path=args.file, audience=args.audience, locale=args.locale,
                currency=args.currency, title=args.title, organisation=args.organisation, template=args.template,
                author=args.author, drawing=helper, force=args.force,
            )
    finally:
        if helper is not None:
            helper.close()
    _say_notes([outcome])
    sys.stdout.write(f"wrote {outcome.report} and {outcome.sidecar}\n")
    return 0


def _say_notes(outcomes) -> None:
    from narrator.report import ReportOutcome

    for outcome in outcomes:
        if isinstance(outcome, ReportOutcome):  # a filled document says its own notes in its lines
            for note in outcome.notes:
                sys.stderr.write(f"narrator: note: {one_line(note)}\n")


def _draft_by_group(args: argparse.Namespace) -> int:
    from narrator.progress import progress_for
    from narrator.report import report_from_collection
    from narrator.request import engine_for, naming_the_input
    from narrator.safe_io import check_output

    engine_for(request_from_arguments(args), group_by=args.group_by)  # before the output is checked
    check_output(args.output, protect=(args.file, args.template), force=args.force)
    progress = progress_for(None, quiet=args.quiet)
    try:
        request, collection = grouped_collection(args, progress.step)
        with naming_the_input(request):
            outcome = report_from_collection(
                collection, args.output, input_path=args.file, audience=args.audience, locale=args.locale,
                currency=args.currency, title=args.title, organisation=args.organisation, template=args.template,
                author=args.author, step=progress.step, force=args.force,
            )
    finally:
        progress.finish()
    _say_notes([outcome])
    sys.stdout.write(f"wrote {outcome.report} and {outcome.sidecar}\n")
    return 0


def command_recipe(args: argparse.Namespace) -> int:
    from narrator.recipe import write_starter_recipe

    written = write_starter_recipe(args.file, args.output, sheet=args.sheet, decimal_comma=args.decimal_comma,
                                   encoding=args.encoding, force=args.force)
    sys.stdout.write(f"wrote {written}\n")
    return 0


def command_redraft(args: argparse.Namespace) -> int:
    from narrator.progress import progress_for
    from narrator.recipe import build_recipe, load_recipe

    recipe = load_recipe(args.recipe)
    progress = progress_for(None, quiet=args.quiet)
    try:
        outcomes = build_recipe(recipe, step=progress.step, force=args.force)
    finally:
        progress.finish()
    _say_notes(outcomes)
    for outcome in outcomes:
        lines = outcome.lines() if hasattr(outcome, "lines") else [f"wrote {outcome.report} and {outcome.sidecar}"]
        sys.stdout.write("".join(line + "\n" for line in lines))
    return 0


_RECIPE_SAYS = ("column", "sheet", "unit", "label", "valid_min", "valid_max", "lower_bound", "upper_bound",
                "outlier_rule", "id_column", "engine", "scheduler", "chunk_rows", "group_by", "locale", "currency",
                "encoding")


def command_fill(args: argparse.Namespace) -> int:
    from narrator.places.fill import fill_document, single_collection
    from narrator.progress import progress_for

    source = Path(args.file)
    progress = progress_for(None, quiet=args.quiet)
    try:
        if source.suffix.lower() == ".toml":
            from narrator.recipe import load_recipe, recipe_collection

            given = [name.replace("_", "-") for name in _RECIPE_SAYS if getattr(args, name, None) is not None]
            given += [flag for flag, on in (("population", args.population), ("decimal-comma", args.decimal_comma),
                                            ("missing", args.missing)) if on]
            if given:
                raise NarratorError(f"with a recipe ({source.name}), the recipe says how to read and word the "
                                    f"data; leave out --{', --'.join(given)}")
            recipe = load_recipe(source)
            collection = recipe_collection(recipe, step=progress.step)
            options = dict(locale=recipe.report.locale, currency=recipe.report.currency,
                           generated_at=recipe.report.generated, protect=(recipe.data.path, source,
                                                                           recipe.report.template))
        else:
            if args.column is None:
                raise NarratorError("--column is required with a data file (or give a recipe .toml instead)")
            if args.group_by is not None:
                collection = grouped_collection(args, progress.step)[1]
            else:
                collection = single_collection(*read_and_describe(args))
            options = dict(locale=args.locale or "en_US", currency=args.currency, protect=(source,))
        outcome = fill_document(args.document, collection, output=args.output, replace_edits=args.replace_edits,
                                **options)
    finally:
        progress.finish()
    sys.stdout.write("".join(line + "\n" for line in outcome.lines()))
    return 0


def command_mark(args: argparse.Namespace) -> int:
    from narrator.places.fill import mark_document

    outcome = mark_document(args.document, output=args.output)
    sys.stdout.write("".join(line + "\n" for line in outcome.lines()))
    return 0


def command_demo(args: argparse.Namespace) -> int:
    from narrator.demo import INVENTED, run_demo
    from narrator.progress import progress_for

    progress = progress_for(None, quiet=args.quiet)
    try:
        outcomes = run_demo(Path(args.output), step=progress.step)
    finally:
        progress.finish()
    _say_notes(outcomes)
    sys.stdout.write(f"{INVENTED}\n")
    for outcome in outcomes:
        sys.stdout.write(f"wrote {outcome.report}\n")
    return 0


def command_compare(args: argparse.Namespace) -> int:
    from narrator.history.changes import check_comparable, compare, compare_sets
    from narrator.history.sidecar import read_findings_file
    from narrator.phrasing.narrative import Narrative
    from narrator.phrasing.numbers import parse_locale
    from narrator.phrasing.what_changed import changes_section, set_changes_narrative

    old, new = read_findings_file(args.old), read_findings_file(args.new)
    if len(old.variables) == len(new.variables) == 1 and not old.group_by and not new.group_by:
        before, after = old.variables[0].findings, new.variables[0].findings
        check_comparable(before, after)
        section = changes_section(compare(before, after), before, after, locale=args.locale, currency=args.currency)
        parsed = parse_locale(args.locale)
        narrative = Narrative(audience="changes", locale=str(parsed), language=parsed.language,
                              title=section.title, sections=(section,))
    else:  # several variables, or groups: each variable, and each group both builds show
        narrative = set_changes_narrative(compare_sets(old, new), locale=args.locale, currency=args.currency)
    sys.stdout.write(narrative.plain_text())
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="narrator", description="Describe a column of numbers in careful, plain words."
    )
    parser.add_argument("--version", action="version", version=_version())
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
    commands.required = True

    facts = commands.add_parser("facts", help="print the findings for one column")
    add_reading_options(facts)
    facts.add_argument("--json", action="store_true", help="print the findings as JSON (codes, not words)")
    facts.add_argument("--locale", default="en_US", help="CLDR locale for the table's words and numbers")
    facts.set_defaults(handler=command_facts)

    tell = commands.add_parser("tell", help="print the narrative for one column as plain text")
    add_reading_options(tell)
    tell.add_argument("--audience", default="memo", choices=("memo", "methods", "full"),
                      help="who the text is for (default: memo)")
    tell.add_argument("--locale", default="en_US", help="CLDR locale for words and numbers, e.g. en_US, es_ES, fr_FR")
    tell.add_argument("--currency", help="ISO 4217 code when the values are money, e.g. USD, EUR")
    add_group_options(tell, "compare the groups of this column (site, program, year...), as a grouped report does")
    tell.set_defaults(handler=command_tell)

    draft = commands.add_parser("draft", help="write the Word report (.docx) for one column")
    add_reading_options(draft)
    draft.add_argument("-o", "--output", required=True, metavar="REPORT.docx", help="where to write the report")
    draft.add_argument("--audience", default="full", choices=("memo", "methods", "full"),
                       help="who the report is for (default: full)")
    draft.add_argument("--locale", default="en_US", help="CLDR locale for words and numbers, e.g. en_US, es_ES, fr_FR")
    draft.add_argument("--currency", help="ISO 4217 code when the values are money, e.g. USD, EUR")
    draft.add_argument("--title", help="report title (default: from the phrase bank)")
    draft.add_argument("--organisation", help="organisation named under the title")
    draft.add_argument("--author", help="document author property (default: the organisation)")
    draft.add_argument("--template", help="a .docx whose styles, page and headers the report takes")
    add_group_options(draft, "break the figures down by this column (site, program, year...)")
    draft.add_argument("--quiet", action="store_true", help="show no progress line")
    draft.add_argument("--force", action="store_true",
                       help="replace the output even when it is not a report narrator wrote, or was edited since")
    draft.set_defaults(handler=command_draft)

    recipe = commands.add_parser("recipe", help="write a starter report recipe (TOML) for a data file")
    recipe.add_argument("file", help="CSV, TSV, Excel (.xlsx) or Parquet file")
    recipe.add_argument("-o", "--output", required=True, metavar="RECIPE.toml", help="where to write the recipe")
    recipe.add_argument("--sheet", help="Excel sheet name or position (default: the first sheet)")
    recipe.add_argument("--decimal-comma", action="store_true",
                        help="numbers are written with a decimal comma (1.234,5)")
    recipe.add_argument("--encoding", metavar="CODEC", help="text encoding of a CSV/TSV file (default: detected)")
    recipe.add_argument("--force", action="store_true", help="replace the recipe file if it exists")
    recipe.set_defaults(handler=command_recipe)

    redraft = commands.add_parser("redraft", help="build every report a recipe names")
    redraft.add_argument("recipe", metavar="RECIPE.toml", help="the report recipe")
    redraft.add_argument("--quiet", action="store_true", help="show no progress line")
    redraft.add_argument("--force", action="store_true",
                         help="replace the recipe's outputs even when one is not a report narrator wrote, or was "
                              "edited since")
    redraft.set_defaults(handler=command_redraft)

    fill = commands.add_parser(
        "fill", help="fill the marked places of your own Word document (.docx) from the data",
        description="Fill every marked place (a content control tagged narrator:<target>) of DOCUMENT from the "
                    "data: a recipe (.toml) or a data file read with the options below. The document is written "
                    "back in place, or to -o; nothing outside the places changes.",
    )
    fill.add_argument("document", metavar="DOCUMENT.docx", help="your Word document with marked places")
    add_reading_options(fill)
    for action in fill._actions:  # a recipe says how to read the data, so these become optional here
        if action.dest == "column":
            action.required = False
        if action.dest == "file":
            action.metavar = "RECIPE.toml|DATA"
            action.help = "a recipe (.toml), or a CSV, TSV, Excel (.xlsx) or Parquet file read with the options"
    fill.add_argument("--locale", help="CLDR locale for words and numbers, e.g. en_US, es_ES, fr_FR (default: en_US)")
    fill.add_argument("--currency", help="ISO 4217 code when the values are money, e.g. USD, EUR")
    add_group_options(fill, "groups for the groups table (site, program, year...)")
    fill.add_argument("--replace-edits", action="store_true",
                      help="fill the places edited by hand since the last fill too (they are kept otherwise)")
    fill.add_argument("-o", "--output", metavar="OUTPUT.docx",
                      help="write the filled document here instead of in place")
    fill.add_argument("--quiet", action="store_true", help="show no progress line")
    fill.set_defaults(handler=command_fill)

    mark = commands.add_parser(
        "mark", help="turn markers such as [narrator:median] typed in a document into places to fill",
        description="Turn every marker typed in DOCUMENT ([narrator:<target>] or [narrator:<target>@<variable>]) "
                    "into a content control that narrator fill fills: a marker alone in its paragraph becomes a "
                    "place around the paragraph, one inside a line a place inside it.",
    )
    mark.add_argument("document", metavar="DOCUMENT.docx", help="your Word document with typed markers")
    mark.add_argument("-o", "--output", metavar="OUTPUT.docx", help="write the marked document here instead of "
                                                                     "in place")
    mark.set_defaults(handler=command_mark)

    demo = commands.add_parser("demo", help="write example reports from invented data that ships with narrator")
    demo.add_argument("-o", "--output", default="narrator-demo", metavar="FOLDER",
                      help="a new or empty folder (or one the demo wrote) for the example data, recipes and "
                           "reports (default: narrator-demo)")
    demo.add_argument("--quiet", action="store_true", help="show no progress line")
    demo.set_defaults(handler=command_demo)

    compare = commands.add_parser("compare", help="say in plain words what changed between two findings files")
    compare.add_argument("old", metavar="OLD.findings.json", help="findings of the earlier build")
    compare.add_argument("new", metavar="NEW.findings.json", help="findings of the later build")
    compare.add_argument("--locale", default="en_US", help="CLDR locale for words and numbers")
    compare.add_argument("--currency", help="ISO 4217 code when the values are money")
    compare.set_defaults(handler=command_compare)
    return parser


def _version() -> str:
    from narrator import __version__

    return f"narrator {__version__}"


MESSAGE_LENGTH = 2000  # characters of one message line before it is cut


def one_line(message: str) -> str:
    """A message as one safe line: line breaks become spaces, control characters are escaped, long text is cut.

    >>> print(one_line("bad" + chr(10) + "header " + chr(27) + "[2J"))
    bad header \\u001b[2J
    """
    text = re.sub(r"\s*[\r\n\u2028\u2029\x0b\x0c\x85]+\s*", " ", message.strip())
    text = "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in text[: MESSAGE_LENGTH + 1])
    return text if len(text) <= MESSAGE_LENGTH else text[: MESSAGE_LENGTH - 1] + "\u2026"


def _plotting_cache() -> None:
    """Point matplotlib at a temporary cache folder when the usual one cannot be written.

    matplotlib would otherwise make one itself and print a warning before narrator's own
    line (a home folder that is read-only, or none at all).
    """
    if os.environ.get("MPLCONFIGDIR"):
        return
    home = os.environ.get("XDG_CONFIG_HOME") or os.path.join(os.path.expanduser("~"), ".config")
    usual = os.path.join(home, "matplotlib")
    try:
        os.makedirs(usual, exist_ok=True)
        writable = os.access(usual, os.W_OK)
    except OSError:
        writable = False
    if not writable:
        from narrator.safe_io import temporary_folder

        with contextlib.suppress(OSError):
            os.environ["MPLCONFIGDIR"] = str(temporary_folder("matplotlib"))


def _input_of(args: argparse.Namespace) -> str:
    from narrator.reading.files import shown_name

    given = getattr(args, "file", None) or getattr(args, "recipe", None)
    return f" {shown_name(os.path.basename(os.fspath(given)) or given)}" if given else ""


def _out_of_memory(args: argparse.Namespace) -> int:
    sys.stderr.write(f"narrator: out of memory while reading or describing{_input_of(args)}; the stream engine "
                     "(--engine stream, or engine = \"stream\" in a recipe) reads a CSV, TSV or Parquet input in "
                     "chunks with bounded memory\n")
    return EXIT_BAD_INPUT


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    handler: Callable[[argparse.Namespace], int] = args.handler
    _plotting_cache()
    try:
        return handler(args)
    except NarratorError as exc:
        sys.stderr.write(f"narrator: {one_line(str(exc))}\n")
        return EXIT_BAD_INPUT
    except MemoryError:
        return _out_of_memory(args)
    except KeyboardInterrupt:
        sys.stderr.write("narrator: interrupted\n")
        return 130
    except BrokenPipeError:
        return 0
    except OSError as exc:
        if exc.errno == errno.ENOMEM:
            return _out_of_memory(args)
        where = f" {os.path.basename(exc.filename)}:" if getattr(exc, "filename", None) else ""
        sys.stderr.write(f"narrator:{one_line(where)} {one_line(exc.strerror or str(exc))}\n")
        return EXIT_BAD_INPUT
    except Exception as exc:  # an internal error: one line, not a traceback
        if os.environ.get("NARRATOR_DEBUG"):
            raise
        sys.stderr.write(
            f"narrator: internal error ({type(exc).__name__}: {one_line(str(exc))[:300]}); "
            "please report it; set NARRATOR_DEBUG=1 to see details\n"
        )
        return EXIT_INTERNAL


def run() -> None:
    """The ``narrator`` command: :func:`main`, then a quick exit.

    Once the command's work is done and its output flushed, the process leaves without the
    interpreter's tidy-up of the libraries it loaded (a tenth of a second, longer than some
    whole commands): every file is already written and closed by then. A command that started
    a Dask client exits the usual way, so the client can say goodbye to its cluster.
    """
    code = main()
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except BrokenPipeError:
            pass  # the reader stopped early (``| head``): not a failure, as in main
        except (OSError, ValueError):
            code = code or EXIT_BAD_INPUT
    if "distributed" in sys.modules:
        raise SystemExit(code)
    os._exit(code)


if __name__ == "__main__":
    run()
