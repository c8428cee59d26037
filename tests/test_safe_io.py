"""Safety of output: inputs never change, saves are atomic, documents carry no local paths or user names.

Data are invented (repair-shop turnaround hours, fixed seed), written into a
temporary folder; every command runs through the real command line: most in a process of its own forked
from one interpreter that has imported narrator once (tests/helpers/commands.py; the kill tests kill that
process, as they would a fresh one), and the builds that run side by side, and one build paused at each of
two points, as fresh ``python -m narrator`` processes.
"""

from __future__ import annotations

import contextlib
import getpass
import hashlib
import os
import signal
import socket
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import pytest
from helpers.commands import CommandServer

from narrator.errors import NarratorError
from narrator.safe_io import PAUSE_ENV, PAUSE_POINTS, atomic_write_bytes, output_lock, read_report_pair

SEED = 6


# What a build imports after the command line: loaded once, before each fork (most of a small build's time).
PRELOAD = ("narrator.request", "narrator.report", "narrator.recipe", "narrator.writer", "narrator.figures.charts",
           "narrator.history.changes")
_SERVERS: list[CommandServer] = []


@pytest.fixture(scope="module", autouse=True)
def _command_server():
    with CommandServer(dict(os.environ), preload=PRELOAD) as server:
        assert server.startup_stderr == ""
        _SERVERS.append(server)
        try:
            yield server
        finally:
            _SERVERS.remove(server)


def narrator_cli(*args: str, cwd: Path, env: dict | None = None):
    """``python -m narrator *args`` in ``cwd``, in a process of its own (forked from the command server)."""
    return _SERVERS[-1].run(args, cwd=cwd, env={**os.environ, **(env or {})}, timeout=300)


@pytest.fixture()
def shop(tmp_path) -> Path:
    rng = np.random.default_rng(SEED)
    hours = rng.lognormal(2.0, 0.6, 60).round(1)
    lines = [f"T-{4000 + k},{value}" for k, value in enumerate(hours)]
    (tmp_path / "turnaround.csv").write_text("ticket,hours\n" + "\n".join(lines) + "\n", encoding="utf-8")
    return tmp_path


def digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_every_command_leaves_the_input_bytes_unchanged(shop):
    data = shop / "turnaround.csv"
    before = digest(data), data.stat().st_mtime_ns
    for args in (("facts", "turnaround.csv", "--column", "hours"),
                 ("facts", "turnaround.csv", "--column", "hours", "--json"),
                 ("tell", "turnaround.csv", "--column", "hours"),
                 ("draft", "turnaround.csv", "--column", "hours", "-o", "report.docx"),
                 ("recipe", "turnaround.csv", "-o", "recipe.toml")):
        result = narrator_cli(*args, cwd=shop)
        assert result.returncode == 0, result.stderr
        assert (digest(data), data.stat().st_mtime_ns) == before, args
    recipe = shop / "recipe.toml"
    recipe_digest = digest(recipe)
    result = narrator_cli("redraft", "recipe.toml", "--quiet", cwd=shop)
    assert result.returncode == 0, result.stderr
    assert (digest(data), data.stat().st_mtime_ns) == before
    assert digest(recipe) == recipe_digest


def xml_parts(path: Path) -> dict[str, str]:
    with zipfile.ZipFile(path) as archive:
        return {name: archive.read(name).decode("utf-8", "replace") for name in archive.namelist()
                if name.endswith((".xml", ".rels"))}


def test_no_local_path_user_or_host_in_the_document_or_sidecar(shop):
    result = narrator_cli("draft", str(shop / "turnaround.csv"), "--column", "hours", "-o",
                          str(shop / "report.docx"), cwd=shop.parent)
    assert result.returncode == 0, result.stderr
    secrets = {str(shop), str(shop.parent), str(Path.home()), getpass.getuser(), socket.gethostname()}
    with contextlib.suppress(OSError):  # no controlling terminal (CI)
        secrets.add(os.getlogin())
    secrets = {secret for secret in secrets if len(secret) >= 3}
    parts = xml_parts(shop / "report.docx")
    parts["sidecar"] = (shop / "report.findings.json").read_text(encoding="utf-8")
    assert "docProps/core.xml" in parts
    for name, text in parts.items():
        for secret in secrets:
            assert secret not in text, f"{secret!r} found in {name}"


def _pair_on_disk(folder: Path) -> tuple[str, int | None]:
    """What a reader finds beside report.docx: the pair's state and, when whole, the sidecar's n."""
    reading = read_report_pair(folder / "report.docx")
    return reading.state, (reading.data or {}).get("n")


