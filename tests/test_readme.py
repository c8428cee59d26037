"""The README's two set-up commands, run as a reader who follows the README runs them: in a fresh copy of
the tracked files, the demo command first (it makes a fresh virtual environment and installs narrator and its
dependencies), then the test command in the same folder (it installs the test tools and narrator, editable,
into that environment, and runs the tests).

Slow (two installs), but it runs in CI: it is what proves the README. What it does not prove: that the test
command alone fills an empty environment, since here the demo's install has put the common dependencies there
first; CI's own run (``bash .ci/run``) is that proof, since it is the test command on a clean checkout. Nor
that pip's byte-compiling of what it installs works: the commands run with ``PIP_COMPILE=0`` (pip's
``--no-compile``; Python compiles each module when it is first imported instead, and writes its bytecode). pip
does not fail an install when a file does not compile, so this leaves out time, not a check.
Inside the fresh environment the test command collects every test (so every import of the test files resolves
with what ``.[test]`` installed) and runs only the tests marked ``smoke`` (tests/conftest.py), in one worker
process (``PYTEST_XDIST_AUTO_NUM_WORKERS=1``: ``-n auto`` still starts pytest-xdist, with one worker): the
outer run has already run the rest in this checkout, and this file is skipped there, or it would recurse.
"""

import json
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from readme_commands import README, SMOKE_SELECTION, readme_command  # noqa: E402

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


def run_readme(name: str, folder: Path) -> tuple[int, str, str]:
    # pip is asked not to byte-compile every module it installs (its --no-compile, over half of an install's time
    # here), and Python may write the bytecode of the modules the run imports as it imports them: the same
    # packages are installed and the same commands run; only when bytecode is made differs. The variable is
    # PIP_COMPILE=0: pip reads an environment variable as the value of the option it names, so PIP_NO_COMPILE=1
    # would mean --no-compile=true, which pip takes as compile=True (measured: it compiled every module).
    env = {**os.environ, INNER: "1", "PIP_COMPILE": "0", "PYTEST_XDIST_AUTO_NUM_WORKERS": "1"}
    env.pop("PIP_NO_COMPILE", None)
    env.pop("VIRTUAL_ENV", None)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    done = subprocess.run(["bash", "-c", readme_command(name)], cwd=folder, env=env, capture_output=True, text=True,
                          timeout=3000)
    return done.returncode, done.stdout, done.stderr


@pytest.fixture(scope="module")
def readme_runs(tmp_path_factory):
    """Both set-up commands in one fresh copy, in the README's order; the test command runs only if the
    demo command succeeded (its result is then the demo's failure, said as such)."""
    folder = fresh_copy(tmp_path_factory.mktemp("readme"))
    assert not (folder / ".venv").exists() and not (folder / "demo-reports").exists()
    results = {"demo": (folder, *run_readme("demo", folder))}
    if results["demo"][1] == 0:
        results["test"] = (folder, *run_readme("test", folder))
    else:
        results["test"] = (folder, 1, "", "the demo command failed first")
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
    # The inner run runs the smoke set and nothing else: its selection (tests/conftest.py writes it, since the
    # workers report no deselected count) kept some tests and left others, and the kept ones all ran.
    selection = json.loads((_folder / SMOKE_SELECTION).read_text(encoding="utf-8"))
    assert 0 < selection["kept"] < selection["collected"], selection
    counts = {word: int(number) for number, word in re.findall(r"(\d+) (passed|skipped|xfailed|xpassed)", last)}
    assert sum(counts.values()) == selection["kept"], f"the inner run should run the smoke set only: {last}"
