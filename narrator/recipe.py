"""Report recipes: one TOML file that says everything a report needs, so it can be rebuilt the same way.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`load_recipe`            a recipe file -> :class:`Recipe`, fully checked
:func:`build_recipe`           every output a recipe names, with its sidecar
:func:`starter_recipe`         the text of a commented starter recipe for a file
:func:`write_starter_recipe`   that text, written atomically, never over a file
:class:`Recipe`                the checked recipe (frozen)
:class:`DataSettings`          the ``[data]`` table
:class:`ReportSettings`        the ``[report]`` table
:class:`Output`                one ``[outputs]`` entry: audience and report path
:func:`recipe_collection`      the recipe's data, read and described (no report written)
:data:`MARKED`                 the ``[outputs]`` key of documents with marked places
:data:`RECIPE_KEYS`            every key each table takes, with its kind
=============================  ================================================

Layout (keys are ours; every path is relative to the recipe's folder)::

    [data]       path, sheet, decimal_comma, missing, encoding, group_by, privacy_threshold,
                 engine (memory, stream, dask), scheduler (a Dask scheduler address)
    [report]     title, organisation, locale, currency, template, generated
    [outputs]    <audience> = "<report path>.docx"   (memo, methods, full)
                 marked = "<your document>.docx"  (or a list): documents of the user's own
                 whose marked places each build fills in place (narrator.places)
    [[variables]] column, label, unit, valid_min, valid_max, lower_bound,
                 upper_bound, population, outlier_rule

A recipe is plain data: it is read with :mod:`tomllib`, checked key by key,
and never evaluated; no value is run, imported or templated.

Error messages name the recipe file, the key, its line and, for an unknown
key, the closest valid one (:func:`difflib.get_close_matches`). tomllib does
not report where a key was, so :class:`_KeyLines` scans the text once: it
follows table headers (``[data]``, ``[[variables]]``, counting array entries)
and records the line of every ``key =`` (bare, quoted or dotted keys),
skipping the inside of multi-line strings. A key defined in an inline table
is reported at the line of the table's own key. TOML syntax errors carry
tomllib's own message, which gives the line and column.
"""

from __future__ import annotations

import datetime as dt
import difflib
import json
import math
import os
import re
import tomllib
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from narrator.errors import NarratorError
from narrator.findings import OUTLIER_RULES
from narrator.groups.analysis import DEFAULT_PRIVACY_THRESHOLD
from narrator.request import ColumnRequest, ReadingOptions, VariableRequest

AUDIENCE_NAMES = ("memo", "methods", "full")  # as narrator.phrasing.planner.AUDIENCES
MARKED = "marked"  # [outputs] key: the user's own documents whose marked places a build fills

# Kinds of value a key takes, with the words an error uses for each.
_KIND_WORDS = {
    "text": "text in quotes",
    "whole": "a whole number",
    "number": "a number",
    "bool": "true or false",
    "texts": "a list of text (or numbers), such as [\"-99\", \"not recorded\"]",
    "column": "a column name in quotes, or its position (1, 2, ...)",
    "sheet": "a sheet name in quotes, or its position (1, 2, ...)",
    "time": "a date and time with a time zone, such as 2026-12-01T09:00:00Z",
}

RECIPE_KEYS: dict[str, dict[str, str]] = {
    "data": {
        "path": "text", "sheet": "sheet", "decimal_comma": "bool", "missing": "texts", "encoding": "text",
        "group_by": "text", "privacy_threshold": "whole", "engine": "text", "scheduler": "text",
    },
    "report": {
        "title": "text", "organisation": "text", "locale": "text", "currency": "text", "template": "text",
        "generated": "time",
    },
    "variables": {
        "column": "column", "label": "text", "unit": "text", "valid_min": "number", "valid_max": "number",
        "lower_bound": "number", "upper_bound": "number", "population": "bool", "outlier_rule": "text",
    },
}
TOP_LEVEL = ("data", "report", "outputs", "variables")


@dataclass(frozen=True, slots=True)
class DataSettings:
    path: Path  # resolved against the recipe's folder
    path_text: str  # as written in the recipe, for messages
    sheet: str | int | None = None
    decimal_comma: bool = False
    missing: tuple[str | int | float, ...] = ()
    group_by: str | None = None
    privacy_threshold: int = DEFAULT_PRIVACY_THRESHOLD
    engine: str | None = None  # "memory", "stream" or "dask"; None: stream for a folder or glob
    scheduler: str | None = None  # Dask scheduler address for engine = "dask"
    encoding: str | None = None  # a text file's encoding; None: detected

    @property
    def reading(self) -> ReadingOptions:
        """How the data file is read, as :mod:`narrator.request` takes it."""
        return ReadingOptions(sheet=self.sheet, decimal_comma=self.decimal_comma, missing=self.missing,
                              encoding=self.encoding, engine=self.engine, scheduler=self.scheduler)


