"""Safety of output: inputs never change, saves are atomic, documents carry no local paths or user names.

Data are invented (repair-shop turnaround hours, fixed seed), written into a
temporary folder; every command runs through the real command line.
"""

from __future__ import annotations

import contextlib
import getpass
import hashlib
import json
import os
import signal
import socket
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import numpy as np
import pytest

from narrator.safe_io import PAUSE_ENV

SEED = 6


def narrator_cli(*args: str, cwd: Path, env: dict | None = None, **kwargs) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "narrator", *args], cwd=cwd, capture_output=True, text=True,
                          env={**os.environ, **(env or {})}, timeout=300, **kwargs)


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


def test_killing_during_the_sidecar_save_keeps_the_previous_sidecar(shop):
    report, sidecar = shop / "report.docx", shop / "report.findings.json"
    first = narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", "report.docx", cwd=shop)
    assert first.returncode == 0, first.stderr
    old_report, old_sidecar = report.read_bytes(), sidecar.read_bytes()
    # A different time makes different bytes, so the moment the report is replaced can be seen.
    process = subprocess.Popen(
        [sys.executable, "-m", "narrator", "draft", "turnaround.csv", "--column", "hours", "-o", "report.docx",
         "--title", "Second version"],
        cwd=shop, env={**os.environ, PAUSE_ENV: "3"}, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    try:
        deadline = time.monotonic() + 120
        while report.read_bytes() == old_report:  # the report is replaced after its own pause
            assert process.poll() is None, "the draft ended before the report was replaced"
            assert time.monotonic() < deadline
            time.sleep(0.05)
        time.sleep(0.5)  # now inside the sidecar's pause, before its rename
        os.kill(process.pid, signal.SIGKILL)
    finally:
        process.wait(timeout=60)
    assert process.returncode == -signal.SIGKILL
    assert sidecar.read_bytes() == old_sidecar
    json.loads(sidecar.read_text(encoding="utf-8"))
    with zipfile.ZipFile(report) as archive:  # the new report is whole
        assert archive.testzip() is None


def test_an_unwritable_output_folder_fails_cleanly_and_writes_nothing(shop):
    for output in ("turnaround.csv/report.docx", "/proc/report.docx"):
        result = narrator_cli("draft", "turnaround.csv", "--column", "hours", "-o", output, cwd=shop)
        assert result.returncode == 2
        assert len(result.stderr.splitlines()) == 1 and "Traceback" not in result.stderr
    assert sorted(path.name for path in shop.iterdir()) == ["turnaround.csv"]
