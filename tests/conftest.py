"""Test-run settings shared by every test folder.

Inside the README's own test run (tests/test_readme.py runs the README's test
command in a fresh copy and a fresh virtual environment) only the tests marked
``smoke`` run: that run proves the command installs the package and runs
pytest, and the outer run has already run everything else in this checkout.

Hypothesis draws the same examples on every run (``derandomize``), so a run
on a clean checkout passes or fails the same way each time; a property that
a new example would break is found by changing the test, not by luck in CI.

The tests start several hundred ``python -m narrator`` processes. When
``PYTHONDONTWRITEBYTECODE`` is set, none of them can keep the bytecode of
narrator's modules, and each compiles them again (about 0.3 s of CPU a
process here); so the run writes that bytecode once, at the start
(:func:`pytest_configure`), to the package's own ``__pycache__`` folders
(ignored by git), as Python would without the variable.
"""

import compileall
import importlib.util
import json
import os
from pathlib import Path

from hypothesis import settings
from readme_commands import SMOKE_SELECTION

settings.register_profile("narrator", derandomize=True, print_blob=True)
settings.load_profile("narrator")

README_INNER_RUN = "NARRATOR_README_INNER_RUN"


def pytest_configure(config):
    if os.environ.get("PYTHONDONTWRITEBYTECODE") and not os.environ.get("PYTEST_XDIST_WORKER"):
        spec = importlib.util.find_spec("narrator")  # found, not imported
        if spec is not None and spec.origin:
            compileall.compile_dir(Path(spec.origin).parent, quiet=1)


# The test files that take longest, run first (pyproject.toml: --dist loadfile --no-loadscope-reorder), so the
# workers share out the short files at the end instead of one worker ending alone on a long one.
RUN_FIRST = ("tests/test_readme.py", "tests/claims/test_claims.py", "tests/test_corpus.py", "tests/test_safe_io.py",
             "tests/test_memo_pages.py")


def _first_rank(item) -> int:
    path = item.nodeid.split("::")[0]
    return RUN_FIRST.index(path) if path in RUN_FIRST else len(RUN_FIRST)


def pytest_collection_modifyitems(config, items):
    items.sort(key=_first_rank)  # stable: every other test keeps its place
    if os.environ.get(README_INNER_RUN) != "1":
        return
    keep = [item for item in items if item.get_closest_marker("smoke")]
    drop = [item for item in items if not item.get_closest_marker("smoke")]
    if drop:
        config.hook.pytest_deselected(items=drop)
    items[:] = keep
    # What was kept, for tests/test_readme.py to check (the workers' deselected count is not reported).
    selection = {"collected": len(keep) + len(drop), "kept": len(keep)}
    (Path(config.rootpath) / SMOKE_SELECTION).write_text(json.dumps(selection), encoding="utf-8")
