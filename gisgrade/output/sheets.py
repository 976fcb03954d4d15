"""``sheets/``: profile sheets for printing, at stated scales.

The line is cut into sheets of ``[output] sheet_length`` of line each; every
sheet after the first repeats ``sheet_overlap`` of the one before (shaded,
with a match line at the sheet's own start). All sheets share one
horizontal and one vertical scale, chosen from the standard drawing scales
(1:1000, 1:2000, 1:2500, 1:5000, ... in SI; 1 in = 40 ft, 100 ft, ... in
US) as the largest that fits the sheet's line and the highest elevation
range on the paper (``[output] paper``, landscape); the axes are sized so
that the stated scales hold when printed at 100 %.

Each sheet: the profile (:func:`.plot.draw_profile`, with crossing
clearances, bends, valves, drains, offtakes and findings labelled), the
pressure strip, a data band (station, ground, pipe invert, cover at each
major station), a key, the findings on the sheet, and a title block of our
own design: project name, sheet number, station range, the scales and
units, the scenarios and the cautions. After the sheets, pages of crossing
close-ups. Written as one PDF (``sheets/profile_sheets.pdf``) and one SVG
per page (``sheets/sheet_01.svg``, ...).
"""
from __future__ import annotations

import datetime
import textwrap
from dataclasses import dataclass
from pathlib import Path

import matplotlib.ticker
import numpy as np
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle
from matplotlib.ticker import MultipleLocator

from .. import __version__
from ..cautions import CAUTIONS
from ..display import FT, Display
from .plot import (crossing_details, draw_pressure, draw_profile, scenario_colours, station_axis,
                   unique)

#: Landscape paper (width, height) in inches (ISO 216; ANSI/ASME Y14.1).
PAPER = {"A4": (11.69, 8.27), "A3": (16.54, 11.69), "A1": (33.11, 23.39),
         "letter": (11.0, 8.5), "tabloid": (17.0, 11.0), "arch-d": (36.0, 24.0)}
INCH = 0.0254  #: m (exact, NIST SP 811)
#: Standard drawing scales, 1:n (SI: ISO 5455 ratios and their decades).
SI_HORIZONTAL = (100, 200, 250, 500, 1000, 1250, 2000, 2500, 5000, 10000, 20000, 25000, 50000,
                 100000)
SI_VERTICAL = (10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 2500, 5000, 10000)
#: US engineer's scales, 1 in = n ft (*common practice*).
US_HORIZONTAL = (10, 20, 30, 40, 50, 60, 100, 200, 300, 400, 500, 1000, 2000, 5000)
US_VERTICAL = (1, 2, 4, 5, 10, 20, 40, 50, 100, 200, 500, 1000)
#: Most profile sheets a run draws (a guard against a mistyped sheet_length).
MAX_SHEETS = 200
#: Crossing close-ups per page (rows, per row).
DETAIL_ROWS, DETAIL_COLUMNS = 3, 4


@dataclass(frozen=True)
class Scales:
    horizontal: float  #: 1:n
    vertical: float  #: 1:n
    us: bool

    @property
    def exaggeration(self) -> float:
        return self.horizontal / self.vertical

    def words(self) -> str:
        """The scales as the sheet states them.

        >>> Scales(5000, 500, False).words()
        'horizontal 1:5000, vertical 1:500 (vertical exaggeration 10x)'
        >>> Scales(4800, 480, True).words()
        'horizontal 1 in = 400 ft, vertical 1 in = 40 ft (vertical exaggeration 10x)'
        """
        if self.us:
            h, v = f"1 in = {self.horizontal / 12:g} ft", f"1 in = {self.vertical / 12:g} ft"
        else:
            h, v = f"1:{self.horizontal:g}", f"1:{self.vertical:g}"
        return f"horizontal {h}, vertical {v} (vertical exaggeration {self.exaggeration:.3g}x)"


