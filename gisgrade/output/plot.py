"""The profile drawings: the one-page overview (``profile.png``) and the
parts the profile sheets (:mod:`.sheets`) are built from.

:func:`draw_profile` draws, over a station range, the ground with the DEM's
95 % band, the pipe (top to invert, dark, edged, so it never reads as the
ground band), cover zones, each scenario's HGL (solid) and EGL (dashed;
left out, and said so, where it lies within a line's width of the HGL or
the scenario sets ``show_egl = false``), the static line, any surge
envelope, crossings (the feature at its plan width, the required clearance
below or above it only over its footprint), bends, valves and drains,
offtakes, stretches below atmospheric and the findings as bars along the
top. :func:`draw_pressure` draws the pressure strip over the shared
pressure scale (:mod:`.style`) with the limits named. Labels are staggered
so that neighbours never sit on one another.

The overview adds a close-up of every crossing, in station order, each with
its station, the required clearance drawn over the footprint only and the
clearance achieved. The vertical exaggeration is measured from the drawn
axes and printed.

Figures are built with matplotlib's object API (:class:`~matplotlib.figure.Figure`,
no pyplot state), so they can be drawn in threads and on workers.
"""
from __future__ import annotations

from pathlib import Path

import matplotlib.ticker
import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle
from matplotlib.ticker import FuncFormatter

from ..cautions import SHORT
from ..display import ATMOSPHERE, FT, Display
from .style import FINDINGS, OUTLINE, POINTS, SUB_ATMOSPHERIC, VALVES, scale_of

#: Styles of our own choosing.
GROUND = dict(color="#6b4f2e", lw=1.3)
GROUND_BAND = dict(color="#dcc9a3", alpha=0.6, lw=0)
PIPE_FACE, PIPE_EDGE = "#1f3350", "#0b1422"
ZONE = dict(facecolor="none", edgecolor="#8c6d46", hatch="////", lw=0)
#: Scenario lines cycle through these (Okabe-Ito, apart from the pressure scale's hues).
SCENARIO_COLOURS = ["#0072b2", "#d55e00", "#009e73", "#cc79a7", "#e69f00", "#56b4e9"]
STATIC = dict(color="#444444", lw=1.0, ls=":")
#: Crossings drawn as close-ups on one row of the overview; rows of them.
DETAILS_PER_ROW, MAX_DETAIL_ROWS = 6, 3


class FeetLocator(matplotlib.ticker.Locator):
    """Tick positions (in metres) at round numbers of feet along the axis."""

    def __init__(self, lo: float, hi: float, nbins: int = 8):
        self.lo, self.hi, self.nbins = lo, hi, nbins

    def __call__(self):
        lo, hi = self.axis.get_view_interval() if self.axis else (self.lo, self.hi)
        feet = matplotlib.ticker.MaxNLocator(nbins=self.nbins, steps=[1, 2, 5, 10]).tick_values(
            lo / FT, hi / FT)
        return feet * FT


def vertical_exaggeration(ax) -> float:
    """Ratio of the vertical to the horizontal drawing scale of ``ax``."""
    fig = ax.figure
    bbox = ax.get_window_extent().transformed(fig.dpi_scale_trans.inverted())
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    return (abs(x1 - x0) / bbox.width) / (abs(y1 - y0) / bbox.height)


def scenario_colours(names) -> dict:
    """Colour of each flowing scenario (the static case has its own style)."""
    flowing = [n for n in names if n != "static"]
    return {n: SCENARIO_COLOURS[i % len(SCENARIO_COLOURS)] for i, n in enumerate(flowing)}


def station_axis(ax, d: Display, lo: float, hi: float, nbins: int = 8) -> None:
    """Trade-format station labels (``1+200``, ``12+00``) on ``ax``'s x axis."""
    if d.us:
        ax.xaxis.set_major_locator(FeetLocator(lo, hi, nbins))
    else:
        ax.xaxis.set_major_locator(matplotlib.ticker.MaxNLocator(nbins=nbins, steps=[1, 2, 2.5, 5, 10]))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: d.station([v], 0)[0]))


