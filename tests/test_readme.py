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


def start_readme(name: str, folder: Path) -> subprocess.Popen:
    env = {**os.environ, INNER: "1"}
    env.pop("VIRTUAL_ENV", None)
    return subprocess.Popen(
        ["bash", "-c", readme_command(name)], cwd=folder, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
        text=True,
    )


@pytest.fixture(scope="module")
def readme_runs(tmp_path_factory):
    """Both set-up commands, each in its own fresh copy and fresh environment, run at the same time
    (each is mostly one pip install: on two cores the pair takes about as long as one)."""
    folders = {name: fresh_copy(tmp_path_factory.mktemp(name)) for name in ("demo", "test")}
    started = {name: start_readme(name, folder) for name, folder in folders.items()}
    results = {}
    for name, process in started.items():
        stdout, stderr = process.communicate(timeout=3000)
        results[name] = (folders[name], process.returncode, stdout, stderr)
    return results


def test_ci_runs_the_readme_test_command():
    script = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "tests/readme_commands.py test" in script


def test_demo_command_in_a_fresh_environment(readme_runs):
    folder, returncode, stdout, stderr = readme_runs["demo"]
    assert returncode == 0, stdout[-3000:] + stderr[-3000:]
    reports = sorted(p.name for p in (folder / "demo-reports").rglob("*.docx"))
    assert reports, "the demo wrote no report"
    assert any(p.name.endswith(".findings.json") for p in (folder / "demo-reports").rglob("*.json"))


def test_test_command_in_a_fresh_environment(readme_runs):
    _folder, returncode, stdout, stderr = readme_runs["test"]
    tail = stdout[-3000:] + stderr[-2000:]
    assert returncode == 0, tail
    last = stdout.strip().splitlines()[-1]
    assert " passed" in last and " failed" not in last, tail
    assert " deselected" in last, "the inner run should run only the smoke set: " + last
