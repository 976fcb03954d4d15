"""The profile sheet: ground, pipe, grade lines and a pressure strip.

Upper panel: ground line, the pipe (top of pipe to invert, filled), each
scenario's HGL (solid) and EGL (dashed, unless the scenario says
``show_egl = false``; the static line dotted), crossings (the crossed
feature's bottom and the required clearance) and bends. Lower strip:
pressure at the pipe axis per scenario against the planning limits and the
pipe's pressure rating where given.
The vertical exaggeration is measured from the drawn axes and printed.

Figures are built with matplotlib's object API (:class:`~matplotlib.figure.Figure`,
no pyplot state), so they can be drawn in threads and on workers.
"""
from __future__ import annotations

from pathlib import Path

import matplotlib.ticker
import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle
from matplotlib.ticker import FuncFormatter

from ..cautions import SHORT
from ..display import ATMOSPHERE, FT, Display
from . import writer
from .surge_plot import draw_surge

#: Line styles of our own choosing; scenario lines cycle through SCENARIO_COLOURS.
GROUND = dict(color="#7a5c3a", lw=1.2)
PIPE_FILL = dict(color="#5b6770", alpha=0.55, lw=0)
SCENARIO_COLOURS = ["#1b5e9e", "#b8412c", "#2f8f6a", "#7b4fa0", "#c7962a"]
STATIC = dict(color="#444444", lw=1.0, ls=":")
#: Valve marks (symbol, colour) of our own choosing, drawn on the pipe (drains at the invert).
VALVE_SYMBOLS = {"combination": ("P", "#e0a030"), "air-release": ("^", "#f2d27a"),
                 "air-vacuum": ("v", "#9fc7e8"), "drain": ("s", "#6b8e4e")}


class FeetLocator(matplotlib.ticker.Locator):
    """Tick positions (in metres) at round numbers of feet along the axis."""

    def __init__(self, lo: float, hi: float):
        self.lo, self.hi = lo, hi

    def __call__(self):
        lo, hi = self.axis.get_view_interval() if self.axis else (self.lo, self.hi)
        feet = matplotlib.ticker.MaxNLocator(nbins=8, steps=[1, 2, 5, 10]).tick_values(
            lo / FT, hi / FT)
        return feet * FT


def vertical_exaggeration(ax) -> float:
    """Ratio of the vertical to the horizontal drawing scale of ``ax``."""
    fig = ax.figure
    bbox = ax.get_window_extent().transformed(fig.dpi_scale_trans.inverted())
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    return (abs(x1 - x0) / bbox.width) / (abs(y1 - y0) / bbox.height)


