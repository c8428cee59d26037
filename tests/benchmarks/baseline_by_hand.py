"""The same job done by hand with general-purpose libraries: the yardstick for the end-to-end benchmark.

An analyst without narrator would read the file with pandas, ask for the usual
summary, compute the skewness and a kernel density with scipy, the medcouple
with statsmodels when it fits in memory, draw a histogram with the density over
it with matplotlib, and put the picture and a table into a Word file with
python-docx. This script does exactly that, as one whole process, so start-up
imports and parsing count just as they do for ``narrator draft``.

    .venv/bin/python tests/benchmarks/baseline_by_hand.py FILE.csv COLUMN OUT.docx

statsmodels' medcouple builds the full n x n kernel matrix (O(n^2) memory), so
it is run only up to ``MEDCOUPLE_MAX_N`` values and skipped (with a line saying
so) above that.
"""

from __future__ import annotations

import io
import sys

MEDCOUPLE_MAX_N = 20_000  # statsmodels' medcouple needs about 8 n^2 / 4 bytes: 800 MB at 20 000 values
GRID_POINTS = 512
# A fixed bin count: the data-driven rules (bins="fd" or "auto") give thousands of bars for a long tail,
# which would make the hand-made way look slower than an analyst would let it be.
HISTOGRAM_BINS = 60


def main(path: str, column: str, output: str) -> int:
    import matplotlib

    matplotlib.use("Agg")
    import docx
    import matplotlib.pyplot as plt
    import numpy as np
    import pandas as pd
    from docx.shared import Inches
    from scipy import stats

    frame = pd.read_csv(path)
    values = frame[column].dropna().to_numpy(dtype=float)
    summary = frame[column].describe()
    skewness = float(stats.skew(values, bias=False))
    kurtosis = float(stats.kurtosis(values, bias=False))
    if values.size <= MEDCOUPLE_MAX_N:
        from statsmodels.stats.stattools import medcouple

        medcouple_text = f"{float(medcouple(values)):.3f}"
    else:
        medcouple_text = f"not computed (more than {MEDCOUPLE_MAX_N} values)"
        print(f"baseline: medcouple skipped, {values.size} values is more than {MEDCOUPLE_MAX_N}", file=sys.stderr)
    kde = stats.gaussian_kde(values)
    grid = np.linspace(values.min(), values.max(), GRID_POINTS)
    density = kde(grid)

    figure, axes = plt.subplots(figsize=(6, 3.5), dpi=150)
    axes.hist(values, bins=HISTOGRAM_BINS, density=True, color="#9ab", edgecolor="white")
    axes.plot(grid, density, color="#235")
    axes.set_xlabel(column)
    axes.set_ylabel("density")
    picture = io.BytesIO()
    figure.savefig(picture, format="png")
    plt.close(figure)
    picture.seek(0)

    document = docx.Document()
    document.add_heading(f"Summary of {column}", level=1)
    document.add_paragraph(
        f"{values.size} values; skewness {skewness:.2f}, excess kurtosis {kurtosis:.2f}, medcouple {medcouple_text}."
    )
    document.add_picture(picture, width=Inches(6))
    table = document.add_table(rows=1, cols=2)
    table.rows[0].cells[0].text = "statistic"
    table.rows[0].cells[1].text = "value"
    for name, value in summary.items():
        cells = table.add_row().cells
        cells[0].text = str(name)
        cells[1].text = f"{value:.4g}"
    document.save(output)
    return 0


if __name__ == "__main__":
    if len(sys.argv) != 4:
        print(__doc__.strip().splitlines()[-5], file=sys.stderr)
        sys.exit(2)
    sys.exit(main(*sys.argv[1:]))
