"""The floor of a report as a whole process: the least any program drawing one histogram into a Word file does.

    .venv/bin/python tests/benchmarks/floor_report.py FILE.csv OUT.docx

It starts Python, imports numpy, matplotlib's Agg canvas (no pyplot) and python-docx, reads the one
column of numbers with numpy, draws one histogram of the size narrator's is (6.0 x 3.3 inches at
180 dpi, narrator.figures.charts), and saves a document holding that one picture. bench_report.py
times ``narrator draft`` against it: what narrator does beyond this is its own cost.
"""

from __future__ import annotations

import io
import sys

WIDTH_IN, HEIGHT_IN, DPI = 6.0, 3.3, 180
BINS = 60


def main(path: str, output: str) -> int:
    import docx
    import numpy as np
    from docx.shared import Inches
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    values = np.loadtxt(path, skiprows=1, dtype=float)
    figure = Figure(figsize=(WIDTH_IN, HEIGHT_IN), dpi=DPI)
    FigureCanvasAgg(figure)
    axes = figure.add_subplot()
    axes.hist(values, bins=BINS, color="#9ab", edgecolor="white")
    picture = io.BytesIO()
    figure.savefig(picture, format="png")
    picture.seek(0)
    document = docx.Document()
    document.add_picture(picture, width=Inches(WIDTH_IN))
    document.save(output)
    return 0


if __name__ == "__main__":
    if len(sys.argv) != 3:
        print("usage: floor_report.py FILE.csv OUT.docx", file=sys.stderr)
        sys.exit(2)
    sys.exit(main(*sys.argv[1:]))
