"""The two text-file readers of narrator.reading.columns give the same cells.

pyarrow's CSV reader is the fast path; pandas' C parser (the reference
library here) reads whatever the fast path declines. Every layout below is
read both ways and must give the same headers, cells and row count; the fast
path must actually be taken on the plain layouts, or the test proves nothing.
"""

from __future__ import annotations

import random

import pytest

from narrator.reading import columns as reading

AWKWARD = {
    "plain": b"x\n1.5\n2\n3.25\n",
    "no final newline": b"x\n1\n2",
    "crlf": b"x\r\n1\r\n2\r\n",
    "cr only": b"x\r1\r2\r",
    "mixed endings": b"x\n1\r\n2\r3\n",
    "blank lines inside, one column": b"x\n1\n\n2\n\n\n3\n",
    "blank lines at the end": b"x\n1\n2\n\n\n",
    "spaces-only lines": b"x\n1\n   \n2\n \t \n",
    "two columns": b"id,x\na,1\nb,2\n",
    "two columns, empty cells": b"id,x\n,1\nb,\n,\n",
    "trailing delimiter": b"id,x,\na,1,\nb,2,\n",
    "blank line in two columns": b"id,x\na,1\n\nb,2\n",
    "short line": b"id,x,y\na,1\nb,2,3\n",
    "semicolons": b"id;x\na;1,5\nb;2,25\n",
    "tabs": b"id\tx\na\t1\nb\t2\n",
    "header only": b"x\n",
    "blank header cell": b",x\n1,2\n3,4\n",
    "unicode": "wait (días)\n1\u00a0234\n\u221212\n\u20ac 5\n".encode(),
    "utf-8 byte-order mark": b"\xef\xbb\xbfx\n1\n2\n",
    "utf-16": "x\n1\n2\n".encode("utf-16"),
    "cp1252": "x\n\u20ac12\n3\n".encode("cp1252"),
    "control characters": b"x\n1\x0b2\n\x0c3\n4\x1c\n\x1e5\n",
    "end-of-file character": b"x\n1\n\x1a\n2\n",
    "next-line character": "x\n1\u0085\n2\n".encode(),
    "quoted": b'id,x\n"a,b",1\n"c""d",2\n',
    "malformed quote": b'x\n12"5\n"7"8\n',
    "only blank data rows": b"x\n\n\n",
}

PLAIN = ("plain", "no final newline", "crlf", "two columns", "semicolons", "tabs", "unicode", "cp1252")


def _read_both(tmp_path, content: bytes, monkeypatch, name: str = "data.csv"):
    path = tmp_path / name
    path.write_bytes(content)
    results = []
    for fast in (True, False):
        with monkeypatch.context() as patch:
            used = []
            original = reading._arrow_text_table

            def spy(*args, _original=original, _used=used, _fast=fast):
                table = _original(*args) if _fast else None
                _used.append(table is not None)
                return table

            patch.setattr(reading, "_arrow_text_table", spy)
            try:
                headers, table, source = reading._read_text_table(path, "csv", None)
                outcome = (headers, [column.to_pylist() for column in table.columns], source)
            except reading.NarratorError as exc:
                outcome = ("error", str(exc))
        results.append((outcome, used[0] if used else False))
    return results


@pytest.mark.parametrize("label", sorted(AWKWARD))
def test_fast_reader_gives_the_same_cells_as_pandas(tmp_path, monkeypatch, label):
    (fast, fast_used), (reference, _) = _read_both(tmp_path, AWKWARD[label], monkeypatch)
    assert fast == reference
    if label in PLAIN:
        assert fast_used, "the fast path was not taken on a plain layout"


def test_fast_reader_matches_pandas_on_random_texts(tmp_path, monkeypatch):
    # Short random texts over the characters that matter to line and field splitting; fixed seed.
    generator = random.Random(20261201)
    alphabet = ["1", "2", ".", ",", ";", "\t", " ", "\r", "\n", "\n", "-", "a", "\x0b", "\x1c", "\u0085", "\u00a0"]
    taken = 0
    for case in range(300):
        text = "x" + generator.choice(["", ",y", ";y", "\ty"]) + "\n"
        text += "".join(generator.choice(alphabet) for _ in range(generator.randint(0, 24)))
        (fast, fast_used), (reference, _) = _read_both(tmp_path, text.encode(), monkeypatch, f"case{case}.csv")
        assert fast == reference, repr(text)
        taken += fast_used
    assert taken > 50  # the comparison covered the fast path often enough to mean something


def test_read_column_same_sample_both_ways(tmp_path, monkeypatch):
    path = tmp_path / "mixed.csv"
    path.write_text("id;x\na;1.5\nb;n/a\nc;1.234\nd;-\ne;12%\nf;USD 3\n", encoding="utf-8")
    fast = reading.read_column(path, "x", id_column="id")
    monkeypatch.setattr(reading, "_arrow_text_table", lambda *args: None)
    reference = reading.read_column(path, "x", id_column="id")
    assert fast.values.tolist() == reference.values.tolist()
    assert fast.rows.tolist() == reference.rows.tolist()
    assert fast.exclusions == reference.exclusions
    assert fast.source == reference.source
    assert fast.ids.tolist() == reference.ids.tolist()
