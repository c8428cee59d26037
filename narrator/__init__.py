"""narrator: a column of numbers in, a careful plain-language report out.

==================  ===========================================================
Name                What it is
==================  ===========================================================
``describe``        one column (array or Sample) -> Findings (narrator.engine)
``Findings``        the structured findings; ``to_dict``/``from_dict`` for JSON
``Sample``          values read from a file with an account of what was left out
``NarratorError``   the one exception type for bad input
==================  ===========================================================
"""

from narrator.engine.describe import describe
from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.reading.sample import Sample

__version__ = "0.1.0"

__all__ = ["Findings", "NarratorError", "Sample", "__version__", "describe"]
