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

__all__ = ["draw_routes"]

#: Line styles taken in turn with the colours (a colour is never the only cue).
DASHES = ("-", "--", "-.", ":")


def _looks(n: int):
    """(colour, line style) per route: both change from one route to the next."""
    colours = [c for k, c in OKABE_ITO.items() if k not in ("black", "yellow")]
    return [(colours[i % len(colours)], DASHES[i % len(DASHES)]) for i in range(n)]


def draw_routes(outcomes, table, display, path) -> None:
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
    fig.suptitle(f"{len(outcomes)} routes compared" + (f", {len(failed)} failed" if failed else ""),
                 fontsize=13, x=0.06, ha="left")
    L, E = display.unit("length"), display.unit("elevation")
    for o in ok:
        colour, dash = looks[o.name]
        plan.plot(o.plan[:, 0], o.plan[:, 1], color=colour, ls=dash, lw=1.8, label=o.name)
        plan.plot(*o.plan[0], "o", color=colour, ms=5)
        plan.annotate(o.name, o.plan[len(o.plan) // 2], xytext=(4, 4), textcoords="offset points", fontsize=8,
                      color=colour)
        p = o.profile
        st = display.value(p["station"], "length")
        prof.plot(st, display.value(p["ground"], "elevation"), color=colour, ls=dash, lw=1.0,
                  alpha=0.8)
        if "hgl" in p:
            prof.plot(st, display.value(p["hgl"], "elevation"), color=colour, ls=dash, lw=2.0)
    plan.set_aspect("equal", adjustable="datalim")
    plan.set_title("plan (a dot marks each start)", fontsize=10, loc="left")
    plan.tick_params(labelsize=7)
    plan.ticklabel_format(useOffset=False, style="plain")
    plan.grid(alpha=0.25)
    if ok:
        plan.legend(fontsize=8, loc="best", ncol=1 + len(ok) // 12)
    scen = next((o.profile.get("scenario") for o in ok if "scenario" in o.profile), None)
    prof.set_title("ground (thin) and HGL (thick)" + (f", scenario {scen}" if scen else ""),
                   fontsize=10, loc="left")
    prof.set_xlabel(f"distance along the route ({L})", fontsize=8)
    prof.set_ylabel(f"elevation ({E})", fontsize=8)
    prof.tick_params(labelsize=7)
    prof.grid(alpha=0.25)
    _bars(bars, ok, looks, table, display)
    if failed:
        lines = [f"failed: {o.name}: {o.error}" for o in failed[:6]]
        if len(failed) > 6:
            lines.append(f"... and {len(failed) - 6} more (routes.csv has every reason)")
        fig.text(0.06, 0.01, "\n".join(textwrap.shorten(s, 170) for s in lines), fontsize=7.5,
                 va="bottom", color="#7a2e00")
    fig.savefig(path, dpi=110)


def _bars(axes, ok, looks, table, display) -> None:
    """Length and lowest pressure of each route's first scenario, as bars."""
    names = [o.name for o in ok]
    if not names:
        for ax in axes:
            ax.set_axis_off()
        return
    first = table[table["status"] == "ok"].groupby("route", sort=False).first()
    values = (display.value(first.loc[names, "length_m"].to_numpy(float), "length"),
              display.value(first.loc[names, "min_pressure_kpa"].to_numpy(float) * 1e3, "pressure"))
    titles = (f"length ({display.unit('length')})",
              f"lowest pressure ({display.unit('pressure')}), first scenario")
    y = np.arange(len(names))
    colours = [looks[n][0] for n in names]
    for ax, v, title in zip(axes, values, titles):
        ax.barh(y, v, 0.7, color=colours, edgecolor="black", lw=0.5)
        ax.axvline(0, color="black", lw=0.6)
        ax.set_title(title, fontsize=9, loc="left")
        ax.invert_yaxis()
        ax.tick_params(labelsize=7)
        ax.grid(axis="x", alpha=0.25)
    many = len(names) > 30
    axes[0].set_yticks(y if not many else y[:: len(names) // 15 + 1],
                       names if not many else names[:: len(names) // 15 + 1], fontsize=7)
    axes[1].set_yticks([])
