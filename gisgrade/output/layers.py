"""Map layers in one GeoPackage (``layers.gpkg``).

Every layer a run has, built once here (in the working CRS) and written by
this module to the GeoPackage, and by :mod:`.geojson` and :mod:`.kml` to
WGS 84; :mod:`.sld` styles them. Field names are plain identifiers
(lower case, digits and ``_``); values in SI with the unit in the name
(``_m``, ``_kpa``, ``_m3_s``, ``_m_s``), a US column beside each with
``[output] units = "US"``; kinds are words; scenarios are a field's value,
never part of a field name.

- ``route``: the whole centerline, one line;
- ``pipe_pieces``: a line per pair of consecutive stations with the pipe,
  and the governing pressure over every scenario (``pressure_kpa``, its
  ``scenario``, ``pressure_class`` and ``colour`` from the shared scale,
  :mod:`.style`);
- ``pipe_pressure``: the same pieces once per scenario (``scenario`` field):
  lowest and highest pressure, HGL, velocity, flow, class and colour;
- ``stations``, ``crossings``, ``fittings``, ``valves``, ``offtakes``,
  ``high_low_points``: points;
- ``findings_points`` (at each finding's worst station) and
  ``findings_lines`` (the route over its station range).

Layers are written in the centerline's CRS, or ``[output] crs``. The
ground-only run (``gisgrade profile``) writes ``route``, ``stations`` and
``crossings`` without the pipe fields.
"""
from __future__ import annotations

import contextlib
import weakref
from pathlib import Path

import numpy as np
import pandas as pd
import shapely
import shapely.ops

from .. import alignment as al
from . import writer
from .style import governing_pressure, scale_of

#: Station kinds: bit flag -> word (``stations.kind`` lists the words).
KIND_WORDS = ((al.VERTEX, "vertex"), (al.CROSSING, "crossing"), (al.END, "end"),
              (al.ZONE, "cover zone edge"), (al.FITTING, "fitting"), (al.OFFTAKE, "offtake"),
              (al.SECTION, "section change"), (al.ELEMENT, "pressure element"))

#: Every layer's geometry type, in writing order.
GEOMETRY = {"route": "LineString", "pipe_pieces": "LineString", "pipe_pressure": "LineString",
            "findings_lines": "LineString", "stations": "Point", "crossings": "Point",
            "fittings": "Point", "valves": "Point", "offtakes": "Point",
            "high_low_points": "Point", "findings_points": "Point"}

_CACHE: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()


def kind_words(kind) -> np.ndarray:
    """Station kind bit flags as words ("regular" when none is set).

    >>> kind_words(np.array([al.REGULAR, al.VERTEX | al.CROSSING])).tolist()
    ['regular', 'vertex, crossing']
    """
    kind = np.asarray(kind, dtype=np.int64)
    codes, at = np.unique(kind, return_inverse=True)  # a few kinds, many stations
    words = [", ".join(w for f, w in KIND_WORDS if c & f) or "regular" for c in codes]
    return np.asarray(words, dtype=object)[at.reshape(kind.shape)]


def _pieces_geometry(t) -> np.ndarray:
    xy = t[["x", "y"]].to_numpy()
    return shapely.linestrings(np.stack([xy[:-1], xy[1:]], axis=1))


