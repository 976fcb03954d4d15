"""Ground elevation along the stations, from one DEM or many tiles.

The terrain stage takes station coordinates and returns the ground elevation
at each, in metres. It reads only the parts of each DEM that the line passes
through, so memory grows with the route's length, not the raster's size.

Conventions (see ``docs/terrain.md``):

* A DEM value belongs to its cell centre, half a cell in from the cell's
  corner in the geotransform [1]. In *cell-centre coordinates* the value
  ``grid[i, j]`` sits at ``row = i``, ``col = j``.
* Interpolation is bilinear (default) or Keys cubic convolution with
  ``a = -0.5`` [2]. Both reproduce a plane exactly; the cubic also
  reproduces any quadratic surface [2].
* Between the outermost cell centres and the raster's outer edge (half a
  cell), bilinear extrapolates linearly from the two edge cells; the cubic
  uses Keys' quadratic boundary extension [2]. A plane stays exact there.
* Several files: the first listed file that has valid data at a station
  wins.
* A station whose interpolation touches a nodata (or NaN) cell is invalid.
  Runs of invalid stations are bridged linearly along the stations when the
  bridged length is at most ``max_gap``; anything else is an
  :class:`~gisgrade.errors.InputError` listing the station ranges.

References
----------
[1] GDAL Raster Data Model, "Affine GeoTransform": the geotransform maps the
    top-left *corner* of a pixel; its centre is at (col + 0.5, row + 0.5).
    https://gdal.org/user/raster_data_model.html
[2] R. G. Keys, "Cubic convolution interpolation for digital image
    processing", IEEE Trans. Acoustics, Speech, and Signal Processing 29(6),
    1153-1160, 1981. Kernel with a = -1/2 and the boundary condition
    f(-1) = 3 f(0) - 3 f(1) + f(2) (equation numbers below from memory:
    kernel eq. (15), boundary eq. (25)).
"""
from __future__ import annotations

import glob as _glob
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .arrays import runs
from .errors import InputError, first_line
from .names import normalise

__all__ = [
    "VERTICAL_UNITS",
    "vertical_unit_factor",
    "resolve_dem_paths",
    "bilinear",
    "bicubic",
    "keys_kernel",
    "GroundProfile",
    "sample_ground",
    "DEFAULT_MAX_GAP_CELLS",
    "VERTICAL_ACCURACY_BY_KIND",
    "default_vertical_accuracy",
]

#: Metres per vertical unit. "ft" is the international foot (exactly
#: 0.3048 m); "us-ft" is the US survey foot (exactly 1200/3937 m). Both are
#: defined in NIST Handbook 44, Appendix C, and the 1959 international yard
#: and pound agreement (Federal Register 24, 5348, 1959; citation from memory).
VERTICAL_UNITS: dict[str, float] = {
    "m": 1.0,
    "metre": 1.0,
    "meter": 1.0,
    "metres": 1.0,
    "meters": 1.0,
    "ft": 0.3048,
    "foot": 0.3048,
    "feet": 0.3048,
    "international_foot": 0.3048,
    "intl_ft": 0.3048,
    "us-ft": 1200.0 / 3937.0,
    "us_ft": 1200.0 / 3937.0,
    "ftus": 1200.0 / 3937.0,
    "us_survey_foot": 1200.0 / 3937.0,
    "us_survey_feet": 1200.0 / 3937.0,
    "survey_foot": 1200.0 / 3937.0,
    "survey_ft": 1200.0 / 3937.0,
}

#: Default ``max_gap`` in cells of the finest DEM (common practice: a few cells).
DEFAULT_MAX_GAP_CELLS = 3.0

#: Extensions taken from a folder given as ``terrain.dem``.
DEM_EXTENSIONS = (".tif", ".tiff", ".vrt")


_UNIT_LOOKUP = {normalise(k, "_"): v for k, v in VERTICAL_UNITS.items()}


def vertical_unit_factor(name, key: str = "terrain.vertical_unit") -> float:
    """Metres per vertical unit ``name`` (case, '-', '_' and spaces ignored).

    Parameters
    ----------
    name : str
        "m", "ft" (international foot) or "us-ft" (US survey foot), or an
        alias listed in :data:`VERTICAL_UNITS`.
    key : str
        Project-file key named in the error message.

    Returns
    -------
    float
        Metres per unit [-].

    >>> vertical_unit_factor("ft")
    0.3048
    >>> round(vertical_unit_factor("US survey foot"), 10)
    0.3048006096
    """
    if isinstance(name, str):
        factor = _UNIT_LOOKUP.get(normalise(name, "_"))
        if factor is not None:
            return factor
    raise InputError(
        f"{key} = {name!r}: unknown vertical unit; use \"m\", \"ft\" (international foot) "
        f"or \"us-ft\" (US survey foot)"
    )


