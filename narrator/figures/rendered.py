"""One finished figure, as the writer places it: PNG bytes, pixel size, caption and alt text.

Kept apart from :mod:`narrator.figures.charts` so the writer, the report and the drawing helper can
handle finished figures without importing the plotting library.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class RenderedFigure:
    """One finished figure: PNG bytes, its pixel size, and the texts the report shows with it."""

    key: str
    png: bytes
    width_px: int
    height_px: int
    caption: str
    alt_text: str

    @property
    def aspect(self) -> float:
        """Height over width, for placing the picture at a chosen width."""
        return self.height_px / self.width_px