def profile_figure(result, display: Display | None = None) -> Figure:
    """The profile sheet of ``result`` as a matplotlib :class:`Figure`."""
    d = display or Display(result.project.output.units)
    units = d.system
    k = d.factor("elevation")
    zunit = d.unit("elevation")
    t = result.table
    s = t["station_m"].to_numpy()
    hydraulic = result.grades is not None
    details = "top_m" in t.columns and len(result.crossings) > 0
    if hydraulic:
        fig = Figure(figsize=(13, 10.5 if details else 7.5))
        grid = fig.add_gridspec(3 if details else 2, 1, hspace=0.08 if not details else 0.3,
                                height_ratios=[3, 1.1, 1.6] if details else [3, 1])
        ax = fig.add_subplot(grid[0])
        axp = fig.add_subplot(grid[1], sharex=ax)
        ax.tick_params(labelbottom=False)
        if details:
            _crossing_details(fig, grid[2], result, k, zunit)
    else:
        fig = Figure(figsize=(13, 5))
        ax = fig.add_subplot()
        axp = ax
    ground = t["ground_m"].to_numpy() * k
    ax.plot(s, ground, label="ground", **GROUND)
    if "ground_band_m" in t.columns:
        band = t["ground_band_m"].to_numpy() * k
        ax.fill_between(s, ground - band, ground + band, color=GROUND["color"], alpha=0.15, lw=0,
                        label="ground 95 % band (DEM accuracy)")
    if "ground_bridged" in t.columns and t["ground_bridged"].any():
        b = t["ground_bridged"].to_numpy()
        ax.scatter(s[b], ground[b], s=6, color="#b8412c", zorder=4, label="bridged over nodata")
    if "top_m" in t.columns:
        ax.fill_between(s, t["invert_m"] * k, t["top_m"] * k, label="pipe (top to invert)",
                        **PIPE_FILL)
    _crossings_and_bends(ax, result, s, k)
    if hydraulic:
        _grade_lines(ax, axp, result, s, k, d)
        draw_surge(axp, result, s, lambda v: d.value(v, "pressure"))
    ax.set_ylabel(f"Elevation ({zunit})")
    axp.set_xlabel(f"Station ({d.station_name()})")
    if d.us:  # ticks at round hundreds of feet, labelled 12+00
        axp.xaxis.set_major_locator(FeetLocator(s[0], s[-1]))
    axp.xaxis.set_major_formatter(FuncFormatter(lambda v, _: d.station([v], 0)[0]))
    ax.grid(True, lw=0.3, color="#cccccc")
    ax.legend(loc="upper left", bbox_to_anchor=(1.005, 1.0), fontsize=7, framealpha=0.9)
    ax.set_xlim(s[0], s[-1])
    fig.canvas.draw()
    # x is in metres; in US display y is in feet, so convert y back to metres.
    ve = vertical_exaggeration(ax) / (FT if units == "US" else 1.0)
    what = "profile" if hydraulic else "ground profile"
    name = f"{result.project.path.parent.name}/{result.project.path.name}"
    ax.set_title(f"{name}: {what} along the centerline "
                 f"(vertical exaggeration {ve:.0f}x)", fontsize=10, loc="left")
    fig.text(0.01, 0.005, SHORT, fontsize=7, color="#555555")
    return fig


def plot_profile(result, path: Path, display: Display | None = None) -> None:
    """Draw the profile sheet of ``result`` into ``path`` (PNG)."""
    profile_figure(result, display).savefig(path, dpi=130, bbox_inches="tight")


@writer("profile.png")
def write_plot(result, folder: Path, display: Display) -> None:
    plot_profile(result, folder / "profile.png", display)


