"""narrator: a column of numbers in, a careful plain-language report out.

==================  ===========================================================
Name                What it is
==================  ===========================================================
``describe``        one column (array or Sample) -> Findings (narrator.engine)
``Findings``        the structured findings; ``to_dict``/``from_dict`` for JSON
``Sample``          values read from a file with an account of what was left out
``NarratorError``   the one exception type for bad input
==================  ===========================================================

``describe`` is loaded on first use: importing any part of narrator (the drawing helper, the
command line's parser) does not load the engine and its numeric libraries with it.
"""

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.reading.sample import Sample

__version__ = "0.1.0"

__all__ = ["Findings", "NarratorError", "Sample", "__version__", "describe"]


def __getattr__(name: str):
    if name == "describe":
        from narrator.engine.describe import describe

        globals()["describe"] = describe
        return describe
    raise AttributeError(f"module 'narrator' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), "describe"})
