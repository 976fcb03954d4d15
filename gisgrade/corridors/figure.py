"""corridors.png: the candidate routes over a hillshade of the DEM window,
with the cost surface faint beneath them, the no-go areas, the preferred
corridors, the crossed features and the hand-drawn line when there is one.

Colours: the Okabe-Ito palette (:data:`gisgrade.output.style.OKABE_ITO`), one
colour per candidate, and after every six colours the next line style
(:func:`route_style`), so no two candidates look alike; figures through
matplotlib's object API only.
"""
from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from ..cautions import SHORT
from ..display import Display
from ..output.layers import result_name
from ..output.mapfig import _north, _scale_bar, hillshade
from ..output.style import OKABE_ITO

#: One colour per candidate, in order (then repeated).
ROUTE_COLOURS = [OKABE_ITO[n] for n in ("vermillion", "blue", "bluish green", "reddish purple",
                                        "orange", "sky blue")]

#: Line styles, one per round of :data:`ROUTE_COLOURS` (solid, dashed, dotted, dash-dot).
ROUTE_STYLES = ["-", (0, (5, 1.6)), (0, (1.2, 1.2)), (0, (5, 1.5, 1.2, 1.5))]


def route_style(i: int):
    """(colour, line style) of candidate ``i`` (0 for C1): each pair differs
    from every other candidate's up to 24 candidates (then repeated).

    >>> route_style(0) == route_style(6)
    False
    >>> route_style(0)[0] == route_style(6)[0]
    True
    """
    n = len(ROUTE_COLOURS)
    return ROUTE_COLOURS[i % n], ROUTE_STYLES[(i // n) % len(ROUTE_STYLES)]


def _geoms(frames):
    import shapely
    for gdf in frames:
        yield from shapely.get_parts(gdf.geometry.values)


def _poly_xy(poly):
    yield np.asarray(poly.exterior.coords)
    for ring in poly.interiors:
        yield np.asarray(ring.coords)


def corridor_figure(res) -> Figure:
    """The map of ``res`` (a :class:`~gisgrade.corridors.stage.CorridorResult`)."""
    g, d = res.grid, Display(res.project.output.units)
    z = g.z
    rows, cols = z.shape
    extent = (g.x0, g.x0 + cols * g.step, g.y0 - rows * g.step, g.y0)
    aspect = (extent[1] - extent[0]) / (extent[3] - extent[2])
    # In inches: caution, profile strip (1.6), gap, the map at equal scale, title.
    h_map = float(np.clip(12 * 0.66 / aspect, 3.0, 7.0))
    height = 2.9 + h_map + 0.45
    fig = Figure(figsize=(12, height))
    ax = fig.add_axes([0.05, 2.9 / height, 0.66, h_map / height])
    filled = np.where(np.isfinite(z), z, np.nanmean(z))
    shade = np.where(np.isfinite(z), hillshade(filled, g.cell, g.cell), np.nan)
    ax.imshow(shade, extent=extent, cmap="gray", vmin=0.15, vmax=1.0, interpolation="bilinear",
              zorder=0)
    cost = np.where(np.isfinite(res.cost), res.cost, np.nan)
    if np.isfinite(cost).any():
        hi = max(float(np.nanpercentile(cost, 99)), 1.5)
        ax.imshow(np.log(np.clip(cost, 1e-6, hi)), extent=extent, cmap="magma_r", alpha=0.28,
                  vmin=0, vmax=np.log(hi), interpolation="nearest", zorder=1)
    handles = [Patch(fc="#7b3f61", alpha=0.35, label="cost per metre (darker: dearer)")]
    for poly in _geoms(res.layers.no_go_frames):
        for ring in _poly_xy(poly):
            ax.fill(ring[:, 0], ring[:, 1], fc="none", ec="#1f1f1f", hatch="xx", lw=0.9, zorder=3)
    if res.layers.no_go_frames:
        handles.append(Patch(fc="none", ec="#1f1f1f", hatch="xx", label="no-go area"))
    for geom in _geoms(res.layers.preferred_frames):
        if geom.geom_type == "Polygon":
            for ring in _poly_xy(geom):
                ax.plot(ring[:, 0], ring[:, 1], color="#6b8e23", lw=1.2, ls=(0, (4, 2)), zorder=3)
        elif geom.geom_type == "LineString":
            c = np.asarray(geom.coords)
            ax.plot(c[:, 0], c[:, 1], color="#6b8e23", lw=3.5, alpha=0.6, zorder=3)
    if res.layers.preferred_frames:
        handles.append(Line2D([], [], color="#6b8e23", lw=3, alpha=0.7,
                              label="preferred corridor (discount)"))
    for geom in _geoms(res.layers.crossings):
        if geom.geom_type == "LineString":
            c = np.asarray(geom.coords)
            ax.plot(c[:, 0], c[:, 1], color="#2b6a99", lw=0.9, zorder=3)
    if res.layers.crossings:
        handles.append(Line2D([], [], color="#2b6a99", lw=1, label="crossed features"))
    if res.drawn is not None:
        c = np.asarray(res.drawn.coords)
        ax.plot(c[:, 0], c[:, 1], color="#1f1f1f", lw=1.4, ls=(0, (1.5, 1.5)), zorder=4)
        handles.append(Line2D([], [], color="#1f1f1f", lw=1.4, ls=(0, (1.5, 1.5)),
                              label="drawn centerline"))
    t = res.table
    for i, (geom, row) in enumerate(zip(res.candidates.geometry, t.itertuples())):
        colour, ls = route_style(i)
        c = np.asarray(geom.coords)
        ax.plot(c[:, 0], c[:, 1], color="white", lw=4.6, zorder=5 + 0.1 * (len(t) - i),
                solid_capstyle="round")
        ax.plot(c[:, 0], c[:, 1], color=colour, lw=2.6, ls=ls, zorder=5.05 + 0.1 * (len(t) - i),
                solid_capstyle="round", dash_capstyle="butt", marker="o", ms=2.2, mfc="white",
                mec=colour, mew=0.6, gid=f"route {row.route}")
        handles.append(Line2D([], [], color=colour, lw=2.6, ls=ls, label=(
            f"{row.route}: {d.text(row.length_m, 'length', 0)}, cost x{row.cost_ratio:.2f}, "
            f"{row.crossings} crossing{'s' if row.crossings != 1 else ''}, "
            f"{row.shared:.0%} shared")))
    p = res.points
    ax.scatter(p[1:-1, 0], p[1:-1, 1], marker="D", s=36, fc="white", ec="#1f1f1f", zorder=8)
    for (x, y), word, m in ((p[0], "source", "s"), (p[-1], "destination", "^")):
        ax.scatter([x], [y], marker=m, s=70, fc="#1f1f1f", ec="white", lw=1, zorder=8)
        ax.annotate(word, (x, y), xytext=(7, 7), textcoords="offset points", fontsize=8,
                    weight="bold", bbox=dict(fc="white", ec="none", alpha=0.85, pad=1), zorder=9)
    if len(p) > 2:
        handles.append(Line2D([], [], marker="D", ls="", mfc="white", mec="#1f1f1f",
                              label="waypoint"))
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    ax.set_aspect("equal")
    ax.tick_params(labelsize=6)
    ax.ticklabel_format(useOffset=False, style="plain")
    _scale_bar(ax, d, (extent[0], extent[1], extent[2], extent[3]))
    _north(ax, g.crs, (extent[0], extent[1], extent[2], extent[3]))
    _profiles(fig.add_axes([0.05, 0.75 / height, 0.66, 1.6 / height]), res, d)
    key = fig.add_axes([0.73, 2.9 / height, 0.26, h_map / height])
    key.set_axis_off()
    key.legend(handles=handles, loc="upper left", fontsize=7.5, frameon=False,
               title="candidate routes, cheapest first", title_fontsize=8.5, alignment="left")
    key.text(0, 0.02, "\n".join([f"grid {g.crs.name}, cells {d.text(g.cell, 'length', 1)}",
                                 f"hillshade of {g.path.name} (lit from the north-west)",
                                 *[n[:60] + ("..." if len(n) > 60 else "")
                                   for n in res.notes[:4]]]),
             fontsize=6.5, va="bottom", color="#444444", transform=key.transAxes)
    ax.set_title(f"{result_name(res)}: candidate routes from the terrain", fontsize=11,
                 loc="left")
    fig.text(0.05, 0.015, SHORT, fontsize=7, color="#555555")
    return fig


def _profiles(ax, res, d: Display) -> None:
    """The ground along each candidate (its raster path), and the highest
    ground the flow serves at the minimum pressure when the hydraulics are known."""
    served_shown = False
    for i, prof in enumerate(res.profiles):
        colour, ls = route_style(i)
        x = d.value(prof["distance"], "length")
        ax.plot(x, d.value(prof["ground"], "elevation"), color=colour, lw=1.3, ls=ls)
        if prof["served"] is not None:
            ax.plot(x, d.value(prof["served"], "elevation"), color=colour, lw=0.9,
                    ls=(0, (4, 2)), label=None if served_shown else
                    "highest ground the design flow serves at the least pressure")
            served_shown = True
    if served_shown:
        ax.legend(loc="best", fontsize=7, frameon=False)
    ax.set_xlabel(d.label("length", "along the route"), fontsize=7.5)
    ax.set_ylabel(d.label("elevation", "ground"), fontsize=7.5)
    ax.tick_params(labelsize=6.5)
    ax.grid(color="#dddddd", lw=0.5)
    ax.set_title("ground along each candidate (its raster path)", fontsize=8.5, loc="left")
