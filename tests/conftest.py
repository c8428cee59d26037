"""Test-run settings shared by every test folder.

Inside the README's own test run (tests/test_readme.py runs the README's test
command in a fresh copy and a fresh virtual environment) only the tests marked
``smoke`` run: that run proves the command installs the package and runs
pytest, and the outer run has already run everything else in this checkout.

Hypothesis draws the same examples on every run (``derandomize``), so a run
on a clean checkout passes or fails the same way each time; a property that
a new example would break is found by changing the test, not by luck in CI.
"""

import os

from hypothesis import settings

settings.register_profile("narrator", derandomize=True, print_blob=True)
settings.load_profile("narrator")

README_INNER_RUN = "NARRATOR_README_INNER_RUN"


def pytest_collection_modifyitems(config, items):
    if os.environ.get(README_INNER_RUN) != "1":
        return
    keep = [item for item in items if item.get_closest_marker("smoke")]
    drop = [item for item in items if not item.get_closest_marker("smoke")]
    if drop:
        config.hook.pytest_deselected(items=drop)
    items[:] = keep
