"""``styles/``: one OGC Styled Layer Descriptor per layer of ``layers.gpkg``.

Each ``styles/<layer>.sld`` is an SLD 1.0.0 document [1]_ (a NamedLayer
with one UserStyle) whose rules use OGC Filter 1.0 [2]_ comparisons on the
layer's own fields, so a desktop GIS that loads the file beside the layer
shows at once the pressure colours (the shared scale of :mod:`.style`, the
limits named in the rule titles) and the valve, finding and point symbols.
Numbers in filters are in the fields' SI units; titles are in the display
units.

.. [1] OGC 02-070, Styled Layer Descriptor Implementation Specification,
   version 1.0.0, 2002.
.. [2] OGC 02-059, Filter Encoding Implementation Specification, version 1.0.0, 2001.
"""
from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np

from . import writer
from .style import (FINDING_LINE, FINDINGS, OUTLINE, PIPE_WIDTH, POINTS, ROUTE, VALVES, Symbol,
                    scale_of)

SLD = "http://www.opengis.net/sld"
OGC = "http://www.opengis.net/ogc"
XSI = "http://www.w3.org/2001/XMLSchema-instance"
SCHEMA = "http://www.opengis.net/sld http://schemas.opengis.net/sld/1.0.0/StyledLayerDescriptor.xsd"

ET.register_namespace("", SLD)
ET.register_namespace("ogc", OGC)
ET.register_namespace("xsi", XSI)

#: Stations are drawn only when zoomed in closer than 1:this.
STATION_SCALE = 5000


def _e(parent, tag, text=None, ns=SLD, **attrib):
    el = ET.SubElement(parent, f"{{{ns}}}{tag}", attrib)
    if text is not None:
        el.text = str(text)
    return el


def _css(parent, **params):
    for name, value in params.items():
        if value is not None:
            _e(parent, "CssParameter", value, name=name.replace("_", "-"))


def _compare(parent, op, field, value):
    c = _e(parent, op, ns=OGC)
    _e(c, "PropertyName", field, ns=OGC)
    _e(c, "Literal", value, ns=OGC)


def equal_to(field, value):
    return lambda f: _compare(f, "PropertyIsEqualTo", field, value)


def between(field, lo, hi):
    """lo <= field < hi (an infinite end left open)."""
    def build(f):
        parts = [("PropertyIsGreaterThanOrEqualTo", lo), ("PropertyIsLessThan", hi)]
        parts = [(op, v) for op, v in parts if np.isfinite(v)]
        parent = _e(f, "And", ns=OGC) if len(parts) == 2 else f
        for op, v in parts:
            _compare(parent, op, field, f"{v:.6g}")
    return build


def _rule(fts, name, title, filter_=None, max_scale=None):
    r = _e(fts, "Rule")
    _e(r, "Name", name)
    _e(r, "Title", title)
    if filter_ is not None:
        filter_(_e(r, "Filter", ns=OGC))
    if max_scale is not None:
        _e(r, "MaxScaleDenominator", max_scale)
    return r


def line(rule, colour, width, dash=None, opacity=None):
    stroke = _e(_e(rule, "LineSymbolizer"), "Stroke")
    _css(stroke, stroke=colour, stroke_width=f"{width:g}", stroke_opacity=opacity,
         stroke_linecap="round", stroke_dasharray=dash)


def point(rule, sym: Symbol):
    g = _e(_e(rule, "PointSymbolizer"), "Graphic")
    mark = _e(g, "Mark")
    _e(mark, "WellKnownName", sym.mark)
    _css(_e(mark, "Fill"), fill=sym.fill)
    _css(_e(mark, "Stroke"), stroke=OUTLINE, stroke_width="1")
    _e(g, "Size", f"{sym.size:g}")
    if sym.rotation:
        _e(g, "Rotation", f"{sym.rotation:g}")