#: Typical vertical accuracy (RMSE) [m] by DEM kind, *common practice*:
#: lidar DTMs about 0.1-0.2 m; national 1/3 arc-second (~10 m) models a few
#: metres; 1-3 arc-second (30-90 m) global models about 5-10 m. A DEM is
#: not a survey; the user's own figure (terrain.vertical_accuracy) wins.
VERTICAL_ACCURACY_BY_KIND: dict[str, float] = {
    "lidar": 0.15,
    "national": 3.0,
    "global": 8.0,
}


def default_vertical_accuracy(cell_size: float) -> tuple[str, float]:
    """Guess the DEM kind from its cell size and return (kind, RMSE [m]).

    Cells up to 3 m are taken as lidar, up to 15 m as a national 1/3
    arc-second model, coarser as a 1-3 arc-second global model (*common
    practice* thresholds).

    Parameters
    ----------
    cell_size : float
        Cell size [m] (e.g. :attr:`GroundProfile.cell_size`).

    Returns
    -------
    (str, float)
        Kind and vertical RMSE [m].

    >>> default_vertical_accuracy(1.0)
    ('lidar', 0.15)
    >>> default_vertical_accuracy(30.0)
    ('global', 8.0)
    """
    if cell_size <= 3.0:
        kind = "lidar"
    elif cell_size <= 15.0:
        kind = "national"
    else:
        kind = "global"
    return kind, VERTICAL_ACCURACY_BY_KIND[kind]


def _is_remote(text: str) -> bool:
    return text.startswith("/vsi") or "://" in text


def resolve_dem_paths(spec, base_dir, key: str = "terrain.dem") -> list:
    """Turn ``terrain.dem`` into an ordered list of raster files.

    ``spec`` is a path, a list of paths, a folder (every ``*.tif``, ``*.tiff``
    and ``*.vrt`` inside it, sorted by name) or a glob pattern (matches sorted
    by name). Relative paths resolve against ``base_dir``. The list order is
    the overlap priority (the first file with valid data wins). GDAL virtual
    file system paths (``/vsicurl/...``) and URLs are passed through as
    strings, unchecked.

    Raises :class:`InputError` naming ``key`` and the missing file, folder or
    pattern.
    """
    if isinstance(spec, (str, Path)):
        items = [spec]
    elif isinstance(spec, (list, tuple)) and spec:
        items = list(spec)
    else:
        raise InputError(f"{key} = {spec!r}: give a DEM file, a list of files, a folder or a glob pattern")
    base = Path(base_dir)
    out: list = []
    for item in items:
        if not isinstance(item, (str, Path)) or not str(item).strip():
            raise InputError(f"{key}: {item!r} is not a file path")
        text = str(item).strip()
        if _is_remote(text):
            out.append(text)
            continue
        path = Path(text).expanduser()
        if not path.is_absolute():
            path = base / path
        if any(ch in text for ch in "*?["):
            found = sorted(Path(p) for p in _glob.glob(str(path), recursive=True) if Path(p).is_file())
            if not found:
                raise InputError(f"{key}: no file matches {str(path)!r}")
            out.extend(found)
        elif path.is_dir():
            found = sorted(p for p in path.iterdir() if p.is_file() and p.suffix.lower() in DEM_EXTENSIONS)
            if not found:
                raise InputError(f"{key}: folder {str(path)!r} holds no .tif, .tiff or .vrt file")
            out.extend(found)
        elif path.is_file():
            out.append(path)
        else:
            raise InputError(f"{key}: DEM file not found: {str(path)!r}")
    return out


# ---------------------------------------------------------------------------
# Interpolation kernels (pure)
# ---------------------------------------------------------------------------