def _grade_lines(ax, axp, result, s, k, d: Display) -> None:
    """Each scenario's HGL and EGL on ``ax``, its pressure on the strip ``axp``
    (in the display's pressure unit)."""
    pa = lambda v: d.value(v, "pressure")  # noqa: E731  (Pa to the display unit)
    punit = d.unit("pressure")
    plimit = result.project.checks
    hide_egl = {sc.name for sc in result.project.scenarios if not sc.show_egl}
    g = result.grades
    flow_i = 0
    for i, name in enumerate(g.names):
        hgl, egl = g.hgl[i] * k, g.egl[i] * k
        p = pa(g.pressure[i])
        if name == "static":
            ax.plot(s, hgl, label="static HGL", **STATIC)
            axp.plot(s, p, label="static", **STATIC)
            continue
        colour = SCENARIO_COLOURS[flow_i % len(SCENARIO_COLOURS)]
        flow_i += 1
        ax.plot(s, hgl, color=colour, lw=1.6, label=f"HGL {name}")
        if name not in hide_egl:
            ax.plot(s, egl, color=colour, lw=1.0, ls="--", label=f"EGL {name}")
        axp.plot(s, p, color=colour, lw=1.4, label=name)
    t = result.table
    p_all = pa(g.pressure.ravel())
    top = max(float(np.nanmax(p_all)), pa(plimit.max_pressure))
    if "rating_pa" in t.columns and np.isfinite(t["rating_pa"]).any():
        rating = pa(t["rating_pa"].to_numpy())
        if np.nanmin(rating) <= 1.5 * top:  # near enough to matter: draw it
            axp.step(s, rating, where="post", color="#5b2a86", lw=0.9, ls=(0, (4, 1, 1, 1)),
                     label="pipe rating")
            top = max(top, float(np.nanmax(rating)))
        else:  # far above every pressure: say so rather than squash the strip
            axp.text(s[-1], top * 1.12, f"pipe rating {np.nanmin(rating):.0f} {punit} (off scale) ",
                     fontsize=7, ha="right", va="top", color="#5b2a86")
    vacuum = -pa(ATMOSPHERE)  # gauge pressure of a perfect vacuum at sea level
    if np.nanmin(p_all) < vacuum:  # not reachable: say so, and keep the scale readable
        axp.axhline(vacuum, color="#444444", lw=0.8)
        axp.text(s[-1], vacuum, "vacuum: lower values are not achievable (column separation) ",
                 fontsize=7, ha="right", va="bottom", color="#444444")
        for line in axp.get_lines():
            y = np.asarray(line.get_ydata(), dtype=float)
            line.set_ydata(np.maximum(y, vacuum))
        p_all = np.maximum(p_all, vacuum)
    bottom = min(float(np.nanmin(p_all)), 0.0)
    axp.set_ylim(bottom - 0.08 * (top - bottom), top + 0.15 * (top - bottom))

    axp.axhspan(min(axp.get_ylim()[0], 0), 0, color="#d9534f", alpha=0.12, lw=0)
    axp.axhline(pa(plimit.min_pressure), color="#d9534f", lw=0.8, ls="-.")
    axp.axhline(pa(plimit.max_pressure), color="#8a6d3b", lw=0.8, ls="-.")
    axp.text(s[0], pa(plimit.min_pressure), f" min {pa(plimit.min_pressure):.0f} {punit}",
             fontsize=7, va="bottom", color="#d9534f")
    axp.text(s[0], pa(plimit.max_pressure), f" max {pa(plimit.max_pressure):.0f} {punit}",
             fontsize=7, va="bottom", color="#8a6d3b")
    axp.set_ylabel(f"Pressure at axis ({punit})")
    axp.grid(True, lw=0.3, color="#cccccc")
    axp.legend(loc="upper left", bbox_to_anchor=(1.005, 1.0), fontsize=7, framealpha=0.9)


#: Most crossings drawn in detail (those with the least spare clearance first).
MAX_DETAILS = 5


def _crossing_details(fig, cell, result, k: float, zunit: str) -> None:
    """A close-up of each crossing, at a modest exaggeration, where the
    clearance the profile sheet cannot show is drawn and dimensioned."""
    c, t = result.crossings, result.table
    s = t["station_m"].to_numpy()
    clearance = result.clearances.achieved
    order = np.argsort(clearance - c.clearance)[:MAX_DETAILS]
    sub = cell.subgridspec(1, len(order), wspace=0.35)
    reach = c.reach()
    for n, i in enumerate(order):
        ax = fig.add_subplot(sub[0, n])
        spacing = float(np.median(np.diff(s))) if len(s) > 1 else 10.0
        half = max(30.0, 4 * reach[i], 3 * spacing)
        view = (s >= c.station[i] - half - spacing) & (s <= c.station[i] + half + spacing)
        x = s[view] - c.station[i]
        ax.plot(x, t["ground_m"].to_numpy()[view] * k, **GROUND)
        ax.fill_between(x, t["invert_m"].to_numpy()[view] * k, t["top_m"].to_numpy()[view] * k,
                        **PIPE_FILL)
        w = max(2 * reach[i], 0.5)  # the feature's footprint along the line (0.5 m if a line)
        height = c.size[i] if np.isfinite(c.size[i]) else 0.3
        ax.add_patch(Rectangle((-w / 2, c.bottom[i] * k), w, height * k, facecolor="#d8d2c4",
                               edgecolor="#222222", lw=0.8, hatch=None if np.isfinite(c.size[i])
                               else "////"))
        limit = (c.bottom[i] - c.clearance[i] if c.side[i] == "under"
                 else c.top[i] + c.clearance[i])
        ax.axhline(limit * k, color="#b8412c", lw=0.8, ls="--")
        ax.set_xlim(-half, half)
        ax.set_title(f"{c.name[i]} ({c.side[i]})", fontsize=7, loc="left")
        ax.text(0.02, 0.03, f"clearance {clearance[i]:.2f} m\n(required {c.clearance[i]:.2f} m)",
                transform=ax.transAxes, fontsize=7, color="#b8412c" if clearance[i] <
                c.clearance[i] - 1e-6 else "#222222")
        ax.tick_params(labelsize=6)
        ax.set_xlabel("m from crossing", fontsize=7)
        if n == 0:
            ax.set_ylabel(f"Elevation ({zunit})", fontsize=7)
        ax.grid(True, lw=0.3, color="#cccccc")


