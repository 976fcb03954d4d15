"""Alignment: the centerline, its working CRS, and the stations along it.

Reading files and choosing the CRS happen in :func:`read_alignment` and
:func:`locate_crossings` (the edge); the stationing itself is pure numpy
(:func:`station_positions`, :func:`interpolate_xy`, :func:`tangent_angle`).

Stations are horizontal distances along the centerline in a projected CRS
(the *working CRS*). A line drawn in a geographic CRS is projected to the UTM
zone of its centroid, on the line's own datum, and its length is compared with
the geodesic length on the ellipsoid (pyproj.Geod) so the grid-vs-ground
difference is on record.

Station kinds are bit flags (:data:`REGULAR`, :data:`VERTEX`, ...), so a
station can be a vertex and a crossing at once, and later stages can add
kinds (zone boundaries, fittings) without a new column.
"""
from __future__ import annotations

import logging
import math
import re
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pyproj
import shapely
from shapely.geometry import LineString, MultiLineString

from .arrays import STATION_TOLERANCE, station_index  # stations closer than this (m) are one
from .errors import InputError, first_line, some_of

#: Station kind flags.
REGULAR, VERTEX, CROSSING, END, ZONE = 1, 2, 4, 8, 16
#: Hydraulic station kinds: a fitting or valve, an offtake, a pipe-section boundary.
FITTING, OFFTAKE, SECTION = 32, 64, 128
#: A pipe joint (one every joint length from each vertex, fitting and section end).
JOINT = 256
#: A pressure element ([[pressure_elements]]: reducing valve, booster, break tank).
ELEMENT = 512
#: The kinds of station where the pipe may change grade or direction: its
#: joints, the fittings and vertices (each has a joint), and the ends.
KNOTS = JOINT | VERTEX | END | FITTING | OFFTAKE | SECTION

#: Most regular stations a line may get (a guard against a mistyped spacing).
MAX_STATIONS = 5e6


@dataclass(frozen=True)
class Alignment:
    """The centerline in its working CRS, oriented in the direction of flow."""

    line: LineString  # working CRS, flow direction
    crs: pyproj.CRS  # working (projected) CRS
    source_crs: pyproj.CRS
    length: float  # m, in the working CRS
    geodesic_length: float  # m, on the source CRS's ellipsoid
    start_station: float = 0.0  # m, station of the first point
    notes: tuple[str, ...] = field(default=())

    @property
    def coords(self) -> np.ndarray:
        return np.asarray(self.line.coords)[:, :2]

    @property
    def vertex_stations(self) -> np.ndarray:
        return cumulative_length(self.coords)


@dataclass(frozen=True)
class Crossings:
    """Where the centerline crosses other features (columns as arrays)."""

    station: np.ndarray  # m along the line (0 at the first point; the pipeline adds start_station)
    x: np.ndarray
    y: np.ndarray
    bottom: np.ndarray  # m, crossed feature's bottom elevation (DEM datum); nan: from depth
    clearance: np.ndarray  # m, required vertical separation
    angle_deg: np.ndarray  # acute angle between the two lines, degrees
    name: np.ndarray  # str, feature name (or layer key and feature index)
    layer: np.ndarray  # str, project-file key of the crossing layer
    depth: np.ndarray = None  # m, ground to the feature's top (nan: bottom given)
    size: np.ndarray = None  # m, the feature's outside height (nan: unknown)
    side: np.ndarray = None  # str, "under" or "over": how the pipe passes
    width: np.ndarray = None  # m, the feature's outside width in plan (0: a line)
    empty_layers: tuple = ()  # project-file keys of crossing layers holding no feature

    def __post_init__(self):
        n = len(self.station)
        for name, fill in (("depth", np.nan), ("size", np.nan), ("side", "under"), ("width", 0.0)):
            if getattr(self, name) is None:
                dtype = object if isinstance(fill, str) else float
                object.__setattr__(self, name, np.full(n, fill, dtype=dtype))

    @classmethod
    def empty(cls) -> "Crossings":
        f = np.empty(0)
        s = np.empty(0, dtype=object)
        return cls(f, f, f, f, f, f, s, s)

    def resolve(self, ground_at) -> "Crossings":
        """Bottoms from depth below ground where no bottom was given:
        bottom = ground - depth - size (size 0 when unknown)."""
        need = ~np.isfinite(self.bottom)
        if not need.any():
            return self
        size = np.where(np.isfinite(self.size), self.size, 0.0)
        bottom = np.where(need, ground_at(self.station) - self.depth - size, self.bottom)
        return replace(self, bottom=bottom)

    @property
    def top(self) -> np.ndarray:
        """The crossed feature's top (m); nan where its size is unknown."""
        return self.bottom + self.size

    def reach(self) -> np.ndarray:
        """Half the length of centerline over each feature's plan width (m):
        (width / 2) / sin(crossing angle), the angle taken as at least 10 deg.

        >>> c = Crossings(*(np.array([v]) for v in (50.0, 0.0, 0.0, 99.0, 0.3, 30.0)),
        ...               name=np.array(["a"], dtype=object), layer=np.array(["l"], dtype=object),
        ...               width=np.array([0.6]))
        >>> c.reach().round(9).tolist()
        [0.6]
        """
        angle = np.where(np.isfinite(self.angle_deg), self.angle_deg, 90.0)
        return self.width / 2 / np.sin(np.radians(np.clip(angle, 10.0, 90.0)))

    def edges(self) -> tuple[np.ndarray, np.ndarray]:
        """Stations where the pipe enters and leaves each wide feature's
        footprint, and the index of the crossing each belongs to."""
        wide = np.flatnonzero(self.width > 0)
        r = self.reach()[wide]
        return (np.concatenate([self.station[wide] - r, self.station[wide] + r]),
                np.concatenate([wide, wide]))

    def __len__(self) -> int:
        return len(self.station)