def keys_kernel(s, a: float = -0.5):
    """Keys cubic convolution kernel W(s) [2, eq. (15)].

    Parameters
    ----------
    s : array_like
        Distance from the sample, in cells [-].
    a : float
        Kernel parameter; -0.5 gives third-order accuracy [2].

    Returns
    -------
    ndarray
        Weight [-].

    >>> keys_kernel([0.0, 1.0, 2.0, 0.5]).tolist()
    [1.0, 0.0, 0.0, 0.5625]
    """
    s = np.abs(np.asarray(s, dtype=float))
    s2 = s * s
    s3 = s2 * s
    inner = (a + 2.0) * s3 - (a + 3.0) * s2 + 1.0
    outer = a * s3 - 5.0 * a * s2 + 8.0 * a * s - 4.0 * a
    return np.where(s <= 1.0, inner, np.where(s < 2.0, outer, 0.0))


def _stencil(method: str, pos: np.ndarray, n: int):
    """Base index, node offsets and weights along one axis.

    ``pos`` are cell-centre coordinates, ``n`` the raster's size along the
    axis. Returns ``(base, offsets, weights)``: the value is
    ``sum(w * f[base + off])``. Nodes outside ``0..n-1`` (bicubic only, at
    most two beyond each edge) must be supplied by quadratic extension.
    """
    fl = np.floor(pos)
    if method == "bilinear":
        base = np.clip(fl, 0, n - 2)
        t = pos - base  # in [-0.5, 1.5] at the edges: linear extrapolation
        return base.astype(np.int64), (0, 1), (1.0 - t, t)
    base = np.clip(fl, -1, n - 1)
    t = pos - base
    weights = (keys_kernel(1.0 + t), keys_kernel(t), keys_kernel(1.0 - t), keys_kernel(2.0 - t))
    return base.astype(np.int64), (-1, 0, 1, 2), weights


_MIN_CELLS = {"bilinear": 2, "bicubic": 3}
_PAD = {"bilinear": 0, "bicubic": 2}


def _extend_quadratic(a: np.ndarray, before: int, after: int, axis: int) -> np.ndarray:
    """Extend ``a`` along ``axis`` by quadratic extrapolation [2, eq. (25)].

    f(-1) = 3 f(0) - 3 f(1) + f(2), applied repeatedly; exact for any
    quadratic along the axis. NaN propagates.
    """
    a = np.moveaxis(a, axis, 0)
    rows = list(a)
    for _ in range(before):
        rows.insert(0, 3.0 * rows[0] - 3.0 * rows[1] + rows[2])
    for _ in range(after):
        rows.append(3.0 * rows[-1] - 3.0 * rows[-2] + rows[-3])
    return np.moveaxis(np.stack(rows), 0, axis)


def _combine(grid, r0, c0, roffs, rw, coffs, cw):
    """sum over the stencil of weight_r * weight_c * grid[r0+dr, c0+dc].

    A node with weight exactly zero is left out, so a NaN there does not
    spoil the result (at a cell centre the value is that cell's own).
    """
    out = np.zeros(np.shape(r0), dtype=float)
    for dr, wr in zip(roffs, rw):
        row_sum = np.zeros_like(out)
        for dc, wc in zip(coffs, cw):
            row_sum += np.where(wc == 0.0, 0.0, wc * grid[r0 + dr, c0 + dc])
        out += np.where(wr == 0.0, 0.0, wr * row_sum)
    return out


def _interpolate(grid, row, col, method: str):
    grid = np.asarray(grid, dtype=float)
    if grid.ndim != 2:
        raise ValueError("grid must be 2-D")
    nr, nc = grid.shape
    need = _MIN_CELLS[method]
    if nr < need or nc < need:
        raise ValueError(f"{method} needs a grid of at least {need}x{need} cells")
    row, col = np.broadcast_arrays(np.asarray(row, dtype=float), np.asarray(col, dtype=float))
    inside = (row >= -0.5) & (row <= nr - 0.5) & (col >= -0.5) & (col <= nc - 0.5)
    r = np.where(inside, row, 0.0)
    c = np.where(inside, col, 0.0)
    pad = _PAD[method]
    if pad:
        grid = _extend_quadratic(_extend_quadratic(grid, pad, pad, 0), pad, pad, 1)
    r0, roffs, rw = _stencil(method, r, nr)
    c0, coffs, cw = _stencil(method, c, nc)
    out = _combine(grid, r0 + pad, c0 + pad, roffs, rw, coffs, cw)
    return np.where(inside, out, np.nan)