def pick_scale(metres: float, inches: float, us: bool, vertical: bool) -> float:
    """The largest standard scale (smallest 1:n) that fits ``metres`` into
    ``inches`` of paper; in US, n is 12 x the feet per inch.

    >>> pick_scale(1050.0, 13.0, False, False)  # 1050 m on 13 in needs 1:3180
    5000
    >>> pick_scale(1050.0, 13.0, True, False)  # 1 in = 265 ft needed
    3600
    """
    need = metres / (inches * INCH)
    if us:
        table = US_VERTICAL if vertical else US_HORIZONTAL
        fit = [n * 12 for n in table if n * 12 >= need]
        return fit[0] if fit else int(np.ceil(need / 12 / 1000) * 1000 * 12)
    table = SI_VERTICAL if vertical else SI_HORIZONTAL
    fit = [n for n in table if n >= need]
    return fit[0] if fit else int(np.ceil(need / 1e5) * 1e5)


def sheet_ranges(first: float, last: float, length: float, overlap: float) -> list[tuple]:
    """(start with overlap, own start, end) of each sheet, stations in m; a
    last piece shorter than 1 % of a sheet joins the sheet before.

    >>> sheet_ranges(0.0, 2500.0, 1000.0, 50.0)
    [(0.0, 0.0, 1000.0), (950.0, 1000.0, 2000.0), (1950.0, 2000.0, 2500.0)]
    """
    n = max(int(np.ceil((last - first) / length - 0.01)), 1)
    own = first + length * np.arange(n)
    ends = np.minimum(own + length, last)
    ends[-1] = last
    starts = np.maximum(own - overlap, first)
    return [(float(a), float(b), float(c)) for a, b, c in zip(starts, own, ends)]


@dataclass(frozen=True)
class Layout:
    """Where the parts of a sheet go, in inches from the lower left."""

    width: float
    height: float
    margin: float = 0.35
    ylabel: float = 0.75  #: room left of the axes for elevation labels

    @property
    def key_width(self) -> float:
        return 0.19 * self.width

    @property
    def title_height(self) -> float:
        return 0.15 * self.height

    @property
    def band_height(self) -> float:
        return 0.10 * self.height

    @property
    def strip_height(self) -> float:
        return 0.14 * self.height

    @property
    def axes_left(self) -> float:
        return self.margin + self.ylabel

    @property
    def axes_width(self) -> float:
        return self.width - self.axes_left - self.key_width - self.margin

    @property
    def profile_bottom(self) -> float:
        return self.margin + self.title_height + 0.35 + self.band_height + self.strip_height + 0.1

    @property
    def profile_height(self) -> float:
        return self.height - self.profile_bottom - self.margin - 0.15

    def rect(self, left, bottom, width, height):
        return [left / self.width, bottom / self.height, width / self.width, height / self.height]


def elevation_range(result, lo, hi, lines: bool = False) -> tuple[float, float]:
    """Lowest and highest elevation (m) of the ground, pipe and crossings
    between stations lo and hi (with ``lines``: the grade lines too)."""
    t, g = result.table, result.grades
    s = t["station_m"].to_numpy()
    w = (s >= lo) & (s <= hi)
    band = t["ground_band_m"].to_numpy()[w] if "ground_band_m" in t else 0.0
    ground = t["ground_m"].to_numpy()[w]
    parts = [ground + band, ground - band, t["invert_m"].to_numpy()[w]]
    surge = getattr(result, "surge", None)
    if lines and g is not None:
        parts += [g.hgl[:, w], g.egl[:, w]]
    if lines and surge is not None and getattr(surge, "head_max", None) is not None:
        parts += [np.asarray(surge.head_max)[:, w], np.asarray(surge.head_min)[:, w]]
    c = result.crossings
    inside = (c.station >= lo) & (c.station <= hi)
    parts.append((c.bottom - c.clearance)[inside])
    flat = np.concatenate([np.ravel(p) for p in parts])
    flat = flat[np.isfinite(flat)]
    return float(flat.min()), float(flat.max())


