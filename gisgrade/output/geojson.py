"""``geojson/``: every layer of ``layers.gpkg`` as a GeoJSON file, for
people without a GIS (a web map or a text editor opens them).

Each ``geojson/<layer>.geojson`` is one FeatureCollection per RFC 7946 [1]_:
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


def wgs84_layers(result, display) -> dict:
    """Every layer as a GeoDataFrame in WGS 84 with its simplestyle columns."""
    from .layers import geodataframes

    return {name: gdf.assign(**simplestyle(name, gdf))
            for name, gdf in geodataframes(result, display, crs="EPSG:4326").items()}


@writer("geojson")
def write_geojson(result, folder: Path, display) -> None:
    from ..cautions import CAUTIONS

    out = folder / "geojson"
    out.mkdir()
    for name, gdf in wgs84_layers(result, display).items():  # the cautions as its description
        gdf.to_file(out / f"{name}.geojson", driver="GeoJSON", engine="pyogrio",
                    layer_options={"RFC7946": "YES", "WRITE_NAME": "NO",
                                   "DESCRIPTION": f"gisgrade {name}. CAUTION: {CAUTIONS}"})