@dataclass(frozen=True, slots=True)
class ReportSettings:
    title: str | None = None
    organisation: str | None = None
    locale: str = "en_US"
    currency: str | None = None
    template: Path | None = None
    generated: dt.datetime | None = None


@dataclass(frozen=True, slots=True)
class Output:
    audience: str
    path: Path  # resolved against the recipe's folder
    path_text: str


@dataclass(frozen=True, slots=True)
class Recipe:
    source: Path  # the recipe file
    data: DataSettings
    report: ReportSettings
    outputs: tuple[Output, ...]
    variables: tuple[VariableRequest, ...]
    marked: tuple[Output, ...] = ()  # [outputs] marked: documents filled in place, audience "marked"
    variable_lines: tuple[int | None, ...] = ()  # the line of each [[variables]] table's column key

    def require_numbers(self, index: int, sample, findings) -> None:
        """Stop with the recipe line that names a column holding no number at all."""
        from narrator.reading.sample import no_numbers

        if findings.n == 0:
            line = self.variable_lines[index] if index < len(self.variable_lines) else None
            where = f"{self.source.name}, line {line}" if line is not None else self.source.name
            raise NarratorError(f"{where}: column {self.variables[index].column!r} of {self.data.path_text} has no "
                                f"numbers to describe: {no_numbers(sample)}")

    @property
    def folder(self) -> Path:
        return self.source.parent


# --------------------------------------------------------------------------- where keys are


_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\[\]]+?)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r"""^\s*((?:[A-Za-z0-9_-]+|"[^"]*"|'[^']*')(?:\s*\.\s*(?:[A-Za-z0-9_-]+|"[^"]*"|'[^']*'))*)\s*=""")


def _split_key(text: str) -> tuple[str, ...]:
    parts = re.findall(r"""[A-Za-z0-9_-]+|"[^"]*"|'[^']*'""", text)
    return tuple(part[1:-1] if part[:1] in "\"'" else part for part in parts)


class _KeyLines:
    """Line numbers of table headers and keys in a recipe's text (1-based).

    ``table`` is a top-level table name ("" for keys before any header) and
    ``entry`` the 0-based entry of an array of tables (``[[variables]]``).
    """

    __slots__ = ("_headers", "_keys")

    def __init__(self, text: str) -> None:
        self._headers: dict[tuple[str, int | None], int] = {}
        self._keys: dict[tuple[str, int | None, str], int] = {}
        table, entry = "", None
        entries: dict[str, int] = {}
        in_string: str | None = None
        for number, line in enumerate(text.splitlines(), start=1):
            if in_string is not None:
                if line.count(in_string) % 2 == 1:
                    in_string = None
                continue
            header = _HEADER.match(line)
            if header:
                path = _split_key(header.group(2))
                name = path[0] if path else ""
                if header.group(1) == "[[":
                    entry = entries.get(name, -1) + 1
                    entries[name] = entry
                else:
                    entry = None
                table = name
                self._headers.setdefault((name, entry), number)
                continue
            key = _KEY.match(line)
            if key:
                path = _split_key(key.group(1))
                if table == "" and len(path) > 1:  # data.path = "..." at the top level
                    self._keys.setdefault((path[0], None, path[1]), number)
                self._keys.setdefault((table, entry, path[0]), number)
                rest = line[key.end():]
                for quote in ('"""', "'''"):
                    if rest.count(quote) % 2 == 1:
                        in_string = quote

    def key(self, table: str, entry: int | None, key: str) -> int | None:
        found = self._keys.get((table, entry, key))
        if found is None and entry is None:
            found = self._keys.get(("", None, table)) if key == table else None
        return found

    def table(self, table: str, entry: int | None = None) -> int | None:
        return self._headers.get((table, entry)) or self._keys.get(("", None, table))


# --------------------------------------------------------------------------- checking