def sheet_scales(result, ranges, layout: Layout, d: Display) -> Scales:
    """One horizontal and one vertical scale for every sheet: the vertical
    one fits the ground, pipe and crossings of the tallest sheet with room
    above for labels (grade lines beyond it are noted at the sheet's top)."""
    longest = max(c - a for a, _, c in ranges)
    h = pick_scale(longest, layout.axes_width, d.us, False)
    tallest = max(np.subtract(*elevation_range(result, a, c)[::-1]) for a, _, c in ranges)
    v = pick_scale(tallest * HEADROOM + 1.0, layout.profile_height, d.us, True)
    return Scales(h, min(v, h), d.us)


#: The drawn elevation range over the ground, pipe and crossings' (labels above them).
HEADROOM = 1.6


def _lines_above(ax, result, d: Display, lo, hi) -> list[str]:
    """The grade lines that run above the sheet, with their heads at its ends."""
    g = result.grades
    if g is None:
        return []
    s = result.table["station_m"].to_numpy()
    k = d.factor("elevation")
    top = ax.get_ylim()[1]
    notes = []
    for i, name in enumerate(g.names):
        a, b = np.interp([lo, hi], s, g.hgl[i]) * k
        if min(a, b) > top:
            notes.append(f"{'static HGL' if name == 'static' else 'HGL ' + name}: "
                         f"{d.number(a / k, 'elevation')} to {d.text(b / k, 'elevation')}")
    return notes


def major_interval(scales: Scales, d: Display) -> float:
    """Major station interval (m): about one inch of paper, a round number
    of metres, or of hundreds of feet in US."""
    inch_m = scales.horizontal * INCH
    if d.us:
        feet = [n for n in (50, 100, 200, 500, 1000, 2000, 5000) if n * FT >= 0.9 * inch_m]
        return (feet[0] if feet else 10000) * FT
    metres = [n for n in (10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000) if n >= 0.9 * inch_m]
    return float(metres[0] if metres else 5000)


def _data_band(ax, result, d: Display, lo, hi, interval):
    """Station, ground, invert and cover at each major station in [lo, hi]."""
    t = result.table
    s = t["station_m"].to_numpy()
    at = np.arange(np.ceil(lo / interval) * interval, hi + 1e-6, interval)
    rows = [("station", None), ("ground", "ground_m"), ("pipe invert", "invert_m"),
            ("cover", "cover_m")]
    ax.set_ylim(len(rows), 0)
    ax.xaxis.set_major_locator(matplotlib.ticker.NullLocator())  # no ticks: the text is the band
    ax.yaxis.set_major_locator(matplotlib.ticker.NullLocator())
    for y, (name, _) in enumerate(rows):
        ax.text(-0.005, y + 0.5, name, transform=ax.get_yaxis_transform(), fontsize=7,
                ha="right", va="center")
    ax.hlines(np.arange(1, len(rows)), 0, 1, transform=ax.get_yaxis_transform(), color="#888888",
              lw=0.5)
    ax.vlines(at, 0, len(rows), color="#cccccc", lw=0.4)
    edge = 0.03 * (hi - lo)  # a value this near an end reads inwards, clear of the row names
    for x in at:  # major stations: a few dozen
        ha = "left" if x - lo < edge else "right" if hi - x < edge else "center"
        nudge = {"left": 0.004, "right": -0.004, "center": 0.0}[ha] * (hi - lo)
        for y, (name, col) in enumerate(rows):
            text = (d.station([x], 0)[0] if col is None else
                    d.number(np.interp(x, s, t[col].to_numpy()), "length" if col == "cover_m"
                             else "elevation"))
            ax.text(x + nudge, y + 0.5, text, fontsize=6, ha=ha, va="center")
    unit = d.unit("elevation")
    ax.text(1.003, 0.5, f"elevations and cover in {unit}", transform=ax.transAxes, fontsize=6,
            va="center", rotation=90)