def bilinear(grid, row, col):
    """Bilinear interpolation in cell-centre coordinates.

    Parameters
    ----------
    grid : array_like, shape (nr, nc)
        Cell values (any unit; NaN marks no data), at least 2x2.
    row, col : array_like
        Fractional positions in cell-centre coordinates [cells]: the value
        ``grid[i, j]`` sits at ``row = i, col = j``. Positions from -0.5 to
        ``n - 0.5`` (the raster's outer edge) are valid; the half cell beyond
        the outermost centres is linear extrapolation from the two edge
        cells. Farther out the result is NaN.

    Returns
    -------
    ndarray
        Interpolated values, same unit as ``grid``; NaN where a cell with a
        weight in the stencil is NaN, or outside the grid.

    >>> g = [[0.0, 1.0], [10.0, 11.0]]
    >>> bilinear(g, [0.0, 0.5, 1.0, -0.5], [0.0, 0.5, 1.0, 0.0]).tolist()
    [0.0, 5.5, 11.0, -5.0]
    """
    return _interpolate(grid, row, col, "bilinear")


def bicubic(grid, row, col):
    """Cubic convolution (Keys 1981, a = -0.5) in cell-centre coordinates.

    Same arguments and conventions as :func:`bilinear`; the grid must be at
    least 3x3. Beyond the outermost centres the grid is extended by Keys'
    quadratic boundary condition [2], so any quadratic surface (and a plane)
    is reproduced exactly everywhere in the raster's footprint.

    >>> g = [[float(i * i + j) for j in range(4)] for i in range(4)]
    >>> bicubic(g, [1.5, 2.5], [0.25, 3.5]).tolist()
    [2.5, 9.75]
    """
    return _interpolate(grid, row, col, "bicubic")


# ---------------------------------------------------------------------------
# Sampling files
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class GroundProfile:
    """Ground along the stations.

    Attributes
    ----------
    z : ndarray (n,)
        Ground elevation [m].
    bridged : ndarray (n,) of bool
        True where a nodata gap was bridged linearly along the stations.
    source : ndarray (n,) of int
        Index in the DEM list of the file that supplied the value; -1 where
        bridged.
    max_gap : float
        The max_gap applied [m] (the default is resolved here).
    cell_size : float
        Smaller cell dimension of the finest DEM listed [m] (approximate for
        a geographic DEM).
    """

    z: np.ndarray
    bridged: np.ndarray
    source: np.ndarray
    max_gap: float = field(default=float("nan"))
    cell_size: float = field(default=float("nan"))


def _cell_size_m(src, lat_hint: float | None) -> float:
    """Smaller cell dimension of ``src`` in metres (approximate if geographic)."""
    t = src.transform
    sx = math.hypot(t.a, t.d)
    sy = math.hypot(t.b, t.e)
    crs = src.crs
    if crs is not None and crs.is_geographic:
        # Mean Earth radius (IUGG, 6371008.8 m); degrees of longitude shrink with cos(lat).
        lat = lat_hint if lat_hint is not None else (src.bounds.bottom + src.bounds.top) / 2.0
        k = math.pi / 180.0 * 6371008.8
        return min(sx * k * max(math.cos(math.radians(lat)), 1e-6), sy * k)
    factor = 1.0
    if crs is not None:
        try:
            factor = float(crs.linear_units_factor[1])
        except Exception:  # CRS without a linear unit: assume metres
            factor = 1.0
    return min(sx, sy) * factor


def _default_station(x, y, crs) -> np.ndarray:
    """Cumulative horizontal distance [m] along the points (geodesic if geographic)."""
    from pyproj import CRS

    crs = CRS.from_user_input(crs)
    if crs.is_geographic:
        geod = crs.get_geod()
        _, _, d = geod.inv(x[:-1], y[:-1], x[1:], y[1:])
        d = np.asarray(d, dtype=float)
    else:
        from .alignment import metres_per_unit

        d = np.hypot(np.diff(x), np.diff(y)) * metres_per_unit(crs)
    return np.concatenate([[0.0], np.cumsum(d)])


def _chunk(block: int) -> int:
    """Station-group size along one axis: the DEM's block, kept in 64..1024 cells
    (a strip-organised file has 1-row or full-width blocks)."""
    return int(min(max(block, 64), 1024))