class _Checker:
    """Checks values and builds error messages that name file, line, key and a close valid key."""

    __slots__ = ("lines", "name")

    def __init__(self, name: str, lines: _KeyLines) -> None:
        self.name = name
        self.lines = lines

    def fail(self, message: str, line: int | None) -> NarratorError:
        where = f"{self.name}, line {line}" if line is not None else self.name
        return NarratorError(f"{where}: {message}")

    def line(self, table: str, entry: int | None, key: str | None) -> int | None:
        if key is None:
            return self.lines.table(table, entry)
        return self.lines.key(table, entry, key) or self.lines.table(table, entry)

    @staticmethod
    def place(table: str, entry: int | None) -> str:
        return f"[[{table}]] entry {entry + 1}" if entry is not None else f"[{table}]"

    def unknown(self, table: str, entry: int | None, key: str, valid: Sequence[str]) -> NarratorError:
        close = difflib.get_close_matches(key, list(valid), n=1, cutoff=0.5)
        hint = f"; did you mean '{close[0]}'?" if close else f"; valid keys: {', '.join(valid)}"
        return self.fail(f"unknown key '{key}' in {self.place(table, entry)}{hint}", self.line(table, entry, key))

    def value(self, table: str, entry: int | None, key: str, value: Any) -> Any:
        kind = RECIPE_KEYS[table][key]
        ok = {
            "text": isinstance(value, str),
            "whole": isinstance(value, int) and not isinstance(value, bool),
            "number": isinstance(value, int | float) and not isinstance(value, bool)
            and math.isfinite(float(value)),
            "bool": isinstance(value, bool),
            "texts": isinstance(value, list) and all(
                isinstance(item, str) or (isinstance(item, int | float) and not isinstance(item, bool))
                for item in value),
            "column": isinstance(value, str) or (isinstance(value, int) and not isinstance(value, bool)),
            "sheet": isinstance(value, str) or (isinstance(value, int) and not isinstance(value, bool)),
            "time": isinstance(value, dt.datetime | dt.date | str),
        }[kind]
        if not ok:
            shown = json.dumps(value, default=str, ensure_ascii=False)
            raise self.fail(
                f"{self.place(table, entry)} {key} must be {_KIND_WORDS[kind]}, not {shown} ({_kind_of(value)})",
                self.line(table, entry, key),
            )
        if isinstance(value, str) and not value.strip() and kind in ("text", "column", "sheet"):
            raise self.fail(f"{self.place(table, entry)} {key} is empty", self.line(table, entry, key))
        return value


def _kind_of(value: Any) -> str:
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, int):
        return "a whole number"
    if isinstance(value, float):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, dt.datetime | dt.date | dt.time):
        return "a date or time"
    return type(value).__name__


def _table(checker: _Checker, data: dict[str, Any], name: str, *, required: bool) -> dict[str, Any]:
    value = data.get(name)
    if value is None:
        if required:
            raise checker.fail(f"the recipe needs a [{name}] table", None)
        return {}
    if not isinstance(value, dict):
        raise checker.fail(f"'{name}' must be a table ([{name}]), not {_kind_of(value)}",
                           checker.line("", None, name))
    return value


def _known(checker: _Checker, table: str, entry: int | None, values: dict[str, Any]) -> dict[str, Any]:
    valid = list(RECIPE_KEYS[table])
    for key in values:
        if key not in valid:
            raise checker.unknown(table, entry, key, valid)
    return {key: checker.value(table, entry, key, value) for key, value in values.items()}


def _recipe_path(folder: Path, text: str) -> Path:
    path = Path(text).expanduser()
    return (path if path.is_absolute() else folder / path).resolve()


def _existing_file(checker: _Checker, folder: Path, table: str, key: str, text: str) -> Path:
    path = _recipe_path(folder, text)
    if not path.is_file():
        state = "is a folder, not a file" if path.is_dir() else "does not exist"
        raise checker.fail(
            f"[{table}] {key} = \"{text}\" {state} (paths are relative to the recipe's folder, {folder})",
            checker.line(table, None, key),
        )
    return path


def _generated(checker: _Checker, value: Any) -> dt.datetime | None:
    line = checker.line("report", None, "generated")
    if value is None:
        return None
    if isinstance(value, str):
        try:
            value = dt.datetime.fromisoformat(value.strip())
        except ValueError:
            raise checker.fail(f"[report] generated = \"{value}\" is not a date and time; write it as "
                               "2026-12-01T09:00:00Z", line) from None
    if not isinstance(value, dt.datetime):
        value = dt.datetime.combine(value, dt.time(0, 0), tzinfo=dt.UTC)  # a date alone: midnight UTC
    if value.tzinfo is None:
        raise checker.fail("[report] generated needs a time zone, so every machine builds the same date: "
                           "add Z (UTC) or an offset such as +01:00", line)
    return value.astimezone(dt.UTC).replace(microsecond=0)


