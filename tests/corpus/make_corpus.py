"""Build the corpus of bad and hostile inputs, and say what narrator must do with each.

Run ``python tests/corpus/make_corpus.py FOLDER`` to write every case into
``FOLDER/<case name>/``; ``tests/test_corpus.py`` does the same into a
temporary folder and runs each case through the real command line.

=====================  ========================================================
Name                   What it is
=====================  ========================================================
:class:`Case`          one input, the command to run on it, the expected outcome
:data:`CASES`          the table of cases, in the order they are listed below
:func:`build`          write every case's files into a folder
=====================  ========================================================

An outcome is either exit status 0 with the data-quality flags (code ->
count) and findings values the report must carry, or exit status 2 with one
line on stderr whose text holds every listed fragment (the file, and the line,
row or column where one applies). Every input is invented for this corpus;
numbers are made with a fixed seed (:data:`SEED`) so the files are the same on
every run. Nothing here is a hand-kept binary: Excel and Parquet files are
written by openpyxl and pyarrow when the corpus is built.
"""

from __future__ import annotations

import re
import sys
import zipfile
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

SEED = 20260601  # fixed, recorded: every generated value below comes from it
BIG_ROWS = 1_000_000
BIG_BAD_ROWS = (7, 123_457, 1_000_001)  # spreadsheet rows (header is row 1) of the bad cells

Writer = Callable[[Path], None]


@dataclass(frozen=True, slots=True)
class Case:
    """One corpus case.

    ``args`` follow ``python -m narrator`` and are run with the case folder as
    the working directory. For exit 0, ``flags`` maps quality flag codes to
    their count (None: present, any count), ``flag_rows`` to the first rows
    the flag must list, ``values`` dotted findings paths to values, and
    ``absent_flags`` names flags that must not be raised. For ``draft``,
    ``report_text`` lists text the .docx must hold and ``report_absent`` text
    it must not. ``no_files`` are names that must not exist afterwards. ``note`` lists
    fragments of the one ``narrator: note:`` line an exit 0 must print (none: stderr
    stays empty); ``changes`` names the case's files the command may replace or remove
    (every other file keeps its bytes); ``env`` sets (or, with None, removes)
    environment variables for the run.
    """

    name: str
    write: Writer
    args: tuple[str, ...]
    exit_code: int
    message: tuple[str, ...] = ()
    flags: Mapping[str, int | None] = field(default_factory=dict)
    flag_rows: Mapping[str, tuple[int, ...]] = field(default_factory=dict)
    values: Mapping[str, object] = field(default_factory=dict)
    absent_flags: tuple[str, ...] = ()
    report_text: tuple[str, ...] = ()
    report_absent: tuple[str, ...] = ()
    no_files: tuple[str, ...] = ()
    note: tuple[str, ...] = ()
    changes: tuple[str, ...] = ()
    env: Mapping[str, str | None] = field(default_factory=dict)


# --------------------------------------------------------------------------- writers


def text_file(name: str, text: str, encoding: str = "utf-8") -> Writer:
    def write(folder: Path) -> None:
        (folder / name).write_bytes(text.encode(encoding))
    return write


def raw_file(name: str, data: bytes) -> Writer:
    def write(folder: Path) -> None:
        (folder / name).write_bytes(data)
    return write


def both(*writers: Writer) -> Writer:
    def write(folder: Path) -> None:
        for writer in writers:
            writer(folder)
    return write


def waits(n: int = 40, offset: int = 0) -> list[str]:
    """Invented waits in days (whole numbers), the same on every run."""
    rng = np.random.default_rng(SEED + offset)
    return [str(int(x)) for x in rng.gamma(3.0, 6.0, n).round()]


def column_csv(name: str, header: str, cells: list[str]) -> Writer:
    return text_file(name, header + "\n" + "\n".join(cells) + "\n")


def big_csv(folder: Path) -> None:
    rng = np.random.default_rng(SEED)
    lines = [str(int(x)) for x in rng.integers(1, 60, BIG_ROWS)]
    for row in BIG_BAD_ROWS:
        lines[row - 2] = "pending"
    (folder / "big.csv").write_text("days\n" + "\n".join(lines) + "\n", encoding="utf-8")


def workbook(name: str, fill: Callable) -> Writer:
    def write(folder: Path) -> None:
        import openpyxl

        book = openpyxl.Workbook()
        fill(book.active)
        book.save(folder / name)
    return write


def merged_header(sheet) -> None:
    sheet["A1"] = "Turnaround (invented)"
    sheet.merge_cells("A1:B1")
    sheet.append(["shop", "hours"])
    for k, hours in enumerate(waits(12, 1)):
        sheet.append([f"S{k}", int(hours)])


def formulas_and_errors(sheet) -> None:
    sheet.append(["hours"])
    for hours in waits(12, 2):
        sheet.append([int(hours)])
    sheet["A15"] = "=A2+A3"  # openpyxl saves no result: the workbook was never calculated
    sheet["A16"] = "#DIV/0!"  # an error cell
    sheet["A17"] = True
    sheet["A18"] = "2024-03-05"


def trailing_formulas(sheet) -> None:
    sheet.append(["hours"])
    for hours in waits(12, 2):
        sheet.append([int(hours)])
    for row in (14, 15, 16):  # the last rows: formulas openpyxl saves without a result
        sheet[f"A{row}"] = f"=A{row - 12}*2"


def typed_excel(sheet) -> None:
    import datetime as dt

    sheet.append(["hours"])
    for hours in waits(10, 3):
        sheet.append([int(hours)])
    sheet.append([dt.datetime(2024, 3, 5, 8, 0)])
    sheet.append([False])


def parquet(name: str, columns: Mapping[str, object]) -> Writer:
    def write(folder: Path) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        pq.write_table(pa.table(dict(columns)), folder / name)
    return write


def parquet_types() -> dict[str, object]:
    import decimal

    import pyarrow as pa

    values = [int(x) for x in waits(12, 4)]
    return {
        "as_int": pa.array(values, pa.int32()),
        "with_nulls": pa.array([float(v) if k % 4 else None for k, v in enumerate(values)], pa.float64()),
        "as_decimal": pa.array([decimal.Decimal(v) / 4 for v in values], pa.decimal128(9, 2)),
        "as_text": pa.array([str(v) if k != 5 else "n.a. yet" for k, v in enumerate(values)], pa.string()),
        "as_bool": pa.array([k % 2 == 0 for k in range(12)], pa.bool_()),
    }