def _title_block(fig, layout: Layout, result, d: Display, scales: Scales | None, page: str,
                 what: str, paper: str) -> None:
    """The title block: a ruled strip along the foot of the sheet."""
    from .layers import result_name

    ax = fig.add_axes(layout.rect(layout.margin, layout.margin, layout.width - 2 * layout.margin,
                                  layout.title_height))
    ax.set_axis_off()
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    ax.add_patch(Rectangle((0, 0), 1, 1, fill=False, lw=1.4, edgecolor="#1f1f1f"))
    cells = [0.0, 0.28, 0.50, 0.72, 1.0]
    for x in cells[1:-1]:
        ax.axvline(x, color="#1f1f1f", lw=0.8)
    pad = 0.01
    ax.text(cells[0] + pad, 0.82, result_name(result), fontsize=13, weight="bold", va="center")
    ax.text(cells[0] + pad, 0.58, "Water main profile", fontsize=9, va="center")
    ax.text(cells[0] + pad, 0.36, what, fontsize=8.5, va="center")
    ax.text(cells[0] + pad, 0.13, page, fontsize=11, weight="bold", va="center")
    # scales and units, with a graphic scale that stays true if the print is resized
    if scales is not None:
        words = scales.words().replace(", vertical", "\nvertical").replace(" (", "\n(")
        ax.text(cells[1] + pad, 0.92, words + f"\nat 100 % on {paper} landscape", fontsize=7.5,
                va="top", linespacing=1.35)
        _scale_bar(ax, layout, scales, d, cells[1] + pad, 0.30)
    else:
        ax.text(cells[1] + pad, 0.92, "close-ups: not to scale\n(elevations exaggerated)",
                fontsize=7.5, va="top", linespacing=1.35)
    ax.text(cells[1] + pad, 0.12, f"units: elevation {d.unit('elevation')}, pressure "
            f"{d.unit('pressure')}, flow {d.unit('flow')}; stations {d.station_name()}",
            fontsize=6.5, va="center")
    # scenarios
    g = result.grades
    ax.text(cells[2] + pad, 0.90, "Scenarios", fontsize=8, weight="bold", va="center")
    if g is not None:
        colours = scenario_colours(g.names)
        for i, name in enumerate(g.names[:6]):
            y = 0.74 - 0.13 * i
            flow = d.text(float(g.flow[i, 0]), "flow")
            ax.plot([cells[2] + pad, cells[2] + 0.035], [y, y], color=colours.get(name, "#444444"),
                    lw=2 if name != "static" else 1, ls="-" if name != "static" else ":")
            ax.text(cells[2] + 0.04, y, f"{name}: {flow} entering", fontsize=7, va="center")
    # cautions and provenance
    ax.text(cells[3] + pad, 0.92, "CAUTION", fontsize=8, weight="bold", va="top")
    ax.text(cells[3] + pad, 0.78, textwrap.fill(CAUTIONS, 62), fontsize=6.2, va="top",
            linespacing=1.25)
    ax.text(cells[3] + pad, 0.07, f"gisgrade {__version__}, {datetime.date.today().isoformat()}; "
            f"{result.project.path.name}", fontsize=6, va="center", color="#444444")


def _scale_bar(ax, layout: Layout, scales: Scales, d: Display, x0: float, y: float) -> None:
    """A graphic horizontal scale: a round length, drawn at the sheet's scale."""
    width_in = layout.width - 2 * layout.margin  # the title axes' width in inches
    unit = d.unit("length")
    paper_len = 1.6 * INCH * scales.horizontal  # ground metres on 1.6 in of paper
    nice = [n for n in (10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 5000)
            if n <= d.value(paper_len, "length")]
    length = nice[-1] if nice else 10
    frac = (length / d.factor("length")) / (scales.horizontal * INCH) / width_in
    for j in range(4):
        ax.add_patch(Rectangle((x0 + j * frac / 4, y), frac / 4, 0.05, lw=0.6, edgecolor="#1f1f1f",
                               facecolor="#1f1f1f" if j % 2 == 0 else "white"))
    ax.text(x0, y + 0.08, "0", fontsize=6, ha="center")
    ax.text(x0 + frac, y + 0.08, f"{length:g} {unit}", fontsize=6, ha="center")