# --------------------------------------------------------------------------
# Pure stationing
# --------------------------------------------------------------------------


def cumulative_length(coords: np.ndarray) -> np.ndarray:
    """Distance (m) from the first vertex to each vertex of a polyline.

    >>> cumulative_length(np.array([[0.0, 0.0], [3.0, 4.0], [3.0, 10.0]])).tolist()
    [0.0, 5.0, 11.0]
    """
    seg = np.hypot(*np.diff(coords, axis=0).T)
    return np.concatenate([[0.0], np.cumsum(seg)])


def station_positions(length: float, spacing: float, special=(), tol: float = STATION_TOLERANCE):
    """Stations every ``spacing`` plus the ``special`` ones, and their kinds.

    ``special`` is a sequence of ``(stations, kind_flag)`` pairs (vertices,
    crossings, ...). A regular station within ``tol`` of a special one is
    dropped so the special station keeps its exact value; special stations
    that coincide merge their flags. Returns ``(station, kind)``.

    >>> s, k = station_positions(25.0, 10.0, [(np.array([0.0, 12.0, 25.0]), VERTEX)])
    >>> s.tolist(), k.tolist()
    ([0.0, 10.0, 12.0, 20.0, 25.0], [11, 1, 2, 1, 10])
    """
    regular = np.arange(0.0, length, spacing)
    parts = [np.array([length])]
    flags = [np.array([END])]
    for values, flag in special:
        v = np.clip(np.asarray(values, dtype=float), 0.0, length)
        parts.append(v)
        flags.append(np.full(v.shape, flag))
    sp = np.concatenate(parts)
    sf = np.concatenate(flags)
    order = np.argsort(sp, kind="stable")
    sp, sf = sp[order], sf[order]
    # Drop regular stations that sit on a special one.
    idx = np.searchsorted(sp, regular)
    near_left = np.abs(regular - sp[np.clip(idx - 1, 0, len(sp) - 1)]) <= tol
    near_right = np.abs(sp[np.clip(idx, 0, len(sp) - 1)] - regular) <= tol
    keep = ~(near_left | near_right)
    # Station 0 is always a regular station and an end (the start).
    allv = np.concatenate([sp, regular[keep]])
    allf = np.concatenate([sf, np.full(keep.sum(), REGULAR)])
    order = np.argsort(allv, kind="stable")
    allv, allf = allv[order], allf[order]
    # Merge special stations that coincide within tol: OR their flags.
    group = np.concatenate([[0], np.cumsum(np.diff(allv) > tol)])
    station = allv[np.concatenate([[True], np.diff(group) > 0])]
    kind = np.zeros(len(station), dtype=np.int64)
    np.bitwise_or.at(kind, group, allf)
    kind[0] |= REGULAR | END
    return station, kind


def interpolate_xy(coords: np.ndarray, station: np.ndarray):
    """Planar coordinates of stations along a polyline (exact, piecewise linear).

    >>> x, y = interpolate_xy(np.array([[0.0, 0.0], [3.0, 4.0]]), np.array([0.0, 2.5, 5.0]))
    >>> x.tolist(), y.tolist()
    ([0.0, 1.5, 3.0], [0.0, 2.0, 4.0])
    """
    cum = cumulative_length(coords)
    return np.interp(station, cum, coords[:, 0]), np.interp(station, cum, coords[:, 1])


def tangent_angle(coords: np.ndarray, station: np.ndarray) -> np.ndarray:
    """Direction (radians from +x) of the polyline segment holding each station."""
    cum = cumulative_length(coords)
    seg = np.clip(np.searchsorted(cum, station, side="right") - 1, 0, len(coords) - 2)
    d = coords[seg + 1] - coords[seg]
    return np.arctan2(d[:, 1], d[:, 0])


