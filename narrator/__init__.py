"""narrator: a column of numbers in, a careful plain-language report out.

==================  ===========================================================
Name                What it is
==================  ===========================================================
``describe``        one column (array or Sample) -> Findings (narrator.engine)
``Findings``        the structured findings; ``to_dict``/``from_dict`` for JSON
``Sample``          values read from a file with an account of what was left out
``NarratorError``   the one exception type for bad input
==================  ===========================================================

``describe`` and ``Sample`` are loaded on first use: importing any part of narrator (the command
line's parser, the drawing helper it starts first) does not load the engine and numpy with it.
"""

from narrator.errors import NarratorError
from narrator.findings import Findings

__version__ = "0.1.0"

__all__ = ["Findings", "NarratorError", "Sample", "__version__", "describe"]


def __getattr__(name: str):
    if name == "describe":
        from narrator.engine.describe import describe as value
    elif name == "Sample":
        from narrator.reading.sample import Sample as value
    else:
        raise AttributeError(f"module 'narrator' has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), "Sample", "describe"})