def _findings_list(ax, result, d: Display, lo, hi, above=()) -> None:
    """The grade lines above the sheet, and the findings whose range touches
    this sheet, most serious first."""
    from ..findings import by_severity, messages

    ax.set_axis_off()
    head = ("Above this sheet (not drawn):\n" + "\n".join(f"  {a}" for a in above) + "\n\n"
            if above else "")
    f = result.findings
    if f is None:
        ax.text(0, 1, head, fontsize=6.2, va="top", transform=ax.transAxes)
        return
    f = by_severity(f[(f["to_station_m"] >= lo) & (f["from_station_m"] <= hi)])
    lines = [f"{r.severity.upper()} {r.scenario}: {m}" for r, m in
             zip(f.itertuples(), messages(f, d))]
    text = "\n".join(textwrap.fill(x, 46, subsequent_indent="  ") for x in lines[:8])
    if len(lines) > 8:
        text += f"\n... {len(lines) - 8} more in findings.csv"
    ax.text(0, 1, head + "Findings on this sheet\n" + (text or "none"), fontsize=6.2, va="top",
            linespacing=1.25, transform=ax.transAxes)


def sheet_figure(result, d: Display, scales: Scales, layout: Layout, sheet, number, total,
                 paper) -> Figure:
    """One profile sheet (a :class:`Figure` of the paper's size)."""
    start, own, end = sheet
    fig = Figure(figsize=(layout.width, layout.height))
    span_m = layout.axes_width * INCH * scales.horizontal
    ax = fig.add_axes(layout.rect(layout.axes_left, layout.profile_bottom, layout.axes_width,
                                  layout.profile_height))
    handles = draw_profile(ax, result, d, start, end, detail=True)
    ax.set_xlim(start, start + span_m)
    zlo, zhi = elevation_range(result, start, end)
    span_z = layout.profile_height * INCH * scales.vertical  # m of elevation on the axes
    step = 1.0 if not d.us else 5 * FT
    lines_lo, lines_hi = elevation_range(result, start, end, lines=True)
    z0 = np.floor((zlo - 0.1 * span_z) / step) * step  # ground low on the sheet, room above
    if lines_hi - lines_lo < 0.9 * span_z:  # the grade lines fit too: centre everything
        z0 = np.floor(((lines_lo + lines_hi) / 2 - span_z / 2) / step) * step
    ax.set_ylim(z0 * d.factor("elevation"), (z0 + span_z) * d.factor("elevation"))
    above = _lines_above(ax, result, d, start, end)
    ax.tick_params(labelbottom=False)
    if own > start:  # the overlap repeated from the sheet before, and the match line
        ax.axvspan(start, own, color="#000000", alpha=0.05, lw=0)
        ax.axvline(own, color="#1f1f1f", lw=1.0, ls=(0, (6, 2, 1, 2)))
        ax.text(own, 0.5, f" match line {d.station([own])[0]} (sheet {number - 1}) ",
                transform=ax.get_xaxis_transform(), rotation=90, fontsize=6.5, ha="right",
                va="center")
    interval = major_interval(scales, d)
    ax.xaxis.set_major_locator(MultipleLocator(interval))
    ax.grid(True, which="major", lw=0.4, color="#bbbbbb")
    bottom = layout.profile_bottom - 0.1 - layout.strip_height
    if result.grades is not None:
        axp = fig.add_axes(layout.rect(layout.axes_left, bottom, layout.axes_width,
                                       layout.strip_height), sharex=ax)
        handles += draw_pressure(axp, result, d, start, end)
        axp.tick_params(labelbottom=True, labelsize=7)
        axp.yaxis.label.set_size(7)
        station_axis(axp, d, start, start + span_m)
        axp.xaxis.set_major_locator(MultipleLocator(interval))
    axb = fig.add_axes(layout.rect(layout.axes_left, layout.margin + layout.title_height + 0.3,
                                   layout.axes_width, layout.band_height), sharex=ax)
    _data_band(axb, result, d, start, end, interval)
    ax.set_xlim(start, start + span_m)
    key = fig.add_axes(layout.rect(layout.width - layout.margin - layout.key_width + 0.15,
                                   layout.profile_bottom, layout.key_width - 0.15,
                                   layout.profile_height))
    key.set_axis_off()
    key.legend(handles=unique(handles), loc="upper left", fontsize=6.3, frameon=False,
               borderaxespad=0)
    lst = fig.add_axes(layout.rect(layout.width - layout.margin - layout.key_width + 0.15,
                                   bottom - layout.band_height - 0.3, layout.key_width - 0.15,
                                   layout.strip_height + layout.band_height + 0.3))
    _findings_list(lst, result, d, start, end, above)
    what = f"stations {d.station([start])[0]} to {d.station([end])[0]}"
    _title_block(fig, layout, result, d, scales, f"Sheet {number} of {total}", what, paper)
    return fig


