"""``routes.png``: every route of a ``routes`` run side by side.

Three panels: the routes in plan (output CRS), their ground and first
scenario's HGL along the station, and bars of the figures a planner
compares (length, lowest pressure, annual pumping energy where pumped).
Routes take the Okabe-Ito colours in turn (:mod:`.style`) and a line style
each, so they stay apart in grey print; a failed route is named under the
figure with its reason.
"""
from __future__ import annotations

import textwrap
import numpy as np

from .style import OKABE_ITO

__all__ = ["draw_routes", "plan_aspect", "plan_labels"]

#: Line styles taken in turn with the colours (a colour is never the only cue).
DASHES = ("-", "--", "-.", ":")
#: Routes named in the plan's legend and on the bars; more are drawn thin and unnamed,
#: and the bars show the routes with the lowest pressures.
MAX_NAMED = 12
MAX_BARS = 25


def _looks(n: int):
    """(colour, line style) per route: both change from one route to the next."""
    colours = [c for k, c in OKABE_ITO.items() if k not in ("black", "yellow")]
    return [(colours[i % len(colours)], DASHES[i % len(DASHES)]) for i in range(n)]


def plan_aspect(crs, y) -> float:
    """The plan's aspect (the length of a unit of y over a unit of x): 1 in
    a projected CRS; in degrees of longitude and latitude, 1 / cos of the
    latitude in the middle of the y range of ``y``, so that a square of
    longitude and latitude looks square there, as geopandas draws a
    geographic layer [1]_.

    >>> from pyproj import CRS
    >>> plan_aspect(None, [4.6e6]), round(plan_aspect(CRS("EPSG:4326"), [59.0, 61.0]), 3)
    (1.0, 2.0)

    .. [1] geopandas, ``GeoSeries.plot``, argument ``aspect``: "1/cos(s_y *
       pi/180) with s_y the y coordinate of the middle of the GeoSeries (the
       mean of the y range of bounding box)" (geopandas.org, API reference).
    """
    y = np.asarray(y, dtype=float)
    y = y[np.isfinite(y)]
    if crs is None or not crs.is_geographic or not y.size:
        return 1.0
    return float(1.0 / np.cos(np.radians((y.min() + y.max()) / 2.0)))


def plan_labels(crs) -> tuple[str, str]:
    """The plan's axis labels: longitude and latitude in degrees, or the
    CRS's own axes and unit (e.g. "easting (metre)")."""
    if crs is None:
        return "x", "y"
    if crs.is_geographic:
        return "longitude (deg)", "latitude (deg)"
    axis = next((a for a in crs.axis_info if a.direction in ("east", "north")), None)
    unit = f" ({axis.unit_name})" if axis is not None and axis.unit_name else ""
    return f"easting{unit}", f"northing{unit}"


def draw_routes(outcomes, table, display, path, project=None) -> None:
    """Draw the comparison of ``outcomes`` (:class:`gisgrade.routes.Outcome`) to ``path``."""
    from matplotlib.figure import Figure

    ok = [o for o in outcomes if o.error is None and o.plan is not None]
    failed = [o for o in outcomes if o.error is not None]
    looks = dict(zip([o.name for o in ok], _looks(len(ok))))
    fig = Figure(figsize=(14, 8.5))
    grid = fig.add_gridspec(2, 3, width_ratios=(1.3, 0.8, 0.8), height_ratios=(1.2, 1),
                            left=0.06, right=0.98, top=0.92, bottom=0.14 if failed else 0.08,
                            wspace=0.3, hspace=0.32)
    plan, prof = fig.add_subplot(grid[:, 0]), fig.add_subplot(grid[0, 1:])
    bars = (fig.add_subplot(grid[1, 1]), fig.add_subplot(grid[1, 2]))
    n = len(outcomes)
    fig.suptitle(f"{n} route{'s' if n != 1 else ''} compared"
                 + (f", {len(failed)} failed" if failed else ""), fontsize=13, x=0.06, ha="left")
    named = len(ok) <= MAX_NAMED  # beyond it, names in plan and legend are unreadable
    L, E = display.unit("length"), display.unit("elevation")
    # one collection a panel and kind of line, not an artist a route (hundreds of routes)
    colours, dashes = [looks[o.name][0] for o in ok], [looks[o.name][1] for o in ok]
    _lines(plan, [o.plan for o in ok], colours, dashes, 1.8 if named else 0.8)
    if ok:
        plan.scatter([o.plan[0, 0] for o in ok], [o.plan[0, 1] for o in ok], c=colours,
                     s=25 if named else 4, zorder=3)
    st = [display.value(o.profile["station"], "length") for o in ok]
    _lines(prof, [np.column_stack([s, display.value(o.profile["ground"], "elevation")])
                  for s, o in zip(st, ok)], colours, dashes, 1.0, alpha=0.8)
    hgl = [i for i, o in enumerate(ok) if "hgl" in o.profile]
    _lines(prof, [np.column_stack([st[i], display.value(ok[i].profile["hgl"], "elevation")])
                  for i in hgl], [colours[i] for i in hgl], [dashes[i] for i in hgl], 2.0)
    crs = next((p.crs for o in ok for p in o.layers.values() if p.crs is not None), None)
    y = np.concatenate([o.plan[:, 1] for o in ok]) if ok else []
    plan.set_aspect(plan_aspect(crs, y), adjustable="datalim")
    xlabel, ylabel = plan_labels(crs)
    plan.set_xlabel(xlabel, fontsize=8)
    plan.set_ylabel(ylabel, fontsize=8)
    plan.set_title("plan (a dot marks each start)", fontsize=10, loc="left")
    plan.tick_params(labelsize=7)
    plan.ticklabel_format(useOffset=False, style="plain")
    from matplotlib.ticker import MaxNLocator

    plan.xaxis.set_major_locator(MaxNLocator(4))  # long grid coordinates: few ticks
    plan.grid(alpha=0.25)
    if ok and named:
        from matplotlib.lines import Line2D

        plan.legend(handles=[Line2D([], [], color=c, ls=d, lw=1.8, label=o.name)
                             for o, c, d in zip(ok, colours, dashes)], fontsize=8, loc="best")
    elif ok:
        plan.set_title(f"plan of {len(ok)} routes (too many to name; routes.csv lists them)",
                       fontsize=10, loc="left")
    scen = next((o.profile.get("scenario") for o in ok if "scenario" in o.profile), None)
    prof.set_title("ground (thin) and HGL (thick)" + (f", scenario {scen}" if scen else ""),
                   fontsize=10, loc="left")
    prof.set_xlabel(f"distance along the route ({L})", fontsize=8)
    prof.set_ylabel(f"elevation ({E})", fontsize=8)
    prof.tick_params(labelsize=7)
    prof.grid(alpha=0.25)
    _bars(bars, ok, looks, table, display, project)
    if failed:
        lines = [f"failed: {o.name}: {o.error}" for o in failed[:6]]
        if len(failed) > 6:
            lines.append(f"... and {len(failed) - 6} more (routes.csv has every reason)")
        fig.text(0.06, 0.01, "\n".join(textwrap.shorten(s, 170) for s in lines), fontsize=7.5,
                 va="bottom", color="#7a2e00")
    from ..cautions import SHORT

    fig.text(0.98, 0.005, SHORT, fontsize=7, color="#555555", ha="right", va="bottom")
    fig.savefig(path, dpi=110)


