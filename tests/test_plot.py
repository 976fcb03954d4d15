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
