"""The one exception type every bad-input case raises."""

from __future__ import annotations


class NarratorError(ValueError):
    """Bad input or an impossible request, with a message meant for the user.

    The command line prints ``narrator: <message>`` and exits with status 2.
    Messages name the file, row and column where one is known.
    """