def _locale_and_currency(checker: _Checker, report: dict[str, Any]) -> tuple[str, str | None]:
    from babel.numbers import UnknownCurrencyError, validate_currency

    from narrator.phrasing.bank import available_languages
    from narrator.phrasing.numbers import parse_locale

    locale = report.get("locale", "en_US")
    try:
        language = parse_locale(locale).language
    except NarratorError as exc:
        raise checker.fail(f"[report] locale: {exc}", checker.line("report", None, "locale")) from None
    if language not in available_languages():
        raise checker.fail(
            f"[report] locale {locale!r}: there are no words for language {language!r} yet; "
            f"available: {', '.join(available_languages())}", checker.line("report", None, "locale"))
    currency = report.get("currency")
    if currency is not None:
        try:
            validate_currency(currency.upper())
        except UnknownCurrencyError:
            raise checker.fail(f"[report] currency {currency!r} is not an ISO 4217 code (such as USD or EUR)",
                               checker.line("report", None, "currency")) from None
        currency = currency.upper()
    return locale, currency


def _variable(checker: _Checker, entry: int, values: Any) -> VariableRequest:
    if not isinstance(values, dict):
        raise checker.fail(f"[[variables]] entry {entry + 1} must be a table", checker.line("variables", entry, None))
    checked = _known(checker, "variables", entry, values)
    if "column" not in checked:
        raise checker.fail(f"[[variables]] entry {entry + 1} needs a column = \"...\"",
                           checker.line("variables", entry, None))
    rule = checked.get("outlier_rule")
    if rule is not None and rule not in OUTLIER_RULES:
        close = difflib.get_close_matches(rule, OUTLIER_RULES, n=1, cutoff=0.4)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        raise checker.fail(f"[[variables]] entry {entry + 1} outlier_rule '{rule}' is not one of "
                           f"{', '.join(OUTLIER_RULES)} (leave it out for the automatic choice){hint}",
                           checker.line("variables", entry, "outlier_rule"))
    for low_key, high_key in (("valid_min", "valid_max"), ("lower_bound", "upper_bound")):
        low, high = checked.get(low_key), checked.get(high_key)
        if low is not None and high is not None and low >= high and not (low == high and low_key == "valid_min"):
            raise checker.fail(f"[[variables]] entry {entry + 1} {low_key} ({low:g}) must be below "
                               f"{high_key} ({high:g})", checker.line("variables", entry, high_key))
    numbers = {key: float(checked[key]) for key in ("valid_min", "valid_max", "lower_bound", "upper_bound")
               if key in checked}
    return VariableRequest(
        column=checked["column"], label=checked.get("label"), unit=checked.get("unit"),
        population=checked.get("population", False), outlier_rule=rule, **numbers,
    )


def _output_path(folder: Path, text: str) -> Path:
    # Absolute, but links not followed: a report replaces a link, never the file it points to.
    path = Path(text).expanduser()
    return Path(os.path.abspath(path if path.is_absolute() else folder / path))


def _same_file(output: Path, other: Path) -> bool:
    """Whether the report at ``output`` or its sidecar would be ``other`` (links and hard links followed)."""
    from narrator.safe_io import refuse_same_file, sidecar_path

    for candidate in (output, sidecar_path(output)):
        try:
            refuse_same_file(candidate, other)
        except NarratorError:
            return True
    return False


def _marked(checker: _Checker, folder: Path, value: Any, seen: dict[str, str],
            protected: dict[str, Path | None]) -> list[Output]:
    """The ``marked`` documents: one path or a list, each an existing .docx of the user's."""
    line = checker.line("outputs", None, MARKED)
    texts = value if isinstance(value, list) else [value]
    if not texts or not all(isinstance(text, str) and text.strip() for text in texts):
        raise checker.fail(f"[outputs] {MARKED} must be a document path in quotes, such as \"quarterly.docx\", or "
                           f"a list of them, not {json.dumps(value, default=str)} ({_kind_of(value)})", line)
    found = []
    for text in texts:
        if Path(text).suffix.lower() != ".docx":
            raise checker.fail(f"[outputs] {MARKED} = \"{text}\" must end in .docx", line)
        path = _existing_file(checker, folder, "outputs", MARKED, text)
        for what, other in protected.items():
            if other is not None and _same_file(path, other):
                raise checker.fail(f"[outputs] {MARKED} = \"{text}\" is {what}; a document to fill must not be it",
                                   line)
        key = os.path.normcase(os.path.abspath(path))
        if key in seen:
            raise checker.fail(f"[outputs] {MARKED} and {seen[key]} name the same document \"{text}\"", line)
        seen[key] = MARKED
        found.append(Output(MARKED, path, text))
    return found