def pipe_pieces(result) -> pd.DataFrame:
    """Lines between stations with the pipe and the governing pressure of
    all scenarios: the pressure furthest outside the limits, else the lowest."""
    t, g = result.table, result.grades
    scale = scale_of(result)
    s = t["station_m"].to_numpy()
    cover = t["cover_m"].to_numpy()
    lo = np.minimum(g.pressure_low[:, :-1], g.pressure_low[:, 1:])  # (k, n-1)
    hi = np.maximum(g.pressure_high[:, :-1], g.pressure_high[:, 1:])
    gov = governing_pressure(lo, hi, scale)
    # the scenario whose pressure is worst: furthest below the minimum, else above the maximum
    badness = np.where(gov < scale.min_pressure, scale.min_pressure - gov,
                       np.where(gov > scale.max_pressure, gov - scale.max_pressure,
                                -np.abs(gov - scale.min_pressure) * 1e-9))
    k = np.argmax(badness, axis=0)
    cols = np.arange(len(s) - 1)
    p = gov[k, cols]
    frame = pd.DataFrame({
        "from_station_m": s[:-1], "to_station_m": s[1:], "length_m": np.diff(s),
        "grade_pct": np.diff(t["top_m"].to_numpy()) / np.diff(s) * 100.0,
        "cover_min_m": np.minimum(cover[:-1], cover[1:]),
        "inside_diameter_m": t["inside_diameter_m"].to_numpy()[:-1],
        "pressure_kpa": p / 1e3, "scenario": np.asarray(g.names, dtype=object)[k],
        "pressure_min_kpa": lo.min(axis=0) / 1e3, "pressure_max_kpa": hi.max(axis=0) / 1e3,
        "pressure_class": scale.name(p), "colour": scale.colour(p),
    })
    frame["geometry"] = _pieces_geometry(t)
    return frame


def pipe_pressure(result, pieces=None) -> pd.DataFrame:
    """The pipe pieces once per scenario (``scenario`` a field); ``pieces``:
    the pieces' lines when already made (:func:`pipe_pieces`), shared."""
    t, g = result.table, result.grades
    scale = scale_of(result)
    s = t["station_m"].to_numpy()
    n, k = len(s) - 1, len(g)
    lo = np.minimum(g.pressure_low[:, :-1], g.pressure_low[:, 1:])
    hi = np.maximum(g.pressure_high[:, :-1], g.pressure_high[:, 1:])
    p = governing_pressure(lo, hi, scale).ravel()
    frame = pd.DataFrame({
        "scenario": np.repeat(np.asarray(g.names, dtype=object), n),
        "from_station_m": np.tile(s[:-1], k), "to_station_m": np.tile(s[1:], k),
        "pressure_kpa": p / 1e3, "pressure_min_kpa": lo.ravel() / 1e3,
        "pressure_max_kpa": hi.ravel() / 1e3, "hgl_m": g.hgl[:, :-1].ravel(),
        "velocity_m_s": g.velocity[:, :-1].ravel(), "flow_m3_s": g.flow[:, :-1].ravel(),
        "pressure_class": scale.name(p), "colour": scale.colour(p),
    })
    frame["geometry"] = np.tile(_pieces_geometry(t) if pieces is None else pieces, k)
    return frame


def route(result) -> pd.DataFrame:
    line, t = result.alignment, result.table
    s = t["station_m"].to_numpy()
    row = {"name": result_name(result), "length_m": line.length,
           "geodesic_length_m": line.geodesic_length, "first_station_m": s[0],
           "last_station_m": s[-1]}
    if "inside_diameter_m" in t:
        row["inside_diameter_m"] = float(t["inside_diameter_m"].iloc[0])
        row["outside_diameter_m"] = float(t["outside_diameter_m"].iloc[0])
    frame = pd.DataFrame([row])
    frame["geometry"] = [line.line]
    return frame


def result_name(result) -> str:
    """The project's name: ``[output] name``, else its folder and file."""
    p = result.project
    return p.output.name or f"{p.path.parent.name}/{p.path.stem}"


def station_points(result, display) -> pd.DataFrame:
    t = result.table
    cols = [c for c in ("station_m", "ground_m", "ground_band_m", "top_m", "axis_m",
                        "invert_m", "cover_m", "min_cover_m") if c in t.columns]
    frame = t[cols].copy()
    frame.insert(1, "station", display.station(t["station_m"].to_numpy()))
    frame["kind"] = kind_words(t["kind"].to_numpy())
    if "ground_bridged" in t:
        frame["ground_bridged"] = t["ground_bridged"].astype(bool)
    frame["geometry"] = shapely.points(t["x"].to_numpy(), t["y"].to_numpy())
    return frame


