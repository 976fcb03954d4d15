"""The edges of ``gisgrade corridors``: points, the DEM window, the layers on
the grid, the hydraulics, and :func:`plan_corridors`, which puts the pure
functions of :mod:`.cost` and :mod:`.path` together.

Everything is read and computed before anything is written;
:meth:`CorridorResult.write` builds the output folder beside its place and
swaps it in whole at the end.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import shapely
from shapely.geometry import LineString

from ..errors import InputError
from . import cost as C
from . import path as P

#: The files ``gisgrade corridors`` writes (comparison.csv with --compare).
FILES = ("candidates.gpkg", "cost.tif", "corridors.png", "corridors.csv")

#: corridors.csv columns.
COLUMNS = ["route", "length_m", "grid_length_m", "cost_m", "line_cost_m", "cost_ratio", "shared",
           "crossings",
           "climb_m", "min_ground_m", "max_ground_m", "max_slope", "max_head_deficit_m",
           "vertices", "tolerance_m", "penalty_factor", "note"]

#: A --via whose legs turn back by more than this [degrees] gets a note
#: (the legs before and after it meet at under 45 degrees; common practice).
DOUBLE_BACK = 135.0

#: Consecutive points closer than this many cost-grid cells are refused
#: (common practice: fewer leave no room for distinct routes).
MIN_CELLS_APART = 3


@dataclass(frozen=True)
class Grid:
    """The DEM window as read: ground ``z`` [m] (row 0 north, NaN: none),
    top-left corner (x0, y0) and cell size in CRS units, metres per unit."""

    z: np.ndarray
    x0: float
    y0: float
    step: float  # CRS units per cell
    crs: object  # pyproj.CRS
    mpu: float  # metres per CRS unit
    native: float  # the DEM's own cell, CRS units
    path: Path
    #: sides of the window ("north", "south", "west", "east") that are the DEM's own edge
    dem_edges: tuple = ()

    @property
    def cell(self) -> float:
        """Cell size [m]."""
        return self.step * self.mpu

    @property
    def transform(self):
        from rasterio.transform import from_origin
        return from_origin(self.x0, self.y0, self.step, self.step)

    def cells_of(self, xy) -> np.ndarray:
        """(row, col) of points ``xy`` ((m, 2), CRS units); a point on the
        window's outer edge falls in the cell inside it."""
        rc = np.floor(self.fractional_cells(xy) + 0.5).astype(int)
        return np.clip(rc, 0, np.array(self.z.shape) - 1)

    def fractional_cells(self, xy) -> np.ndarray:
        """(row, col) of points ``xy`` as fractions, cell centres whole."""
        xy = np.asarray(xy, float)
        return np.column_stack([(self.y0 - xy[:, 1]) / self.step - 0.5,
                                (xy[:, 0] - self.x0) / self.step - 0.5])

    def xy_of(self, cells) -> np.ndarray:
        """Cell centres ((n, 2), CRS units) of ``cells`` ((n, 2) rows, cols)."""
        cells = np.asarray(cells, float)
        return np.column_stack([self.x0 + (cells[:, 1] + 0.5) * self.step,
                                self.y0 - (cells[:, 0] + 0.5) * self.step])


# --------------------------------------------------------------------------
# Points
# --------------------------------------------------------------------------


def read_point(value, option: str, crs, base: Path | None = None):
    """``value`` as a point (x, y) in ``crs``: "X,Y" (in ``crs``) or the path
    of a point layer holding exactly one point (in its own CRS)."""
    import pyproj

    text = str(value).strip()
    parts = [p.strip() for p in text.split(",")]
    if len(parts) == 2:
        try:
            x, y = float(parts[0]), float(parts[1])
        except ValueError:
            x = y = None
        if x is not None:
            if not (math.isfinite(x) and math.isfinite(y)):
                raise InputError(f"{option} {text}: coordinates must be finite")
            return x, y
    path = Path(text).expanduser()
    if not path.is_file():
        raise InputError(f"{option} {text!r}: expected X,Y or a point layer file (not found)")
    from ..alignment import read_vector
    gdf = read_vector(path, option)
    pts = gdf[gdf.geom_type == "Point"]
    if len(pts) != 1 or len(gdf) != 1:
        raise InputError(f"{option} {path.name}: a point layer must hold exactly one point "
                         f"(it holds {len(gdf)} feature(s), {len(pts)} point(s))")
    g = gdf.to_crs(pyproj.CRS.from_user_input(crs)).geometry.iloc[0]
    return float(g.x), float(g.y)