def _outputs(checker: _Checker, folder: Path, values: dict[str, Any],
             protected: dict[str, Path | None]) -> tuple[tuple[Output, ...], tuple[Output, ...]]:
    """(the reports, the marked documents) an [outputs] table names."""
    if not values:
        raise checker.fail("[outputs] names no report; add a line such as full = \"report.docx\"",
                           checker.line("outputs", None, None))
    outputs, seen = [], {}
    marked: list[Output] = []
    for audience, text in values.items():
        line = checker.line("outputs", None, audience)
        if audience == MARKED:
            marked = _marked(checker, folder, text, seen, protected)
            continue
        if audience not in AUDIENCE_NAMES:
            close = difflib.get_close_matches(audience, AUDIENCE_NAMES, n=1, cutoff=0.5)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            raise checker.fail(f"unknown audience '{audience}' in [outputs]; audiences are "
                               f"{', '.join(AUDIENCE_NAMES)} (and {MARKED} for your own documents){hint}", line)
        if not isinstance(text, str) or not text.strip():
            raise checker.fail(f"[outputs] {audience} must be a report path in quotes, such as \"report.docx\", "
                               f"not {json.dumps(text, default=str)} ({_kind_of(text)})", line)
        path = _output_path(folder, text)
        for what, other in protected.items():
            if other is not None and _same_file(path, other):
                raise checker.fail(f"[outputs] {audience} = \"{text}\" is {what}; a report must not replace it",
                                   line)
        if Path(text).suffix.lower() != ".docx":
            raise checker.fail(f"[outputs] {audience} = \"{text}\" must end in .docx", line)
        key = os.path.normcase(os.path.abspath(path))
        if key in seen:
            raise checker.fail(f"[outputs] {audience} and {seen[key]} name the same report \"{text}\"", line)
        seen[key] = audience
        outputs.append(Output(audience, path, text))
    return tuple(outputs), tuple(marked)