def stagger(x, span: float, gap: float = 0.06, levels: int = 3) -> np.ndarray:
    """Label levels (0, 1, ...) for labels at sorted ``x`` so that two within
    ``gap`` of the ``span`` take different levels.

    >>> stagger(np.array([0.0, 1.0, 50.0, 51.0, 52.0]), 100.0).tolist()
    [0, 1, 0, 1, 2]
    """
    out = np.zeros(len(x), int)
    for i in range(1, len(x)):  # labels: few
        out[i] = (out[i - 1] + 1) % levels if x[i] - x[i - 1] < gap * span else 0
    return out


def _window(s, lo, hi):
    """Stations inside [lo, hi] and one beyond each end (lines reach the edges)."""
    i0 = max(int(np.searchsorted(s, lo, side="right")) - 1, 0)
    i1 = min(int(np.searchsorted(s, hi, side="left")) + 1, len(s))
    return slice(i0, i1)


def draw_profile(ax, result, d: Display, lo=None, hi=None, *, detail: bool = False) -> list:
    """Draw the profile of ``result`` between stations ``lo`` and ``hi`` on
    ``ax`` (x in m, y in display elevation units); ``detail``: the sheets'
    fuller labels. Returns the legend handles."""
    t = result.table
    s_all = t["station_m"].to_numpy()
    lo, hi = (s_all[0] if lo is None else lo), (s_all[-1] if hi is None else hi)
    w = _window(s_all, lo, hi)
    s = s_all[w]
    k = d.factor("elevation")
    col = lambda name: t[name].to_numpy()[w] * k  # noqa: E731
    handles = []
    ground = col("ground_m")
    if "ground_band_m" in t.columns:
        band = col("ground_band_m")
        ax.fill_between(s, ground - band, ground + band, **GROUND_BAND)
        handles.append(Patch(**GROUND_BAND, label="ground, 95 % band of the DEM"))
    ax.plot(s, ground, **GROUND)
    handles.append(Line2D([], [], **GROUND, label="ground"))
    if "ground_bridged" in t.columns and t["ground_bridged"].to_numpy()[w].any():
        b = t["ground_bridged"].to_numpy()[w]
        ax.scatter(s[b], ground[b], s=6, color="#d55e00", zorder=4)
        handles.append(Line2D([], [], marker="o", ls="", ms=3, color="#d55e00",
                              label="ground bridged over nodata"))
    if "top_m" in t.columns:
        top, inv = col("top_m"), col("invert_m")
        ax.fill_between(s, inv, top, facecolor=PIPE_FACE, edgecolor=PIPE_EDGE, lw=0.6, zorder=3)
        handles.append(Patch(facecolor=PIPE_FACE, edgecolor=PIPE_EDGE, label="pipe, top to invert"))
        handles += _zones(ax, result, s, w)
        handles += _sub_atmospheric(ax, result, s, w, top, k)
    handles += _crossings(ax, result, d, lo, hi, detail)
    if result.grades is not None:
        handles += _grade_lines(ax, result, d, s, w)
    handles += _points(ax, result, d, lo, hi, detail)
    if result.findings is not None and len(result.findings):
        handles += _finding_bars(ax, result, d, lo, hi, detail)
    ax.set_xlim(lo, hi)
    ax.set_ylabel(d.label("elevation", "Elevation"))
    ax.grid(True, lw=0.3, color="#cccccc")
    return handles


def _zones(ax, result, s, w) -> list:
    """Stretches whose minimum cover is above the line's (cover zones)."""
    t = result.table
    if "min_cover_m" not in t or result.project.cover is None:
        return []
    deeper = t["min_cover_m"].to_numpy()[w] > result.project.cover.minimum + 1e-6
    if not deeper.any():
        return []
    ax.fill_between(s, 0, 0.025, where=deeper, transform=ax.get_xaxis_transform(), **ZONE)
    return [Patch(**ZONE, label="cover zone (deeper minimum)")]