def crossing_angle(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Acute angle (degrees, 0-90) between directions ``a`` and ``b`` (radians).

    >>> crossing_angle(np.array([0.0]), np.array([np.pi * 0.75])).round(6).tolist()
    [45.0]
    """
    diff = np.abs(np.degrees(a - b)) % 180.0
    return np.minimum(diff, 180.0 - diff)


# --------------------------------------------------------------------------
# Edges: files and CRS
# --------------------------------------------------------------------------


def read_vector(path: Path, key: str, layer=None, where=None, fids=None):
    """Read a GeoJSON/GeoPackage layer as a GeoDataFrame, errors naming the file."""
    import geopandas as gpd

    extra = {"fids": fids} if fids is not None else {}
    try:
        gdf = gpd.read_file(path, layer=layer, where=where, engine="pyogrio", **extra)
    except Exception as exc:  # GDAL raises a variety of errors for bad files or SQL
        said = re.sub(r"'b'([^']*)''", r"'\1'", first_line(exc))  # (a layer name as bytes)
        raise InputError(f"{key}: cannot read {path.name} ({said})") from None
    if not isinstance(gdf, gpd.GeoDataFrame):
        raise InputError(f"{key}: {path.name} holds no geometry")
    if layer is None:
        _say_first_layer(path, key)
    if gdf.crs is None:
        raise InputError(f"{key}: {path.name} has no coordinate reference system")
    gdf = gdf[~(gdf.geometry.isna() | gdf.geometry.is_empty)]
    if len(gdf) and gdf.crs.is_geographic:
        x0, y0, x1, y1 = gdf.total_bounds
        if x0 < -180.5 or x1 > 360.5 or y0 < -90.5 or y1 > 90.5:
            raise InputError(f"{key}: {path.name} is read as {gdf.crs.name} (longitude/latitude) "
                             f"but holds coordinates up to {max(abs(x0), abs(x1)):.0f}, "
                             f"{max(abs(y0), abs(y1)):.0f}: the file does not state its CRS")
    return gdf


_SAID_FIRST_LAYER: set = set()  # (file, key) warned of in this process: once, not a route


def _say_first_layer(path: Path, key: str) -> None:
    """Warn when a file of several layers was read without ``layer``: GDAL
    reads the first, which may not be the one meant (once a file and key in
    a process, however many routes read it)."""
    import pyogrio

    said = (str(Path(path).resolve()), key)
    if said in _SAID_FIRST_LAYER:
        return
    _SAID_FIRST_LAYER.add(said)
    try:
        names = [str(n) for n in pyogrio.list_layers(path)[:, 0]]
    except Exception:  # (read a moment ago; nothing more to say then)
        return
    if len(names) > 1:
        logging.getLogger("gisgrade").warning(
            f"warning: {key}: {path.name} holds {len(names)} layers ({some_of(names, 5)}); the first, "
            f"{names[0]!r}, was read: name the one meant with {key.rsplit('.', 1)[0]}.layer")


def require_lines(gdf, key: str, path: Path) -> None:
    """Crossed features must be lines: a point or polygon cannot be crossed at one place."""
    kinds = set(gdf.geom_type)
    bad = sorted(kinds - {"LineString", "MultiLineString"})
    if bad:
        raise InputError(f"{key}: {path.name} holds {bad[0]} features; crossed features must be "
                         "lines (LineString)")


#: Largest grid-vs-geodesic length difference accepted from the line's own
#: projected CRS; beyond it (e.g. Web Mercator away from the equator) the line
#: is stationed in UTM instead. UTM itself stays within -0.04 %..+0.1 % [DMA
#: TM 8358.2], so 0.5 % only turns away projections not meant for distances.
MAX_SCALE_ERROR = 0.005


def metres_per_unit(crs: pyproj.CRS) -> float:
    """Metres per horizontal unit of a projected CRS (1 for metres).

    >>> metres_per_unit(pyproj.CRS("EPSG:2227"))  # a state plane zone in US survey feet
    0.30480060960121924
    """
    return float(crs.axis_info[0].unit_conversion_factor) if crs.axis_info else 1.0


def working_crs(crs: pyproj.CRS, lon: float, lat: float, scale_error: float = 0.0) -> pyproj.CRS:
    """A projected CRS in metres for stationing.

    ``crs`` itself if it is projected, in metres, and its grid length differs
    from the geodesic length by at most :data:`MAX_SCALE_ERROR`
    (``scale_error``); otherwise the UTM zone holding (lon, lat) on the same
    datum (WGS 84 zones as fallback). A line in feet is therefore stationed
    in UTM metres, not in feet read as metres.
    """
    if crs.is_projected and abs(scale_error) <= MAX_SCALE_ERROR:
        return crs if metres_per_unit(crs) == 1.0 else in_metres(crs)
    from pyproj.aoi import AreaOfInterest
    from pyproj.database import query_utm_crs_info

    aoi = AreaOfInterest(lon, lat, lon, lat)
    geodetic = crs.geodetic_crs
    # The database knows a datum by its short name ("NAD83"), not always by its
    # long one ("North American Datum 1983"): try both, then WGS 84.
    tried = [geodetic.name if geodetic is not None else None,
             crs.datum.name if crs.datum is not None else None, "WGS 84"]
    for name in dict.fromkeys(n for n in tried if n):
        try:
            infos = query_utm_crs_info(datum_name=name, area_of_interest=aoi)
        except Exception:  # unknown datum name in the database
            infos = []
        if infos:
            return pyproj.CRS.from_authority(infos[0].auth_name, infos[0].code)
    zone = int((lon + 180.0) // 6.0) % 60 + 1
    return pyproj.CRS.from_epsg((32600 if lat >= 0 else 32700) + zone)


def in_metres(crs: pyproj.CRS) -> pyproj.CRS:
    """The projected ``crs`` (e.g. a State Plane zone in US survey feet) with its
    axes in metres: the same datum, projection and grid, coordinates x 0.3048...

    >>> m = in_metres(pyproj.CRS("EPSG:2229"))
    >>> metres_per_unit(m), m.datum.name
    (1.0, 'North American Datum 1983')
    """
    doc = crs.to_json_dict()
    for axis in doc["coordinate_system"]["axis"]:
        axis["unit"] = "metre"
    doc.pop("id", None)
    doc["name"] = f"{doc['name']} (metres)"
    return pyproj.CRS.from_json_dict(doc)


class PartsApart(InputError):
    """Parts of a line that do not touch (:func:`merge_parts`): ``part`` (from
    1) does not touch the one before it; ``gap`` says how wide and where."""

    def __init__(self, message: str, part: int, gap: str):
        super().__init__(message)
        self.part, self.gap = part, gap


def merge_parts(geom, key: str, file: str, distance=None, unit="CRS units") -> LineString:
    """One LineString from a (Multi)LineString whose parts touch end to end.

    Parts are joined in the order given (a part may be reversed to meet its
    neighbour). Parts that do not touch are an input error naming where the
    gap is and how wide it is; ``distance(a, b)`` measures it (planar by
    default, in ``unit``).
    """
    if isinstance(geom, LineString):
        return geom
    if not isinstance(geom, MultiLineString):
        raise InputError(f"{key}: {file} holds a {geom.geom_type}, expected a LineString")
    distance = distance or (lambda a, b: float(np.hypot(*(a - b))))
    parts = [np.asarray(p.coords)[:, :2] for p in geom.geoms if not p.is_empty]
    line = parts[0]
    scale = max(1.0, float(np.abs(np.vstack(parts)).max()))
    for i, part in enumerate(parts[1:], start=1):
        # (end of the line so far, end of the part, flip line?, flip part?)
        ends = [(line[-1], part[0], False, False), (line[-1], part[-1], False, True),
                (line[0], part[0], True, False), (line[0], part[-1], True, True)]
        if i > 1:  # only the first part may be flipped to meet the second
            ends = ends[:2]
        planar = [float(np.hypot(*(a - b))) for a, b, _, _ in ends]
        j = int(np.argmin(planar))
        a, b, flip_line, flip_part = ends[j]
        if planar[j] > 1e-9 * scale:
            mid = (a + b) / 2
            gap = f"(gap of {distance(a, b):.3f} {unit} at {mid[0]:.6f}, {mid[1]:.6f})"
            raise PartsApart(f"{key}: {file}: part {i + 1} of the multipart line does not touch "
                             f"part {i} {gap}", i + 1, gap)
        if flip_line:
            line = line[::-1]
        if flip_part:
            part = part[::-1]
        line = np.vstack([line, part[1:]])
    return LineString(line)


def read_chosen(path: Path, key: str, *, layer=None, where=None, feature=None):
    """:func:`read_vector` of the features ``where`` (an attribute filter) or
    ``feature`` (a feature id) leave; none left is an input error naming the
    filter."""
    gdf = read_vector(path, key, layer=layer, where=where,
                      fids=None if feature is None else [feature])
    if len(gdf) == 0:
        chosen = (f" matching alignment.where = {where!r}" if where else
                  f" with alignment.feature = {feature}" if feature is not None else "")
        raise InputError(f"{key}: {path.name} holds no line feature{chosen}")
    return gdf


def read_alignment(path: Path, *, layer=None, reverse=False, where=None, feature=None,
                   start_station=0.0, key="alignment.path") -> Alignment:
    """Read the centerline and put it in its working CRS, in flow direction.

    One feature is expected; ``where`` (an attribute filter) or ``feature``
    (a feature id) picks one from a layer of several routes. If several
    remain and they join end to end into one line, they are merged (noted);
    otherwise the user must pick one (an input error says how many there are).
    """
    gdf = read_chosen(path, key, layer=layer, where=where, feature=feature)
    return align_frame(gdf, path.name, reverse=reverse, start_station=start_station, key=key)


def align_frame(gdf, name: str, *, reverse=False, start_station=0.0,
                key="alignment.path") -> Alignment:
    """The centerline of the features of ``gdf`` (a GeoDataFrame read from
    the file ``name``, one route), in its working CRS and flow direction:
    :func:`read_alignment` after the reading, and each route of a
    ``routes`` run."""
    path = Path(name)
    kinds = sorted(set(gdf.geom_type) - {"LineString", "MultiLineString"})
    if kinds:
        raise InputError(f"{key}: {path.name} holds {kinds[0]} features; the centerline must be "
                         "a line (LineString)")
    notes = []
    geom = gdf.geometry.iloc[0]
    if len(gdf) > 1:  # joined in feature order: the first feature's free end is the start
        geom = MultiLineString(list(shapely.get_parts(gdf.geometry.values)))
    src = pyproj.CRS.from_user_input(gdf.crs)
    geo = src.geodetic_crs or pyproj.CRS.from_epsg(4326)
    to_geo = pyproj.Transformer.from_crs(src, geo, always_xy=True)
    geod = geo.get_geod() or pyproj.Geod(ellps="WGS84")

    def metres(a, b):  # geodesic distance between two points in the source CRS
        lon, lat = to_geo.transform([a[0], b[0]], [a[1], b[1]])
        return float(geod.line_length(lon, lat))

    try:
        line = merge_parts(geom, key, path.name, metres, "m")
    except InputError as exc:
        if len(gdf) == 1:
            raise
        # a route of `gisgrade routes` says which route and how to mend it (attrs["route"])
        route = gdf.attrs.get("route")
        gap = (f": line {exc.part} does not meet line {exc.part - 1} {exc.gap}"
               if isinstance(exc, PartsApart) else "")
        hint = (f" ({gdf.attrs.get('field')} = {route!r}); give each route its own name or join "
                "the lines" if route is not None else
                "; choose one with alignment.where (an attribute filter) or alignment.feature "
                "(a feature id)")
        raise InputError(f"{key}: {path.name} holds {len(gdf)} separate lines that do not join "
                         f"end to end{gap}{hint}") from exc
    if len(gdf) > 1:
        a, b = np.asarray(line.coords)[[0, -1], :2]
        notes.append(f"{len(gdf)} features in {path.name} joined end to end in file order, from "
                     f"({a[0]:.6g}, {a[1]:.6g}) to ({b[0]:.6g}, {b[1]:.6g})")
    if line.length == 0:
        raise InputError(f"{key}: {path.name}: the centerline has zero length")
    coords = np.asarray(line.coords)[:, :2]
    lon, lat = to_geo.transform(coords[:, 0], coords[:, 1])
    geodesic = float(geod.line_length(lon, lat))
    if geodesic < STATION_TOLERANCE:  # (its two ends would be one station)
        raise InputError(f"{key}: {path.name}: the centerline is {geodesic * 1000:.2g} mm long; "
                         f"stations closer than {STATION_TOLERANCE * 1000:g} mm are one, so a line "
                         "must be longer")

    scale_error = 0.0
    if src.is_projected:
        grid = float(np.hypot(*np.diff(coords, axis=0).T).sum()) * metres_per_unit(src)
        scale_error = grid / geodesic - 1.0 if geodesic > 0 else 0.0
    work = working_crs(src, float(np.mean(lon)), float(np.mean(lat)), scale_error)
    if work != src:
        fwd = pyproj.Transformer.from_crs(src, work, always_xy=True)
        x, y = fwd.transform(coords[:, 0], coords[:, 1])
        coords = np.column_stack([x, y])
        why = ("is geographic" if not src.is_projected else
               f"is in {src.axis_info[0].unit_name}" if metres_per_unit(src) != 1.0 else
               f"stretches lengths by {scale_error * 100:+.2f} % here")
        notes.append(f"centerline CRS {src.name} {why}; stationed in {work.name}")
    if reverse:
        coords = coords[::-1]
        notes.append("centerline reversed (alignment.reverse = true): flow runs against the digitized direction")
    if not np.all(np.isfinite(coords)):
        raise InputError(f"{key}: {path.name}: coordinates do not transform to {work.name}")
    line = LineString(coords)
    length = float(line.length)
    check_route_shape(coords, key, path.name)
    from .display import token

    notes.append(  # quantities as tokens: the summary shows them in the reader's units
        f"length {token(length, 'length', 2)} in {work.name} vs {token(geodesic, 'length', 2)} "
        f"geodesic ({(length - geodesic) / geodesic * 100:+.3f} %)"
    )
    return Alignment(line, work, src, length, geodesic, start_station, tuple(notes))


#: Cosine of the turn beyond which a vertex turns back on the line (a spike, a retraced leg).
_BACK = math.cos(math.radians(170.0))


def check_route_shape(coords: np.ndarray, key: str, file: str) -> None:
    """Refuse a centerline that closes into a ring, turns back on itself (a
    spike or a retraced leg: a vertex turning more than 170 deg) or crosses
    itself (a loop): a main runs from one end to the other once.

    >>> check_route_shape(np.array([[0.0, 0], [10, 0], [10, 10], [0, 10], [0, 0]]), "k", "f")
    Traceback (most recent call last):
    ...
    gisgrade.errors.InputError: k: f: the centerline closes into a ring (it ends where it starts); a main runs from one end to the other
    """
    seg = np.diff(coords, axis=0)
    size = float(np.hypot(*seg.T).sum())
    if np.hypot(*(coords[-1] - coords[0])) <= 1e-6 * max(size, 1.0):
        raise InputError(f"{key}: {file}: the centerline closes into a ring (it ends where it "
                         "starts); a main runs from one end to the other")
    seg = seg[np.hypot(*seg.T) > 0]
    if len(seg) >= 2:
        a, b = seg[:-1], seg[1:]
        cos = (a * b).sum(axis=1) / (np.hypot(*a.T) * np.hypot(*b.T))
        back = np.flatnonzero(cos < _BACK)
        if back.size:
            x, y = coords[1:][back[0]] if len(seg) == len(coords) - 1 else (np.nan, np.nan)
            raise InputError(f"{key}: {file}: the centerline turns back on itself at "
                             f"({x:.2f}, {y:.2f}) (a spike or a retraced leg); draw it once, "
                             "from one end to the other")
    line = LineString(coords)
    if not line.is_simple:
        import shapely.ops

        pieces = shapely.get_parts(shapely.ops.unary_union(line))
        ends = shapely.get_coordinates(shapely.boundary(pieces))
        counts = {}
        for x, y in map(tuple, np.round(ends, 6)):
            counts[(x, y)] = counts.get((x, y), 0) + 1
        at = next(((x, y) for (x, y), n in counts.items()
                   if n > 2 and (x, y) not in {tuple(np.round(coords[0], 6)), tuple(np.round(coords[-1], 6))}),
                  None)
        where = f" at ({at[0]:.2f}, {at[1]:.2f})" if at else ""
        raise InputError(f"{key}: {file}: the centerline crosses or runs over itself{where} (a "
                         "loop or a retraced stretch); draw it once, from one end to the other")


def _field_values(gdf, cfg_key: str, field: str | None, factor: float, path: Path):
    """A numeric attribute as metres (nan where absent), errors naming the key:
    a value of the wrong kind (true/false, text such as "3.0 m") is refused
    with its feature, never read as 1 or as missing."""
    if field is None:
        return np.full(len(gdf), np.nan)
    if field not in gdf.columns:
        have = ", ".join(c for c in gdf.columns if c != "geometry")
        raise InputError(f"{cfg_key} = {field!r}: no such attribute in {path.name} (has {have})")
    import pandas as pd

    column = gdf[field]
    given = column.notna().to_numpy()
    kinds = np.array([isinstance(v, (bool, np.bool_)) for v in column], dtype=bool)
    if pd.api.types.is_bool_dtype(column) or kinds.any():
        i = int(np.flatnonzero(kinds)[0]) if kinds.any() else 0
        raise InputError(f"{cfg_key} = {field!r}: feature {i} of {path.name} holds "
                         f"{_shown(column.iloc[i])}, a true/false value, not a number")
    values = pd.to_numeric(column, errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(given & np.isnan(values))
    if bad.size:
        i = int(bad[0])
        raise InputError(f"{cfg_key} = {field!r}: feature {i} of {path.name} holds "
                         f"{_shown(column.iloc[i])}, not a number; give numbers in the attribute "
                         "and their unit in field_unit")
    return values * factor


def feature_names(gdf, stem: str) -> np.ndarray:
    """Each feature's ``name`` as one line of text: white space (a newline)
    folded to single spaces; a null or empty name as ``<stem>#<i>``.

    >>> import pandas as pd
    >>> feature_names(pd.DataFrame({"name": ["Mill  leat", None, "", "a\\nb", 12]}), "x").tolist()
    ['Mill leat', 'x#1', 'x#2', 'a b', '12']
    """
    fallback = np.array([f"{stem}#{i}" for i in range(len(gdf))], dtype=object)
    if "name" not in gdf.columns:
        return fallback
    raw = gdf["name"]
    text = np.array([" ".join(str(v).split()) for v in raw], dtype=object)
    missing = raw.isna().to_numpy() | (text == "")
    return np.where(missing, fallback, text)


def path_name(path: Path, i: int) -> str:
    """``feature i of FILE``, for messages."""
    return f"feature {i} of {path.name}"


def _shown(value) -> str:
    """An attribute value for a message: plain Python, 'empty' for a missing one."""
    import pandas as pd

    if pd.isna(value):
        return "empty"
    return repr(value.item() if hasattr(value, "item") else value)


def locate_crossings(alignment: Alignment, layers, vertical_factor: float = 1.0) -> Crossings:
    """Find where each crossing layer's features cross the centerline.

    ``layers`` are :class:`~gisgrade.project.CrossingLayerConfig`. The crossed
    feature's bottom elevation comes from ``bottom_field``, or later from
    ``depth_field`` (ground to its top) plus its size (see
    :meth:`Crossings.resolve`). Attribute values are in the layer's
    ``field_unit`` (default: the DEM's vertical unit, ``vertical_factor``
    metres each). A feature crossed twice gives two crossings; a feature
    that does not reach the line is skipped.
    """
    rows, empty = [], []
    coords = alignment.coords
    for cfg in layers:
        gdf = read_vector(cfg.path, f"{cfg.key}.path", layer=cfg.layer)
        if len(gdf) == 0:  # said as a warning by stage_alignment, not refused, not silent
            empty.append(cfg.key)
            continue
        require_lines(gdf, f"{cfg.key}.path", cfg.path)
        factor = cfg.field_factor if cfg.field_factor is not None else vertical_factor
        bottom = _field_values(gdf, f"{cfg.key}.bottom_field", cfg.bottom_field, factor, cfg.path)
        depth = _field_values(gdf, f"{cfg.key}.depth_field", cfg.depth_field, factor, cfg.path)
        size = _field_values(gdf, f"{cfg.key}.size_field", cfg.size_field, factor, cfg.path)
        if cfg.size is not None:
            size = np.where(np.isfinite(size), size, cfg.size)
        width = _field_values(gdf, f"{cfg.key}.width_field", cfg.width_field, factor, cfg.path)
        if cfg.width is not None:
            width = np.where(np.isfinite(width), width, cfg.width)
        width = np.where(np.isfinite(width), width, np.where(np.isfinite(size), size, 0.0))
        gdf = gdf.to_crs(alignment.crs)
        geoms = gdf.geometry.values
        hits = shapely.intersection(geoms, alignment.line)
        names = feature_names(gdf, cfg.path.stem)
        used = cfg.bottom_field or cfg.depth_field
        for i, hit in enumerate(hits):
            if hit.is_empty:
                continue
            along = sum(g.length for g in shapely.get_parts(hit) if g.geom_type == "LineString")
            if along > 1e-3:
                name = gdf["name"].iloc[i] if "name" in gdf.columns else f"feature {i}"
                raise InputError(f"{cfg.key}: {name} ({path_name(cfg.path, i)}) runs along the "
                                 f"centerline for {along:.1f} m instead of crossing it; a crossed "
                                 "feature must cross the line")
            points = shapely.get_parts(shapely.extract_unique_points(hit))
            if len(points) == 0:
                continue
            value = bottom[i] if cfg.bottom_field else depth[i]
            if not math.isfinite(value):
                raise InputError(
                    f"{cfg.key}: feature {i} of {cfg.path.name} crosses the line but its "
                    f"{used!r} is {_shown(gdf[used].iloc[i])}"
                )
            if cfg.side == "over" and not math.isfinite(size[i]) and cfg.depth_field is None:
                raise InputError(
                    f"{cfg.key}.side = \"over\": feature {i} of {cfg.path.name} needs its size "
                    f"(size_field or size) to place the pipe above it"
                )
            feat = np.asarray(shapely.get_coordinates(geoms[i]))
            s_line = shapely.line_locate_point(alignment.line, points)
            if isinstance(geoms[i], LineString) and len(feat) >= 2:
                s_feat = shapely.line_locate_point(geoms[i], points)
                angle = crossing_angle(tangent_angle(coords, s_line), tangent_angle(feat, s_feat))
            else:
                angle = np.full(len(points), np.nan)
            name = names[i]
            xy = shapely.get_coordinates(points)
            for k in range(len(points)):
                rows.append((s_line[k], xy[k, 0], xy[k, 1], bottom[i], cfg.clearance, angle[k],
                             name, cfg.key, depth[i], size[i], cfg.side, width[i]))
    if not rows:
        return replace(Crossings.empty(), empty_layers=tuple(empty))
    rows.sort(key=lambda r: r[0])
    cols = list(zip(*rows))
    f = [np.asarray(c, dtype=float) if i not in (6, 7, 10) else None for i, c in enumerate(cols)]
    return Crossings(f[0], f[1], f[2], f[3], f[4], f[5],
                     name=np.asarray(cols[6], dtype=object), layer=np.asarray(cols[7], dtype=object),
                     depth=f[8], size=f[9], side=np.asarray(cols[10], dtype=object), width=f[11],
                     empty_layers=tuple(empty))


@dataclass(frozen=True)
class CoverZones:
    """Stretches of the line inside cover zones (one row per stretch)."""

    start: np.ndarray  # m along the line
    end: np.ndarray  # m
    minimum: np.ndarray  # m cover inside the stretch (nan: the line's own)
    maximum: np.ndarray  # m (nan: the line's own)
    name: np.ndarray  # str
    layer: np.ndarray = None  # str, project-file key of the zone layer

    @classmethod
    def empty(cls) -> "CoverZones":
        f = np.empty(0)
        return cls(f, f, f, f, np.empty(0, dtype=object), np.empty(0, dtype=object))

    def __len__(self) -> int:
        return len(self.start)

    @property
    def boundaries(self) -> np.ndarray:
        return np.concatenate([self.start, self.end])


def locate_zones(alignment: Alignment, layers) -> CoverZones:
    """Where the centerline runs inside each cover-zone polygon.

    ``layers`` are :class:`~gisgrade.project.CoverZoneConfig`: a polygon
    layer with minimum/maximum cover from the project file or from
    attributes. Each piece of the line inside a polygon is one stretch.
    """
    rows = []
    for cfg in layers:
        gdf = read_vector(cfg.path, f"{cfg.key}.path", layer=cfg.layer)
        polys = gdf.geom_type.isin(["Polygon", "MultiPolygon"]).to_numpy()
        if not polys.all():
            bad = gdf.geom_type.iloc[int(np.argmin(polys))]
            raise InputError(f"{cfg.key}.path: {cfg.path.name} holds a {bad}; zones are polygons")
        mins = _field_values(gdf, f"{cfg.key}.minimum_field", cfg.minimum_field, cfg.field_factor,
                             cfg.path)
        maxs = _field_values(gdf, f"{cfg.key}.maximum_field", cfg.maximum_field, cfg.field_factor,
                             cfg.path)
        if cfg.minimum is not None:
            mins = np.where(np.isfinite(mins), mins, cfg.minimum)
        if cfg.maximum is not None:
            maxs = np.where(np.isfinite(maxs), maxs, cfg.maximum)
        gdf = gdf.to_crs(alignment.crs)
        names = feature_names(gdf, cfg.path.stem)
        inside = shapely.intersection(alignment.line, gdf.geometry.values)
        for i, piece in enumerate(inside):
            for part in shapely.get_parts(shapely.line_merge(piece) if not piece.is_empty else piece):
                if part.geom_type != "LineString" or part.length == 0:
                    continue
                ends = shapely.line_locate_point(alignment.line, shapely.points(
                    np.asarray(part.coords)[[0, -1], :2]))
                name = names[i]
                rows.append((float(ends.min()), float(ends.max()), mins[i], maxs[i], name,
                             cfg.key))
    if not rows:
        return CoverZones.empty()
    rows.sort()
    cols = list(zip(*rows))
    return CoverZones(*(np.asarray(c, dtype=float) for c in cols[:4]),
                      name=np.asarray(cols[4], dtype=object), layer=np.asarray(cols[5], dtype=object))


def zone_cover(station, zones: CoverZones, minimum: float, maximum: float | None):
    """Minimum and maximum cover at each station (m).

    Inside a zone its values replace the line's own; where zones overlap, and
    at a zone's boundary stations, the stricter value holds (the larger
    minimum, the smaller maximum).

    >>> z = CoverZones(np.array([10.0]), np.array([20.0]), np.array([1.8]), np.array([np.nan]),
    ...                np.array(["road"], dtype=object))
    >>> lo, hi = zone_cover(np.array([0.0, 10.0, 15.0, 20.0, 30.0]), z, 1.2, 3.0)
    >>> lo.tolist(), hi.tolist()
    ([1.2, 1.8, 1.8, 1.8, 1.2], [3.0, 3.0, 3.0, 3.0, 3.0])
    """
    station = np.asarray(station, dtype=float)
    top = np.inf if maximum is None else maximum
    if not len(zones):
        return np.full(station.shape, minimum), np.full(station.shape, top)
    tol = STATION_TOLERANCE
    inside = (station[:, None] >= zones.start - tol) & (station[:, None] <= zones.end + tol)
    edge = (np.abs(station[:, None] - zones.start) <= tol) | (np.abs(station[:, None] - zones.end) <= tol)
    zmin = np.where(np.isfinite(zones.minimum), zones.minimum, minimum)
    zmax = np.where(np.isfinite(zones.maximum), zones.maximum, top)
    lo = np.where(inside, zmin, -np.inf).max(axis=1)
    hi = np.where(inside, zmax, np.inf).min(axis=1)
    any_in = inside.any(axis=1)
    on_edge = edge.any(axis=1)
    lo = np.where(any_in, np.where(on_edge, np.maximum(lo, minimum), lo), minimum)
    hi = np.where(any_in, np.where(on_edge, np.minimum(hi, top), hi), top)
    return lo, hi


def stations(alignment: Alignment, spacing: float, crossings: Crossings,
             zones: CoverZones | None = None, extra=()):
    """Station, x, y and kind flags for the whole line (pure given the inputs).

    ``extra`` is more ``(stations, flag)`` pairs (fittings, offtakes, ...).
    """
    if alignment.length / spacing > MAX_STATIONS:
        raise InputError(f"alignment.spacing = {spacing:g} m gives {alignment.length / spacing:.3g} "
                         f"stations on {alignment.length:.0f} m; more than {MAX_STATIONS:.0e} is "
                         "not a planning profile")
    special = [(alignment.vertex_stations, VERTEX), *extra]
    if len(crossings):
        special.append((crossings.station, CROSSING))
        inside = (crossings.edges()[0] > 0) & (crossings.edges()[0] < alignment.length)
        special.append((crossings.edges()[0][inside], CROSSING))
    if zones is not None and len(zones):
        special.append((zones.boundaries, ZONE))
    s, kind = station_positions(alignment.length, spacing, special)
    x, y = interpolate_xy(alignment.coords, s)
    return s, x, y, kind


def locate_points(alignment: Alignment, path: Path, key: str, layer=None):
    """Snap a point layer onto the centerline.

    Returns ``(gdf, station, offset)``: the layer's features (in the working
    CRS), each point's station from the line's first point (by
    ``line_locate_point``) and its distance from the line (m).
    """
    gdf = read_vector(path, key, layer=layer).to_crs(alignment.crs)
    kinds = set(gdf.geometry.geom_type)
    if kinds - {"Point"}:
        raise InputError(f"{key}: {path.name} must hold points, found {', '.join(sorted(kinds))}")
    pts = gdf.geometry.values
    return gdf, shapely.line_locate_point(alignment.line, pts), shapely.distance(alignment.line, pts)


def format_station(station_m, units: str = "SI", decimals: int = 2) -> np.ndarray:
    """Station labels in the trade's formats.

    SI: kilometres + metres (``1+250.00``); US: hundreds of feet + feet
    (``12+50.00``). Negative stations get a leading minus.

    >>> format_station([0.0, 1250.0, 12.346]).tolist()
    ['0+000.00', '1+250.00', '0+012.35']
    >>> format_station([381.0], "US").tolist()
    ['12+50.00']
    >>> format_station([1500.0], decimals=0).tolist()
    ['1+500']
    >>> format_station([-12.5, -0.004]).tolist()
    ['-0+012.50', '0+000.00']
    """
    s = np.asarray(station_m, dtype=float)
    if str(units).upper() == "US":
        value, unit, width = s / 0.3048, 100, 2
    else:
        value, unit, width = s, 1000, 3
    scale = 10 ** decimals
    ticks = np.round(np.abs(value) * scale).astype(np.int64)
    major, minor = np.divmod(ticks, unit * scale)
    if s.size == 0:
        return np.asarray([], dtype=object)
    # built a column at a time (numpy.strings), not a string a station
    strs = np.strings
    sign = np.where((value < 0) & (ticks > 0), "-", "")
    whole, frac = np.divmod(minor, scale)
    out = strs.add(strs.add(sign, major.astype(str)),
                   strs.add("+", strs.zfill(whole.astype(str), width)))
    if decimals:
        out = strs.add(strs.add(out, "."), strs.zfill(frac.astype(str), decimals))
    return out.astype(object)


def stage_alignment(project, frame=None):
    """The alignment stage: the centerline in its working CRS, the crossings
    and cover zones located on it, and the station table (``station_m, x, y,
    kind``, the cover limits per station, and point-layer offtakes as
    ``offtake_m3_s``). Returns ``(line, crossings, table)``. ``frame``: the
    route's features already read (a GeoDataFrame, one route of ``routes``)
    in place of the ``[alignment]`` file. With ``[alignment] route_field``
    and no ``frame``, the layer (after ``where`` / ``feature``) must hold one
    route by that field; several are refused (:func:`~gisgrade.routes.several_routes`)."""
    import pandas as pd

    from .pipe import special_stations
    from .terrain import vertical_unit_factor

    cfg = project.alignment
    if frame is None and cfg.route_field is not None:  # a layer of routes: one must be picked
        from .routes import the_one_route

        frame = the_one_route(project)
    if frame is None:
        line = read_alignment(cfg.path, layer=cfg.layer, reverse=cfg.reverse, where=cfg.where,
                              feature=cfg.feature, start_station=cfg.start_station)
    else:
        line = align_frame(frame, cfg.path.name, reverse=cfg.reverse,
                           start_station=cfg.start_station)
    crossings = locate_crossings(line, project.crossings,
                                 vertical_unit_factor(project.terrain.vertical_unit))
    zones = locate_zones(line, project.cover_zones)
    extra, located, line = special_stations(project, line, crossings.station)
    s, x, y, kind = stations(line, cfg.spacing, crossings, zones, extra)
    offset = line.start_station
    table = pd.DataFrame({"station_m": s + offset, "x": x, "y": y, "kind": kind})
    if project.cover is not None:
        lo, hi = zone_cover(s, zones, project.cover.minimum, project.cover.maximum)
        table["min_cover_m"], table["max_cover_m"] = lo, hi
    if located is not None:  # offtakes from point layers (flows in m3/s)
        at = station_index(table["station_m"].to_numpy(), located[0], "offtakes")
        table["offtake_m3_s"] = np.bincount(at, weights=located[1], minlength=len(table))
    crossings = replace(crossings, station=crossings.station + offset)
    hit = set(crossings.layer) | set(zones.layer)
    empty = set(crossings.empty_layers)
    missed = tuple(f"{c.key}: {c.path.name} holds no features: no crossing is taken "
                   "from it (check the file and its layer)" if c.key in empty else
                   f"{c.key}: no feature of {c.path.name} meets the centerline"
                   for c in (*project.crossings, *project.cover_zones) if c.key not in hit)
    for m in missed:
        if "holds no features" in m:  # on stderr too: an empty layer is likely a mistake
            logging.getLogger("gisgrade").warning(f"warning: {m}")
    if missed:
        line = replace(line, notes=line.notes + missed)
    return line, crossings, table