def to_dem_crs(xy, from_crs, dem_crs, option="--crs"):
    """Points ``xy`` from ``from_crs`` to ``dem_crs``."""
    import pyproj

    try:
        src = pyproj.CRS.from_user_input(from_crs)
    except pyproj.exceptions.CRSError:
        raise InputError(f"{option} {from_crs!r}: not a coordinate reference system pyproj knows "
                         "(e.g. \"EPSG:32633\")") from None
    xy = np.asarray(xy, float)
    if src == dem_crs:
        return xy
    t = pyproj.Transformer.from_crs(src, dem_crs, always_xy=True)
    x, y = t.transform(xy[:, 0], xy[:, 1])
    out = np.column_stack([x, y])
    if not np.all(np.isfinite(out)):
        raise InputError(f"{option} {from_crs}: the points do not transform to the DEM's CRS")
    return out


# --------------------------------------------------------------------------
# The DEM window
# --------------------------------------------------------------------------


def dem_crs(project):
    """The CRS of the project's first DEM, its metres per unit; a projected CRS is required."""
    import rasterio

    from ..alignment import metres_per_unit
    path = project.terrain.dem[0]
    with rasterio.open(path) as src:
        crs = src.crs
    if crs is None or not crs.is_projected:
        raise InputError(f"terrain.dem: {Path(str(path)).name} is not in a projected CRS; "
                         "corridors need a DEM in metres or feet (reproject it first)")
    import pyproj
    crs = pyproj.CRS.from_user_input(crs)
    return crs, metres_per_unit(crs)


def choose_dem(project, xy):
    """The first DEM whose footprint holds every point ``xy`` (DEM CRS)."""
    import rasterio

    for path in project.terrain.dem:
        with rasterio.open(path) as src:
            b = src.bounds
        inside = ((xy[:, 0] >= b.left) & (xy[:, 0] <= b.right) & (xy[:, 1] >= b.bottom)
                  & (xy[:, 1] <= b.top))  # the edge is inside
        if inside.all():
            return path
    bad = xy[0]
    with rasterio.open(project.terrain.dem[0]) as src:
        b = src.bounds
        for p in xy:
            if not (b.left <= p[0] <= b.right and b.bottom <= p[1] <= b.top):
                bad = p
                break
    raise InputError(f"point ({bad[0]:.2f}, {bad[1]:.2f}) lies outside the DEM "
                     f"{Path(str(project.terrain.dem[0])).name} (x {b.left:.0f}..{b.right:.0f}, "
                     f"y {b.bottom:.0f}..{b.top:.0f} in its CRS); check the coordinates and --crs")


def default_margin(xy, mpu: float = 1.0) -> float:
    """The window's default margin [m] around points ``xy`` ((m, 2), CRS
    units of ``mpu`` metres, in order): half the longest straight leg
    between consecutive points, at least 500 m (common practice). A route
    whose legs are each at most sqrt(2) times their straight length stays
    inside: such a leg lies in the ellipse with the leg's ends as foci and
    major axis sqrt(2) x the leg, whose semi-minor axis is half the leg and
    whose ends reach 0.21 legs beyond the points (plane geometry).

    >>> default_margin(np.array([[0.0, 0.0], [3000.0, 0.0]]))
    1500.0
    >>> default_margin(np.array([[0.0, 0.0], [400.0, 0.0], [400.0, 2400.0]]))
    1200.0
    >>> default_margin(np.array([[0.0, 0.0], [100.0, 0.0]]))
    500.0
    """
    legs = np.hypot(*np.diff(np.asarray(xy, float), axis=0).T) * mpu
    return float(max(500.0, np.max(legs) / 2))


def turn_angles(xy) -> np.ndarray:
    """The turn [degrees, 0..180] of the straight legs at each waypoint of
    ``xy`` ((m, 2): source, waypoints, destination): 0 straight on, 180
    straight back.

    >>> turn_angles(np.array([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]])).tolist()
    [90.0, 90.0]
    >>> turn_angles(np.array([[0.0, 0.0], [-10.0, 0.0], [30.0, 0.0]])).tolist()
    [180.0]
    """
    v = np.diff(np.asarray(xy, float), axis=0)
    a, b = v[:-1], v[1:]
    cos = np.sum(a * b, axis=1) / (np.hypot(*a.T) * np.hypot(*b.T))
    return np.degrees(np.arccos(np.clip(cos, -1.0, 1.0)))