def _sub_atmospheric(ax, result, s, w, top, k) -> list:
    """The pipe's top drawn dark where the HGL of a scenario is below it."""
    g = result.grades
    if g is None:
        return []
    below = (g.hgl_low[:, w] < top / k).any(axis=0)
    if not below.any():
        return []
    ax.plot(s, np.where(below, top, np.nan), color=SUB_ATMOSPHERIC, lw=3.5, zorder=4,
            solid_capstyle="butt")
    return [Line2D([], [], color=SUB_ATMOSPHERIC, lw=3.5,
                   label="pipe below atmospheric pressure (a scenario)")]


def _grade_lines(ax, result, d, s, w) -> list:
    g = result.grades
    k = d.factor("elevation")
    hide = {sc.name for sc in result.project.scenarios if not sc.show_egl}
    colours = scenario_colours(g.names)
    handles = []
    lines = np.concatenate([g.hgl[:, w], g.egl[:, w]]) * k
    span = float(np.nanmax(lines) - np.nanmin(lines)) or 1.0
    for i, name in enumerate(g.names):
        hgl, egl = g.hgl[i, w] * k, g.egl[i, w] * k
        if name == "static":
            ax.plot(s, hgl, **STATIC)
            handles.append(Line2D([], [], **STATIC, label="static HGL (no flow)"))
            continue
        c = colours[name]
        gap = float(np.nanmax(np.abs(egl - hgl))) if len(s) else 0.0
        ax.plot(s, hgl, color=c, lw=1.6)
        drawn = name not in hide and gap >= 0.004 * max(span, 20.0 * k)  # not within a line's width
        note = ("" if drawn else " (EGL not drawn)" if name in hide
                else f" (EGL within {d.text(gap / k, 'head')})")
        handles.append(Line2D([], [], color=c, lw=1.6, label=f"HGL {name}{note}"))
        if drawn:
            ax.plot(s, egl, color=c, lw=1.0, ls="--")
            handles.append(Line2D([], [], color=c, lw=1.0, ls="--", label=f"EGL {name}"))
    handles += _surge(ax, result, d, s, w, colours)
    return handles


def _surge(ax, result, d, s, w, colours) -> list:
    """The surge envelope (highest and lowest head) of the scenario with the
    largest head change, when a screening was made: two thin dotted lines,
    so the grade lines stay readable (every scenario's envelope is in
    surge.csv and the report)."""
    surge = getattr(result, "surge", None)
    if surge is None or getattr(surge, "head_max", None) is None:
        return []
    change = np.nanmax(np.asarray(surge.head_max) - np.asarray(surge.head_min), axis=1)
    if not np.any(change > 0):
        return []
    i = int(np.nanargmax(change))
    name = surge.names[i]
    k = d.factor("elevation")
    c = colours.get(name, "#555555")
    hi, lo = np.asarray(surge.head_max)[i, w] * k, np.asarray(surge.head_min)[i, w] * k
    # the envelope must not squash the profile: the scale stays that of the
    # ground, pipe and grade lines, and an envelope beyond it runs off scale
    ylo, yhi = ax.get_ylim()
    ax.plot(s, hi, color=c, lw=0.8, ls=(0, (1, 2)))
    ax.plot(s, lo, color=c, lw=0.8, ls=(0, (1, 2)))
    ax.set_ylim(ylo, yhi)
    label = f"surge envelope, {name} (screening)"
    off = [f"up to {d.text(np.nanmax(hi) / k, 'elevation')}" if np.nanmax(hi) > yhi else "",
           f"down to {d.text(np.nanmin(lo) / k, 'elevation')}" if np.nanmin(lo) < ylo else ""]
    off = ", ".join(o for o in off if o)
    if off:
        label += f"\n  (off scale: {off})"
    return [Line2D([], [], color=c, lw=0.8, ls=(0, (1, 2)), label=label)]


