"""Every case of the bad-input corpus (tests/corpus/make_corpus.py) through the real command line.

The corpus is built into a temporary folder and each case runs as
``python -m narrator ...`` in its own folder, several at a time: in a process
of its own forked from an interpreter that has imported narrator once
(tests/helpers/commands.py), or, for a case that sets its own environment, as a
fresh ``python -m narrator``. A sample of the cases (every tenth) also runs as a
fresh process, and must pass the same checks and end the same way. A case ends
either in exit 0 with a report (or findings) that lists the problem under
data quality, or in exit 2 with one line ``narrator: <message>`` naming the
file (and line, row or column where one applies). Never a traceback, never a
warning on stderr, and the input files keep their bytes.
"""

from __future__ import annotations

import hashlib
import html
import importlib.util
import json
import os
import queue
import re
import subprocess
import sys
import zipfile
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import pytest
from helpers.commands import CommandServer

_SPEC = importlib.util.spec_from_file_location("make_corpus", Path(__file__).parent / "corpus" / "make_corpus.py")
corpus = importlib.util.module_from_spec(_SPEC)
sys.modules["make_corpus"] = corpus
_SPEC.loader.exec_module(corpus)

CASES = {case.name: case for case in corpus.CASES}


@dataclass(frozen=True)
class Run:
    folder: Path
    returncode: int
    stdout: str
    stderr: str
    hashes_before: dict[str, str]
    hashes_after: dict[str, str]


def file_hashes(folder: Path) -> dict[str, str]:
    return {
        str(path.relative_to(folder)): hashlib.sha256(path.read_bytes()).hexdigest()
        for path in sorted(folder.rglob("*"))
        if path.is_file() and not path.is_symlink()
    }


# What the commands a server runs import later: loaded once, before the fork (the interpreter's
# own start-up and these imports are most of a small command's time).
PRELOAD = ("narrator.request", "narrator.report", "narrator.recipe", "narrator.writer", "narrator.figures.charts",
           "narrator.places.fill", "narrator.groups.analysis", "narrator.history.changes")
FRESH_SAMPLE = 10  # every tenth case also runs as a fresh ``python -m narrator``
WORKERS = max(2, os.cpu_count() or 2)


def base_env(root: Path) -> dict[str, str]:
    env = {**os.environ, "MPLCONFIGDIR": str(root / ".matplotlib"), "PYTHONWARNINGS": "default"}
    env.pop("NARRATOR_DEBUG", None)
    return env


def run_case(case, folder: Path, servers: queue.Queue | None = None) -> Run:
    """Run one case in its folder: through a command server from ``servers``, or, without one (or
    for a case that sets its own environment, which Python reads at start-up), as a fresh process."""
    before = file_hashes(folder)
    env = base_env(folder.parent)
    for name, value in case.env.items():
        if value is None:
            env.pop(name, None)
        else:
            env[name] = value
    if servers is None or case.env:
        proc = subprocess.run(
            [sys.executable, "-m", "narrator", *case.args], cwd=folder, capture_output=True, text=True,
            env=env, timeout=300,
        )
    else:
        server = servers.get()
        try:
            proc = server.run(case.args, cwd=folder, env=env, timeout=300)
        finally:
            servers.put(server)
    return Run(folder, proc.returncode, proc.stdout, proc.stderr, before, file_hashes(folder))


def fresh_sample() -> list[str]:
    return [name for k, name in enumerate(CASES) if k % FRESH_SAMPLE == 0]


@pytest.fixture(scope="module")
def all_runs(tmp_path_factory) -> tuple[dict[str, Run], dict[str, Run], list[str]]:
    """Every case (through command servers) and the fresh sample (fresh processes, a second copy of
    the corpus), run side by side; and what each server printed while it imported narrator."""
    root = tmp_path_factory.mktemp("corpus")
    fresh_root = tmp_path_factory.mktemp("corpus-fresh")
    folders = corpus.build(root)
    fresh_folders = {name: folder for name, folder in corpus.build(fresh_root).items() if name in fresh_sample()}
    for folder in (root, fresh_root):
        (folder / ".matplotlib").mkdir(exist_ok=True)
    servers: queue.Queue = queue.Queue()
    started = []
    try:
        for _ in range(WORKERS):
            server = CommandServer(base_env(root), preload=PRELOAD)
            started.append(server)
            servers.put(server)
        with ThreadPoolExecutor(max_workers=WORKERS) as pool:
            futures = {name: pool.submit(run_case, CASES[name], folders[name], servers) for name in CASES}
            fresh = {name: pool.submit(run_case, CASES[name], folder) for name, folder in fresh_folders.items()}
            return ({name: future.result() for name, future in futures.items()},
                    {name: future.result() for name, future in fresh.items()},
                    [server.startup_stderr for server in started])
    finally:
        for server in started:
            server.close()


@pytest.fixture(scope="module")
def runs(all_runs) -> dict[str, Run]:
    return all_runs[0]


def docx_paragraphs(path: Path) -> str:
    """All text of every XML part, one paragraph per line, entities decoded."""
    lines = []
    with zipfile.ZipFile(path) as archive:
        for name in archive.namelist():
            if not name.endswith(".xml"):
                continue
            xml = archive.read(name).decode("utf-8")
            for paragraph in re.split(r"</w:p>|</a:p>", xml):
                texts = re.findall(r"<w:t(?:\s[^>]*)?>([^<]*)</w:t>", paragraph)
                if texts:
                    lines.append(html.unescape("".join(texts)))
            lines.extend(html.unescape(value) for value in re.findall(r'(?:descr|title)="([^"]*)"', xml))
    return "\n".join(lines)