def _crossings_and_bends(ax, result, s, k) -> None:
    """Crossed features (bottom and required clearance) and vertical bends."""
    t = result.table
    c = result.crossings
    if len(c):
        cs = c.station
        sized = np.isfinite(c.size) & np.isfinite(c.bottom)
        if sized.any():  # the crossed feature's outline: bottom to top, 1 % of the route wide
            w = 0.01 * (s[-1] - s[0])
            for x, b, h in zip(cs[sized], c.bottom[sized], c.size[sized]):
                ax.add_patch(Rectangle((x - w / 2, b * k), w, h * k, facecolor="none",
                                       edgecolor="#222222", lw=0.8))
        ax.scatter(cs, c.bottom * k, marker="v", color="#222222", zorder=5, s=28,
                   label="crossed feature bottom")
        under = c.side == "under"
        ax.vlines(cs[under], (c.bottom - c.clearance)[under] * k, c.bottom[under] * k,
                  color="#222222", lw=2.5, label="required clearance")
        over = ~under & np.isfinite(c.top)
        ax.vlines(cs[over], c.top[over] * k, (c.top + c.clearance)[over] * k, color="#222222",
                  lw=2.5)
        right = s[0] + 0.8 * (s[-1] - s[0])  # labels near the right edge read leftwards
        for x, z, name in zip(cs, c.bottom * k, c.name):
            ax.annotate(str(name), (x, z), xytext=(-3 if x > right else 3, -12),
                        textcoords="offset points", fontsize=7, color="#222222",
                        ha="right" if x > right else "left")
    if "min_cover_m" in t.columns and "cover_m" in t.columns:
        short = t["cover_m"].to_numpy() < t["min_cover_m"].to_numpy() - 1e-6
        if short.any():
            ax.scatter(s[short], t["top_m"].to_numpy()[short] * k, s=10, marker="x",
                       color="#d9534f", zorder=6, label="cover below minimum")
    if result.bends is not None and len(result.bends):
        for plane, marker in (("vertical", "D"), ("horizontal", "o"), ("combined", "X")):
            b = result.bends.loc[result.bends["plane"] == plane, "station_m"].to_numpy()
            if len(b):
                ax.scatter(b, np.interp(b, s, t["axis_m"]) * k, marker=marker, s=14,
                           color="#c7962a", zorder=6, label=f"{plane} bend")
    if getattr(result, "valves", None) is not None and len(result.valves):
        v = result.valves
        for kind, (marker, colour) in VALVE_SYMBOLS.items():
            at = v.loc[v["kind"] == kind, "station_m"].to_numpy()
            if len(at):
                z = np.interp(at, s, t["invert_m" if kind == "drain" else "top_m"]) * k
                ax.scatter(at, z, marker=marker, s=22, color=colour, edgecolor="#111111",
                           lw=0.5, zorder=7, label=kind.replace("-", " ") + (" valve" if kind != "drain" else ""))