def not_a_docx(folder: Path) -> None:
    with zipfile.ZipFile(folder / "branding.docx", "w") as archive:
        archive.writestr("readme.txt", "a zip file, but not a Word document")


def symlink_to_input(folder: Path) -> None:
    (folder / "data.csv").write_text("v\n" + "\n".join(waits(20, 5)) + "\n", encoding="utf-8")
    (folder / "link.docx").symlink_to("data.csv")


def recipe(extra_data: str, *, path: str = "data.csv", label: str = "days", title: str | None = None) -> Writer:
    """A recipe with ``extra_data`` lines appended to [data] (line 3 onwards), one memo output."""
    def quoted(text: str) -> str:
        return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'
    report = f"[report]\ntitle = {quoted(title)}\n" if title is not None else ""
    text = (f"[data]\npath = {quoted(path)}\n{extra_data}{report}[outputs]\nmemo = \"report.docx\"\n"
            f"[[variables]]\ncolumn = \"days\"\nlabel = {quoted(label)}\n")
    return text_file("recipe.toml", text)


GOOD = "\n".join(waits()) + "\n"
HOSTILE_NAMES = {
    "python_call": "{__import__('os').system('touch pwned')}",
    "format_field": "{name} {0} {n!r:>10}",
    "spreadsheet_formula": "=cmd|' /C calc'!A0",
    "mathtext": "$\\frac{x$ and $y$",
}


def hostile_csv(name: str) -> Writer:
    header = '"' + HOSTILE_NAMES[name].replace('"', '""') + '"'
    return text_file("data.csv", header + "\n" + GOOD)


# --------------------------------------------------------------------------- writers for the hostile families


def foreign_docx(name: str) -> Writer:
    """A Word file narrator did not write (python-docx's own blank document), such as a user's letter."""
    def write(folder: Path) -> None:
        import docx

        document = docx.Document()
        document.add_paragraph("A letter of the user's own, invented for this corpus.")
        document.save(folder / name)
    return write


def _rewrite_zip(path: Path, replace: Mapping[str, bytes], add: Mapping[str, bytes] = {}) -> None:  # noqa: B006
    with zipfile.ZipFile(path) as source:
        members = {info.filename: source.read(info.filename) for info in source.infolist()}
    members.update(replace)
    members.update(add)
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as target:
        for name, data in members.items():
            target.writestr(name, data)


TEMPLATE_SECRETS = ("Acme Holdings Invented", "Pat Managerinvented", "EMP-0004417-XQ", "CASE-55731-ZK",
                    "jdoe-invented", "Reviewer Invented")


def branded_template(folder: Path) -> None:
    """A template carrying identifier-like properties in every property part, custom XML data and settings."""
    import docx

    path = folder / "brand.docx"
    document = docx.Document()
    document.core_properties.author = TEMPLATE_SECRETS[5]
    document.sections[0].header.paragraphs[0].text = "Invented Program letterhead"
    document.save(path)
    with zipfile.ZipFile(path) as source:
        app = source.read("docProps/app.xml").decode()
        types = source.read("[Content_Types].xml").decode()
        rels = source.read("_rels/.rels").decode()
        item = source.read("customXml/item1.xml").decode()
        settings = source.read("word/settings.xml").decode()
    app = app.replace("</Properties>", f"<Company>{TEMPLATE_SECRETS[0]}</Company>"
                                       f"<Manager>{TEMPLATE_SECRETS[1]}</Manager></Properties>")
    custom = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
              '<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/2006/custom-properties" '
              'xmlns:vt="http://schemas.openxmlformats.org/officeDocument/2006/docPropsVTypes">'
              '<property fmtid="{D5CDD505-2E9C-101B-9397-08002B2CF9AE}" pid="2" name="EmployeeID">'
              f"<vt:lpwstr>{TEMPLATE_SECRETS[2]}</vt:lpwstr></property></Properties>")
    types = types.replace("</Types>", '<Override PartName="/docProps/custom.xml" ContentType="application/'
                                      'vnd.openxmlformats-officedocument.custom-properties+xml"/></Types>')
    rels = rels.replace("</Relationships>", '<Relationship Id="rId90" Type="http://schemas.openxmlformats.org/'
                                            'officeDocument/2006/relationships/custom-properties" '
                                            'Target="docProps/custom.xml"/></Relationships>')
    item = item.replace("</b:Sources>", f"<caseNumber>{TEMPLATE_SECRETS[3]}</caseNumber></b:Sources>")
    settings = settings.replace("<w:defaultTabStop", '<w:attachedTemplate r:id="rId1"/><w:defaultTabStop')
    if 'xmlns:r="' not in settings.split(">", 2)[1]:
        settings = settings.replace("<w:settings ", '<w:settings xmlns:r="http://schemas.openxmlformats.org/'
                                                    'officeDocument/2006/relationships" ', 1)
    settings_rels = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="http://schemas.'
                     'openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.'
                     'openxmlformats.org/officeDocument/2006/relationships/attachedTemplate" Target="file:///C:/'
                     f'Users/{TEMPLATE_SECRETS[4]}/Templates/brand.dotx" TargetMode="External"/></Relationships>')
    _rewrite_zip(path, {"docProps/app.xml": app.encode(), "[Content_Types].xml": types.encode(),
                        "_rels/.rels": rels.encode(), "customXml/item1.xml": item.encode(),
                        "word/settings.xml": settings.encode()},
                 {"docProps/custom.xml": custom.encode(), "word/_rels/settings.xml.rels": settings_rels.encode()})


def stale_dimension_workbook(folder: Path) -> None:
    """60 rows of hours, saved with a sheet size that says 10 (as a tool that never updates it would)."""
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["hours"])
    for hours in waits(60, 6):
        sheet.append([int(hours)])
    book.save(folder / "book.xlsx")
    with zipfile.ZipFile(folder / "book.xlsx") as source:
        xml = source.read("xl/worksheets/sheet1.xml").decode()
    _rewrite_zip(folder / "book.xlsx", {"xl/worksheets/sheet1.xml": re.sub(
        r'<dimension ref="[^"]*"', '<dimension ref="A1:A11"', xml).encode()})