def _labels(ax, x, z, texts, lo, hi, colour="#1f1f1f", top=0.90, turn=0.8):
    """Labels of features at (x, z), staggered in levels near the top of
    ``ax`` with a leader to each feature, so neighbours never collide; those
    beyond ``turn`` of the way along read leftwards."""
    order = np.argsort(x)
    levels = stagger(np.asarray(x, float)[order], hi - lo)
    for j, lev in zip(order, levels):
        ax.annotate(texts[j], (x[j], z[j]), xytext=(x[j], top - 0.07 * lev),
                    textcoords=ax.get_xaxis_transform(), fontsize=6.5, color=colour,
                    ha="left" if x[j] < lo + turn * (hi - lo) else "right", va="center",
                    arrowprops=dict(arrowstyle="-", lw=0.4, color="#777777"),
                    bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.8),
                    annotation_clip=True, zorder=9)


def _crossings(ax, result, d, lo, hi, detail) -> list:
    c = result.crossings
    inside = (c.station >= lo) & (c.station <= hi)
    if not inside.any():
        return []
    k = d.factor("elevation")
    reach = c.reach()
    min_w = 0.004 * (hi - lo)
    for i in np.flatnonzero(inside):  # crossings: few
        half = max(reach[i], min_w / 2)
        h = c.size[i] if np.isfinite(c.size[i]) else 0.0
        ax.add_patch(Rectangle((c.station[i] - half, c.bottom[i] * k), 2 * half, max(h, 0) * k,
                               facecolor="#f4f1ea", edgecolor=OUTLINE, lw=0.7, zorder=5))
        if c.side[i] == "under":
            y0, y1 = c.bottom[i] - c.clearance[i], c.bottom[i]
        else:
            y0, y1 = c.top[i], c.top[i] + c.clearance[i]
        if np.isfinite(y0) and np.isfinite(y1):  # the required clearance, over the footprint
            ax.add_patch(Rectangle((c.station[i] - half, y0 * k), 2 * half, (y1 - y0) * k,
                                   facecolor="none", edgecolor="#d55e00", lw=0.8, ls="--",
                                   zorder=5))
    ax.scatter(c.station[inside], c.bottom[inside] * k, marker="v", s=16, color=OUTLINE, zorder=6)
    texts = [str(n) for n in c.name[inside]]
    if detail and result.clearances is not None:
        ach = result.clearances.achieved[inside]
        texts = [f"{n} {d.station([st], 2)[0]}: clearance {d.text(a, 'length', 2)} "
                 f"(required {d.text(r, 'length', 2)})" for n, st, a, r in
                 zip(texts, c.station[inside], ach, c.clearance[inside])]
    _labels(ax, c.station[inside], c.bottom[inside] * k, texts, lo, hi, turn=0.55 if detail else 0.8)
    return [Line2D([], [], marker="v", ls="", color=OUTLINE, ms=4, label="crossed feature (bottom)"),
            Patch(facecolor="none", edgecolor="#d55e00", ls="--", label="required clearance")]