def load_recipe(path: str | os.PathLike[str]) -> Recipe:
    """Read and check the recipe at ``path``; every problem is a NarratorError naming file, key and line.

    Paths in the recipe (data, template, outputs) are resolved against the
    recipe's folder, whatever the current folder is. The data file and the
    template must exist; report folders are made when the reports are built.
    """
    source = Path(path)
    name = str(path)
    try:
        raw = source.read_bytes()
    except FileNotFoundError:
        raise NarratorError(f"{name}: recipe not found") from None
    except IsADirectoryError:
        raise NarratorError(f"{name}: is a folder, not a recipe file") from None
    except OSError as exc:
        raise NarratorError(f"{name}: cannot be read ({exc.strerror or exc})") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise NarratorError(f"{name}, line {line}: a recipe must be UTF-8 text") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise NarratorError(f"{name}: not valid TOML: {exc}") from None
    except RecursionError:
        raise NarratorError(f"{name}: arrays or tables are nested too deeply for a recipe (a recipe needs at most "
                            "two levels)") from None
    checker = _Checker(name, _KeyLines(text))
    for key in data:
        if key not in TOP_LEVEL:
            close = difflib.get_close_matches(key, TOP_LEVEL, n=1, cutoff=0.5)
            hint = f"; did you mean '{close[0]}'?" if close else f"; the recipe's tables are {', '.join(TOP_LEVEL)}"
            raise checker.fail(f"unknown table or key '{key}'{hint}", checker.line(key, None, None))
    folder = source.resolve().parent

    data_table = _known(checker, "data", None, _table(checker, data, "data", required=True))
    if "path" not in data_table:
        raise checker.fail("[data] needs path = \"<your data file>\"", checker.line("data", None, None))
    threshold = data_table.get("privacy_threshold", DEFAULT_PRIVACY_THRESHOLD)
    if threshold < 1:
        raise checker.fail(f"[data] privacy_threshold must be at least 1, not {threshold}",
                           checker.line("data", None, "privacy_threshold"))
    engine = data_table.get("engine")
    from narrator.scale.engine_choice import ENGINES, choose_engine

    if engine is not None and engine not in ENGINES:
        raise checker.fail(f"[data] engine = \"{engine}\" is not one of {', '.join(ENGINES)}",
                           checker.line("data", None, "engine"))
    data_path = _recipe_path(folder, data_table["path"])
    try:
        large = choose_engine(engine, data_path) != "memory"
    except NarratorError as exc:
        raise checker.fail(f"[data] {exc}", checker.line("data", None, "engine")) from None
    data_settings = DataSettings(
        # A folder or glob read by the stream or dask engine is checked when it is read.
        path=data_path if large else _existing_file(checker, folder, "data", "path", data_table["path"]),
        path_text=data_table["path"],
        sheet=data_table.get("sheet"),
        decimal_comma=data_table.get("decimal_comma", False),
        missing=tuple(data_table.get("missing", ())),
        group_by=data_table.get("group_by"),
        privacy_threshold=threshold,
        engine=engine,
        scheduler=data_table.get("scheduler"),
        encoding=data_table.get("encoding"),
    )

    report_table = _known(checker, "report", None, _table(checker, data, "report", required=False))
    locale, currency = _locale_and_currency(checker, report_table)
    template = report_table.get("template")
    report_settings = ReportSettings(
        title=report_table.get("title"),
        organisation=report_table.get("organisation"),
        locale=locale,
        currency=currency,
        template=None if template is None else _existing_file(checker, folder, "report", "template", template),
        generated=_generated(checker, report_table.get("generated")),
    )

    protected = {"this recipe": source, "the data file": data_settings.path, "the template": report_settings.template}
    outputs, marked = _outputs(checker, folder, _table(checker, data, "outputs", required=True), protected)
    entries = data.get("variables")
    if entries is None:
        raise checker.fail("the recipe needs at least one [[variables]] table with a column", None)
    if isinstance(entries, dict):
        raise checker.fail("write [[variables]] (two brackets, one table per variable), not [variables]",
                           checker.line("variables", None, None))
    if not isinstance(entries, list) or not entries:
        raise checker.fail("'variables' must hold one or more [[variables]] tables",
                           checker.line("variables", None, None))
    variables = tuple(_variable(checker, entry, values) for entry, values in enumerate(entries))
    return Recipe(source=source, data=data_settings, report=report_settings, outputs=outputs, variables=variables,
                  marked=marked, variable_lines=tuple(checker.line("variables", entry, "column")
                                                      for entry in range(len(entries))))


# --------------------------------------------------------------------------- building


def build_recipe(recipe: Recipe, *, step: Callable[[str], None] | None = None, force: bool = False) -> list:
    """Build every output the recipe names; return one :class:`narrator.report.ReportOutcome` per output.

    The data are read and described once; each audience gets its own report
    and sidecar. A recipe with one variable and no grouping column gives the
    same report as ``narrator draft``; several variables or a grouping column
    give the overview-and-parts report of
    :func:`narrator.report.report_from_collection`. Every variable is one
    :class:`~narrator.request.ColumnRequest`; :func:`narrator.request.engine_for`
    chooses the engine and checks its limits. ``force`` is the consent to replace an
    existing output that is not a narrator report. The ``marked`` documents are filled
    last, from the same findings (:func:`narrator.places.fill.fill_document`), each giving a
    :class:`narrator.places.fill.FillOutcome`.
    """
    from narrator.groups.analysis import analyse_file
    from narrator.report import report_from_collection, report_from_findings
    from narrator.request import describe_request, engine_for
    from narrator.safe_io import check_output

    announce = step or (lambda _what: None)
    data = recipe.data
    first = ColumnRequest(data.path, recipe.variables[0], data.reading)
    engine = engine_for(first, group_by=data.group_by, variables=len(recipe.variables))
    common = _report_options(recipe)
    common["force"] = force
    for output in recipe.outputs:  # every output checked before any work, not only at its turn
        check_output(output.path, protect=(common["input_path"], common["template"], recipe.source), force=force)
    if engine != "memory" or (len(recipe.variables) == 1 and data.group_by is None):
        # One variable, no groups: the same report as "narrator draft", which compares
        # itself with the previous build's sidecar.
        announce(f"reading {data.path_text}" + (f" with the {engine} engine" if engine != "memory" else ""))
        sample, findings = describe_request(first)
        recipe.require_numbers(0, sample, findings)
        outcomes = []
        for output in recipe.outputs:
            _make_folder_for(output)
            announce(f"writing the {output.audience} report")
            outcomes.append(report_from_findings(sample, findings, output.path, audience=output.audience, **common))
        if recipe.marked:
            from narrator.places.fill import single_collection

            outcomes.extend(_fill_marked(recipe, single_collection(sample, findings), announce))
        return outcomes
    collection = analyse_file(data.path, recipe.variables, reading=data.reading, group_by=data.group_by,
                              privacy_threshold=data.privacy_threshold, step=announce)
    for index, part in enumerate(collection.variables):
        recipe.require_numbers(index, part.sample, part.findings)
    outcomes = []
    for output in recipe.outputs:
        _make_folder_for(output)
        announce(f"writing the {output.audience} report")
        outcomes.append(report_from_collection(collection, output.path, audience=output.audience,
                                               step=announce, **common))
    outcomes.extend(_fill_marked(recipe, collection, announce))
    return outcomes


