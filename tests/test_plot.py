"""The profile sheet's vertical exaggeration, by exact arithmetic.

Vertical exaggeration = (horizontal metres per inch of paper) / (vertical
metres per inch of paper); with the axes' size on the page and their data
limits known, it is plain arithmetic (definition of drawing scale).
"""
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import pytest  # noqa: E402

from gisgrade.output import plot  # noqa: E402


@pytest.mark.parametrize("size, rect, xlim, ylim, expected", [
    # 10 in x 5 in axes; 1000 m across (100 m/in), 50 m high (10 m/in): 10x
    ((10.0, 5.0), (0.0, 0.0, 1.0, 1.0), (0.0, 1000.0), (0.0, 50.0), 10.0),
    # axes 0.5 x 8 in = 4 in wide, 0.25 x 6 in = 1.5 in high; 2000 m / 4 in =
    # 500 m/in, 30 m / 1.5 in = 20 m/in: 25x (reversed limits count by size)
    ((8.0, 6.0), (0.1, 0.2, 0.5, 0.25), (2500.0, 500.0), (120.0, 150.0), 25.0),
])
def test_vertical_exaggeration_from_page_size_and_limits(size, rect, xlim, ylim, expected):
    fig = plt.figure(figsize=size, dpi=100)
    try:
        ax = fig.add_axes(rect)
        ax.set_xlim(*xlim)
        ax.set_ylim(*ylim)
        assert plot.vertical_exaggeration(ax) == pytest.approx(expected, rel=1e-12)
    finally:
        plt.close(fig)


def test_profile_sheet_prints_the_exaggeration_of_its_own_axes(flat_project):
    # The title's "vertical exaggeration Nx" is recomputed here from the drawn
    # upper axes: page size (inches) x axes fraction, and its data limits.
    import gisgrade

    fig = plot.profile_figure(gisgrade.compute(flat_project))
    ax = fig.axes[0]
    w_in, h_in = fig.get_size_inches()
    pos = ax.get_position()
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    ve = (abs(x1 - x0) / (pos.width * w_in)) / (abs(y1 - y0) / (pos.height * h_in))
    title = ax.get_title(loc="left")
    assert f"(vertical exaggeration {ve:.0f}x)" in title


def test_us_crossing_close_ups_read_in_feet(demo_us):
    # Every length a US reader sees on a crossing close-up is in feet: the
    # window a round number of feet each side (at least 100 ft), the axis
    # labels in ft, clearances to 0.01 ft (0.30 m is 0.98 ft: 1 ft = 0.3048 m,
    # NIST SP 811) so a short clearance does not read as the required one.
    import re

    import gisgrade
    from matplotlib.figure import Figure

    from gisgrade.display import Display

    project, _ = demo_us
    r = gisgrade.compute(project)
    d = Display("US")
    fig = Figure(figsize=(12, 4))
    c = r.crossings
    plot.crossing_details(fig, fig.add_gridspec(1, 1)[0], r, d, list(range(len(c))), len(c))
    for ax, i in zip(fig.axes, range(len(c))):
        lo, hi = ax.get_xlim()
        assert lo == pytest.approx(-hi) and hi >= 100 - 1e-9
        assert hi / 50 == pytest.approx(round(hi / 50), abs=1e-9)
        words = [ax.get_xlabel(), ax.get_ylabel(), ax.get_title()] + [t.get_text() for t in ax.texts]
        text = " ".join(words)
        assert not re.search(r"\d m\b|\(m\)|\bm from", text), text
        assert ax.get_xlabel() == "ft from crossing"
        shown = re.search(r"required (\d+\.\d\d) ft", text)
        assert shown and float(shown.group(1)) == pytest.approx(c.clearance[i] / 0.3048, abs=0.005)


def _drawn(fig):
    """Draw ``fig`` on an Agg canvas; its renderer (for text extents)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    return canvas.get_renderer()


def _overlaps(a, b) -> bool:
    return a.x0 < b.x1 and b.x0 < a.x1 and a.y0 < b.y1 and b.y0 < a.y1


def test_pressure_strip_labels_sit_clear_of_the_curves(demo_si):
    # The limit and vacuum labels of the pressure strip go to the end of the
    # strip where no curve runs through them (geometry of the drawn figure:
    # no drawn curve vertex inside a label's box).
    import gisgrade
    import numpy as np

    from gisgrade.display import Display

    r = gisgrade.compute(demo_si[0])
    fig = plot.profile_figure(r, Display())
    renderer = _drawn(fig)
    strip = next(ax for ax in fig.axes if "Pressure" in ax.get_ylabel())
    labels = [t for t in strip.texts if t.get_text().strip().startswith(("minimum", "maximum",
                                                                          "values below"))]
    assert len(labels) == 3
    points = np.vstack([strip.transData.transform(np.c_[ln.get_xdata(), ln.get_ydata()])
                        for ln in strip.lines if len(ln.get_xdata()) > 2])
    for t in labels:
        box = t.get_window_extent(renderer)
        inside = ((points[:, 0] > box.x0) & (points[:, 0] < box.x1)
                  & (points[:, 1] > box.y0) & (points[:, 1] < box.y1))
        assert not inside.any(), t.get_text()


def test_data_band_values_clear_the_row_names(flat_project):
    # The first column of the sheet's data band (station 0+000) reads inwards
    # and stays clear of the row names left of the band (drawn geometry).
    import gisgrade

    from gisgrade.display import Display
    from gisgrade.output.sheets import sheets

    r = gisgrade.compute(flat_project)
    fig = sheets(r, Display())[0]
    renderer = _drawn(fig)
    band = next(ax for ax in fig.axes if any(t.get_text() == "pipe invert" for t in ax.texts))
    names = [t for t in band.texts if t.get_text() in ("station", "ground", "pipe invert", "cover")]
    values = [t for t in band.texts if t not in names and "elevations" not in t.get_text()]
    assert len(names) == 4 and values
    for n in names:
        for v in values:
            assert not _overlaps(n.get_window_extent(renderer), v.get_window_extent(renderer)), \
                (n.get_text(), v.get_text())