def _points(ax, result, d, lo, hi, detail) -> list:
    """Bends, valves, drains and offtakes in [lo, hi]."""
    t = result.table
    s = t["station_m"].to_numpy()
    k = d.factor("elevation")
    handles = []
    if "top_m" not in t.columns:
        return handles

    def at(stations, col):
        return np.interp(stations, s, t[col].to_numpy()) * k

    def mark(stations, col, sym, label):
        stations = np.asarray(stations, float)
        stations = stations[(stations >= lo) & (stations <= hi)]
        if not len(stations):
            return
        ax.scatter(stations, at(stations, col), marker=sym.marker, s=sym.size ** 2 / 3,
                   color=sym.fill, edgecolor=OUTLINE, lw=0.5, zorder=7)
        handles.append(Line2D([], [], marker=sym.marker, ls="", ms=sym.size / 2, color=sym.fill,
                              markeredgecolor=OUTLINE, markeredgewidth=0.5, label=label))

    if result.bends is not None and len(result.bends):
        for plane, marker in (("vertical", "D"), ("horizontal", "o"), ("combined", "X")):
            b = result.bends.loc[result.bends["plane"] == plane, "station_m"].to_numpy()
            sym = POINTS["bend"]
            mark(b, "axis_m", type(sym)(sym.mark, marker, sym.fill, sym.size, ""), f"{plane} bend")
    if result.valves is not None and len(result.valves):
        v = result.valves
        for kind, sym in VALVES.items():
            mark(v.loc[v["kind"] == kind, "station_m"], "invert_m" if kind == "drain" else "top_m",
                 sym, sym.words)
    if "offtake_m3_s" in t and (t["offtake_m3_s"] > 0).any():
        q = t["offtake_m3_s"].to_numpy()
        st = s[q > 0]
        mark(st, "ground_m", POINTS["offtake"], "offtake")
        inside = (st >= lo) & (st <= hi)
        if detail and inside.any():
            _labels(ax, st[inside], at(st[inside], "ground_m"),
                    [f"offtake {d.text(v, 'flow')}" for v in q[q > 0][inside]], lo, hi,
                    colour="#0072b2", top=0.62, turn=0.7)
    return handles


def _finding_bars(ax, result, d, lo, hi, detail) -> list:
    """Each finding's station range as a bar along the top of ``ax``, a row per severity."""
    f = result.findings
    handles = []
    for row, (sev, sym) in enumerate(FINDINGS.items()):
        rows = f[(f["severity"] == sev) & (f["to_station_m"] >= lo) & (f["from_station_m"] <= hi)]
        if not len(rows):
            continue
        y = 0.985 - 0.018 * row
        for a, b in zip(rows["from_station_m"], rows["to_station_m"]):
            ax.plot([max(a, lo), min(b, hi)], [y, y], transform=ax.get_xaxis_transform(),
                    color=sym.fill, lw=4, solid_capstyle="butt", zorder=8)
        handles.append(Line2D([], [], color=sym.fill, lw=4, label=f"{sev} finding (stretch)"))
    return handles


#: A label's box behind its text on the pressure strip (readable over a curve).
LABEL_BOX = dict(boxstyle="square,pad=0.15", fc="white", ec="none", alpha=0.8)


def quiet_place(s, curves, bands, lo, hi, width, until=1.0) -> tuple[float, int]:
    """Where along [lo, hi] a label spanning ``width`` of the window should
    start (a fraction of the window) and which of the value ``bands``
    ((y0, y1) pairs, in order of preference) it takes: the place fewest
    points of ``curves`` (k, n) over stations ``s`` fall in, the two ends
    first on a tie; it ends before ``until`` of the window.

    >>> s = np.linspace(0, 10, 11)
    >>> quiet_place(s, np.array([np.r_[np.full(5, 1.0), np.full(6, 5.0)]]), [(0.5, 1.5)], 0, 10, 0.3)
    (0.7, 0)
    """
    span = hi - lo
    width = min(width, until)
    starts = np.r_[0.0, until - width, np.linspace(0.0, until - width, 21)[1:-1]]
    best = None
    for b, (y0, y1) in enumerate(bands):
        inside = (curves >= y0) & (curves <= y1)
        for f in starts:
            m = (s >= lo + f * span) & (s <= lo + (f + width) * span)
            n = int(inside[:, m].sum())
            if best is None or n < best[0]:
                best = (n, round(float(f), 6), b)
            if n == 0:
                return best[1], best[2]
    return best[1], best[2]


