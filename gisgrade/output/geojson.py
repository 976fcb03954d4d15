"""``geojson/``: every layer of ``layers.gpkg`` as a GeoJSON file (thinned), for
people without a GIS (a web map or a text editor opens them).

Each ``geojson/<layer>.geojson`` is one FeatureCollection per RFC 7946 [1]_
(the pipe's pieces merged into runs of one pressure class, see
:func:`class_runs`; the stations thinned to those a web map needs, see
:func:`web_stations`):
WGS 84 longitude, latitude (no ``crs`` member), written by GDAL's GeoJSON
driver in its RFC 7946 mode. Each feature carries its style after the open
*simplestyle* convention [2]_ (``stroke``, ``stroke-width``,
``stroke-opacity`` on lines; ``marker-color``, ``marker-size`` and
``marker-symbol`` on points), from the shared scale and symbols of
:mod:`.style`.

.. [1] H. Butler et al., RFC 7946, The GeoJSON Format, IETF, 2016.
.. [2] simplestyle-spec, version 1.1.0 (an open convention for styling
   GeoJSON features by their properties).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from . import writer
from .style import FINDING_LINE, FINDINGS, PIPE_WIDTH, POINTS, ROUTE, VALVES

#: simplestyle marker sizes by our symbol size (px).
def _marker_size(px: float) -> str:
    return "small" if px < 9 else "medium" if px < 13 else "large"


def simplestyle(name: str, frame):
    """The simplestyle columns of layer ``name`` (a dict of column -> values)."""
    n = len(frame)
    if name in ("pipe_pieces", "pipe_pressure"):
        return {"stroke": frame["colour"].to_numpy(object), "stroke-width": np.full(n, PIPE_WIDTH),
                "stroke-opacity": np.full(n, 1.0)}
    if name == "route":
        return {"stroke": [ROUTE[0]] * n, "stroke-width": [ROUTE[1]] * n, "stroke-opacity": [0.6] * n}
    if name == "findings_lines":
        sev = frame["severity"]
        return {"stroke": [FINDING_LINE[s][0] for s in sev],
                "stroke-width": [FINDING_LINE[s][1] for s in sev], "stroke-opacity": [0.55] * n}
    by = {"valves": ("kind", VALVES), "findings_points": ("severity", FINDINGS),
          "high_low_points": ("kind", POINTS)}
    if name in by:
        field, table = by[name]
        syms = [table[v] for v in frame[field]]
    else:
        sym = POINTS.get({"crossings": "crossing", "offtakes": "offtake", "fittings": "fitting"}
                         .get(name, "station"))
        syms = [sym] * n
    return {"marker-color": [s.fill for s in syms], "marker-size": [_marker_size(s.size) for s in syms],
            "marker-symbol": [s.mark for s in syms]}


def class_runs(gdf):
    """The pipe pieces of ``gdf`` (``pipe_pieces`` or ``pipe_pressure``) merged
    into one line per run of a pressure class (per scenario where the layer
    has one): a web map draws hundreds of runs where a long line at close
    stations has tens of thousands of pieces. A run keeps its first
    ``from_station``, last ``to_station``, summed ``length``, the lowest of
    the ``*_min_*`` and highest of the ``*_max_*`` columns, its class and colour.

    >>> import geopandas as gpd
    >>> from shapely import linestrings
    >>> g = gpd.GeoDataFrame({"from_station_m": [0., 1., 2.], "to_station_m": [1., 2., 3.],
    ...     "pressure_min_kpa": [5., 4., 9.], "pressure_class": ["a", "a", "b"],
    ...     "colour": ["#1", "#1", "#2"]},
    ...     geometry=linestrings([[(0, 0), (1, 0)], [(1, 0), (2, 0)], [(2, 0), (3, 0)]]))
    >>> r = class_runs(g)
    >>> r[["from_station_m", "to_station_m", "pressure_min_kpa"]].values.tolist()
    [[0.0, 2.0, 4.0], [2.0, 3.0, 9.0]]
    >>> r.geometry.iloc[0].wkt
    'LINESTRING (0 0, 1 0, 2 0)'
    """
    import geopandas as gpd
    import pandas as pd
    import shapely

    keys = [c for c in ("scenario", "pressure_class") if c in gdf]
    label = np.zeros(len(gdf), dtype=np.int64)
    for k in keys:  # one integer per combination of the keys
        codes, uniques = pd.factorize(gdf[k])
        label = label * (len(uniques) + 1) + codes
    cut = np.flatnonzero(label[1:] != label[:-1]) + 1
    starts, ends = np.r_[0, cut], np.r_[cut, len(gdf)]
    cols = {}
    for c in gdf.columns:
        if c == "geometry":
            continue
        v = gdf[c].to_numpy()
        if c.startswith("from_") or c in keys or c == "colour":
            cols[c] = v[starts]
        elif c.startswith("to_"):
            cols[c] = v[ends - 1]
        elif c.startswith("length"):
            cols[c] = np.add.reduceat(v, starts)
        elif "_min" in c:
            cols[c] = np.minimum.reduceat(v, starts)
        elif "_max" in c:
            cols[c] = np.maximum.reduceat(v, starts)
    pts = shapely.get_coordinates(gdf.geometry.to_numpy()).reshape(-1, 2, 2)
    # each run: its pieces' start points, then its last piece's end point
    last = np.zeros(len(gdf), bool)
    last[ends - 1] = True
    piece = np.repeat(np.arange(len(gdf)), 1 + last)  # a piece's start, and a last one's end
    is_end = np.zeros(len(piece), bool)
    is_end[np.cumsum(1 + last)[last] - 1] = True
    xy = pts[piece, is_end.astype(int)]
    run = np.repeat(np.repeat(np.arange(len(starts)), ends - starts), 1 + last)
    lines = shapely.linestrings(xy, indices=run)
    return gpd.GeoDataFrame(pd.DataFrame(cols), geometry=lines, crs=gdf.crs)


#: Stations kept in the GeoJSON besides those that are not regular: the first
#: at or past every this many display length units (100 m, or 100 ft).
STATION_EVERY = 100.0
#: Tolerance (m) of the pipe runs' simplification (Douglas-Peucker, in the
#: working CRS): a centimetre, far below what a map shows or a DEM resolves.
RUN_TOLERANCE = 0.01


def web_stations(station_m, kind_word, every_m: float, bridged=None) -> np.ndarray:
    """Which stations a web map gets: every one that is not regular (vertex,
    crossing, end, zone edge, fitting, offtake, section change, pressure
    element), every one whose ground was bridged over missing DEM data
    (``bridged``), and the first at or past each multiple of ``every_m`` (m).

    >>> web_stations(np.arange(0.0, 301.0, 50.0), np.array(["end"] + ["regular"] * 6), 100.0,
    ...              np.array([0, 1, 0, 0, 0, 0, 0], bool)).tolist()
    [True, True, True, False, True, False, True]
    """
    s = np.asarray(station_m, float)
    mark = np.floor(s / every_m + 1e-9)
    first = np.r_[True, mark[1:] > mark[:-1]]
    keep = first | (np.asarray(kind_word, object) != "regular")
    return keep if bridged is None else keep | np.asarray(bridged, bool)


def wgs84_layers(result, display) -> dict:
    """Every layer as a GeoDataFrame in WGS 84 with its simplestyle columns;
    the pipe pieces merged into runs of one pressure class (:func:`class_runs`)
    and simplified to :data:`RUN_TOLERANCE`, the stations those of
    :func:`web_stations` (every station is in the GeoPackage and profile.csv).
    Made once per result and display (the GeoJSON and KML writers share them)."""
    import geopandas as gpd
    import shapely

    from .layers import _CACHE, layer_frames

    cached = _CACHE.setdefault(result, {})
    key = ("wgs84", display.system)
    if key not in cached:
        out = {}
        every = STATION_EVERY / display.factor("length")
        for name, frame in layer_frames(result, display).items():
            if name == "stations" and len(frame):
                bridged = frame["ground_bridged"].to_numpy() if "ground_bridged" in frame else None
                frame = frame[web_stations(frame["station_m"].to_numpy(), frame["kind"].to_numpy(),
                                           every, bridged)]
            gdf = gpd.GeoDataFrame(frame, geometry="geometry", crs=result.alignment.crs)
            if name in ("pipe_pieces", "pipe_pressure") and len(gdf):
                gdf = class_runs(gdf)
                gdf = gdf.set_geometry(shapely.simplify(gdf.geometry.to_numpy(), RUN_TOLERANCE,
                                                        preserve_topology=False))
            gdf = gdf.to_crs("EPSG:4326")
            out[name] = gdf.assign(**simplestyle(name, gdf))
        cached[key] = out
    return cached[key]


@writer("geojson", layer=True)
def write_geojson(result, folder: Path, display) -> None:
    from ..cautions import CAUTIONS

    out = folder / "geojson"
    out.mkdir()
    for name, gdf in wgs84_layers(result, display).items():  # the cautions as its description
        gdf.to_file(out / f"{name}.geojson", driver="GeoJSON", engine="pyogrio", use_arrow=True,
                    layer_options={"RFC7946": "YES", "WRITE_NAME": "NO",
                                   "DESCRIPTION": f"gisgrade {name}. CAUTION: {CAUTIONS}"})