def crossing_points(result, display) -> pd.DataFrame:
    c, t = result.crossings, result.table
    frame = pd.DataFrame({
        "station_m": c.station, "station": display.station(c.station),
        "name": c.name.astype(str), "layer": c.layer.astype(str), "side": c.side.astype(str),
        "angle_deg": c.angle_deg, "bottom_m": c.bottom, "size_m": c.size,
        "clearance_required_m": c.clearance,
        "ground_m": np.interp(c.station, t["station_m"], t["ground_m"]) if len(t) else c.station,
    })
    if result.clearances is not None:  # at the point of the footprint where clearance is least
        frame["governing_station_m"] = result.clearances.station
        frame["top_of_pipe_m"] = result.clearances.top
        frame["clearance_achieved_m"] = result.clearances.achieved
        frame["clearance_met"] = result.clearances.achieved >= c.clearance - 1e-6
    frame["geometry"] = shapely.points(c.x, c.y)
    return frame


def _points(frame, xy_from) -> pd.DataFrame:
    out = frame.drop(columns=[c for c in ("x", "y") if c in frame]).copy()
    out["geometry"] = shapely.points(xy_from["x"].to_numpy(float), xy_from["y"].to_numpy(float))
    return out


def fittings_points(result, display) -> pd.DataFrame:
    from .fittings_csv import fittings_listing

    f = fittings_listing(result, display)
    return _points(f.rename(columns={"k": "loss_coefficient"}), f)


def valve_points(result, display) -> pd.DataFrame:
    v = result.valves
    frame = v.assign(station=display.station(v["station_m"].to_numpy(float)),
                     reason=[display.render(r) for r in v["reason"]])
    return _points(frame[["station_m", "station", "kind", "reason", "top_m", "axis_m",
                          "ground_m", "x", "y"]], v)


def _at(result, station) -> tuple[np.ndarray, np.ndarray]:
    t = result.table
    s = t["station_m"].to_numpy()
    return np.interp(station, s, t["x"].to_numpy()), np.interp(station, s, t["y"].to_numpy())


def offtake_points(result, display) -> pd.DataFrame:
    t = result.table
    q = t["offtake_m3_s"].to_numpy() if "offtake_m3_s" in t else np.zeros(len(t))
    at = q > 0
    s = t["station_m"].to_numpy()[at]
    frame = pd.DataFrame({"station_m": s, "station": display.station(s), "flow_m3_s": q[at],
                          "ground_m": t["ground_m"].to_numpy()[at]})
    frame["geometry"] = shapely.points(t["x"].to_numpy()[at], t["y"].to_numpy()[at])
    return frame


def high_low_points(result, display) -> pd.DataFrame:
    p = result.points
    x, y = _at(result, p["station_m"].to_numpy(float))
    frame = p.assign(station=display.station(p["station_m"].to_numpy(float)))[
        ["station_m", "station", "kind", "elevation_m", "prominence_m", "why"]].copy()
    frame["geometry"] = shapely.points(x, y)
    return frame