def draw_pressure(axp, result, d: Display, lo=None, hi=None) -> list:
    """The pressure strip: each scenario's pressure at the pipe axis over the
    shared scale's class bands, the limits named, the rating where it matters."""
    t, g = result.table, result.grades
    s_all = t["station_m"].to_numpy()
    lo, hi = (s_all[0] if lo is None else lo), (s_all[-1] if hi is None else hi)
    w = _window(s_all, lo, hi)
    s = s_all[w]
    pa = lambda v: d.value(v, "pressure")  # noqa: E731
    checks = result.project.checks
    colours = scenario_colours(g.names)
    vacuum = -pa(ATMOSPHERE)  # a perfect vacuum at sea level, gauge
    handles = []
    p_win = pa(g.pressure[:, w])
    for i, name in enumerate(g.names):
        p = np.maximum(p_win[i], vacuum)
        if name == "static":
            axp.plot(s, p, **STATIC)
        else:
            axp.plot(s, p, color=colours[name], lw=1.4)
            handles.append(Line2D([], [], color=colours[name], lw=1.4, label=f"pressure {name}"))
    top = max(float(np.nanmax(p_win)), pa(checks.max_pressure))
    rating_note = False  # the off-scale rating's note takes the top right corner
    if "rating_pa" in t.columns and np.isfinite(t["rating_pa"]).any():
        rating = pa(t["rating_pa"].to_numpy()[w])
        if np.nanmin(rating) <= 1.5 * top:
            axp.step(s, rating, where="post", color="#5b2a86", lw=0.9, ls=(0, (4, 1, 1, 1)))
            handles.append(Line2D([], [], color="#5b2a86", lw=0.9, ls=(0, (4, 1, 1, 1)),
                                  label="pipe rating"))
            top = max(top, float(np.nanmax(rating)))
        else:
            axp.text(0.995, 0.97, f"pipe rating {d.text(np.nanmin(t['rating_pa']), 'pressure')} "
                     "(off scale)", transform=axp.transAxes, fontsize=6.5, ha="right", va="top",
                     color="#5b2a86")
            rating_note = True
    bottom = min(float(np.nanmin(np.maximum(p_win, vacuum))), 0.0)
    ylo, yhi = bottom - 0.08 * (top - bottom), top + 0.15 * (top - bottom)
    drawn = np.maximum(p_win, vacuum)
    tall = 0.1 * (yhi - ylo)  # a label's height on the strip, about
    pos = axp.get_position()
    width_pt = max(pos.width * axp.figure.get_figwidth() * 72, 1.0)
    share = lambda text: (len(text) * 6.5 * 0.6 + 6) / width_pt  # noqa: E731  (6.5 pt type)

    def place(text, y, bands, colour, until=1.0):
        """``text`` at value ``y`` where the curves leave it clear (above or below),
        ending before ``until`` of the strip."""
        f, b = quiet_place(s, drawn, bands, lo, hi, share(text), until)
        axp.text(min(max(f, 0.003), 0.997), y, text, transform=axp.get_yaxis_transform(),
                 fontsize=6.5, ha="left", va="bottom" if bands[b][0] >= y - 1e-9 else "top",
                 color=colour, bbox=LABEL_BOX, zorder=8)

    if np.nanmin(p_win) < vacuum:
        axp.axhline(vacuum, color="#444444", lw=0.8)
        place(" values below vacuum are not reachable (column separation) ", vacuum,
              [(vacuum + 1e-9, vacuum + 1.2 * tall)], "#444444")
    scale = scale_of(result)
    edges = np.clip(pa(scale.edges), ylo, yhi)
    for a, b, c in zip(edges[:-1], edges[1:], scale.colours):  # the shared scale behind
        if b > a:
            axp.axhspan(a, b, color=c, alpha=0.22, lw=0, zorder=0)
    for v, word in ((checks.min_pressure, "minimum"), (checks.max_pressure, "maximum")):
        y = pa(v)
        axp.axhline(y, color="#1f1f1f", lw=0.8, ls="-.")
        # where the curves leave it clear: above the line, else below it (the
        # off-scale rating's note holds the top right corner)
        place(f" {word} {d.text(v, 'pressure')} ", y, [(y, y + tall), (y - tall, y)], "#1f1f1f",
              until=0.7 if word == "maximum" and rating_note else 1.0)
    axp.set_ylim(ylo, yhi)
    axp.set_xlim(lo, hi)
    axp.set_ylabel(d.label("pressure", "Pressure at axis"))
    axp.grid(True, lw=0.3, color="#bbbbbb")
    handles.append(Patch(facecolor=scale.colours[3], alpha=0.4,
                         label="pressure classes (the map's colours)"))
    return handles