def label(rule, field, size=10):
    t = _e(rule, "TextSymbolizer")
    _e(_e(t, "Label"), "PropertyName", field, ns=OGC)
    _css(_e(t, "Font"), font_family="sans-serif", font_size=str(size))
    pp = _e(_e(t, "LabelPlacement"), "PointPlacement")
    disp = _e(pp, "Displacement")
    _e(disp, "DisplacementX", 6)
    _e(disp, "DisplacementY", 6)
    _css(_e(_e(t, "Halo"), "Fill"), fill="#ffffff")
    _css(_e(t, "Fill"), fill="#1f1f1f")


def document(layer: str, title: str, abstract: str):
    """An SLD root with one NamedLayer and UserStyle; returns (root, FeatureTypeStyle)."""
    root = ET.Element(f"{{{SLD}}}StyledLayerDescriptor", {
        "version": "1.0.0", f"{{{XSI}}}schemaLocation": SCHEMA})
    nl = _e(root, "NamedLayer")
    _e(nl, "Name", layer)
    us = _e(nl, "UserStyle")
    _e(us, "Name", f"gisgrade {layer}")
    _e(us, "Title", title)
    _e(us, "Abstract", abstract)
    return root, _e(us, "FeatureTypeStyle")


def pressure_rules(fts, result, display, field="pressure_kpa"):
    """One rule per class of the shared pressure scale, filtered on ``field`` (kPa)."""
    scale = scale_of(result)
    for i, (title, colour) in enumerate(zip(scale.titles(display), scale.colours)):
        lo, hi = scale.edges[i] / 1e3, scale.edges[i + 1] / 1e3
        r = _rule(fts, scale.names[i].replace(" ", "_"), title, between(field, lo, hi))
        line(r, colour, PIPE_WIDTH + (1.0 if i in (0, 1, len(scale) - 1) else 0.0),
             dash="8 4" if i == 0 else None)


def symbol_rules(fts, field, symbols: dict, max_scale=None):
    for value, sym in symbols.items():
        point(_rule(fts, value.replace(" ", "_"), sym.words, equal_to(field, value), max_scale), sym)


def styles(result, display, layers) -> dict[str, ET.Element]:
    """The SLD document of each layer name in ``layers``."""
    from ..cautions import SHORT
    from .layers import GEOMETRY

    out = {}
    for name in layers:
        root, fts = document(name, f"{name.replace('_', ' ')} (gisgrade)", SHORT)
        if name in ("pipe_pieces", "pipe_pressure"):
            pressure_rules(fts, result, display)
        elif name == "route":
            line(_rule(fts, "route", "centerline"), *ROUTE)
        elif name == "findings_lines":
            for sev, (colour, width, dash) in FINDING_LINE.items():
                line(_rule(fts, sev, f"{sev} finding (stretch)", equal_to("severity", sev)),
                     colour, width, dash, opacity="0.55")
        elif name == "findings_points":
            symbol_rules(fts, "severity", FINDINGS)
        elif name == "valves":
            symbol_rules(fts, "kind", VALVES)
        elif name == "high_low_points":
            symbol_rules(fts, "kind", {k: POINTS[k] for k in ("high", "low")})
        elif name == "crossings":
            r = _rule(fts, "crossing", POINTS["crossing"].words)
            point(r, POINTS["crossing"])
            label(r, "name")
        elif name == "stations":
            point(_rule(fts, "station", "station", max_scale=STATION_SCALE), POINTS["station"])
        elif name == "fittings":
            symbol_rules(fts, "plane", {"vertical": POINTS["bend"], "horizontal": POINTS["bend"],
                                        "combined": POINTS["bend"], "inline": POINTS["fitting"]})
        elif name == "offtakes":
            point(_rule(fts, "offtake", POINTS["offtake"].words), POINTS["offtake"])
        else:  # a layer with no style of its own: a plain symbol of its geometry
            r = _rule(fts, name, name)
            line(r, "#777777", 2) if GEOMETRY[name] == "LineString" else point(r, POINTS["station"])
        out[name] = root
    return out


@writer("styles", layer=True)
def write_styles(result, folder: Path, display) -> None:
    from .layers import layer_frames

    (folder / "styles").mkdir()
    for name, root in styles(result, display, layer_frames(result, display)).items():
        ET.indent(root)
        ET.ElementTree(root).write(folder / "styles" / f"{name}.sld", encoding="UTF-8",
                                   xml_declaration=True)