def _read_window(src, r_lo, r_hi, c_lo, c_hi, pad):
    """Read raster rows r_lo..r_hi, cols c_lo..c_hi (inclusive, may stick out by
    ``pad`` cells beyond the raster when pad > 0) as float64 with NaN for
    nodata; the parts outside the raster are filled by quadratic extension.
    Returns (array, row0, col0): raster index of the array's [0, 0].
    """
    from rasterio.windows import Window

    nr, nc = src.height, src.width
    rr_lo, rr_hi = max(r_lo, 0), min(r_hi, nr - 1)
    cc_lo, cc_hi = max(c_lo, 0), min(c_hi, nc - 1)
    if pad:
        # Quadratic extension needs three real cells next to the edge.
        if r_lo < 0:
            rr_hi = max(rr_hi, 2)
        if r_hi > nr - 1:
            rr_lo = min(rr_lo, nr - 3)
        if c_lo < 0:
            cc_hi = max(cc_hi, 2)
        if c_hi > nc - 1:
            cc_lo = min(cc_lo, nc - 3)
    win = Window(cc_lo, rr_lo, cc_hi - cc_lo + 1, rr_hi - rr_lo + 1)
    data = src.read(1, window=win, masked=True)
    arr = np.ma.filled(data.astype(np.float64), np.nan)
    nd = src.nodata
    if nd is not None and not np.isnan(nd):
        arr[arr == nd] = np.nan  # masked=True already did this; cheap insurance for odd masks
    before_r, after_r = rr_lo - min(r_lo, rr_lo), max(r_hi, rr_hi) - rr_hi
    before_c, after_c = cc_lo - min(c_lo, cc_lo), max(c_hi, cc_hi) - cc_hi
    if before_r or after_r:
        arr = _extend_quadratic(arr, before_r, after_r, 0)
    if before_c or after_c:
        arr = _extend_quadratic(arr, before_c, after_c, 1)
    return arr, rr_lo - before_r, cc_lo - before_c


