"""narrator: a column of numbers in, a careful plain-language report out."""

from narrator.errors import NarratorError
from narrator.findings import Findings
from narrator.sample import Sample

__version__ = "0.1.0"

__all__ = ["Findings", "NarratorError", "Sample", "__version__"]