def zip_bomb_workbook(folder: Path) -> None:
    """A workbook whose sheet unpacks from about 20 kB to 20 MB (a part compressed 1,000 times)."""
    import openpyxl

    book = openpyxl.Workbook()
    book.active.append(["hours"])
    book.save(folder / "book.xlsx")
    with zipfile.ZipFile(folder / "book.xlsx") as source:
        xml = source.read("xl/worksheets/sheet1.xml").decode()
    padded = xml.replace("</worksheet>", "<!--" + " " * (20 << 20) + "--></worksheet>")
    _rewrite_zip(folder / "book.xlsx", {"xl/worksheets/sheet1.xml": padded.encode()})


def ole_file(name: str, encrypted: bool) -> Writer:
    """An OLE2 compound file: an encrypted workbook keeps its package in an EncryptedPackage stream."""
    def write(folder: Path) -> None:
        body = bytearray(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 4088)
        if encrypted:
            stream = "EncryptedPackage".encode("utf-16-le")
            body[1024:1024 + len(stream)] = stream
        (folder / name).write_bytes(bytes(body))
    return write


def million_columns(folder: Path) -> None:
    header = ",".join(f"c{k}" for k in range(1_000_000))
    (folder / "data.csv").write_text(header + "\n" + ",".join("1" for _ in range(1_000_000)) + "\n", encoding="utf-8")


def sidecar(text: str) -> Writer:
    return both(text_file("data.csv", "days\n" + GOOD), text_file("report.findings.json", text))


def marked_report(name: str = "report.docx") -> Writer:
    """A Word package carrying narrator's report mark (the custom property it sets), as an earlier build left."""
    def write(folder: Path) -> None:
        import zipfile

        from narrator.safe_io import REPORT_MARK

        custom = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
                  '<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/2006/custom-properties">'
                  f'<property fmtid="{{D5CDD505-2E9C-101B-9397-08002B2CF9AE}}" pid="2" name="{REPORT_MARK}">'
                  '<vt:lpwstr xmlns:vt="http://schemas.openxmlformats.org/officeDocument/2006/docPropsVTypes">1'
                  '</vt:lpwstr></property></Properties>')
        with zipfile.ZipFile(folder / name, "w") as package:
            package.writestr("docProps/custom.xml", custom)
    return write


def findings_text(**change: object) -> str:
    """The findings of GOOD (computed when the corpus is built), with some fields replaced: a foreign sidecar."""
    import json as json_module

    from narrator.engine.describe import describe

    data = describe([float(cell) for cell in GOOD.split()]).to_dict()
    for dotted, value in change.items():
        part = data
        keys = dotted.split("__")
        for key in keys[:-1]:
            part = part[key]
        part[keys[-1]] = value
    return json_module.dumps(data)


def deep_json(depth: int) -> str:
    return findings_text().replace('"options": {', '"options": {"deep": ' + "[" * depth + "]" * depth + ", ", 1)


def stale_temporaries(folder: Path) -> None:
    (folder / "data.csv").write_text("days\n" + GOOD, encoding="utf-8")
    (folder / ".report.docx.narrator-0123456789ab.tmp").write_bytes(b"PK a complete report a kill left behind")
    (folder / ".report.findings.json.narrator-ba9876543210.tmp").write_text("{}", encoding="utf-8")


def linked_output(folder: Path) -> None:
    """report.docx is a link to a file of the user's elsewhere: the report replaces the link, not the file."""
    (folder / "data.csv").write_text("days\n" + GOOD, encoding="utf-8")
    (folder / "elsewhere").mkdir()
    foreign_docx("elsewhere/kept.docx")(folder)
    (folder / "report.docx").symlink_to("elsewhere/kept.docx")


def user_folder(folder: Path) -> None:
    (folder / "mine").mkdir()
    (folder / "mine" / "housing.toml").write_text("# the user's own recipe, not the demo's\n", encoding="utf-8")


def header_with_escape(folder: Path) -> None:
    (folder / "data.csv").write_text("\x1b[2J\x1b]0;owned\x07days\n" + GOOD, encoding="utf-8")


def header_cell_too_long(folder: Path) -> None:
    (folder / "data.csv").write_text("H" * 200_000 + ",days\nx," + "\nx,".join(GOOD.split()) + "\n", encoding="utf-8")


def cell_too_long(folder: Path) -> None:
    cells = GOOD.split()
    cells[3] = "9" * 40_000
    (folder / "data.csv").write_text("days\n" + "\n".join(cells) + "\n", encoding="utf-8")


def deep_toml(folder: Path) -> None:
    (folder / "data.csv").write_text("days\n" + GOOD, encoding="utf-8")
    (folder / "recipe.toml").write_text('[data]\npath = "data.csv"\nmissing = ' + "[" * 50_000 + "]" * 50_000
                                        + '\n[outputs]\nmemo = "report.docx"\n[[variables]]\ncolumn = "days"\n',
                                        encoding="utf-8")