def finding_frames(result, display) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The findings as points at the worst station and as the route over the range."""
    from ..findings import by_severity, messages

    f = by_severity(result.findings)
    base = pd.DataFrame({
        "severity": f["severity"].to_numpy(object), "check": f["check"].to_numpy(object),
        "code": f["code"].to_numpy(object), "scenario": f["scenario"].to_numpy(object),
        "from_station_m": f["from_station_m"].to_numpy(float),
        "to_station_m": f["to_station_m"].to_numpy(float),
        "worst_station_m": f["worst_station_m"].to_numpy(float),
        "station": display.station(f["worst_station_m"].to_numpy(float)),
        "worst_value": f["worst_value"].to_numpy(float), "unit": f["unit"].to_numpy(object),
        "message": messages(f, display),
    })
    x, y = _at(result, base["worst_station_m"].to_numpy())
    points = base.assign(geometry=shapely.points(x, y))
    line, s0 = result.alignment.line, result.alignment.start_station
    pieces = [shapely.ops.substring(line, a - s0, b - s0)
              for a, b in zip(base["from_station_m"], base["to_station_m"])]
    is_line = np.array([g.geom_type == "LineString" and g.length > 0 for g in pieces], bool)
    lines = base[is_line].assign(geometry=[g for g, k in zip(pieces, is_line) if k])
    return points, lines


def layer_frames(result, display) -> dict[str, pd.DataFrame]:
    """Every layer of ``result`` (attributes and a ``geometry`` column in the
    working CRS), in :data:`GEOMETRY` order; cached per result and display."""
    key = display.system
    cached = _CACHE.setdefault(result, {})
    if key in cached:
        return cached[key]
    layers = {"route": route(result)}
    if result.grades is not None:
        layers["pipe_pieces"] = pipe_pieces(result)
        layers["pipe_pressure"] = pipe_pressure(result, layers["pipe_pieces"]["geometry"].to_numpy())
    if result.findings is not None:
        layers["findings_points"], layers["findings_lines"] = finding_frames(result, display)
    layers["stations"] = station_points(result, display)
    layers["crossings"] = crossing_points(result, display)
    if result.bends is not None:
        layers["fittings"] = fittings_points(result, display)
    if result.valves is not None:
        layers["valves"] = valve_points(result, display)
    if result.grades is not None:
        layers["offtakes"] = offtake_points(result, display)
    if result.points is not None:
        layers["high_low_points"] = high_low_points(result, display)
    order = [n for n in GEOMETRY if n in layers]
    cached[key] = {n: display.dual(layers[n]) for n in order}  # the geometry stays last
    return cached[key]


def output_crs(result):
    """The CRS the GeoPackage is written in: ``[output] crs``, else the centerline's."""
    import pyproj

    crs = result.project.output.crs
    return pyproj.CRS.from_user_input(crs) if crs else result.alignment.source_crs


def geodataframes(result, display, crs=None) -> dict:
    """:func:`layer_frames` as GeoDataFrames in ``crs`` (default :func:`output_crs`)."""
    import geopandas as gpd

    import pyproj

    target = output_crs(result) if crs is None else pyproj.CRS.from_user_input(crs)
    same = target.is_exact_same(pyproj.CRS.from_user_input(result.alignment.crs))
    out = {}
    for name, frame in layer_frames(result, display).items():  # frames shared, not copied
        gdf = gpd.GeoDataFrame(frame, geometry="geometry", crs=result.alignment.crs, copy=False)
        out[name] = gdf if same else gdf.to_crs(target)
    return out


#: Shapely's geometry type ids -> names (``GeoSeries.geom_type``).
GEOM_TYPES = ("Point", "LineString", "LinearRing", "Polygon", "MultiPoint", "MultiLineString",
              "MultiPolygon", "GeometryCollection")


def arrow_layer(gdf) -> tuple:
    """``(table, kinds)``: a layer's GeoDataFrame as the Arrow table that
    ``pyogrio.write_dataframe(..., use_arrow=True)`` builds to write it
    (geometry as WKB; object columns of mixed values as text, as it does),
    with ``route`` first where there is one, and the geometry types present.
    Columns that hold no value stay of Arrow's null type here, so that
    :func:`gisgrade.routes.merge_parts` gives each the type of the routes
    that have values, as one frame of every route would; :func:`for_gdal`
    makes what is left null text, as pyogrio does."""
    import pandas as pd
    import pyarrow as pa
    import shapely
    from geopandas.array import to_wkb

    geoms = gdf.geometry.values
    ids = np.unique(shapely.get_type_id(np.asarray(geoms)))
    kinds = tuple(sorted(GEOM_TYPES[i] for i in ids if i >= 0))
    arrays = {}
    for name in sorted(gdf.columns, key=lambda c: c != "route"):  # stable: "route" first
        if name == "geometry":  # each column as pyarrow's from_pandas converts it (much faster)
            arrays[name] = pa.array(to_wkb(geoms), from_pandas=True)
            continue
        column = gdf[name]
        if column.dtype == "object" and pd.api.types.infer_dtype(column) != "string":
            try:
                arrays[name] = pa.array(column, from_pandas=True)
                continue
            except pa.ArrowInvalid:
                column = column.astype("string")
        arrays[name] = pa.array(column, from_pandas=True)
    return pa.table(arrays), kinds