def lookup(data, dotted: str):
    for part in dotted.split("."):
        data = data[part]
    return data


def test_corpus_is_large_enough_and_covers_both_outcomes():
    outcomes = [case.exit_code for case in corpus.CASES]
    assert len(outcomes) >= 40
    assert outcomes.count(0) >= 20 and outcomes.count(2) >= 15


def test_corpus_builds_from_the_script(tmp_path):
    made = corpus.build(tmp_path)
    assert set(made) == set(CASES)
    assert all(any(folder.iterdir()) for folder in made.values())


@pytest.mark.parametrize("name", list(CASES))
def test_case(runs, name):
    check_run(CASES[name], runs[name])


def test_the_servers_imported_narrator_without_a_word(all_runs):
    # A warning or message while importing would reach every command's stderr in a fresh process.
    assert all(text == "" for text in all_runs[2]), all_runs[2]


@pytest.mark.parametrize("name", fresh_sample())
def test_a_fresh_process_passes_the_same_checks_and_ends_the_same_way(all_runs, name):
    served, fresh = all_runs[0][name], all_runs[1][name]
    check_run(CASES[name], fresh)

    def same(text: str, run: Run) -> str:
        return text.replace(str(run.folder.parent), "<corpus>")

    assert fresh.returncode == served.returncode
    assert same(fresh.stdout, fresh) == same(served.stdout, served)
    assert same(fresh.stderr, fresh) == same(served.stderr, served)
    assert sorted(fresh.hashes_after) == sorted(served.hashes_after)


def check_run(case, run: Run) -> None:
    assert "Traceback" not in run.stderr, run.stderr
    assert run.returncode == case.exit_code, f"exit {run.returncode}; stderr: {run.stderr}"
    # The inputs keep their bytes whatever the outcome (save the files the case lets the command replace).
    for relative, digest in run.hashes_before.items():
        if relative not in case.changes:
            assert run.hashes_after.get(relative) == digest, f"{relative} changed"
    # Messages reach a terminal as text: no control character, no screenful.
    assert not re.search(r"[\x00-\x08\x0b-\x1f\x7f]", run.stderr), repr(run.stderr[:200])
    assert all(len(line) <= 2100 for line in run.stderr.splitlines())
    for forbidden in case.no_files:
        assert not list(run.folder.parent.rglob(forbidden)), f"{forbidden} was created"
    if case.exit_code == 2:
        lines = run.stderr.splitlines()
        assert len(lines) == 1, run.stderr
        assert lines[0].startswith("narrator: ")
        for fragment in case.message:
            assert fragment in lines[0], f"{fragment!r} not in {lines[0]!r}"
        assert run.stdout == ""
        assert "report.docx" in run.hashes_before or not (run.folder / "report.docx").exists()
        return
    if case.note:
        lines = run.stderr.splitlines()
        assert len(lines) == 1 and lines[0].startswith("narrator: note: "), run.stderr
        for fragment in case.note:
            assert fragment in lines[0], f"{fragment!r} not in {lines[0]!r}"
    else:
        assert run.stderr == "", run.stderr
    if case.args[0] in ("draft", "redraft"):
        report = run.folder / "report.docx"
        sidecar = (run.folder / "report.findings.json").read_text(encoding="utf-8")
        findings = json.loads(sidecar)
        text = docx_paragraphs(report)
        for fragment in case.report_text:
            assert fragment in text, f"{fragment!r} not in the report"
        for fragment in case.report_absent:
            assert fragment not in text
            assert fragment not in sidecar
            with zipfile.ZipFile(report) as archive:
                assert not any(fragment.encode() in archive.read(part) for part in archive.namelist())
        # Nothing from the data breaks the XML: every part parses.
        from xml.etree import ElementTree

        with zipfile.ZipFile(report) as archive:
            for part in archive.namelist():
                if part.endswith(".xml") or part.endswith(".rels"):
                    ElementTree.fromstring(archive.read(part))
    else:
        findings = json.loads(run.stdout)
    if "quality" not in findings:  # a report on several groups keeps a findings set, checked above
        assert not (case.flags or case.flag_rows or case.values)
        return
    flags = {flag["code"]: flag for flag in findings["quality"]["flags"]}
    for code, count in case.flags.items():
        assert code in flags, f"flag {code} missing; flags: {sorted(flags)}"
        if count is not None:
            assert flags[code]["count"] == count, (code, flags[code])
    for code, rows in case.flag_rows.items():
        assert tuple(flags[code]["rows"][: len(rows)]) == rows, (code, flags[code]["rows"])
    for code in case.absent_flags:
        assert code not in flags, f"flag {code} should not be raised"
    for dotted, expected in case.values.items():
        found = lookup(findings, dotted)
        if isinstance(expected, float):
            assert found == pytest.approx(expected, rel=1e-12), dotted
        else:
            assert found == expected, dotted


def test_outcome_counts_are_reported(runs, capsys):
    report_cases = sum(1 for case in corpus.CASES if case.exit_code == 0)
    message_cases = sum(1 for case in corpus.CASES if case.exit_code == 2)
    with capsys.disabled():
        print(f"\ncorpus: {report_cases} cases end in a report with flags, {message_cases} in exit 2")
    assert report_cases + message_cases == len(corpus.CASES)