def digit_headers(folder: Path) -> None:
    """Columns site, 1, x: "1" is the column named 1 for every command (the site column holds groups)."""
    lines = ["site,1,x"] + [f"{'north' if k % 2 else 'south'},{cell},{k}" for k, cell in
                            enumerate(waits(40, 7))]
    (folder / "data.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


# --------------------------------------------------------------------------- the table

FACTS = ("facts", "--json")


def facts(file: str, *more: str) -> tuple[str, ...]:
    return (*FACTS, file, *more)


def draft(file: str, *more: str) -> tuple[str, ...]:
    return ("draft", file, *more, "-o", "report.docx")


CASES: tuple[Case, ...] = (
    # ----- delimiters, encodings, shape of the table
    Case("semicolon_delimiter", text_file("data.csv", "a;b\n1,5;2\n2,5;3\n3,5;4\n"),
         facts("data.csv", "--column", "a", "--decimal-comma"), 0, values={"n": 3, "center.median": 2.5}),
    Case("pipe_delimiter_not_guessed", text_file("data.csv", "a|b\n1|2\n3|4\n"),
         facts("data.csv", "--column", "a"), 2, message=("data.csv", "no column named 'a'", "a|b")),
    Case("utf8_byte_order_mark", raw_file("data.csv", b"\xef\xbb\xbfdays\n" + GOOD.encode()),
         facts("data.csv", "--column", "days"), 0, values={"n": 40, "provenance.encoding": "utf-8-sig"},
         absent_flags=("encoding_guessed",)),
    Case("utf16_byte_order_mark", raw_file("data.csv", ("days\n" + GOOD).encode("utf-16")),
         facts("data.csv", "--column", "days"), 0, values={"n": 40}),
    Case("utf16_without_mark", raw_file("data.csv", ("days\n" + GOOD).encode("utf-16-le")),
         facts("data.csv", "--column", "days"), 0, flags={"encoding_guessed": 1},
         values={"n": 40, "provenance.encoding": "utf-16-le"}),
    Case("latin1_text", text_file("data.csv", "año;días\n2023;12\n2024;15\n2025;9\n", "latin-1"),
         facts("data.csv", "--column", "días"), 0, flags={"encoding_guessed": 1},
         values={"n": 3, "variable.name": "días"}),
    Case("ragged_long_row", text_file("data.csv", "v,w\n1,2\n3,4,5\n6,7\n"),
         facts("data.csv", "--column", "v"), 2, message=("data.csv", "row 3", "3 fields", "header has 2")),
    Case("ragged_short_rows", text_file("data.csv", "v,w\n1,2\n3\n4,5\n6\n7,8\n"),
         facts("data.csv", "--column", "w"), 0, flags={"missing": 2}, flag_rows={"missing": (3, 5)},
         values={"n": 3}),
    Case("duplicate_headers", text_file("data.csv", "v,v\n1,2\n3,4\n"),
         facts("data.csv", "--column", "v"), 2, message=("data.csv", "2 columns are named 'v'", "columns 1, 2")),
    Case("duplicate_headers_by_position", text_file("data.csv", "v,v\n1,2\n3,4\n5,6\n"),
         facts("data.csv", "--column", "2"), 0, values={"n": 3, "center.median": 4.0}),
    Case("blank_header", text_file("data.csv", ",w\n1,2\n3,4\n5,6\n"),
         facts("data.csv", "--column", "1"), 0, values={"variable.name": "column 1", "n": 3}),
    Case("missing_column", column_csv("data.csv", "days", waits(5)),
         facts("data.csv", "--column", "dayz"), 2,
         message=("data.csv", "no column named 'dayz'", "did you mean 'days'")),
    Case("column_position_out_of_range", column_csv("data.csv", "days", waits(5)),
         facts("data.csv", "--column", "4"), 2, message=("data.csv", "no column 4", "1 column")),
    # ----- cells that are not numbers, or are numbers written in a local way
    # A column with no number at all is one message, not a report with n = 0.
    Case("text_column", column_csv("data.csv", "office", ["north", "south", "east", "west"]),
         facts("data.csv", "--column", "office"), 2,
         message=("data.csv", "column 'office' has no numbers", "none of its 4 cells holds a number", "'north'")),
    Case("text_column_report", column_csv("data.csv", "office", ["north", "south", "east", "west"]),
         draft("data.csv", "--column", "office"), 2, message=("data.csv", "has no numbers")),
    Case("dates", column_csv("data.csv", "days", waits(10) + ["2024-03-05", "05/03/2024"]),
         facts("data.csv", "--column", "days"), 0, flags={"non_numeric": 2}, flag_rows={"non_numeric": (12, 13)},
         values={"n": 10}),
    Case("booleans", column_csv("data.csv", "days", waits(10) + ["TRUE", "false"]),
         facts("data.csv", "--column", "days"), 0, flags={"non_numeric": 2}, flag_rows={"non_numeric": (12, 13)}),
    Case("mixed_decimal_marks_point", text_file("data.csv", "v\n1.5\n2,5\n3.25\n4,75\n"),
         facts("data.csv", "--column", "v"), 0, flags={"non_numeric": 2}, flag_rows={"non_numeric": (3, 5)},
         values={"n": 2, "center.mean": 2.375}),
    Case("mixed_decimal_marks_comma", text_file("data.csv", "v\n1.5\n2,5\n3.25\n4,75\n"),
         facts("data.csv", "--column", "v", "--decimal-comma"), 0, flags={"non_numeric": 2},
         flag_rows={"non_numeric": (2, 4)}, values={"n": 2, "center.mean": 3.625}),
    Case("space_grouping_decimal_comma", text_file("data.csv", "v\n1 234,5\n2 000,5\n17,25\n"),
         facts("data.csv", "--column", "v", "--decimal-comma"), 0, values={"n": 3, "spread.max": 2000.5},
         absent_flags=("non_numeric",)),
    Case("space_grouping_under_point", text_file("data.csv", "v\n1 234,5\n2 000,5\n17.25\n"),
         facts("data.csv", "--column", "v"), 0, flags={"non_numeric": 2}, values={"n": 1}),
    Case("ambiguous_grouping_point", text_file("data.csv", "v\n1,234\n2,500\n17\n"),
         facts("data.csv", "--column", "v"), 0, flags={"ambiguous_grouping": 2},
         flag_rows={"ambiguous_grouping": (2, 3)}, values={"spread.max": 2500.0}),
    Case("ambiguous_grouping_comma", text_file("data.csv", "v\n1.234\n2.500\n17\n"),
         facts("data.csv", "--column", "v", "--decimal-comma"), 0, flags={"ambiguous_grouping": 2},
         values={"spread.max": 2500.0}),
    Case("ambiguous_grouping_report", text_file("data.csv", "v\n1,234\n" + GOOD),
         draft("data.csv", "--column", "v"), 0, flags={"ambiguous_grouping": 1},
         report_text=("1,234 or 1.234", "not guessed")),
    Case("accounting_negatives", text_file("data.csv", "v\n(123)\n45\n(6.5)\n"),
         facts("data.csv", "--column", "v"), 0, values={"spread.min": -123.0, "n": 3}),
    Case("percent_signs", text_file("data.csv", "v\n12%\n15 %\n20\n"),
         facts("data.csv", "--column", "v"), 0, flags={"percent_signs": 2}, values={"spread.max": 20.0}),
    Case("currency_marks", text_file("data.csv", 'v\n"$1,200"\n$950\n1100\n'),
         facts("data.csv", "--column", "v"), 0, flags={"currency_marks": 1, "ambiguous_grouping": 1},
         values={"spread.max": 1200.0}),
    Case("overflowing_1e400", column_csv("data.csv", "v", waits(10) + ["1e400", "-1e400"]),
         facts("data.csv", "--column", "v"), 0, flags={"non_finite": 2}, flag_rows={"non_finite": (12, 13)},
         values={"n": 10}),
    Case("nan_text", column_csv("data.csv", "v", waits(10) + ["nan", "NaN"]),
         facts("data.csv", "--column", "v"), 0, flags={"missing": 2}, flag_rows={"missing": (12, 13)}),
    Case("infinities", column_csv("data.csv", "v", waits(10) + ["inf", "-Infinity", "\u221e"]),
         facts("data.csv", "--column", "v"), 0, flags={"non_finite": 3}),
    Case("missing_value_code", column_csv("data.csv", "v", waits(40) + ["-99", "-99", "-99"]),
         facts("data.csv", "--column", "v"), 0, flags={"missing_code": 3}, flag_rows={"missing_code": (42, 43, 44)}),
    Case("declared_missing_code", column_csv("data.csv", "v", waits(40) + ["-99", "-99", "-99"]),
         facts("data.csv", "--column", "v", "--missing", "-99"), 0, flags={"missing": 3},
         absent_flags=("missing_code",), values={"n": 40}),
    Case("impossible_values", column_csv("data.csv", "v", waits(20) + ["-3", "212"]),
         facts("data.csv", "--column", "v", "--valid-min", "0", "--valid-max", "200"), 0,
         flags={"impossible": 2}, flag_rows={"impossible": (22, 23)}, values={"n": 20}),
    Case("empty_valid_range", column_csv("data.csv", "v", waits(5)),
         facts("data.csv", "--column", "v", "--valid-min", "5", "--valid-max", "1"), 2,
         message=("data.csv", "valid_min", "larger than valid_max")),
    # ----- sizes
    Case("empty_file", raw_file("data.csv", b""), facts("data.csv", "--column", "v"), 2,
         message=("data.csv", "empty")),
    Case("blank_lines_only", raw_file("data.csv", b"\n \n\n"), facts("data.csv", "--column", "v"), 2,
         message=("data.csv", "empty")),
    Case("header_only", text_file("data.csv", "days\n"), facts("data.csv", "--column", "days"), 2,
         message=("data.csv", "column 'days' has no numbers", "a header but no data rows")),
    Case("header_only_report", text_file("data.csv", "days\n"), draft("data.csv", "--column", "days"), 2,
         message=("data.csv", "has no numbers")),
    Case("all_blank", text_file("data.csv", "days,office\n,north\n,south\n,east\n"),
         facts("data.csv", "--column", "days"), 2, message=("data.csv", "all of its 3 cells are blank")),
    Case("one_row", text_file("data.csv", "days\n12\n"), facts("data.csv", "--column", "days"), 0,
         flags={"too_few_for_shape": 1}, values={"n": 1, "center.median": 12.0}),
    Case("one_row_report", text_file("data.csv", "days\n12\n"), draft("data.csv", "--column", "days"), 0,
         flags={"too_few_for_shape": 1}, report_text=("fewer than 8 values",)),
    Case("constant_values_report", text_file("data.csv", "days\n" + "7\n" * 12), draft("data.csv", "--column", "days"),
         0, flags={"constant": 12}, report_text=("Every value is the same",)),
    Case("million_rows_few_bad_cells", big_csv, facts("big.csv", "--column", "days"), 0,
         flags={"non_numeric": len(BIG_BAD_ROWS)}, flag_rows={"non_numeric": BIG_BAD_ROWS},
         values={"n": BIG_ROWS - len(BIG_BAD_ROWS), "quality.n_rows": BIG_ROWS}),
    # ----- Excel and Parquet
    Case("excel_merged_header", workbook("book.xlsx", merged_header), facts("book.xlsx", "--column", "2"), 0,
         flags={"non_numeric": 1}, flag_rows={"non_numeric": (2,)}, values={"n": 12, "variable.name": "column 2"}),
    Case("excel_formulas_and_errors", workbook("book.xlsx", formulas_and_errors),
         facts("book.xlsx", "--column", "hours"), 0, flags={"non_numeric": 4},
         flag_rows={"non_numeric": (15, 16, 17, 18)}, values={"n": 12}),
    Case("excel_trailing_unsaved_formulas", workbook("book.xlsx", trailing_formulas),
         facts("book.xlsx", "--column", "hours"), 0, flags={"non_numeric": 3},
         flag_rows={"non_numeric": (14, 15, 16)}, values={"n": 12, "quality.n_rows": 15}),
    Case("excel_typed_dates_booleans", workbook("book.xlsx", typed_excel), facts("book.xlsx", "--column", "hours"),
         0, flags={"non_numeric": 2}, flag_rows={"non_numeric": (12, 13)}, values={"n": 10}),
    Case("excel_that_is_csv", text_file("book.xlsx", "hours\n1\n2\n"), facts("book.xlsx", "--column", "hours"), 2,
         message=("book.xlsx", "not a readable .xlsx workbook")),
    Case("excel_unknown_sheet", workbook("book.xlsx", typed_excel),
         facts("book.xlsx", "--column", "hours", "--sheet", "Summary"), 2,
         message=("book.xlsx", "no sheet named 'Summary'")),
    Case("old_excel_format", raw_file("book.xls", b"\xd0\xcf\x11\xe0" + b"\x00" * 60),
         facts("book.xls", "--column", "hours"), 2, message=("book.xls", ".xls", "save it as .xlsx")),
    Case("parquet_nulls", parquet("data.parquet", parquet_types()), facts("data.parquet", "--column", "with_nulls"),
         0, flags={"missing": 3}, flag_rows={"missing": (2, 6, 10)}, values={"n": 9}),
    Case("parquet_integers", parquet("data.parquet", parquet_types()), facts("data.parquet", "--column", "as_int"),
         0, values={"n": 12, "variable.integer_valued": True}, absent_flags=("missing", "non_numeric")),
    Case("parquet_decimals", parquet("data.parquet", parquet_types()),
         facts("data.parquet", "--column", "as_decimal"), 0, values={"n": 12}, absent_flags=("non_numeric",)),
    Case("parquet_strings", parquet("data.parquet", parquet_types()), facts("data.parquet", "--column", "as_text"),
         0, flags={"non_numeric": 1}, flag_rows={"non_numeric": (7,)}, values={"n": 11}),
    Case("parquet_booleans", parquet("data.parquet", parquet_types()), facts("data.parquet", "--column", "as_bool"),
         2, message=("data.parquet", "column 'as_bool' has no numbers", "none of its 12 cells")),
    Case("parquet_damaged", raw_file("data.parquet", b"PAR1 not really"), facts("data.parquet", "--column", "v"),
         2, message=("data.parquet", "not a readable Parquet file")),
    # ----- names Word cannot hold, names that look like code
    Case("control_characters_in_name", text_file("data.csv", "wait\x01\x07\x1b\x0b(days)\n" + GOOD),
         draft("data.csv", "--column", "1"), 0, values={"variable.name": "wait (days)"},
         report_text=("wait (days)",)),
    Case("bidi_override_in_name", text_file("data.csv", "cost\u202e syad\n" + GOOD),
         draft("data.csv", "--column", "1"), 0, values={"variable.name": "cost syad"}, report_absent=("\u202e",)),
    Case("very_long_name", text_file("data.csv", "W" * 5000 + "\n" + GOOD), draft("data.csv", "--column", "1"), 0,
         report_text=("W" * 150,)),
    Case("python_call_in_name", hostile_csv("python_call"), draft("data.csv", "--column", "1"), 0,
         values={"variable.name": HOSTILE_NAMES["python_call"]}, report_text=(HOSTILE_NAMES["python_call"],),
         no_files=("pwned",)),
    Case("format_fields_in_name", hostile_csv("format_field"), draft("data.csv", "--column", "1"), 0,
         report_text=(HOSTILE_NAMES["format_field"],)),
    Case("spreadsheet_formula_in_name", hostile_csv("spreadsheet_formula"), draft("data.csv", "--column", "1"), 0,
         report_text=(HOSTILE_NAMES["spreadsheet_formula"],)),
    Case("mathtext_in_name", hostile_csv("mathtext"), draft("data.csv", "--column", "1"), 0,
         report_text=(HOSTILE_NAMES["mathtext"],)),
    Case("hostile_label_option", text_file("data.csv", "days\n" + GOOD),
         draft("data.csv", "--column", "days", "--label", "{__class__} $\\alpha$\x01\x1b"), 0,
         values={"variable.name": "{__class__} $\\alpha$"}, report_text=("{__class__} $\\alpha$",)),
    # ----- files and folders around the report
    Case("file_not_found", text_file("other.csv", "v\n1\n"), facts("data.csv", "--column", "v"), 2,
         message=("data.csv", "not found")),
    Case("template_not_docx", both(text_file("data.csv", "days\n" + GOOD), text_file("branding.txt", "plain")),
         draft("data.csv", "--column", "days", "--template", "branding.txt"), 2,
         message=("branding.txt", "not a valid Word document")),
    Case("template_zip_not_docx", both(text_file("data.csv", "days\n" + GOOD), not_a_docx),
         draft("data.csv", "--column", "days", "--template", "branding.docx"), 2,
         message=("branding.docx", "not a valid Word document")),
    Case("template_missing", text_file("data.csv", "days\n" + GOOD),
         draft("data.csv", "--column", "days", "--template", "nowhere.docx"), 2, message=("nowhere.docx",)),
    Case("output_folder_is_a_file", text_file("data.csv", "days\n" + GOOD),
         ("draft", "data.csv", "--column", "days", "-o", "data.csv/report.docx"), 2,
         message=("data.csv/report.docx", "is a file, not a folder")),
    Case("output_folder_in_proc", text_file("data.csv", "days\n" + GOOD),
         ("draft", "data.csv", "--column", "days", "-o", "/proc/narrator-corpus/report.docx"), 2,
         message=("/proc/narrator-corpus/report.docx", "does not exist")),
    Case("output_in_proc_root", text_file("data.csv", "days\n" + GOOD),
         ("draft", "data.csv", "--column", "days", "-o", "/proc/report.docx"), 2,
         message=("cannot write /proc/report.docx",)),
    Case("output_is_the_input", text_file("data.csv", "days\n" + GOOD),
         ("draft", "data.csv", "--column", "days", "-o", "data.csv"), 2,
         message=("refusing to write data.csv", "input file")),
    Case("output_is_the_input_by_another_path", text_file("data.csv", "days\n" + GOOD),
         ("draft", "data.csv", "--column", "days", "-o", "./sub/../data.csv"), 2, message=("refusing", "input file")),
    Case("output_is_a_link_to_the_input", symlink_to_input,
         ("draft", "data.csv", "--column", "v", "-o", "link.docx"), 2, message=("refusing", "input file")),
    Case("output_is_a_folder",
         both(text_file("data.csv", "days\n" + GOOD), lambda folder: (folder / "out.docx").mkdir()),
         ("draft", "data.csv", "--column", "days", "-o", "out.docx"), 2, message=("out.docx", "folder")),
    # ----- recipes: plain data, checked key by key, never run
    Case("recipe_unknown_key", both(text_file("data.csv", "days\n" + GOOD), recipe("decimal_coma = false\n")),
         ("redraft", "recipe.toml"), 2,
         message=("recipe.toml", "line 3", "unknown key 'decimal_coma'", "did you mean 'decimal_comma'")),
    Case("recipe_wrong_type", both(text_file("data.csv", "days\n" + GOOD), recipe('decimal_comma = "yes"\n')),
         ("redraft", "recipe.toml"), 2, message=("recipe.toml", "line 3", "decimal_comma must be true or false")),
    Case("recipe_bad_path", recipe("", path="nowhere.csv"), ("redraft", "recipe.toml"), 2,
         message=("recipe.toml", "line 2", "nowhere.csv", "does not exist")),
    Case("recipe_not_toml", text_file("recipe.toml", "[data\npath = 'x'\n"), ("redraft", "recipe.toml"), 2,
         message=("recipe.toml", "line 1")),
    Case("recipe_python_looking_strings",
         both(text_file("data.csv", "days\n" + GOOD),
              recipe("", label=HOSTILE_NAMES["python_call"], title="{0.__class__.__mro__} ${{ env.HOME }}")),
         ("redraft", "recipe.toml"), 0, values={"variable.name": HOSTILE_NAMES["python_call"]},
         report_text=(HOSTILE_NAMES["python_call"], "{0.__class__.__mro__} ${{ env.HOME }}"), no_files=("pwned",)),
    # ----- privacy: small groups are suppressed, identifiers only when asked for
    Case("small_group_suppressed", text_file("data.csv", "office,days\n" + "".join(
        f"north,{d}\n" for d in waits(30)) + "south,777.25\nsouth,888.75\n"),
         ("draft", "data.csv", "--column", "days", "--group-by", "office", "-o", "report.docx"), 0,
         report_text=("north",), report_absent=("777.25", "777,25", "888.75", "888,75")),
    Case("id_column_is_value_column", text_file("data.csv", "id,days\nA,1\nB,2\n"),
         facts("data.csv", "--column", "days", "--id-column", "days"), 2,
         message=("data.csv", "id column is the column being described")),
    Case("unknown_id_column", text_file("data.csv", "id,days\nA,1\nB,2\n"),
         facts("data.csv", "--column", "days", "--id-column", "client"), 2,
         message=("data.csv", "no column named 'client'")),
    # ----- data loss: an output that is not a narrator report, a link, the build's own inputs
    Case("output_not_docx", both(text_file("data.csv", "days\n" + GOOD), text_file("other.csv", "a,b\n1,2\n")),
         ("draft", "data.csv", "--column", "days", "-o", "other.csv"), 2, message=("other.csv", "must end in .docx")),
    Case("output_is_a_foreign_docx", both(text_file("data.csv", "days\n" + GOOD), foreign_docx("report.docx")),
         draft("data.csv", "--column", "days"), 2,
         message=("report.docx exists and is not a report narrator wrote", "--force")),
    Case("output_is_a_foreign_docx_forced", both(text_file("data.csv", "days\n" + GOOD), foreign_docx("report.docx")),
         draft("data.csv", "--column", "days", "--force"), 0, changes=("report.docx",)),
    Case("redraft_over_a_foreign_docx",
         both(text_file("data.csv", "days\n" + GOOD), foreign_docx("report.docx"), recipe("")),
         ("redraft", "recipe.toml"), 2, message=("report.docx exists and is not a report narrator wrote",)),
    Case("output_is_a_link_to_a_user_file", linked_output, draft("data.csv", "--column", "days"), 0,
         values={"n": 40}),
    Case("redraft_output_is_a_link_to_a_user_file", both(linked_output, recipe("")), ("redraft", "recipe.toml"), 0,
         values={"n": 40}),
    Case("recipe_output_is_the_recipe", both(text_file("data.csv", "days\n" + GOOD), text_file(
        "recipe.toml", '[data]\npath = "data.csv"\n[outputs]\nmemo = "recipe.toml"\n[[variables]]\ncolumn = "days"\n')),
         ("redraft", "recipe.toml"), 2, message=("recipe.toml", "line 4", "is this recipe")),
    Case("recipe_output_is_the_template", both(text_file("data.csv", "days\n" + GOOD), branded_template, text_file(
        "recipe.toml", '[data]\npath = "data.csv"\n[report]\ntemplate = "brand.docx"\n[outputs]\nfull = "brand.docx"\n'
                       '[[variables]]\ncolumn = "days"\n')),
         ("redraft", "recipe.toml"), 2, message=("recipe.toml", "is the template")),
    Case("recipe_output_is_a_link_to_the_data", both(
        text_file("data.csv", "days\n" + GOOD), lambda folder: (folder / "out.docx").symlink_to("data.csv"),
        text_file("recipe.toml", '[data]\npath = "data.csv"\n[outputs]\nmemo = "out.docx"\n[[variables]]\n'
                                 'column = "days"\n')),
         ("redraft", "recipe.toml"), 2, message=("recipe.toml", "is the data file")),
    Case("demo_into_a_folder_of_the_users", user_folder, ("demo", "-o", "mine", "--quiet"), 2,
         message=("mine is not empty and is not a folder the demo wrote",)),
    # ----- one build, one truth: a previous sidecar that is damaged or foreign, what a killed build left
    Case("previous_sidecar_not_json", both(sidecar("{not json"), marked_report()),
         draft("data.csv", "--column", "days"), 0,
         note=("previous findings report.findings.json were ignored", "not valid JSON"),
         changes=("report.docx", "report.findings.json"), values={"n": 40}),
    # A file of the user's at the sidecar's name, with no report of narrator's beside it, is not a sidecar.
    Case("sidecar_name_holds_a_users_file", sidecar('{"my notes": ["keep these"]}'),
         draft("data.csv", "--column", "days"), 2,
         message=("report.findings.json exists and is not a findings file narrator wrote",)),
    Case("sidecar_name_holds_a_users_file_forced", sidecar("my notes, not JSON"),
         draft("data.csv", "--column", "days", "--force"), 0, note=("were ignored", "not valid JSON"),
         changes=("report.findings.json",)),
    Case("previous_sidecar_wrong_types", sidecar(findings_text(n="forty")), draft("data.csv", "--column", "days"), 0,
         note=("were ignored", "findings.n must be a whole number, not text"), changes=("report.findings.json",)),
    Case("previous_sidecar_huge_integer", sidecar(findings_text().replace('"n": 40', '"n": 1' + "0" * 5000, 1)),
         draft("data.csv", "--column", "days"), 0, note=("were ignored", "not valid JSON"),
         changes=("report.findings.json",)),
    Case("previous_sidecar_large_integer", sidecar(findings_text(n=10**30)), draft("data.csv", "--column", "days"), 0,
         note=("were ignored", "findings.n is a whole number too large"), changes=("report.findings.json",)),
    Case("previous_sidecar_deep_nesting", sidecar(deep_json(100_000)), draft("data.csv", "--column", "days"), 0,
         note=("were ignored", "nested too deeply"), changes=("report.findings.json",)),
    Case("previous_sidecar_nested_options", sidecar(deep_json(40)), draft("data.csv", "--column", "days"), 0,
         note=("were ignored", "nested more than 32 levels"), changes=("report.findings.json",)),
    Case("previous_sidecar_unknown_lead", sidecar(findings_text(center__lead="mode")),
         draft("data.csv", "--column", "days"), 0, note=("were ignored", "center.lead is \"mode\", not one of mean"),
         changes=("report.findings.json",)),
    Case("compare_damaged_sidecar", both(text_file("old.findings.json", '{"schema_version": 1, "n": ['),
                                         text_file("new.findings.json", findings_text())),
         ("compare", "old.findings.json", "new.findings.json"), 2,
         message=("old.findings.json: not a findings file", "not valid JSON")),
    # Two builds of different variables, or of one variable in different units, are not a change.
    Case("compare_different_variables", both(text_file("old.findings.json", findings_text(variable__name="litres")),
                                             text_file("new.findings.json", findings_text(variable__name="days"))),
         ("compare", "old.findings.json", "new.findings.json"), 2,
         message=("describe different variables ('litres' and 'days')",)),
    Case("compare_different_units", both(text_file("old.findings.json", findings_text(variable__unit="hours")),
                                         text_file("new.findings.json", findings_text(variable__unit="days"))),
         ("compare", "old.findings.json", "new.findings.json"), 2, message=("in different units (hours and days)",)),
    Case("compare_foreign_sidecar", both(text_file("old.findings.json", findings_text(center__lead="mode")),
                                         text_file("new.findings.json", findings_text())),
         ("compare", "old.findings.json", "new.findings.json"), 2,
         message=("old.findings.json: not a findings file narrator can read", "center.lead")),
    Case("stale_temporary_files_cleaned", stale_temporaries, draft("data.csv", "--column", "days"), 0,
         changes=(".report.docx.narrator-0123456789ab.tmp", ".report.findings.json.narrator-ba9876543210.tmp"),
         no_files=(".report.docx.narrator-0123456789ab.tmp",)),
    # ----- silently wrong: the real rows, rows with another delimiter, encodings
    Case("excel_stale_sheet_size", stale_dimension_workbook, facts("book.xlsx", "--column", "hours"), 0,
         values={"n": 60, "quality.n_rows": 60}),
    Case("rows_with_another_delimiter", text_file("data.csv", "site,days\nA,1\nB;2\nC,3\n"),
         facts("data.csv", "--column", "days"), 2, message=("data.csv", "row 3", "semicolons", "commas")),
    Case("rows_with_another_delimiter_stream", text_file("data.csv", "site,days\nA,1\nB;2\nC,3\n"),
         facts("data.csv", "--column", "days", "--engine", "stream"), 2,
         message=("data.csv", "row 3", "semicolons", "commas")),
    Case("latin1_header_stream", text_file("data.csv", "año;días\n2023;12\n2024;15\n2025;9\n", "latin-1"),
         facts("data.csv", "--column", "días", "--engine", "stream"), 0, flags={"encoding_guessed": 1},
         values={"n": 3, "variable.name": "días"}),
    Case("utf16_without_mark_stream", raw_file("data.csv", ("days\n" + GOOD).encode("utf-16-le")),
         facts("data.csv", "--column", "days", "--engine", "stream"), 0, values={"n": 40}),
    Case("declared_encoding", text_file("data.csv", "d\u00edas\n" + GOOD + "12\u20ac\n", "cp1252"),
         facts("data.csv", "--column", "d\u00edas", "--encoding", "cp1252"), 0, values={"n": 41},
         absent_flags=("encoding_guessed",)),
    Case("unknown_encoding", text_file("data.csv", "days\n" + GOOD),
         facts("data.csv", "--column", "days", "--encoding", "klingon"), 2,
         message=("data.csv", "unknown text encoding 'klingon'")),
    Case("recipe_encoding_key", both(text_file("data.csv", "days\n" + GOOD + "12\u20ac\n", "cp1252"),
                                     recipe('encoding = "cp1252"\n')),
         ("redraft", "recipe.toml"), 0, values={"n": 41}, absent_flags=("encoding_guessed",)),
    Case("digit_header_is_a_name", digit_headers, facts("data.csv", "--column", "1"), 0,
         values={"variable.name": "1", "n": 40}),
    Case("digit_header_is_a_name_with_groups", digit_headers,
         ("draft", "data.csv", "--column", "1", "--group-by", "site", "-o", "report.docx"), 0,
         report_text=("north", "south")),
    # ----- crashes and exhaustion: bounded reading, one line each
    Case("million_columns", million_columns, facts("data.csv", "--column", "c5"), 2,
         message=("data.csv", "1,000,000 columns", "16,384")),
    Case("header_cell_too_long", header_cell_too_long, facts("data.csv", "--column", "days"), 2,
         message=("data.csv", "200,000 characters")),
    Case("cell_too_long", cell_too_long, facts("data.csv", "--column", "days"), 2,
         message=("data.csv", "row 5", "40,000 characters")),
    Case("escape_sequences_in_header", header_with_escape, facts("data.csv", "--column", "nope"), 2,
         message=("data.csv", "no column named 'nope'", "\\u001b[2J")),
    Case("excel_zip_bomb", zip_bomb_workbook, facts("book.xlsx", "--column", "hours"), 2,
         message=("book.xlsx", "zip bomb")),
    Case("excel_encrypted", ole_file("book.xlsx", encrypted=True), facts("book.xlsx", "--column", "hours"), 2,
         message=("book.xlsx", "encrypted")),
    Case("excel_97_named_xlsx", ole_file("book.xlsx", encrypted=False), facts("book.xlsx", "--column", "hours"), 2,
         message=("book.xlsx", "Excel 97-2003")),
    Case("recipe_nested_too_deeply", deep_toml, ("redraft", "recipe.toml"), 2,
         message=("recipe.toml", "nested too deeply")),
    Case("home_not_writable", text_file("data.csv", "days\n" + GOOD), draft("data.csv", "--column", "days"), 0,
         env={"HOME": "/proc", "MPLCONFIGDIR": None, "XDG_CONFIG_HOME": None}, values={"n": 40}),
    # ----- privacy: nothing of a template's own properties or data reaches a report
    Case("template_properties_stay_out", both(text_file("data.csv", "days\n" + GOOD), branded_template),
         draft("data.csv", "--column", "days", "--template", "brand.docx"), 0,
         report_text=("Invented Program letterhead",), report_absent=TEMPLATE_SECRETS),
)


def build(folder: str | Path) -> dict[str, Path]:
    """Write every case into ``folder/<case name>/``; return case name -> its folder."""
    root = Path(folder)
    made = {}
    names = [case.name for case in CASES]
    if len(set(names)) != len(names):
        raise ValueError("case names must be unique")
    for case in CASES:
        where = root / case.name
        where.mkdir(parents=True, exist_ok=True)
        (where / "sub").mkdir(exist_ok=True)  # lets "./sub/../data.csv" resolve
        case.write(where)
        made[case.name] = where
    return made


if __name__ == "__main__":
    if len(sys.argv) != 2:
        sys.exit("usage: make_corpus.py FOLDER")
    for name, where in build(sys.argv[1]).items():
        print(f"{name}\t{where}")