def for_gdal(table, kinds):
    """A layer's table (one route's, or every route's merged) as pyogrio
    hands it to GDAL: a field without a value anywhere as text (GDAL takes
    no null type), the geometry as binary, and single and multi geometries
    of one kind in one layer all as multi (what pyogrio does for a
    GeoPackage)."""
    import pyarrow as pa

    for i, f in enumerate(table.schema):
        if pa.types.is_null(f.type):
            table = table.set_column(i, pa.field(f.name, pa.string()), table[i].cast(pa.string()))
    if not (pa.types.is_binary(table.schema.field("geometry").type)
            or pa.types.is_large_binary(table.schema.field("geometry").type)):
        i = table.schema.get_field_index("geometry")
        table = table.set_column(i, pa.field("geometry", pa.binary()), table[i].cast(pa.binary()))
    single = {k for k in kinds if not k.startswith("Multi")}
    if len(kinds) == 2 and len(single) == 1 and f"Multi{next(iter(single))}" in kinds:
        table = _to_multi(table, next(iter(single)))
    return table


def _to_multi(table, single: str):
    """The ``single`` geometries of ``table`` as their multi kind (as pyogrio writes them)."""
    import pyarrow as pa
    import shapely

    geoms = shapely.from_wkb(table.column("geometry").to_numpy(zero_copy_only=False))
    make = {"Point": shapely.multipoints, "LineString": shapely.multilinestrings,
            "Polygon": shapely.multipolygons}[single]
    mask = shapely.get_type_id(geoms) == {"Point": 0, "LineString": 1, "Polygon": 3}[single]
    geoms[mask] = make(np.atleast_2d(geoms[mask]), axis=0)
    i = table.schema.get_field_index("geometry")
    return table.set_column(i, "geometry", pa.array(shapely.to_wkb(geoms), pa.binary()))


def write_gpkg_layer(path, name: str, table, kinds, crs, append: bool, description: str) -> None:
    """Write the Arrow ``table`` (:func:`arrow_layer`) as the layer ``name``
    of the GeoPackage ``path`` (a new file unless ``append``) in ``crs``:
    what ``pyogrio.write_dataframe`` writes of its frame, without the
    frame's trip through pandas' Arrow conversion (a fifth of the file's time
    on a long line)."""
    from pyogrio.raw import write_arrow

    epsg = crs.to_epsg() if crs is not None else None  # as pyogrio names a CRS
    write_arrow(for_gdal(table, kinds), str(path), layer=name, driver="GPKG",
                geometry_name="geometry", geometry_type=GEOMETRY[name], append=append,
                crs=None if crs is None else f"EPSG:{epsg}" if epsg else crs.to_wkt("WKT1_GDAL"),
                layer_metadata={"DESCRIPTION": description})


@contextlib.contextmanager
def unsynced_sqlite():
    """GDAL's SQLite writes (GeoPackage) without a disk sync after each
    transaction (``OGR_SQLITE_SYNCHRONOUS=OFF``), restored afterwards: the file
    is written into the folder being built, which replaces the result only
    when complete (:mod:`.atomic`), as every other output is; a quarter of the
    GeoPackage's time on a long line."""
    import pyogrio

    before = pyogrio.get_gdal_config_option("OGR_SQLITE_SYNCHRONOUS")
    pyogrio.set_gdal_config_options({"OGR_SQLITE_SYNCHRONOUS": "OFF"})
    try:
        yield
    finally:
        pyogrio.set_gdal_config_options({"OGR_SQLITE_SYNCHRONOUS": before})


@writer("layers.gpkg", layer=True)
def write_layers(result, folder: Path, display) -> None:
    from ..cautions import CAUTIONS

    path = folder / "layers.gpkg"
    with unsynced_sqlite():
        for i, (name, gdf) in enumerate(geodataframes(result, display).items()):
            table, kinds = arrow_layer(gdf)
            write_gpkg_layer(path, name, table, kinds, gdf.crs, i > 0,
                             f"gisgrade {name}. CAUTION: {CAUTIONS}")