BUILD = ("draft", "turnaround.csv", "--column", "hours", "-o", "report.docx")


def _paused_build(folder: Path, point: str) -> subprocess.Popen:
    """A fresh ``python -m narrator`` build, stopped at ``point``."""
    process = subprocess.Popen(
        [sys.executable, "-m", "narrator", *BUILD],
        cwd=folder, env={**os.environ, PAUSE_ENV: point}, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
        text=True,
    )
    line = process.stderr.readline()  # the build says where it stopped
    assert line.strip() == f"paused at {point}", (point, line, process.poll())
    return process


def _killed_at(server: CommandServer, folder: Path, point: str) -> None:
    """A build in a process of its own (forked from the server), stopped at ``point`` and killed there."""
    build = server.start(BUILD, cwd=folder, env={**os.environ, PAUSE_ENV: point})
    line = build.stderr.readline()  # the build says where it stopped
    if line.strip() != f"paused at {point}":
        os.kill(build.pid, signal.SIGKILL)
        raise AssertionError((point, line + build.stderr.read(), server.reap(build)))
    os.kill(build.pid, signal.SIGKILL)
    assert server.reap(build, timeout=60) == -signal.SIGKILL, point


@pytest.mark.slow
def test_a_reader_finds_the_old_pair_or_the_new_pair_when_a_build_is_killed_anywhere(shop, _command_server):
    # Generated data (fixed seed): 60 rows first, then 80; the sidecar's n tells the builds apart.
    first = narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "report.docx", cwd=shop)
    assert first.returncode == 0, first.stderr
    rng = np.random.default_rng(SEED + 1)
    hours = rng.lognormal(2.0, 0.6, 80).round(1)
    versions = {size: "ticket,hours\n" + "".join(f"T-{k},{v}\n" for k, v in enumerate(hours[:size]))
                for size in (70, 80)}
    for number, point in enumerate(PAUSE_POINTS):
        size = (80, 70)[number % 2]
        (shop / "turnaround.csv").write_text(versions[size], encoding="utf-8")
        before = _pair_on_disk(shop)
        assert before[0] == "ok" and before[1] != size, point
        _killed_at(_command_server, shop, point)
        state, n = _pair_on_disk(shop)
        assert state == "ok" and n in (before[1], size), (point, state, n)
        with zipfile.ZipFile(shop / "report.docx") as archive:
            assert archive.testzip() is None
        # The next build finishes or cleans what the killed one left, and leaves only the pair.
        again = narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "report.docx", cwd=shop)
        assert again.returncode == 0 and again.stderr == "", (point, again.stderr)
        assert sorted(path.name for path in shop.iterdir()) == ["report.docx", "report.findings.json",
                                                                 "turnaround.csv"], point
        assert _pair_on_disk(shop) == ("ok", size)


def test_the_pause_points_are_ten_and_each_is_reached(shop):
    assert len(PAUSE_POINTS) == 10 and len(set(PAUSE_POINTS)) == 10
    narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "report.docx", cwd=shop)
    for point in ("previous-read", "report-committed"):
        process = _paused_build(shop, point)
        process.kill()
        process.wait(timeout=60)
        process.stderr.close()


def test_a_second_build_of_the_same_output_waits_then_refuses_with_one_line(shop):
    process = _paused_build(shop, "locked")
    try:
        refused = pytest.raises(NarratorError, match=r"report\.docx: another narrator build is writing this report")
        with refused, output_lock(shop / "report.docx", wait=0.3):
            pass
    finally:
        process.kill()
        process.wait(timeout=60)
        process.stderr.close()
    with output_lock(shop / "report.docx", wait=5):  # a killed holder's lock is free again
        pass
    assert not (shop / ".report.docx.narrator-lock").exists()


def test_two_builds_at_once_give_one_whole_pair(shop):
    runs = [subprocess.Popen([sys.executable, "-m", "narrator", "draft", "turnaround.csv", "--column", "hours",
                              "-o", "report.docx", "--title", title], cwd=shop, stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE, text=True) for title in ("First", "Second")]
    for run in runs:
        _out, err = run.communicate(timeout=300)
        assert run.returncode == 0, err
    assert _pair_on_disk(shop)[0] == "ok"