def edge_runs(cells, shape, min_cells: int = 3) -> dict:
    """The sides of a grid of ``shape`` along which the path ``cells``
    ((n, 2) rows, cols) runs for at least ``min_cells`` cells: {side: cells}.

    >>> edge_runs(np.array([[5, 0], [5, 1], [4, 2], [0, 3], [0, 4], [0, 5], [1, 6]]), (10, 10))
    {'north': 3}
    """
    r, c = np.asarray(cells, int).T
    on = {"north": r == 0, "south": r == shape[0] - 1, "west": c == 0, "east": c == shape[1] - 1}
    return {side: int(m.sum()) for side, m in on.items() if m.sum() >= min_cells}


def read_window(path, xy, *, margin: float, resolution: float | None, max_cells: float,
                vertical_factor: float, mpu: float) -> Grid:
    """The DEM read through one window around ``xy`` (CRS units) plus ``margin``
    [m], averaged down to ``resolution`` [m] (default: the DEM's cell) or
    coarser until it holds at most ``max_cells`` cells."""
    import pyproj
    import rasterio
    from rasterio.enums import Resampling
    from rasterio.windows import Window

    with rasterio.open(path) as src:
        t = src.transform
        if t.b or t.d or t.e >= 0 or not math.isclose(t.a, -t.e, rel_tol=1e-6):
            raise InputError(f"terrain.dem: {Path(str(path)).name}: corridors need square, "
                             "north-up DEM cells (warp it first)")
        native = abs(t.a)
        m = margin / mpu
        x0, y0 = xy.min(axis=0) - m
        x1, y1 = xy.max(axis=0) + m
        c0 = max(int(math.floor((x0 - t.c) / native)), 0)
        c1 = min(int(math.ceil((x1 - t.c) / native)), src.width)
        r0 = max(int(math.floor((t.f - y1) / native)), 0)
        r1 = min(int(math.ceil((t.f - y0) / native)), src.height)
        step = max(1, int(round((resolution or 0.0) / (native * mpu))))
        while ((r1 - r0) // step) * ((c1 - c0) // step) > max_cells:
            step += 1
        rows, cols = (r1 - r0) // step, (c1 - c0) // step
        if rows < 3 or cols < 3:
            raise InputError(f"terrain.dem: {Path(str(path)).name}: the window around the points "
                             "is too small for a route; move the points apart")
        win = Window(c0, r0, cols * step, rows * step)
        edges = tuple(side for side, at in (("north", r0 == 0), ("west", c0 == 0),
                                            ("south", r0 + rows * step >= src.height),
                                            ("east", c0 + cols * step >= src.width)) if at)
        data = src.read(1, window=win, out_shape=(rows, cols), masked=True,
                        resampling=Resampling.average if step > 1 else Resampling.nearest)
        z = np.ma.filled(data.astype(np.float64), np.nan) * vertical_factor
        crs = pyproj.CRS.from_user_input(src.crs)
    return Grid(z, t.c + c0 * native, t.f - r0 * native, native * step, crs, mpu, native,
                Path(str(path)), edges)


# --------------------------------------------------------------------------
# Layers on the grid
# --------------------------------------------------------------------------


def read_layer(path, key, crs, layer=None):
    """A vector layer in ``crs`` (errors naming ``key``)."""
    from ..alignment import read_vector
    return read_vector(Path(path), key, layer=layer).to_crs(crs)


def burn(geoms, grid: Grid, all_touched: bool = True) -> np.ndarray:
    """Cells any of ``geoms`` touch (a boolean grid)."""
    from rasterio.features import rasterize

    geoms = [g for g in geoms if g is not None and not g.is_empty]
    if not geoms:
        return np.zeros(grid.z.shape, bool)
    return rasterize(((g, 1) for g in geoms), out_shape=grid.z.shape, transform=grid.transform,
                     fill=0, all_touched=all_touched, dtype="uint8").astype(bool)


@dataclass(frozen=True)
class Layers:
    """What the cost reads besides the ground, in the DEM's CRS."""

    no_go: object  # a shapely geometry (maybe empty)
    no_go_frames: list
    preferred: object
    preferred_frames: list
    crossings: list  # GeoDataFrames, one per [[crossings]] table
    crossing_cost: tuple  # m, one per crossing layer


def read_layers(project, crs, mpu: float) -> Layers:
    """The no-go, preferred and crossing layers of the project in ``crs``."""
    cfg = project.corridors
    no_go_frames, pref_frames, polys, prefs = [], [], [], []
    for i, p in enumerate(cfg.no_go):
        key = f"corridors.no_go[{i}]"
        gdf = read_layer(p, key, crs)
        bad = sorted(set(gdf.geom_type) - {"Polygon", "MultiPolygon"})
        if bad:
            raise InputError(f"{key}: {Path(p).name} holds {bad[0]} features; no-go areas must "
                             "be polygons")
        no_go_frames.append(gdf)
        polys.extend(gdf.geometry.values)
    for i, p in enumerate(cfg.preferred):
        gdf = read_layer(p, f"corridors.preferred[{i}]", crs)
        pref_frames.append(gdf)
        geoms = gdf.geometry.values
        widen = ~np.isin(shapely.get_type_id(geoms), [3, 6])  # points and lines, not polygons
        prefs.extend(np.where(widen, shapely.buffer(geoms, cfg.preferred_width / 2 / mpu), geoms))
    layers = [read_layer(c.path, f"{c.key}.path", crs, c.layer) for c in project.crossings]
    costs = cfg.crossing_cost
    if len(costs) == 1:
        costs = costs * len(layers)
    elif len(costs) != len(layers):
        raise InputError(f"corridors.crossing_cost: {len(costs)} costs for {len(layers)} "
                         "[[crossings]] tables; give one cost, or one per table")
    empty = shapely.GeometryCollection()
    return Layers(shapely.union_all(polys) if polys else empty, no_go_frames,
                  shapely.union_all(prefs) if prefs else empty, pref_frames, layers, tuple(costs))


# --------------------------------------------------------------------------
# The hydraulics
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Reach:
    """What the HGL term needs: source head [m], friction slope [m/m] at the
    design flow, pipe axis depth below ground [m], minimum pressure head [m]."""

    source_head: float
    friction_slope: float
    depth: float
    min_head: float


def hydraulic_reach(project):
    """The project's :class:`Reach`, or (None, why not) without the data.

    The friction slope is the project's own formula (:mod:`gisgrade.hydraulics.friction`)
    for the design flow in the [pipe]: Darcy-Weisbach with the Colebrook
    friction factor, or Hazen-Williams; water properties at the project's
    temperature (:mod:`gisgrade.hydraulics.water`).
    """
    from ..hydraulics.friction import (G, darcy_head_loss, friction_factor,
                                       hazen_williams_head_loss, reynolds)
    from ..hydraulics.water import density, dynamic_viscosity

    hyd, pipe = project.hydraulics, project.pipe
    if hyd is None or pipe is None:
        return None, "the HGL term is off: the project has no [pipe] or [hydraulics]"
    if hyd.source_head is None or hyd.flow is None:
        return None, ("the HGL term is off: it needs hydraulics.source_head and hydraulics.flow "
                      "(the design flow)")
    d, q = pipe.inside_diameter, hyd.flow
    rho = float(density(hyd.temperature))
    if pipe.friction == "hazen-williams":
        sf = float(hazen_williams_head_loss(1.0, q, d, pipe.hazen_williams_c))
    else:
        v = q / (math.pi * d * d / 4)
        re = reynolds(v, d, rho, float(dynamic_viscosity(hyd.temperature)))
        sf = float(darcy_head_loss(1.0, d, v, friction_factor(re, pipe.roughness / d)))
    cover = project.cover.minimum if project.cover is not None else 0.0
    depth = cover + pipe.outside_diameter / 2
    return Reach(hyd.source_head, sf, depth, project.checks.min_pressure / (rho * G)), None


# --------------------------------------------------------------------------
# Putting it together
# --------------------------------------------------------------------------


@dataclass
class CorridorResult:
    """The candidates and everything the outputs draw."""

    project: object
    grid: Grid
    cost: np.ndarray
    candidates: object  # GeoDataFrame: route + the table's columns, DEM CRS
    table: pd.DataFrame
    points: np.ndarray  # (m, 2) source, waypoints, destination (DEM CRS)
    layers: Layers
    drawn: LineString | None
    notes: list = field(default_factory=list)
    #: per candidate: distance [m] along its raster path, ground [m] and the
    #: highest ground the flow serves at the minimum pressure [m] (or None)
    profiles: list = field(default_factory=list)
    comparison: pd.DataFrame | None = None

    def write(self, outdir) -> list[Path]:
        """Write :data:`FILES` (and comparison.csv when compared) into ``outdir``,
        all at once or none: the folder is built beside it and swapped in whole
        (:func:`gisgrade.output.atomic.atomic_folder`). The tables carry US
        columns beside the SI ones with ``[output] units = "US"``."""
        from ..display import display_of
        from ..output.atomic import atomic_folder
        from ..output.csv import write_csv
        from .figure import corridor_figure

        d = display_of(self.project)
        with atomic_folder(outdir, inputs=[self.project.path, *self.project.input_paths()]) as tmp:
            self.candidates.to_file(tmp / "candidates.gpkg", layer="candidates",
                                    driver="GPKG", engine="pyogrio")
            write_cost(tmp / "cost.tif", self.cost, self.grid)
            corridor_figure(self).savefig(tmp / "corridors.png", dpi=120)
            write_csv(d.dual(self.table), tmp / "corridors.csv")
            if self.comparison is not None:
                write_csv(d.dual(self.comparison), tmp / "comparison.csv")
        out = Path(outdir)
        return sorted(p for p in out.iterdir() if p.is_file())


def write_cost(path, cost, grid: Grid) -> None:
    """The cost surface [per m] as a tiled float32 GeoTIFF (impassable: nodata)."""
    import rasterio

    data = np.where(np.isfinite(cost), cost, np.nan).astype("float32")
    rows, cols = data.shape
    tiled = rows >= 256 and cols >= 256
    profile = dict(driver="GTiff", width=cols, height=rows, count=1, dtype="float32",
                   crs=grid.crs.to_wkt(), transform=grid.transform, nodata=float("nan"),
                   compress="deflate", **({"tiled": True, "blockxsize": 256, "blockysize": 256}
                                          if tiled else {}))
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(data, 1)
        dst.set_band_description(1, "cost per metre of route (1 = plain ground)")


def cost_surface(project, grid: Grid, layers: Layers, source_cell, reach: Reach | None):
    """The cost per metre of each cell of ``grid`` (:func:`.cost.cell_cost`),
    the head deficit [m] (zeros without the hydraulics) and the highest ground
    [m] the flow serves at the minimum pressure (None without them)."""
    cfg, z, cell = project.corridors, grid.z, grid.cell
    blocked = ~np.isfinite(z) | burn([layers.no_go], grid)
    extra = C.steepness_term(C.slope(z, cell, cell), cfg.steep_slope, cfg.steepness_weight)
    window = max(int(round(cfg.roughness_window / cell)), 3)
    if cfg.roughness_weight:
        extra = extra + C.roughness_term(C.roughness(z, window), cfg.roughness_weight)
    deficit, served = np.zeros(z.shape), None
    if reach is not None:
        dist = P.distance_from(~blocked, source_cell, cell)
        head = C.reachable_head(reach.source_head, reach.friction_slope, dist)
        deficit = np.where(np.isfinite(dist), C.head_deficit(z, reach.depth, head, reach.min_head),
                           0.0)
        served = np.where(np.isfinite(dist), head + reach.depth - reach.min_head, np.nan)
        if cfg.hgl_weight:
            extra = extra + C.hgl_term(deficit, cfg.hgl_weight)
    discount = None
    if not layers.preferred.is_empty:
        discount = np.where(burn([layers.preferred], grid, all_touched=False),
                            cfg.preferred_factor, 1.0)
    crossing = None
    if layers.crossings:
        count = np.stack([burn(g.geometry.values, grid) for g in layers.crossings])
        crossing = C.crossing_term(count, layers.crossing_cost, cell)
    cost = C.cell_cost(extra, discount=discount, crossing=crossing, blocked=blocked)
    return cost, deficit, served


def count_crossings(line, frames) -> int:
    """Times ``line`` crosses the features of ``frames`` (each crossing point once)."""
    n = 0
    for gdf in frames:
        hits = shapely.intersection(gdf.geometry.values, line)
        n += int(np.sum(np.where(shapely.is_empty(hits), 0, shapely.get_num_geometries(hits))))
    return n


def drawn_line(project, crs):
    """The project's hand-drawn centerline in ``crs``, or (None, why)."""
    import pyproj

    from ..alignment import read_alignment
    a = project.alignment
    try:
        al = read_alignment(a.path, layer=a.layer, reverse=a.reverse, where=a.where,
                            feature=a.feature)
    except InputError as exc:
        return None, f"the drawn centerline is not shown: {exc}"
    t = pyproj.Transformer.from_crs(al.crs, crs, always_xy=True)
    x, y = t.transform(*al.coords.T)
    return LineString(np.column_stack([x, y])), None


def plan_corridors(project, points, *, crs=None, k=None) -> CorridorResult:
    """The ``k`` best distinct candidate routes through ``points`` (source,
    waypoints, destination: (x, y) in ``crs``, default the DEM's), writing
    nothing. Bad input raises :class:`InputError`."""
    import geopandas as gpd

    cfg = project.corridors
    k = int(cfg.k if k is None else k)
    if k < 1:
        raise InputError(f"-k {k}: at least one route")
    if len(points) < 2:
        raise InputError("corridors need a source and a destination (--from and --to)")
    crs_dem, mpu = dem_crs(project)
    xy = to_dem_crs(np.asarray(points, float), crs if crs is not None else crs_dem, crs_dem)
    path = choose_dem(project, xy)
    margin = cfg.margin if cfg.margin is not None else default_margin(xy, mpu)
    from ..terrain import vertical_unit_factor
    grid = read_window(path, xy, margin=margin, resolution=cfg.resolution,
                       max_cells=cfg.max_cells,
                       vertical_factor=vertical_unit_factor(project.terrain.vertical_unit),
                       mpu=mpu)
    notes = []
    asked = cfg.resolution if cfg.resolution is not None else grid.native * mpu
    if not math.isclose(grid.cell, asked, rel_tol=1e-6):
        notes.append(f"cost grid cells {grid.cell:.4g} m ({grid.step / grid.native:.0f} DEM "
                     f"cells), not {asked:.4g} m: a whole number of DEM cells, at most "
                     f"corridors.max_cells = {cfg.max_cells:.0f} in the window")
    layers = read_layers(project, grid.crs, mpu)
    cells = grid.cells_of(xy)
    names = ["--from"] + ["--via"] * (len(xy) - 2) + ["--to"]
    for (r, c), p, name in zip(cells, xy, names):
        if not np.isfinite(grid.z[r, c]):
            raise InputError(f"{name} ({p[0]:.2f}, {p[1]:.2f}): the DEM has no ground there")
        if layers.no_go.intersects(shapely.Point(p)):
            raise InputError(f"{name} ({p[0]:.2f}, {p[1]:.2f}): the point lies in a no-go area "
                             "(corridors.no_go)")
    apart = np.hypot(*np.diff(xy, axis=0).T) * mpu
    close = np.flatnonzero(apart < MIN_CELLS_APART * grid.cell)
    if len(close):
        i = int(close[0]) + 1
        raise InputError(f"{names[i]} ({xy[i][0]:.2f}, {xy[i][1]:.2f}): {apart[i - 1]:.3g} m "
                         f"from the point before it, closer than {MIN_CELLS_APART} cost-grid "
                         f"cells ({MIN_CELLS_APART * grid.cell:.3g} m); move the points apart")
    turns = turn_angles(xy)
    for i in np.flatnonzero(turns > DOUBLE_BACK):
        notes.append(f"--via ({xy[i + 1][0]:.2f}, {xy[i + 1][1]:.2f}) turns the route back "
                     f"by {turns[i]:.0f} degrees: the legs before and after it run "
                     "over the same ground; check the order of the --via points")
    reach, why = hydraulic_reach(project)
    if why:
        notes.append(why)
    elif not cfg.hgl_weight:
        notes.append("the HGL term is off (corridors.hgl_weight = 0); the head deficit is "
                     "still reported")
    cost, deficit, served = cost_surface(project, grid, layers, cells[0], reach)
    for (r, c), p, name in zip(cells, xy, names):
        if not np.isfinite(cost[r, c]):
            raise InputError(f"{name} ({p[0]:.2f}, {p[1]:.2f}): the point touches a no-go area "
                             "(corridors.no_go) at this cell size")
    tol = cfg.simplify_tolerance if cfg.simplify_tolerance is not None else 2 * grid.cell

    def raw_line(route_cells):  # cell centres, the given points exactly
        raw = grid.xy_of(route_cells)
        raw[P.leg_ends(route_cells, cells)] = xy
        return LineString(raw)

    def to_line(route_cells, found_on):  # taut where the cost allows, then Douglas-Peucker
        raw = np.asarray(raw_line(route_cells).coords)
        ends = P.leg_ends(route_cells, cells)
        keep = P.straighten(found_on, route_cells, grid.cell, ends)
        if LineString(raw[keep]).intersects(layers.no_go):
            keep = np.arange(len(raw))
        legs, tols = [], []
        for a, b in zip(ends[:-1], ends[1:]):  # each leg alone: the waypoints stay vertices
            leg = LineString(raw[keep[(keep >= a) & (keep <= b)]])
            crossed = count_crossings(leg, layers.crossings)

            def ok(simple):  # passable all along, no more crossings than the leg itself
                return (not simple.intersects(layers.no_go) and np.isfinite(line_cost(simple))
                        and count_crossings(simple, layers.crossings) <= crossed)

            line, used = P.simplify(leg, tol / mpu, ok)
            legs.append(np.asarray(line.coords)[1 if legs else 0:])
            tols.append(used)
        return LineString(np.concatenate(legs)), min(tols)

    def line_cost(line):  # the polyline's own cost on the surface
        v = grid.fractional_cells(np.asarray(line.coords))
        return sum(P.segment_cost(cost, a, b, grid.cell) for a, b in zip(v[:-1], v[1:]))

    found, note = P.alternatives(cost, cells, grid.cell, k, radius=cfg.separation,
                                 factor=cfg.separation_factor, max_shared=cfg.max_shared,
                                 to_line=to_line, fixed=xy, unit=mpu)
    if not found:
        raise InputError(f"no route between the points: {note}")
    if note:
        notes.append(note)
    found, dropped = P.cheapest_first(found, cfg.separation / mpu, cfg.max_shared, xy)
    if dropped:
        notes.append(f"{dropped} candidate{'s' if dropped != 1 else ''} left out: put cheapest "
                     f"first, {'they share' if dropped != 1 else 'it shares'} more than "
                     f"{cfg.max_shared:.0%} of the length with a cheaper one")
    from ..display import display_of
    d = display_of(project)
    rows, geoms, profiles = [], [], []
    z = grid.z
    s = C.slope(z, grid.cell, grid.cell)
    for i, alt in enumerate(found):
        line = alt.line
        r, c = alt.cells.T
        ground = z[r, c]
        said = []
        worst = float(np.max(deficit[r, c]))
        if worst > 0:
            said.append(f"C{i + 1}: the design flow cannot serve its ground, up to "
                        f"{d.text(worst, 'head')} of head short of the minimum pressure "
                        "(max_head_deficit_m)")
        for side, n in edge_runs(alt.cells, z.shape).items():
            where = "DEM's" if side in grid.dem_edges else "window's"
            said.append(f"C{i + 1} runs along the {where} {side} edge for "
                        f"{d.text(n * grid.cell, 'length', 0)}: "
                        + ("the DEM may end before the cheapest route"
                           if side in grid.dem_edges else
                           "the window may be too small (a wider corridors.margin may find a "
                           "cheaper route)"))
        notes.extend(said)
        rows.append(dict(route=f"C{i + 1}", length_m=line.length * mpu,
                         grid_length_m=raw_line(alt.cells).length * mpu, cost_m=alt.cost,
                         line_cost_m=line_cost(line),
                         cost_ratio=alt.cost / found[0].cost, shared=alt.shared,
                         crossings=count_crossings(line, layers.crossings),
                         climb_m=float(np.sum(np.maximum(np.diff(ground), 0.0))),
                         min_ground_m=float(np.min(ground)), max_ground_m=float(np.max(ground)),
                         max_slope=float(np.max(s[r, c])),
                         max_head_deficit_m=worst,
                         vertices=len(line.coords), tolerance_m=alt.tolerance * mpu,
                         penalty_factor=alt.factor, note="; ".join(said)))
        geoms.append(line)
        along = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(alt.cells, axis=0).T))])
        profiles.append(dict(distance=along * grid.cell, ground=ground,
                             served=None if served is None else served[r, c]))
    table = pd.DataFrame(rows, columns=COLUMNS)
    candidates = gpd.GeoDataFrame(table.copy(), geometry=geoms, crs=grid.crs)
    drawn, why = drawn_line(project, grid.crs)
    if why:
        notes.append(why)
    return CorridorResult(project, grid, cost, candidates, table, xy, layers, drawn, notes,
                          profiles)
