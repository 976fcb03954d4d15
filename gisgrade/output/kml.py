"""``layers.kml``: the layers as one OGC KML 2.2 document [1]_ with styled
placemarks, for people without a GIS (a virtual globe or a web map opens it).

One Folder per layer. The pipe is drawn as runs of one pressure class (the
pieces of ``pipe_pieces`` merged where the class does not change), for the
governing pressure and, hidden at first, for each scenario; the colours are
the shared scale's (:mod:`.style`). Points carry their words and numbers in
the display units in their descriptions. The stations, thousands of points,
stay in the GeoPackage (and a web map's share of them in the GeoJSON). Point styles tint the viewer's own
default icon (no icon file is referenced, so nothing is fetched).

.. [1] OGC 07-147r2, OGC KML, version 2.2.0, 2008.
"""
from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np

from ..cautions import CAUTIONS
from . import writer
from .style import FINDING_LINE, FINDINGS, PIPE_WIDTH, POINTS, ROUTE, VALVES, kml_colour, scale_of

KML = "http://www.opengis.net/kml/2.2"
ET.register_namespace("", KML)

#: Point layers: (folder title, field picking the symbol, symbol table).
POINT_LAYERS = {
    "valves": ("air valves and drains", "kind", VALVES),
    "findings_points": ("findings (worst station)", "severity", FINDINGS),
    "crossings": ("crossings", None, {"": POINTS["crossing"]}),
    "offtakes": ("offtakes", None, {"": POINTS["offtake"]}),
    "fittings": ("fittings", None, {"": POINTS["fitting"]}),
    "high_low_points": ("high and low points", "kind", {k: POINTS[k] for k in ("high", "low")}),
}


def _e(parent, tag, text=None, **attrib):
    el = ET.SubElement(parent, f"{{{KML}}}{tag}", attrib)
    if text is not None:
        el.text = str(text)
    return el


def _coords(xy) -> str:
    xy = np.asarray(xy, dtype=float)
    return " ".join(map("{:.7f},{:.7f}".format, xy[:, 0].tolist(), xy[:, 1].tolist()))


def _line_style(doc, sid, colour, width, opacity=1.0):
    st = _e(doc, "Style", id=sid)
    ls = _e(st, "LineStyle")
    _e(ls, "color", kml_colour(colour, opacity))
    _e(ls, "width", f"{width:g}")


def _icon_style(doc, sid, sym):
    st = _e(doc, "Style", id=sid)
    ic = _e(st, "IconStyle")
    _e(ic, "color", kml_colour(sym.fill))
    _e(ic, "scale", f"{sym.size / 10:.2f}")
    if sym.rotation:
        _e(ic, "heading", f"{sym.rotation:g}")
    _e(_e(st, "LabelStyle"), "scale", "0.8")


def _placemark(folder, name, style, geometry, description=None, visible=True):
    """A Placemark, its children in the order of the KML 2.2 schema."""
    pm = _e(folder, "Placemark")
    _e(pm, "name", name)
    if not visible:
        _e(pm, "visibility", 0)
    if description:
        _e(pm, "description", description)
    _e(pm, "styleUrl", f"#{style}")
    if geometry.geom_type == "Point":
        _e(_e(pm, "Point"), "coordinates", _coords([(geometry.x, geometry.y)]))
    else:
        ls = _e(pm, "LineString")
        _e(ls, "tessellate", 1)
        _e(ls, "coordinates", _coords(np.asarray(geometry.coords)[:, :2]))
    return pm


def _pipe_folder(doc, title, runs, scale, display, visible=True):
    """A folder of the pipe's runs of one pressure class (``geojson.class_runs``)."""
    f = _e(doc, "Folder")
    _e(f, "name", title)
    _e(f, "visibility", int(visible))
    titles = dict(zip(scale.names, scale.titles(display)))
    for run in runs.itertuples():
        cls = run.pressure_class
        desc = (f"{display.station([run.from_station_m])[0]} to "
                f"{display.station([run.to_station_m])[0]}: pressure "
                f"{display.text(run.pressure_min_kpa * 1e3, 'pressure')} to "
                f"{display.text(run.pressure_max_kpa * 1e3, 'pressure')} ({titles[cls]})")
        _placemark(f, titles[cls], f"p{scale.names.index(cls)}",
                   _LineProxy(np.asarray(run.geometry.coords)), desc, visible)
    return f


class _LineProxy:
    geom_type = "LineString"

    def __init__(self, xy):
        self.coords = xy


def document(result, display):
    """The KML document of ``result`` (an ElementTree root)."""
    from .geojson import wgs84_layers
    from .layers import result_name

    layers = wgs84_layers(result, display)
    root = ET.Element(f"{{{KML}}}kml")
    doc = _e(root, "Document")
    _e(doc, "name", result_name(result))
    _e(doc, "description", "gisgrade results. CAUTION: " + CAUTIONS)
    scale = scale_of(result)
    for i, colour in enumerate(scale.colours):
        _line_style(doc, f"p{i}", colour, PIPE_WIDTH + 1)
    _line_style(doc, "route", ROUTE[0], ROUTE[1], 0.6)
    for sev, (colour, width, _) in FINDING_LINE.items():
        _line_style(doc, f"f-{sev}", colour, width, 0.55)
    for layer, (_, field, table) in POINT_LAYERS.items():
        for key, sym in table.items():
            _icon_style(doc, f"{layer}-{key}" if key else layer, sym)
    f = _e(doc, "Folder")
    _e(f, "name", "route")
    r = layers["route"].iloc[0]
    _placemark(f, r["name"], "route", r.geometry,
               f"length {display.text(r['length_m'], 'length')}")
    if "pipe_pieces" in layers:
        _pipe_folder(doc, "pipe: governing pressure of every scenario", layers["pipe_pieces"],
                     scale, display)
        pp = layers["pipe_pressure"]
        for name in result.grades.names:
            _pipe_folder(doc, f"pipe: pressure in {name}", pp[pp["scenario"] == name].reset_index(),
                         scale, display, visible=False)
    if "findings_lines" in layers:
        f = _e(doc, "Folder")
        _e(f, "name", "findings (stretches)")
        for row in layers["findings_lines"].itertuples():
            _placemark(f, f"{row.severity}: {row.check}", f"f-{row.severity}", row.geometry,
                       f"{row.scenario}: {row.message}")
    for layer, (title, field, table) in POINT_LAYERS.items():
        if layer not in layers:
            continue
        f = _e(doc, "Folder")
        _e(f, "name", title)
        frame = layers[layer]
        for _, row in frame.iterrows():
            key = row[field] if field else ""
            name = {"valves": lambda: f"{row['kind']} at {row['station']}",
                    "findings_points": lambda: f"{row['severity']}: {row['check']}",
                    "crossings": lambda: str(row["name"]),
                    "high_low_points": lambda: f"{row['kind']} point at {row['station']}",
                    }.get(layer, lambda: str(row.get("station", "")))()
            desc = "; ".join(f"{k}: {row[k]}" for k in ("station", "scenario", "message", "reason",
                                                        "why", "fitting", "side")
                             if k in frame and str(row[k]))
            _placemark(f, name, f"{layer}-{key}" if key else layer, row.geometry, desc)
    return root


@writer("layers.kml", layer=True)
def write_kml(result, folder: Path, display) -> None:
    root = document(result, display)
    ET.indent(root)
    ET.ElementTree(root).write(folder / "layers.kml", encoding="UTF-8", xml_declaration=True)