def crossing_pages(result, d: Display, layout: Layout, first: int, total: int,
                   paper) -> list[Figure]:
    """Pages of crossing close-ups after the sheets, in station order."""
    c = result.crossings
    order = np.argsort(c.station, kind="stable")
    per_page = DETAIL_ROWS * DETAIL_COLUMNS
    pages = []
    for p, a in enumerate(range(0, len(order), per_page)):
        fig = Figure(figsize=(layout.width, layout.height))
        grid = fig.add_gridspec(1, 1, left=layout.axes_left / layout.width,
                                right=1 - layout.margin / layout.width,
                                bottom=(layout.margin + layout.title_height + 0.6) / layout.height,
                                top=1 - (layout.margin + 0.3) / layout.height)
        shown = order[a:a + per_page]
        crossing_details(fig, grid[0], result, d, shown, DETAIL_COLUMNS, DETAIL_ROWS)
        what = (f"crossing close-ups {d.station([c.station[shown[0]]])[0]} to "
                f"{d.station([c.station[shown[-1]]])[0]}")
        _title_block(fig, layout, result, d, None, f"Sheet {first + p} of {total}", what, paper)
        pages.append(fig)
    return pages


def auto_sheet_length(layout: Layout, d: Display, overlap: float) -> float:
    """The line one sheet holds at 1:5000 (SI) or 1 in = 400 ft (US), less
    the overlap, down to a round 10 m or 100 ft: the default sheet length.

    >>> round(auto_sheet_length(Layout(*PAPER["A3"]), Display(), 50.0), 3)
    1460.0
    """
    span = layout.axes_width * INCH * (4800 if d.us else 5000) - overlap
    step = 100 * FT if d.us else 10.0
    return max(float(np.floor(span / step) * step), step)


def sheets(result, d: Display) -> list[Figure]:
    """Every page: the profile sheets, then the crossing close-ups."""
    out = result.project.output
    layout = Layout(*PAPER[out.paper])
    s = result.table["station_m"].to_numpy()
    length = out.sheet_length or auto_sheet_length(layout, d, out.sheet_overlap)
    ranges = sheet_ranges(float(s[0]), float(s[-1]), length, out.sheet_overlap)
    if len(ranges) > MAX_SHEETS:
        from ..errors import InputError

        raise InputError(f"output.sheet_length = {d.text(length, 'length')} gives {len(ranges)} "
                         f"profile sheets (at most {MAX_SHEETS}); give a longer sheet_length")
    scales = sheet_scales(result, ranges, layout, d)
    n_cross = int(np.ceil(len(result.crossings) / (DETAIL_ROWS * DETAIL_COLUMNS)))
    total = len(ranges) + n_cross
    figs = [sheet_figure(result, d, scales, layout, r, i + 1, total, out.paper)
            for i, r in enumerate(ranges)]
    return figs + crossing_pages(result, d, layout, len(ranges) + 1, total, out.paper)


def write_sheets(result, folder: Path, display: Display) -> None:
    out = folder / "sheets"
    out.mkdir()
    figs = sheets(result, display)
    with PdfPages(out / "profile_sheets.pdf", metadata={"Title": "profile sheets",
                                                        "Creator": f"gisgrade {__version__}"}) as pdf:
        for i, fig in enumerate(figs):
            pdf.savefig(fig)
            with matplotlib.rc_context({"svg.fonttype": "none"}):  # SVG text stays text: searchable
                fig.savefig(out / f"sheet_{i + 1:02d}.svg")