def unique(handles) -> list:
    """Legend handles with each label once, in first-seen order."""
    first = {}
    for h in handles:
        first.setdefault(h.get_label(), h)
    return list(first.values())


#: Entries a legend column holds before a second column starts.
LEGEND_ROWS = 14


def legend(ax, handles, **kw) -> None:
    """The legend of ``handles`` beside ``ax``, on its right (in two columns
    when it would run past the axes)."""
    handles = unique(handles)
    kw.setdefault("ncol", 2 if len(handles) > LEGEND_ROWS else 1)
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.005, 1.0), fontsize=7,
              framealpha=0.95, **kw)


def profile_figure(result, display: Display | None = None) -> Figure:
    """The one-page overview of ``result`` as a matplotlib :class:`Figure`."""
    from .layers import result_name

    d = display or Display(result.project.output.units)
    t = result.table
    s = t["station_m"].to_numpy()
    hydraulic = result.grades is not None
    c = result.crossings
    n_details = len(c) if "top_m" in t.columns else 0
    rows = min(int(np.ceil(n_details / DETAILS_PER_ROW)), MAX_DETAIL_ROWS)
    if hydraulic:
        fig = Figure(figsize=(13, 7.5 + 2.3 * rows))
        outer = fig.add_gridspec(2 if rows else 1, 1, hspace=0.3,
                                 height_ratios=[4.1, 1.75 * rows] if rows else [1])
        grid = outer[0].subgridspec(2, 1, hspace=0.06, height_ratios=[3, 1.1])
        ax = fig.add_subplot(grid[0])
        axp = fig.add_subplot(grid[1], sharex=ax)
        ax.tick_params(labelbottom=False)
    else:
        fig = Figure(figsize=(13, 5))
        ax = axp = fig.add_subplot()
    handles = draw_profile(ax, result, d)
    if hydraulic:
        handles_p = draw_pressure(axp, result, d)
        legend(axp, handles_p)
    axp.set_xlabel(f"Station ({d.station_name()})")
    station_axis(axp, d, s[0], s[-1])
    legend(ax, handles)
    ax.set_xlim(s[0], s[-1])
    if rows:
        order = np.argsort(c.station, kind="stable")
        crossing_details(fig, outer[1], result, d, order[:rows * DETAILS_PER_ROW], DETAILS_PER_ROW)
        if len(order) > rows * DETAILS_PER_ROW:
            fig.text(0.99, 0.005, f"{len(order) - rows * DETAILS_PER_ROW} more crossings: see "
                     "the profile sheets", fontsize=7, ha="right", color="#555555")
    fig.canvas.draw()
    # x is in metres; in US display y is in feet, so convert y back to metres.
    ve = vertical_exaggeration(ax) / (FT if d.us else 1.0)
    what = "profile" if hydraulic else "ground profile"
    ax.set_title(f"{result_name(result)}: {what} along the centerline "
                 f"(vertical exaggeration {ve:.0f}x)", fontsize=10, loc="left")
    fig.text(0.01, 0.005, SHORT, fontsize=7, color="#555555")
    return fig


