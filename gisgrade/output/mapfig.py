"""``map.png``: a plan of the route over a hillshade computed from the DEM.

No basemap is fetched: the relief is the project's own DEM, read through
rasterio windows around the line only (decimated to the figure's
resolution), put on a grid in the working CRS, and shaded by
:func:`hillshade` (Horn's gradient [1]_, the surface normal lit from the
north-west at 45 degrees [2]_), with contours in the display units. Over
it: the pipe coloured by its governing pressure on the shared scale
(:mod:`.style`), valves and drains, findings, crossings and offtakes, a
scale bar and an arrow to true north (from the CRS, by pyproj).

.. [1] B. K. P. Horn, "Hill shading and the reflectance map", Proceedings of
   the IEEE 69(1), 14-47, 1981 (the 3 x 3 weighted gradient).
.. [2] P. A. Burrough, R. A. McDonnell, Principles of Geographical
   Information Systems, Oxford University Press, 1998, ch. 8 (slope,
   aspect and hillshade from a gridded DEM).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import FancyArrow, Patch, Rectangle

from ..cautions import SHORT
from ..display import Display
from .style import FINDINGS, OUTLINE, POINTS, ROUTE, VALVES, scale_of

#: Grid cells across the map's longer side.
MAP_CELLS = 900


def horn_gradient(z, dx: float, dy: float):
    """Horn's gradient of grid ``z`` (row 0 the north edge): (dz/dx east,
    dz/dy north), each unitless for z, dx, dy in one unit; edges repeated.

    The 3 x 3 neighbourhood a b c / d e f / g h i gives
    dz/dx = ((c + 2f + i) - (a + 2d + g)) / (8 dx) and
    dz/dy = ((a + 2b + c) - (g + 2h + i)) / (8 dy) [1].

    >>> x, y = np.meshgrid(np.arange(4.0) * 10, -np.arange(3.0) * 10)  # row 0 north
    >>> gx, gy = horn_gradient(0.2 * x + 0.1 * y, 10.0, 10.0)
    >>> round(float(gx[1, 1]), 12), round(float(gy[1, 1]), 12)
    (0.2, 0.1)
    """
    p = np.pad(np.asarray(z, float), 1, mode="edge")
    a, b, c = p[:-2, :-2], p[:-2, 1:-1], p[:-2, 2:]
    d, f = p[1:-1, :-2], p[1:-1, 2:]
    g, h, i = p[2:, :-2], p[2:, 1:-1], p[2:, 2:]
    gx = ((c + 2 * f + i) - (a + 2 * d + g)) / (8 * dx)
    gy = ((a + 2 * b + c) - (g + 2 * h + i)) / (8 * dy)
    if z.shape[1] > 2:  # the edge columns and rows: one-sided (the repeated edge halves them)
        gx[:, [0, -1]] *= 2
    if z.shape[0] > 2:
        gy[[0, -1], :] *= 2
    return gx, gy


def hillshade(z, dx: float, dy: float, azimuth: float = 315.0, altitude: float = 45.0):
    """Illumination 0..1 of grid ``z`` (row 0 north) lit from ``azimuth``
    (degrees clockwise from north) at ``altitude`` (degrees): the cosine of
    the angle between the surface normal (-dz/dx, -dz/dy, 1) and the sun [2].

    >>> float(hillshade(np.zeros((3, 3)), 1.0, 1.0)[1, 1]).__round__(6)  # flat: sin 45 deg
    0.707107
    """
    gx, gy = horn_gradient(z, dx, dy)
    az, alt = np.radians(azimuth), np.radians(altitude)
    sun = (np.sin(az) * np.cos(alt), np.cos(az) * np.cos(alt), np.sin(alt))
    shade = (-gx * sun[0] - gy * sun[1] + sun[2]) / np.sqrt(1 + gx ** 2 + gy ** 2)
    return np.clip(shade, 0.0, 1.0)


def map_extent(xy, aspect: float = 1.45, pad: float = 0.12, least: float = 150.0):
    """(x0, x1, y0, y1) around points ``xy`` with a margin, widened to ``aspect`` (w / h)."""
    x0, y0 = xy.min(axis=0)
    x1, y1 = xy.max(axis=0)
    m = max(pad * max(x1 - x0, y1 - y0), least)
    x0, x1, y0, y1 = x0 - m, x1 + m, y0 - m, y1 + m
    w, h = x1 - x0, y1 - y0
    if w / h < aspect:
        grow = (aspect * h - w) / 2
        x0, x1 = x0 - grow, x1 + grow
    else:
        grow = (w / aspect - h) / 2
        y0, y1 = y0 - grow, y1 + grow
    return x0, x1, y0, y1


def dem_grid(project, crs, extent, cells: int = MAP_CELLS):
    """Ground (m) on a grid over ``extent`` in ``crs``: (z, cell size); NaN
    outside every DEM. Each DEM is read through one window, decimated."""
    import rasterio
    from rasterio.enums import Resampling
    from rasterio.transform import from_origin
    from rasterio.warp import reproject, transform_bounds
    from rasterio.windows import from_bounds

    from ..terrain import vertical_unit_factor

    x0, x1, y0, y1 = extent
    cell = max(x1 - x0, y1 - y0) / cells
    nx, ny = int(np.ceil((x1 - x0) / cell)), int(np.ceil((y1 - y0) / cell))
    dst_t = from_origin(x0, y1, cell, cell)
    z = np.full((ny, nx), np.nan)
    factor = vertical_unit_factor(project.terrain.vertical_unit)
    for path in reversed(list(project.terrain.dem)):  # the first listed paints last: it wins
        with rasterio.open(path) as src:
            b = transform_bounds(crs, src.crs, x0, y0, x1, y1, densify_pts=21)
            win = from_bounds(*b, transform=src.transform).round_offsets().round_lengths()
            win = win.intersection(rasterio.windows.Window(0, 0, src.width, src.height))
            if win.width < 2 or win.height < 2:
                continue
            step = max(1, int(max(win.width / nx, win.height / ny) / 2))
            shape = (max(int(win.height // step), 2), max(int(win.width // step), 2))
            data = src.read(1, window=win, out_shape=shape, masked=True,
                            resampling=Resampling.average).astype(float).filled(np.nan)
            src_t = src.window_transform(win) * rasterio.Affine.scale(win.width / shape[1],
                                                                       win.height / shape[0])
            part = np.full((ny, nx), np.nan)
            reproject(data, part, src_transform=src_t, src_crs=src.crs, dst_transform=dst_t,
                      dst_crs=crs, resampling=Resampling.bilinear, src_nodata=np.nan,
                      dst_nodata=np.nan)
            z = np.where(np.isfinite(part), part * factor, z)
    return z, cell


def true_north(crs, x: float, y: float) -> float:
    """Angle (degrees, clockwise from grid up) of true north at (x, y) in ``crs``."""
    import pyproj

    to_geo = pyproj.Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
    back = pyproj.Transformer.from_crs(crs.geodetic_crs, crs, always_xy=True)
    lon, lat = to_geo.transform(x, y)
    x2, y2 = back.transform(lon, min(lat + 0.01, 89.9))
    return float(np.degrees(np.arctan2(x2 - x, y2 - y)))


def nice_length(target: float) -> float:
    """A round length (1, 2 or 5 x 10^n) not above ``target``.

    >>> nice_length(730.0), nice_length(2100.0)
    (500.0, 2000.0)
    """
    e = 10 ** np.floor(np.log10(target))
    return float(max(m for m in (1, 2, 5) if m * e <= target) * e)


def map_figure(result, display: Display | None = None) -> Figure:
    """The plan of ``result`` as a :class:`Figure`."""
    from .layers import layer_frames, result_name

    d = display or Display(result.project.output.units)
    t = result.table
    xy = t[["x", "y"]].to_numpy()
    crs = result.alignment.crs
    fig = Figure(figsize=(12, 8.6))
    ax = fig.add_axes([0.05, 0.07, 0.66, 0.86])
    extent = map_extent(xy, aspect=0.66 * 12 / (0.86 * 8.6))
    z, cell = dem_grid(result.project, crs, extent)
    x0, x1, y0, y1 = extent
    shown = np.where(np.isfinite(z), hillshade(np.nan_to_num(z, nan=np.nanmean(z)), cell, cell), np.nan)
    ax.imshow(shown, extent=(x0, x0 + z.shape[1] * cell, y1 - z.shape[0] * cell, y1),
              cmap="gray", vmin=0.2, vmax=1, alpha=0.8, interpolation="bilinear", zorder=0)
    if np.isfinite(z).any():
        zd = d.value(z, "elevation")
        step = nice_length(max((np.nanmax(zd) - np.nanmin(zd)) / 8, 1e-3))
        levels = np.arange(np.floor(np.nanmin(zd) / step) * step, np.nanmax(zd) + step, step)
        gx = x0 + (np.arange(z.shape[1]) + 0.5) * cell
        gy = y1 - (np.arange(z.shape[0]) + 0.5) * cell
        cs = ax.contour(gx, gy, zd, levels=levels, colors="#7a5a36", linewidths=0.4, alpha=0.7,
                        zorder=1)
        ax.clabel(cs, fontsize=6, fmt=lambda v: f"{v:g} {d.unit('elevation')}")
    layers = layer_frames(result, d)
    ax.plot(xy[:, 0], xy[:, 1], color=ROUTE[0], lw=ROUTE[1] + 2, alpha=0.6, zorder=2,
            solid_capstyle="round")
    handles = []
    if "pipe_pieces" in layers:
        pp = layers["pipe_pieces"]
        segs = np.stack([xy[:-1], xy[1:]], axis=1)
        ax.add_collection(LineCollection(segs, colors=list(pp["colour"]), linewidths=4.5, zorder=3,
                                         capstyle="round"))
        scale = scale_of(result)
        present = set(pp["pressure_class"])
        for name, title, colour in zip(scale.names, scale.titles(d), scale.colours):
            handles.append(Patch(facecolor=colour, edgecolor="#555555" if name in present else "none",
                                 label=title + ("" if name in present else ": nowhere on this line")))
    _marks(ax, layers, handles)
    for i, word in ((0, "start"), (-1, "end")):
        ax.annotate(f"{word} {d.station([t['station_m'].iloc[i]], 0)[0]}", xy[i], xytext=(6, 6),
                    textcoords="offset points", fontsize=7.5, weight="bold",
                    bbox=dict(fc="white", ec="none", alpha=0.8, pad=1), zorder=9)
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=6)
    ax.ticklabel_format(useOffset=False, style="plain")
    _scale_bar(ax, d, extent)
    _north(ax, crs, extent)
    key = fig.add_axes([0.73, 0.07, 0.26, 0.86])
    key.set_axis_off()
    key.legend(handles=handles, loc="upper left", fontsize=7.5, frameon=False,
               title="pipe: governing pressure of every scenario", title_fontsize=8,
               alignment="left")
    first = result.project.terrain.dem[0]
    key.text(0, 0.02, f"grid {crs.name}\nhillshade and contours from {Path(str(first)).name}\n"
             "(Horn 1981; lit from the north-west at 45 deg)", fontsize=6.5, va="bottom",
             color="#444444", transform=key.transAxes)
    ax.set_title(f"{result_name(result)}: plan of the main", fontsize=11, loc="left")
    fig.text(0.05, 0.015, SHORT, fontsize=7, color="#555555")
    return fig


def _marks(ax, layers, handles) -> None:
    def scatter(frame, sym, label):
        if len(frame):
            g = frame.geometry
            ax.scatter(g.x, g.y, marker=sym.marker, s=sym.size ** 2 / 2.6, color=sym.fill,
                       edgecolor=OUTLINE, lw=0.6, zorder=6)
            handles.append(Line2D([], [], marker=sym.marker, ls="", ms=sym.size / 1.5,
                                  color=sym.fill, markeredgecolor=OUTLINE, markeredgewidth=0.6,
                                  label=label))

    import geopandas as gpd

    as_gdf = lambda f: gpd.GeoDataFrame(f, geometry="geometry")  # noqa: E731
    if "crossings" in layers:
        scatter(as_gdf(layers["crossings"]), POINTS["crossing"], "crossed feature")
    if "offtakes" in layers:
        scatter(as_gdf(layers["offtakes"]), POINTS["offtake"], "offtake")
    if "valves" in layers:
        v = as_gdf(layers["valves"])
        for kind, sym in VALVES.items():
            scatter(v[v["kind"] == kind], sym, sym.words)
    if "findings_points" in layers:
        f = as_gdf(layers["findings_points"])
        for sev, sym in FINDINGS.items():
            scatter(f[f["severity"] == sev], sym, f"{sym.words} (worst point)")


def _scale_bar(ax, d: Display, extent) -> None:
    x0, x1, y0, y1 = extent
    k = d.factor("length")
    length = nice_length((x1 - x0) * k / 5)  # display units
    metres = length / k
    bx, by, h = x0 + 0.04 * (x1 - x0), y0 + 0.04 * (y1 - y0), 0.008 * (y1 - y0)
    ax.add_patch(Rectangle((bx - 0.01 * (x1 - x0), by - 0.02 * (y1 - y0)), metres + 0.05 * (x1 - x0),
                           0.055 * (y1 - y0), fc="white", ec="none", alpha=0.85, zorder=8))
    for j in range(4):
        ax.add_patch(Rectangle((bx + j * metres / 4, by), metres / 4, h, zorder=9, lw=0.6,
                               fc="#1f1f1f" if j % 2 == 0 else "white", ec="#1f1f1f"))
    for frac, text in ((0, "0"), (0.5, f"{length / 2:g}"), (1, f"{length:g} {d.unit('length')}")):
        ax.text(bx + frac * metres, by + 1.8 * h, text, fontsize=7, ha="center", zorder=9)


def _north(ax, crs, extent) -> None:
    x0, x1, y0, y1 = extent
    angle = np.radians(true_north(crs, (x0 + x1) / 2, (y0 + y1) / 2))
    cx, cy, r = x1 - 0.06 * (x1 - x0), y1 - 0.1 * (y1 - y0), 0.05 * (y1 - y0)
    dx, dy = r * np.sin(angle), r * np.cos(angle)
    ax.add_patch(FancyArrow(cx - dx / 2, cy - dy / 2, dx, dy, width=0.12 * r, head_width=0.45 * r,
                            head_length=0.4 * r, length_includes_head=True, fc="#1f1f1f",
                            ec="white", lw=0.8, zorder=9))
    ax.text(cx + 0.75 * dx, cy + 0.75 * dy, "N", fontsize=10, weight="bold", ha="center",
            va="center", zorder=9, bbox=dict(fc="white", ec="none", alpha=0.8, pad=0.5))
    ax.text(cx, cy - 0.75 * r, "true north", fontsize=6, ha="center", va="top", zorder=9)


def write_map(result, folder: Path, display: Display) -> None:
    # tight: the key at the right keeps its long class names whole
    map_figure(result, display).savefig(folder / "map.png", dpi=130, bbox_inches="tight",
                                        pad_inches=0.15)