def test_a_sidecar_that_is_not_its_reports_is_ignored_and_said_so(shop):
    assert narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "a.docx", cwd=shop).returncode == 0
    assert narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "b.docx", "--title", "B",
                        cwd=shop).returncode == 0
    (shop / "a.findings.json").write_bytes((shop / "b.findings.json").read_bytes())  # b's sidecar beside a
    assert read_report_pair(shop / "a.docx").state == "mismatch"
    result = narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "a.docx", cwd=shop)
    assert result.returncode == 0
    assert result.stderr.splitlines() == [
        "narrator: note: the previous findings a.findings.json were ignored: they belong to another version of "
        "a.docx"]
    assert read_report_pair(shop / "a.docx").state == "ok"


def test_writers_replace_a_link_and_never_write_through_it(shop):
    elsewhere = shop / "elsewhere"
    elsewhere.mkdir()
    kept = elsewhere / "kept.docx"
    assert narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", str(kept), cwd=shop).returncode == 0
    before, sidecar_before = kept.read_bytes(), (elsewhere / "kept.findings.json").read_bytes()
    (shop / "link.docx").symlink_to(kept)
    (shop / "recipe.toml").write_text('[data]\npath = "turnaround.csv"\n[outputs]\nmemo = "link.docx"\n'
                                      '[[variables]]\ncolumn = "hours"\n', encoding="utf-8")
    for args in (("draft", "turnaround.csv", "--column", "hours", "-o", "link.docx", "--title", "New"),
                 ("redraft", "recipe.toml", "--quiet")):
        (shop / "link.docx").unlink(missing_ok=True)
        (shop / "link.docx").symlink_to(kept)
        result = narrator_cli(*args, cwd=shop)
        assert result.returncode == 0, result.stderr
        assert not (shop / "link.docx").is_symlink() and kept.read_bytes() == before, args
        assert (elsewhere / "kept.findings.json").read_bytes() == sidecar_before
        assert (shop / "link.findings.json").is_file()
    (shop / "one-link").symlink_to(kept)  # the single-file writer too
    atomic_write_bytes(shop / "one-link", b"new")
    assert kept.read_bytes() == before and (shop / "one-link").read_bytes() == b"new"


def test_an_unwritable_output_folder_fails_cleanly_and_writes_nothing(shop):
    for output in ("turnaround.csv/report.docx", "/proc/report.docx"):
        result = narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", output, cwd=shop)
        assert result.returncode == 2
        assert len(result.stderr.splitlines()) == 1 and "Traceback" not in result.stderr
    assert sorted(path.name for path in shop.iterdir()) == ["turnaround.csv"]


def test_a_report_edited_by_hand_is_kept_until_the_user_says_to_replace_it(shop):
    import docx

    assert narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "r.docx", cwd=shop).returncode == 0
    # Rebuilt untouched: replaced, as a refresh should be.
    assert narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "r.docx", cwd=shop).returncode == 0
    edited = docx.Document(str(shop / "r.docx"))
    edited.add_paragraph("Our own reading of these figures, added by hand.")
    edited.save(str(shop / "r.docx"))
    before = (shop / "r.docx").read_bytes(), (shop / "r.findings.json").read_bytes()
    recipe = '[data]\npath = "turnaround.csv"\n[outputs]\nmemo = "r.docx"\n[[variables]]\ncolumn = "hours"\n'
    (shop / "recipe.toml").write_text(recipe, encoding="utf-8")
    for args in (("draft", "turnaround.csv", "--column", "hours", "-o", "r.docx"), ("redraft", "recipe.toml")):
        result = narrator_cli(*args, cwd=shop)
        assert result.returncode == 2, result.stderr
        (line,) = result.stderr.splitlines()  # one line; the recipe names the report by its whole path
        assert line.startswith("narrator: ") and line.endswith(
            "r.docx was edited after narrator wrote it, and a new build would lose those edits; choose "
            "another name, or add --force to replace it (to keep your own words in a document narrator updates, "
            "see `narrator fill`)"), line
        assert "Traceback" not in result.stderr
        assert ((shop / "r.docx").read_bytes(), (shop / "r.findings.json").read_bytes()) == before
    # A picture swapped is an edit too; formatting alone is not.
    result = narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "r.docx", "--force", cwd=shop)
    assert result.returncode == 0, result.stderr
    styled = docx.Document(str(shop / "r.docx"))
    for paragraph in styled.paragraphs:
        for run in paragraph.runs:
            run.bold = True
    styled.save(str(shop / "r.docx"))
    assert narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "r.docx", cwd=shop).returncode == 0
