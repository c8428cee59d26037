"""Where the templates (phrase banks, plans, Word styles) live.

pyproject.toml maps the top-level ``templates/`` folder to the package
``narrator.templates``, so an installed wheel and an editable install both
find it through importlib.resources. A plain source checkout that was never
installed falls back to the folder beside the package.
"""

from __future__ import annotations

from importlib import resources
from importlib.abc import Traversable
from pathlib import Path


def templates_root() -> Traversable:
    try:
        root = resources.files("narrator.templates")
        if root.joinpath("phrases").is_dir():
            return root
    except ModuleNotFoundError:
        pass
    return Path(__file__).resolve().parent.parent / "templates"


def template_file(*parts: str) -> Traversable:
    node = templates_root()
    for part in parts:
        node = node.joinpath(part)
    return node
