"""Which files narrator reads, how a column is chosen, and the limits that keep reading bounded.

=============================  ================================================
Name                           What it is
=============================  ================================================
:func:`file_format`            a path's format name from its extension
:func:`check_file`             an input that exists, is a file and is not empty
:func:`file_sha256`            hex SHA-256 of a file, for provenance
:func:`select_column`          the 0-based index of the column a caller names
:func:`shown_name`             a name from a file or a caller, safe and short
                               enough to put in a message
:func:`describe_columns`       the first headers of a file, for a message
:data:`SUPPORTED_FORMATS`      file extension -> format name
:data:`MAX_COLUMNS`            the widest table narrator reads
:data:`MAX_CELL_CHARACTERS`    the longest cell narrator reads
=============================  ================================================

The column rule, one rule for every command, engine and file kind: a column is
named by its header text, matched exactly, then ignoring case and runs of
spaces; a whole number, or digits that match no header, are its 1-based
position. So in a file with the columns ``site,1,x`` the column "1" is the
second one (its header is "1"), and "3" is the third.

The limits are Excel's own worksheet limits (Microsoft, "Excel specifications
and limits"): 16,384 columns and 32,767 characters in a cell. A file beyond them
is refused with one line before its rows are read, so a hostile file cannot
make narrator hold more than one column of bounded cells.
"""

from __future__ import annotations

import difflib
import hashlib
import numbers
import os
from collections.abc import Sequence
from pathlib import Path

from narrator.errors import NarratorError

__all__ = [
    "MAX_CELL_CHARACTERS",
    "MAX_COLUMNS",
    "NAME_LENGTH",
    "SUPPORTED_FORMATS",
    "check_file",
    "describe_columns",
    "file_format",
    "file_sha256",
    "select_column",
    "shown_name",
]

SUPPORTED_FORMATS: dict[str, str] = {
    ".csv": "csv",
    ".tsv": "tsv",
    ".tab": "tsv",
    ".xlsx": "xlsx",
    ".xlsm": "xlsx",
    ".parquet": "parquet",
    ".pq": "parquet",
}

MAX_COLUMNS = 16_384  # Excel's worksheet width (column XFD)
MAX_CELL_CHARACTERS = 32_767  # Excel's limit for the text of one cell
NAME_LENGTH = 60  # characters of a name a message shows before cutting it


def shown_name(text: object, limit: int = NAME_LENGTH) -> str:
    """A name for a message: control and invisible characters escaped, cut at ``limit`` characters.

    Terminal escape sequences in a header or a file name reach a terminal as text,
    never as commands, and a huge header does not fill the screen.

    >>> print(shown_name("days" + chr(27) + "[2J"), shown_name("W" * 100, 10))
    days\\u001b[2J WWWWWWWWW\u2026
    """
    raw = str(text)[: limit + 1]
    shown = "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in raw)
    return shown if len(shown) <= limit and len(raw) <= limit else shown[: limit - 1] + "\u2026"


def file_format(path: Path) -> str:
    """The format name (csv, tsv, xlsx, parquet) of ``path`` from its extension; NarratorError otherwise."""
    found = SUPPORTED_FORMATS.get(path.suffix.lower())
    if found is None:
        known = ", ".join(SUPPORTED_FORMATS)
        hint = " (save it as .xlsx)" if path.suffix.lower() in (".xls", ".ods") else ""
        raise NarratorError(f"{shown_name(path.name)}: cannot read files of type "
                            f"'{shown_name(path.suffix or '(none)', 12)}'{hint}; supported: {known}")
    return found


def check_file(path: Path) -> None:
    """NarratorError unless ``path`` exists, is a file (not a folder) and is not empty."""
    name = shown_name(path.name)
    if not path.exists():
        raise NarratorError(f"{name}: file not found")
    if path.is_dir():
        raise NarratorError(f"{name}: is a folder, not a file")
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise NarratorError(f"{name}: cannot be read ({exc.strerror or exc})") from None
    if size == 0:
        raise NarratorError(f"{name}: the file is empty")


def file_sha256(path: str | os.PathLike[str]) -> str:
    """Hex SHA-256 digest of a file's bytes (FIPS 180-4), read in 1 MiB blocks.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "empty.csv").write_bytes(b"")
    >>> file_sha256(folder / "empty.csv")[:16]
    'e3b0c44298fc1c14'
    """
    target = Path(path)
    if not target.is_file():
        raise NarratorError(f"{shown_name(target.name)}: file not found")
    digest = hashlib.sha256()
    try:
        with open(target, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    except OSError as exc:
        raise NarratorError(f"{shown_name(target.name)}: cannot be read ({exc.strerror or exc})") from None
    return digest.hexdigest()


def loose(name: str) -> str:
    """A name compared loosely: case folded, runs of spaces as one space, ends trimmed."""
    return " ".join(name.split()).casefold()


def describe_columns(headers: Sequence[str], limit: int = 20) -> str:
    """The first ``limit`` headers, each shown safely, for a message that lists the columns."""
    shown = [shown_name(header) if header.strip() else f"(blank, column {k})"
             for k, header in enumerate(headers[:limit], 1)]
    more = f" and {len(headers) - limit} more" if len(headers) > limit else ""
    return ", ".join(shown) + more


def select_column(headers: Sequence[str], column: str | int, where: str) -> int:
    """0-based index of the column named by ``column`` (see the column rule above).

    ``where`` names the file (and sheet) in messages.

    >>> select_column(["site", "1", "x"], "1", "data.csv"), select_column(["site", "1", "x"], "3", "data.csv")
    (1, 2)
    >>> select_column(["site", "1", "x"], 1, "data.csv")
    0
    """
    if isinstance(column, bool) or not isinstance(column, numbers.Integral | str):
        raise NarratorError(f"{where}: choose a column by its header text or its position (1, 2, ...), "
                            f"not {shown_name(repr(column))}")
    if isinstance(column, numbers.Integral):
        return _position(headers, int(column), where)
    exact = [k for k, header in enumerate(headers) if header == column]
    if len(exact) == 1:
        return exact[0]
    if len(exact) > 1:
        places = ", ".join(str(k + 1) for k in exact[:20])
        raise NarratorError(f"{where}: {len(exact)} columns are named '{shown_name(column)}' (columns {places}); "
                            f"choose one by position")
    loose_matches = [k for k, header in enumerate(headers) if loose(header) == loose(column)]
    if len(loose_matches) == 1:
        return loose_matches[0]
    if len(loose_matches) > 1:
        found = ", ".join(f"'{shown_name(headers[k])}' (column {k + 1})" for k in loose_matches[:20])
        raise NarratorError(f"{where}: several columns match '{shown_name(column)}' when case and spaces are "
                            f"ignored: {found}; choose one by exact name or position")
    if column.isascii() and column.isdigit():
        return _position(headers, int(column), where)
    close = difflib.get_close_matches(column[:200], [header[:200] for header in headers[:MAX_COLUMNS]], n=1,
                                      cutoff=0.6)
    hint = f"; did you mean '{shown_name(close[0])}'?" if close else ""
    raise NarratorError(f"{where}: no column named '{shown_name(column)}'; columns are: "
                        f"{describe_columns(headers)}{hint}")


def _position(headers: Sequence[str], position: int, where: str) -> int:
    if 1 <= position <= len(headers):
        return position - 1
    raise NarratorError(f"{where}: there is no column {position}; the file has {len(headers)} "
                        f"column{'s' if len(headers) != 1 else ''}: {describe_columns(headers)}")