def crossing_details(fig, cell, result, d: Display, shown, per_row: int, rows=None) -> None:
    """A close-up of each crossing of ``shown`` (indices), ``per_row`` to a
    row of ``cell`` (``rows`` of them, default as many as needed), at a
    modest exaggeration, the required clearance drawn over the footprint only;
    every length in the reader's units: the window a round number of them
    (at least 100 ft or 30 m each side), clearances to 0.01 ft or m."""
    c, t = result.crossings, result.table
    s = t["station_m"].to_numpy()
    k = d.factor("elevation")
    f = d.factor("length")
    unit = 1.0 / f  # one display length unit, m
    reach = c.reach()
    spacing = float(np.median(np.diff(s))) if len(s) > 1 else 10.0
    rows = rows or int(np.ceil(len(shown) / per_row))
    sub = cell.subgridspec(rows, per_row, wspace=0.4, hspace=0.9)
    for r in range(int(np.ceil(len(shown) / per_row))):
        for n, i in enumerate(shown[r * per_row:(r + 1) * per_row]):
            ax = fig.add_subplot(sub[r, n])
            round_to = (50 if d.us else 10) * unit
            half = np.ceil(max((100 if d.us else 30) * unit, 4 * reach[i], 3 * spacing)
                           / round_to - 1e-9) * round_to
            view = (s >= c.station[i] - half - spacing) & (s <= c.station[i] + half + spacing)
            x = (s[view] - c.station[i]) * f
            ax.plot(x, t["ground_m"].to_numpy()[view] * k, **GROUND)
            ax.fill_between(x, t["invert_m"].to_numpy()[view] * k, t["top_m"].to_numpy()[view] * k,
                            facecolor=PIPE_FACE, edgecolor=PIPE_EDGE, lw=0.5)
            w = max(2 * reach[i], (1.5 if d.us else 0.5) * unit) * f  # footprint (a line: 1.5 ft, 0.5 m)
            height = c.size[i] if np.isfinite(c.size[i]) else 0.3
            ax.add_patch(Rectangle((-w / 2, c.bottom[i] * k), w, height * k, facecolor="#f4f1ea",
                                   edgecolor=OUTLINE, lw=0.8,
                                   hatch=None if np.isfinite(c.size[i]) else "////"))
            limit = (c.bottom[i] - c.clearance[i] if c.side[i] == "under"
                     else c.top[i] + c.clearance[i])
            tail = 10.0 if d.us else 3.0  # display units beyond the footprint
            ax.plot([-w / 2 - tail, w / 2 + tail], [limit * k] * 2, color="#d55e00", lw=1.6, ls="--")
            ax.set_xlim(-half * f, half * f)
            ax.set_title(f"{c.name[i]}\n{d.station([c.station[i]])[0]}, passed {c.side[i]}",
                         fontsize=6.5, loc="left")
            achieved = result.clearances.achieved[i]
            short = achieved < c.clearance[i] - 1e-6
            ax.text(0.03, 0.04, f"clearance {d.text(achieved, 'length', 2)}\n(required "
                    f"{d.text(c.clearance[i], 'length', 2)})", transform=ax.transAxes, fontsize=6.5,
                    color="#d55e00" if short else "#1f1f1f",
                    bbox=dict(fc="white", ec="none", alpha=0.8, pad=1))
            ax.tick_params(labelsize=6)
            ax.set_xlabel(f"{d.unit('length')} from crossing", fontsize=6.5)
            if n == 0:
                ax.set_ylabel(d.label("elevation", "Elevation"), fontsize=6.5)
            ax.grid(True, lw=0.3, color="#cccccc")


def plot_profile(result, path: Path, display: Display | None = None) -> None:
    """Draw the overview of ``result`` into ``path`` (PNG)."""
    profile_figure(result, display).savefig(path, dpi=130, bbox_inches="tight")


def write_plot(result, folder: Path, display: Display) -> None:
    plot_profile(result, folder / "profile.png", display)
