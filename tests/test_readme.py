"""The README's two set-up commands, run as a new user runs them: a fresh copy, a fresh virtual environment.

Slow (it installs the package twice), but it runs in CI: it is what proves
the README. Inside the fresh environment the test command runs only the tests
marked ``smoke`` (tests/conftest.py): the outer run has already run the rest
in this checkout, and this file is skipped there, or it would recurse.
"""

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from readme_commands import README, readme_command  # noqa: E402

ROOT = README.parent
INNER = "NARRATOR_README_INNER_RUN"

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(os.environ.get(INNER) == "1", reason="inside the README's own test run"),
]


def fresh_copy(tmp_path: Path) -> Path:
    """The project's tracked files (what a clone gives), copied to a new folder."""
    listed = subprocess.run(["git", "ls-files", "-z"], cwd=ROOT, capture_output=True, check=True)
    target = tmp_path / "narrator"
    for name in listed.stdout.decode().split("\0"):
        if not name or not (ROOT / name).is_file():
            continue
        (target / name).parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(ROOT / name, target / name)
    return target


def run_readme(name: str, folder: Path) -> subprocess.CompletedProcess:
    env = {**os.environ, INNER: "1"}
    env.pop("VIRTUAL_ENV", None)
    return subprocess.run(
        ["bash", "-c", readme_command(name)], cwd=folder, env=env, capture_output=True, text=True, timeout=3000
    )


def test_ci_runs_the_readme_test_command():
    script = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "tests/readme_commands.py test" in script


def test_demo_command_in_a_fresh_environment(tmp_path):
    folder = fresh_copy(tmp_path)
    result = run_readme("demo", folder)
    assert result.returncode == 0, result.stdout[-3000:] + result.stderr[-3000:]
    reports = sorted(p.name for p in (folder / "demo-reports").rglob("*.docx"))
    assert reports, "the demo wrote no report"
    assert any(p.name.endswith(".findings.json") for p in (folder / "demo-reports").rglob("*.json"))


def test_test_command_in_a_fresh_environment(tmp_path):
    folder = fresh_copy(tmp_path)
    result = run_readme("test", folder)
    tail = result.stdout[-3000:] + result.stderr[-2000:]
    assert result.returncode == 0, tail
    last = result.stdout.strip().splitlines()[-1]
    assert " passed" in last and " failed" not in last, tail
    assert " deselected" in last, "the inner run should run only the smoke set: " + last