def _sample_one(src, xd, yd, todo, method, path, key):
    """Raw interpolated values (before scale/offset/unit) of one DEM at the
    stations ``todo`` (indices). Returns (values for todo, inside-footprint mask)."""
    nr, nc = src.height, src.width
    need = _MIN_CELLS[method]
    if nr < need or nc < need:
        raise InputError(f"{key}: {path}: raster of {nr}x{nc} cells is too small for {method} interpolation")
    inv = ~src.transform
    x = xd[todo]
    y = yd[todo]
    # Cell-centre coordinates: the geotransform addresses cell corners [1].
    col = inv.a * x + inv.b * y + inv.c - 0.5
    row = inv.d * x + inv.e * y + inv.f - 0.5
    eps = 1e-9
    inside = (
        np.isfinite(row) & np.isfinite(col)
        & (row >= -0.5 - eps) & (row <= nr - 0.5 + eps)
        & (col >= -0.5 - eps) & (col <= nc - 0.5 + eps)
    )
    values = np.full(todo.shape, np.nan)
    if not inside.any():
        return values, inside
    idx = np.flatnonzero(inside)
    r = np.clip(row[idx], -0.5, nr - 0.5)
    c = np.clip(col[idx], -0.5, nc - 0.5)
    r0, roffs, rw = _stencil(method, r, nr)
    c0, coffs, cw = _stencil(method, c, nc)
    bh, bw = src.block_shapes[0]
    ch, cwid = _chunk(bh), _chunk(bw)
    gkey = (r0 // ch) * (nc // cwid + 2) + (c0 // cwid)
    order = np.argsort(gkey, kind="stable")
    bounds = np.flatnonzero(np.diff(gkey[order])) + 1
    pad = _PAD[method]
    for grp in np.split(order, bounds):
        gr0, gc0 = r0[grp], c0[grp]
        arr, row0, col0 = _read_window(
            src,
            int(gr0.min()) + roffs[0], int(gr0.max()) + roffs[-1],
            int(gc0.min()) + coffs[0], int(gc0.max()) + coffs[-1],
            pad,
        )
        values[idx[grp]] = _combine(
            arr, gr0 - row0, gc0 - col0,
            roffs, [w[grp] for w in rw], coffs, [w[grp] for w in cw],
        )
    return values, inside


def _runs(mask: np.ndarray):
    """(starts, ends) inclusive index arrays of the True runs in ``mask``."""
    r = runs(mask)
    return r[:, 0], r[:, 1]


def _fmt_ranges(station, starts, ends, limit=8) -> str:
    parts = []
    for s, e in zip(starts[:limit], ends[:limit]):
        a, b = station[s], station[e]
        parts.append(f"{a:.1f} m" if s == e else f"{a:.1f}-{b:.1f} m")
    if len(starts) > limit:
        parts.append(f"and {len(starts) - limit} more")
    return ", ".join(parts)


def sample_ground(
    dem_paths,
    x,
    y,
    crs,
    *,
    station=None,
    vertical_unit="m",
    method: str = "bilinear",
    max_gap: float | None = None,
    spacing: float | None = None,
    key: str = "terrain.dem",
) -> GroundProfile:
    """Ground elevation [m] at stations (x, y) from one or several DEM files.

    Parameters
    ----------
    dem_paths : path or list of paths
        DEM files in priority order (see :func:`resolve_dem_paths`); where
        files overlap, the first listed file with valid data at a station
        wins. Band 1 is used.
    x, y : array_like (n,)
        Station coordinates in ``crs``.
    crs : anything ``pyproj.CRS.from_user_input`` accepts
        CRS of x, y. Stations are transformed once per distinct DEM CRS,
        vectorized (``always_xy=True``).
    station : array_like (n,), optional
        Station [m], non-decreasing; used to bridge gaps and in messages.
        Default: cumulative horizontal distance along the points, in metres
        (geodesic if ``crs`` is geographic).
    vertical_unit : str or float
        Unit of the DEM values after scale/offset: "m", "ft", "us-ft" (see
        :data:`VERTICAL_UNITS`) or metres per unit as a number.
    method : "bilinear" or "bicubic"
    max_gap : float, optional
        Longest nodata run bridged linearly [m], measured between the valid
        stations either side. Default: 3 cells of the finest DEM listed, and
        at least 2 cells plus 2 ``spacing`` (what one missing cell takes away).
    spacing : float, optional
        The station spacing [m], for the default ``max_gap``.
    key : str
        Project-file key named in error messages.

    Returns
    -------
    GroundProfile

    Raises
    ------
    InputError
        A file cannot be opened or has no CRS; stations outside every DEM;
        nodata runs that are longer than ``max_gap`` or reach an end of the
        line. The message lists the station ranges.
    """
    import rasterio
    from pyproj import CRS, Transformer

    if method not in _MIN_CELLS:
        raise InputError(f"terrain.method = {method!r}: use \"bilinear\" or \"bicubic\"")
    if isinstance(dem_paths, (str, Path)):
        dem_paths = [dem_paths]
    dem_paths = list(dem_paths)
    if not dem_paths:
        raise InputError(f"{key}: no DEM file given")
    x = np.asarray(x, dtype=float).ravel()
    y = np.asarray(y, dtype=float).ravel()
    if x.shape != y.shape:
        raise ValueError("x and y must have the same length")
    n = x.size
    in_crs = CRS.from_user_input(crs)
    if station is None:
        station = _default_station(x, y, in_crs) if n else np.zeros(0)
    station = np.asarray(station, dtype=float).ravel()
    if station.shape != x.shape:
        raise ValueError("station must have the same length as x and y")
    if n > 1 and np.any(np.diff(station) < 0):
        raise ValueError("station must be non-decreasing")
    if isinstance(vertical_unit, (int, float)) and not isinstance(vertical_unit, bool):
        factor = float(vertical_unit)
    else:
        factor = vertical_unit_factor(vertical_unit)

    z = np.full(n, np.nan)
    source = np.full(n, -1, dtype=np.int64)
    covered = np.zeros(n, dtype=bool)  # inside some DEM's footprint
    transformed: dict = {}
    finest = math.inf

    for i, path in enumerate(dem_paths):
        try:
            src = rasterio.open(path)
        except Exception as exc:
            reason = first_line(exc)
            raise InputError(f"{key}: cannot open DEM {str(path)!r} ({reason})") from None
        with src:
            if src.crs is None:
                raise InputError(f"{key}: DEM {str(path)!r} has no coordinate reference system")
            dem_crs = CRS.from_user_input(src.crs)
            wkt = dem_crs.to_wkt()
            if wkt not in transformed:
                if dem_crs == in_crs:
                    transformed[wkt] = (x, y)
                else:
                    tr = Transformer.from_crs(in_crs, dem_crs, always_xy=True)
                    xd, yd = tr.transform(x, y, errcheck=False)
                    transformed[wkt] = (np.asarray(xd, dtype=float), np.asarray(yd, dtype=float))
            xd, yd = transformed[wkt]
            hint = None
            if dem_crs.is_geographic and n:
                finite = np.isfinite(yd)
                hint = float(np.mean(yd[finite])) if finite.any() else None
            finest = min(finest, _cell_size_m(src, hint))
            todo = np.flatnonzero(np.isnan(z))
            if todo.size == 0:
                continue
            try:
                raw, inside = _sample_one(src, xd, yd, todo, method, path, key)
            except InputError:
                raise
            except Exception as exc:  # GDAL/rasterio read errors: a damaged or truncated file
                raise InputError(f"{key}: DEM {str(path)!r} cannot be read along the line "
                                 f"({first_line(exc)}); the file is damaged or truncated: "
                                 "download or export it again") from None
            covered[todo[inside]] = True
            scale = float(src.scales[0]) if src.scales else 1.0
            offset = float(src.offsets[0]) if src.offsets else 0.0
            vals = raw * scale + offset if (scale != 1.0 or offset != 0.0) else raw
            if factor != 1.0:
                vals = vals * factor
            ok = np.isfinite(vals)
            z[todo[ok]] = vals[ok]
            source[todo[ok]] = i

    if max_gap is None:  # a few cells, and at least what one missing cell takes away
        max_gap = max(DEFAULT_MAX_GAP_CELLS * finest, 2 * finest + 2 * (spacing or 0.0))
    max_gap = float(max_gap)

    invalid = np.isnan(z)
    bridged = np.zeros(n, dtype=bool)
    if invalid.any():
        starts, ends = _runs(invalid)
        outside = np.concatenate([[0], np.cumsum(~covered)])
        outside_any = (outside[ends + 1] - outside[starts]) > 0  # some station of the run is outside
        at_end = (starts == 0) | (ends == n - 1)
        before = np.clip(starts - 1, 0, n - 1)
        after = np.clip(ends + 1, 0, n - 1)
        length = station[after] - station[before]
        too_long = ~at_end & ~outside_any & (length > max_gap + 1e-9)
        unbridgeable = outside_any | at_end | too_long
        if unbridgeable.any():
            msgs = []
            if outside_any.any():
                o_starts, o_ends = _runs(~covered)
                msgs.append("outside every DEM at stations " + _fmt_ranges(station, o_starts, o_ends)
                            + where_line_lies(x, y, in_crs, dem_paths, all_out=not covered.any()))
            sel = ~outside_any & at_end
            if sel.any():
                msgs.append(
                    "no ground data at stations " + _fmt_ranges(station, starts[sel], ends[sel])
                    + " (nodata at an end of the line cannot be bridged)"
                )
            sel = np.flatnonzero(too_long)
            if sel.size:
                k = sel[np.argmax(length[sel])]
                msgs.append(
                    "no ground data at stations " + _fmt_ranges(station, starts[sel], ends[sel])
                    + f" (gap longer than max_gap {max_gap:.1f} m: bridging from the valid "
                    f"stations {station[before[k]]:.1f} to {station[after[k]]:.1f} m would span "
                    f"{length[k]:.1f} m; raise terrain.max_gap or fill the DEM)"
                )
            raise InputError(f"{key}: " + "; ".join(msgs))
        valid = ~invalid
        z[invalid] = np.interp(station[invalid], station[valid], z[valid])
        bridged = invalid
    return GroundProfile(z=z, bridged=bridged, source=source, max_gap=max_gap, cell_size=finest)


def _box(x, y) -> str:
    """The extent of x, y in words, grid coordinates to the unit, degrees to 1e-6.

    >>> _box([500100.4, 504500.0], [4648500.0, 4648500.0])
    'x 500100 to 504500, y 4648500 to 4648500'
    >>> _box([8.37, 8.45], [47.03, 47.1])
    'x 8.37 to 8.45, y 47.03 to 47.1'
    """
    def num(v) -> str:
        return f"{v:.0f}" if abs(v) >= 1e4 else f"{v:.6g}"

    return (f"x {num(np.nanmin(x))} to {num(np.nanmax(x))}, y {num(np.nanmin(y))} to "
            f"{num(np.nanmax(y))}")


def _inside(x, y, b) -> float:
    """Share of the points (x, y) inside the bounds ``b`` (left, bottom, right, top)."""
    ok = (x >= b[0]) & (x <= b[2]) & (y >= b[1]) & (y <= b[3])
    return float(np.mean(ok)) if len(ok) else 0.0


def where_line_lies(x, y, crs, dem_paths, all_out: bool = True) -> str:
    """Where the line (x, y in ``crs``) lies against the first DEM, in both CRSs,
    and the likely cause when the whole line misses it: longitude and latitude
    swapped, or coordinates of another UTM zone than the one the file states."""
    import rasterio
    from pyproj import CRS, Transformer

    try:
        with rasterio.open(dem_paths[0]) as src:
            dem_crs, b = CRS.from_user_input(src.crs), tuple(src.bounds)
    except Exception:
        return ""
    crs = CRS.from_user_input(crs)
    to_dem = Transformer.from_crs(crs, dem_crs, always_xy=True)
    back = Transformer.from_crs(dem_crs, crs, always_xy=True)
    xd, yd = (np.asarray(v, dtype=float) for v in to_dem.transform(x, y, errcheck=False))
    bx, by = back.transform([b[0], b[2], b[0], b[2]], [b[1], b[1], b[3], b[3]], errcheck=False)
    if dem_crs == crs:  # one CRS: each extent said once
        text = (f" (the line lies at {_box(x, y)} in {crs.name}; the DEM covers "
                f"{_box([b[0], b[2]], [b[1], b[3]])})")
    else:
        text = (f" (the line lies at {_box(xd, yd)} in the DEM's {dem_crs.name}, {_box(x, y)} "
                f"in {crs.name}; the DEM covers {_box([b[0], b[2]], [b[1], b[3]])}, that is "
                f"{_box(bx, by)} in {crs.name})")
    if not all_out:
        return text
    cause = ""
    ll = CRS.from_epsg(4326)
    lon, lat = Transformer.from_crs(crs, ll, always_xy=True).transform(x, y, errcheck=False)
    swapped = Transformer.from_crs(ll, dem_crs, always_xy=True).transform(lat, lon, errcheck=False)
    if _inside(np.asarray(swapped[0]), np.asarray(swapped[1]), b) > 0.5:
        cause = "; likely cause: longitude and latitude swapped in the centerline file"
    elif crs.utm_zone or getattr(crs, "utm_zone", None):
        zone, north = int(crs.utm_zone[:-1]), crs.utm_zone[-1].upper() == "N"
        for z in range(1, 61):
            if z == zone:
                continue
            other = CRS.from_epsg((32600 if north else 32700) + z)
            tx, ty = Transformer.from_crs(other, dem_crs, always_xy=True).transform(x, y, errcheck=False)
            if _inside(np.asarray(tx), np.asarray(ty), b) > 0.5:
                cause = (f"; likely cause: the coordinates are of UTM zone {z}{'N' if north else 'S'}"
                         f", not zone {crs.utm_zone} as the file says")
                break
    return text + (cause or "; check the CRS the centerline file states")


def accuracy_95(rmse: float) -> float:
    """Half-width (m) of the 95 % band of a DEM with vertical ``rmse`` (m).

    Accuracy_z = 1.96 RMSE_z for normally distributed errors (FGDC-STD-007.3
    NSSDA, 1998; ASPRS Positional Accuracy Standards, 2014).

    >>> accuracy_95(0.15)
    0.294
    """
    return round(1.96 * rmse, 12)


def stage_terrain(project, line, table):
    """The terrain stage: ground elevation (m) at every station, sampled from
    the DEM(s), with the 95 % band of the DEM's vertical accuracy
    (``ground_m, ground_bridged, ground_band_m, ground_source``); returns
    ``(table, notes)``."""
    cfg = project.terrain
    ground = sample_ground(
        list(cfg.dem), table["x"].to_numpy(), table["y"].to_numpy(), line.crs,
        station=table["station_m"].to_numpy(), vertical_unit=cfg.vertical_unit,
        method=cfg.method, max_gap=cfg.max_gap, spacing=project.alignment.spacing,
    )
    rmse = cfg.vertical_accuracy
    notes = []
    if rmse is None:
        kind, rmse = default_vertical_accuracy(ground.cell_size)
        from .display import token

        notes.append(f"terrain.vertical_accuracy not given: {token(rmse, 'length')} RMSE assumed "
                     f"for a {kind} DEM ({token(ground.cell_size, 'length')} cells)")
    names = np.array([Path(str(p)).name for p in cfg.dem] + ["bridged"], dtype=object)
    table = table.assign(ground_m=ground.z, ground_bridged=ground.bridged,
                         ground_band_m=accuracy_95(rmse), ground_source=names[ground.source])
    return table, notes