def recipe_collection(recipe: Recipe, *, step: Callable[[str], None] | None = None):
    """The recipe's data read and described, as :func:`build_recipe` reads them, without writing any report.

    Returns a :class:`narrator.groups.analysis.Collection` (what ``narrator fill`` takes).
    """
    from narrator.groups.analysis import analyse_file
    from narrator.request import describe_request, engine_for

    announce = step or (lambda _what: None)
    data = recipe.data
    first = ColumnRequest(data.path, recipe.variables[0], data.reading)
    engine = engine_for(first, group_by=data.group_by, variables=len(recipe.variables))
    if engine != "memory" or (len(recipe.variables) == 1 and data.group_by is None):
        from narrator.places.fill import single_collection

        announce(f"reading {data.path_text}" + (f" with the {engine} engine" if engine != "memory" else ""))
        return single_collection(*describe_request(first))
    return analyse_file(data.path, recipe.variables, reading=data.reading, group_by=data.group_by,
                        privacy_threshold=data.privacy_threshold, step=announce)


def _fill_marked(recipe: Recipe, collection, announce: Callable[[str], None]) -> list:
    """Fill each ``marked`` document of the recipe in place (narrator.places.fill); one outcome each."""
    from narrator.places.fill import fill_document

    outcomes = []
    report = recipe.report
    for output in recipe.marked:
        announce(f"filling {output.path_text}")
        outcomes.append(fill_document(output.path, collection, locale=report.locale, currency=report.currency,
                                      generated_at=report.generated,
                                      protect=(recipe.data.path, recipe.source, report.template)))
    return outcomes
    return outcomes


def _report_options(recipe: Recipe) -> dict:
    """The report settings every output of a recipe shares."""
    report = recipe.report
    return dict(
        input_path=recipe.data.path, locale=report.locale, currency=report.currency, title=report.title,
        organisation=report.organisation, template=report.template, generated_at=report.generated,
        protect=(recipe.source,),
    )


def _make_folder_for(output) -> None:
    try:
        output.path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise NarratorError(f"cannot make the folder for {output.path_text}: {exc.strerror or exc}") from None


# --------------------------------------------------------------------------- starter


def _toml_text(value: str) -> str:
    # JSON string escapes are valid TOML basic-string escapes (\", \\, \n, \uXXXX).
    return json.dumps(value, ensure_ascii=False)