def _lines(ax, xy, colours, dashes, width, alpha=None) -> None:
    """The lines ``xy`` (each an (n, 2) array) on ``ax`` as one collection,
    each with its colour and dash, the axes' limits taken in."""
    if not xy:
        return
    from matplotlib.collections import LineCollection

    ax.add_collection(LineCollection(xy, colors=colours, linestyles=dashes, linewidths=width,
                                     alpha=alpha), autolim=True)
    ax.autoscale_view()


def _bars(axes, ok, looks, table, display, project=None) -> None:
    """Each route's length, and the range of its pressures over every scenario
    (lowest to highest) against the limits; with many routes, the
    :data:`MAX_BARS` whose lowest pressure is lowest."""
    if not ok:
        for ax in axes:
            ax.set_axis_off()
        return
    good = table[table["status"] == "ok"]
    per = good.groupby("route", sort=False).agg(length=("length_m", "first"),
                                                low=("min_pressure_kpa", "min"),
                                                high=("max_pressure_kpa", "max"))
    names = [o.name for o in ok]
    per = per.loc[names]
    shown = per if len(per) <= MAX_BARS else per.nsmallest(MAX_BARS, "low")
    names = list(shown.index)
    y = np.arange(len(names))
    colours = [looks[n][0] for n in names]
    length = display.value(shown["length"].to_numpy(float), "length")
    low = display.value(shown["low"].to_numpy(float) * 1e3, "pressure")
    high = display.value(shown["high"].to_numpy(float) * 1e3, "pressure")
    axes[0].barh(y, length, 0.7, color=colours, edgecolor="black", lw=0.5)
    axes[0].set_title(f"length ({display.unit('length')})", fontsize=9, loc="left")
    axes[1].barh(y, high - low, 0.7, left=low, color=colours, edgecolor="black", lw=0.5)
    axes[1].use_sticky_edges = False  # a margin past the lowest bar's end, not flush on the frame
    title = f"pressure range, every scenario ({display.unit('pressure')})"
    checks = getattr(project, "checks", None)
    limits = [(getattr(checks, "min_pressure", None), "minimum"),
              (getattr(checks, "max_pressure", None), "maximum")]
    said = []
    for value, word in limits:
        if value is not None:
            axes[1].axvline(display.value(value, "pressure"), color="#7a2e00", lw=1.2, ls="--")
            said.append(f"{word} {display.text(value, 'pressure')}")
    if said:
        title += "\n(dashed: " + ", ".join(said) + ")"
    axes[1].set_title(title, fontsize=9, loc="left")
    for ax in axes:
        ax.axvline(0, color="black", lw=0.6)
        ax.invert_yaxis()
        ax.tick_params(labelsize=7)
        ax.grid(axis="x", alpha=0.25)
    axes[0].set_yticks(y, names, fontsize=7 if len(names) <= 12 else 5.5)
    axes[1].set_yticks([])
    if len(shown) < len(per):
        axes[0].set_xlabel(f"the {len(shown)} of {len(per)} routes with the lowest pressure",
                           fontsize=7)
