"""Read the set-up commands out of README.md.

README.md marks each command with an HTML comment on the line before its
code block: ``<!-- command: test -->`` and ``<!-- command: demo -->``.
``.ci/run`` runs the test command it prints, and tests/test_readme.py runs
both in a fresh copy and virtual environment, so the README cannot drift from CI.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

README = Path(__file__).resolve().parent.parent / "README.md"
# The file the README's inner test run writes in its fresh copy: how many tests it collected and kept (the
# smoke set; tests/conftest.py), for tests/test_readme.py to check.
SMOKE_SELECTION = "smoke-selection.json"


def readme_command(name: str, readme: Path = README) -> str:
    text = readme.read_text(encoding="utf-8")
    match = re.search(
        r"<!-- command: " + re.escape(name) + r" -->\s*```[a-z]*\n(.*?)\n```", text, flags=re.S
    )
    if match is None:
        raise SystemExit(f"README.md has no command marked {name!r}")
    return match.group(1).strip()


if __name__ == "__main__":
    print(readme_command(sys.argv[1]))