def starter_recipe(
    data_file: str | os.PathLike[str],
    recipe_path: str | os.PathLike[str],
    *,
    sheet: str | int | None = None,
    decimal_comma: bool = False,
    encoding: str | None = None,
) -> str:
    """The text of a starter recipe for ``data_file``, with a comment on every key.

    The numeric columns found (:func:`narrator.reading.columns.list_numeric_columns`) are
    listed: the first as an active ``[[variables]]`` table, the others as
    commented-out tables to keep or delete. ``path`` is written relative to
    the folder the recipe will be in.
    """
    from narrator.reading.columns import list_numeric_columns

    columns = list_numeric_columns(data_file, sheet=sheet, decimal_comma=decimal_comma, encoding=encoding)
    data_path = Path(data_file).resolve()
    folder = Path(recipe_path).resolve().parent
    try:
        relative = Path(os.path.relpath(data_path, folder)).as_posix()
    except ValueError:  # another drive (Windows): keep the absolute path
        relative = data_path.as_posix()
    stem = data_path.stem
    lines = [
        "# narrator report recipe: everything a report needs, so it can be rebuilt the same way.",
        "# Build every report below with:  narrator redraft " + Path(recipe_path).name,
        "# Paths are relative to this file's folder. Lines starting with # are comments.",
        "",
        "[data]",
        f"path = {_toml_text(relative)}  # the data file (CSV, TSV, Excel .xlsx or Parquet)",
    ]
    if sheet is not None:
        lines.append(f"sheet = {_toml_text(str(sheet)) if isinstance(sheet, str) else sheet}  # Excel sheet")
    else:
        lines.append('# sheet = "Sheet1"             # Excel only: the sheet to read (default: the first)')
    lines += [
        f"decimal_comma = {'true' if decimal_comma else 'false'}  # true when numbers are written 1.234,5",
        "missing = []                   # extra cell texts that mean missing, e.g. [\"-99\", \"not recorded\"]",
        (f"encoding = {_toml_text(encoding)}" if encoding else "# encoding = \"cp1252\"")
        + "          # a CSV/TSV file's text encoding (default: detected from the start of the file)",
        "# group_by = \"site\"            # a column to break the figures down by (site, program, year)",
        f"# privacy_threshold = {DEFAULT_PRIVACY_THRESHOLD}         # groups with fewer values are not shown "
        "(default 10)",
        "# engine = \"stream\"            # memory, stream (in chunks; the default for a folder of Parquet files)"
        " or dask",
        "# scheduler = \"tcp://host:8786\"  # the Dask scheduler's address, for engine = \"dask\"",
        "",
        "[report]",
        "# title = \"...\"                # default: from the variables' names",
        "# organisation = \"...\"         # shown under the title and as the document author",
        "locale = \"en_US\"               # words and number formats, e.g. en_US, en_GB, es_ES",
        "# currency = \"USD\"             # ISO 4217 code when the values are money",
        "# template = \"brand.docx\"      # a Word file whose styles, page and headers the report takes",
        "# generated = 2026-12-01T09:00:00Z   # pin the date a report shows (default: now)",
        "",
        "[outputs]                      # audience = report file; audiences: memo, methods, full",
        f"memo = {_toml_text(f'{stem}-memo.docx')}",
        f"full = {_toml_text(f'{stem}-full.docx')}",
        "# marked = \"quarterly-report.docx\"   # your own Word file whose marked places each build fills",
        "",
        "# One [[variables]] table per column to describe.",
        "# Keys: column, label, unit, valid_min / valid_max (values outside are impossible and left out),",
        "# lower_bound / upper_bound (the quantity cannot cross them, e.g. 0 for a wait),",
        "# population (true when the rows are the whole population: no intervals),",
        "# outlier_rule (tukey, adjusted, modified-z or esd; leave it out for the automatic choice).",
    ]
    if not columns:
        lines += ["# No numeric column was found; name one here.", "[[variables]]", 'column = "..."']
    for index, column in enumerate(columns):
        mark = "" if index == 0 else "# "
        if index == 1:
            lines += ["", "# Other numeric columns found: remove the # signs to include one."]
        lines += [
            "",
            f"{mark}[[variables]]",
            f"{mark}column = {_toml_text(column) if column else index + 1}",
            f"{mark}label = {_toml_text(column or f'column {index + 1}')}" + ("   # how the report names it"
                                                                          if index == 0 else ""),
        ]
        if index == 0:
            lines += ['# unit = "days"', "# lower_bound = 0"]
    return "\n".join(lines) + "\n"


def write_starter_recipe(
    data_file: str | os.PathLike[str],
    recipe_path: str | os.PathLike[str],
    *,
    sheet: str | int | None = None,
    decimal_comma: bool = False,
    encoding: str | None = None,
    force: bool = False,
) -> Path:
    """Write :func:`starter_recipe` to ``recipe_path`` atomically; refuse an existing file unless ``force``."""
    from narrator.safe_io import atomic_write_text, refuse_same_file

    target = Path(recipe_path)
    refuse_same_file(target, data_file)
    if target.exists() and not force:
        raise NarratorError(f"{target} already exists; choose another name or add --force to replace it")
    if target.suffix.lower() != ".toml":
        raise NarratorError(f"{target}: a recipe file name must end in .toml")
    atomic_write_text(target, starter_recipe(data_file, target, sheet=sheet, decimal_comma=decimal_comma,
                                             encoding=encoding))
    return target
