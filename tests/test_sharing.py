"""Sharing the results: layers, styles, GeoJSON, KML, sheets, map, report, US units.

Outside references: geopandas/pyogrio (GDAL) read the layers back; pyproj
transforms coordinates independently; RFC 7946 (GeoJSON) and the
simplestyle-spec 1.1.0 name the GeoJSON rules checked; fastkml validates
the KML against the OGC KML 2.2 schema it ships; the SLD files are checked
against the structure of the SLD 1.0.0 schema (OGC 02-070) and Filter
Encoding 1.0 (OGC 02-059), as listed in ``check_sld`` (no PyPI package ships
those XSDs); matplotlib's cividis colormap (Nunez et al. 2018) and its
``LightSource`` shading; CIE 15:2004 for L*; NIST SP 811 unit definitions;
IAPWS-95 (``iapws``) for the density of water; ISO 216 / ANSI paper sizes;
headless Chromium renders the report.
"""
import json
import re
import shutil
import subprocess

import numpy as np
import pandas as pd
import pytest

from gisgrade.display import FT, PSI, Display

from conftest import PROJECT, write_dem, write_lines

IDENTIFIER = re.compile(r"^[a-z][a-z0-9_]*$")
G = 9.80665  # standard gravity, CGPM 1901 (exact)


def read_layers(path):
    import pyogrio

    import geopandas as gpd

    return {name: gpd.read_file(path, layer=name, engine="pyogrio")
            for name, _ in pyogrio.list_layers(path)}


# --------------------------------------------------------------------------
# The GeoPackage
# --------------------------------------------------------------------------


def test_every_layer_opens_with_its_crs_geometry_and_plain_fields(demo_si):
    from gisgrade.output.layers import GEOMETRY

    project, out = demo_si
    layers = read_layers(out / "layers.gpkg")
    assert set(layers) == set(GEOMETRY)  # the demo has every kind of layer
    scenarios = {"average day", "peak hour", "max day + fire", "static"}
    for name, gdf in layers.items():
        # the demo's centerline is GeoJSON, WGS 84 (RFC 7946): the layers are too
        assert gdf.crs.to_epsg() == 4326, name
        assert set(gdf.geom_type) <= {GEOMETRY[name]}, name
        fields = [c for c in gdf.columns if c != "geometry"]
        assert all(IDENTIFIER.match(c) for c in fields), (name, fields)
        assert not any(s.replace(" ", "_") in c for s in scenarios for c in fields), name
    words = set(", ".join(layers["stations"]["kind"]).split(", "))
    assert words <= {"regular", "vertex", "crossing", "end", "cover zone edge", "fitting",
                     "offtake", "section change"}
    assert {"crossing", "end", "vertex"} <= words
    pp, per = layers["pipe_pieces"], layers["pipe_pressure"]
    assert len(per) == len(pp) * 4 and set(per["scenario"]) == scenarios
    assert set(layers["valves"]["kind"]) <= {"combination", "air-release", "air-vacuum", "drain"}
    assert len(layers["findings_points"]) == len(pd.read_csv(out / "findings.csv"))
    import pyogrio  # every layer carries the cautions (house rule) in its metadata

    meta = pyogrio.read_info(out / "layers.gpkg", layer="pipe_pieces")["layer_metadata"]
    assert "licensed professional engineer" in meta["DESCRIPTION"]


def test_pipe_pressure_layer_against_the_grade_lines(demo_si):
    # Each piece's lowest pressure = the lower of its two stations' pressures,
    # both sides of any point loss: rho g (min(HGL, HGL upstream) - axis), with
    # rho of water at 12 degC from IAPWS-95 and standard gravity; the axis and
    # HGL from the written CSV tables.
    from iapws import IAPWS95

    import gisgrade

    project, out = demo_si
    per = read_layers(out / "layers.gpkg")["pipe_pressure"]
    prof = pd.read_csv(out / "profile.csv")
    r = gisgrade.compute(project)
    rho = IAPWS95(T=285.15, P=0.101325).rho
    for name, g in r.gradelines.groupby("scenario", sort=False):
        low = rho * G * (np.minimum(g["hgl_m"], g["hgl_upstream_m"]).to_numpy()
                         - prof["axis_m"].to_numpy()) / 1e3
        rows = per[per["scenario"] == name]
        np.testing.assert_allclose(rows["pressure_min_kpa"], np.minimum(low[:-1], low[1:]),
                                   rtol=2e-5, atol=1e-3)


def test_colours_are_the_cividis_classes_at_the_limits(demo_si):
    import matplotlib

    from gisgrade.output.style import PressureScale

    project, out = demo_si
    pp = read_layers(out / "layers.gpkg")["pipe_pieces"]
    # the demo's limits, from its project file ([checks] min_pressure, max_pressure):
    # four equal classes between them
    from gisgrade.project import load

    checks = load(project).checks
    lo, hi = checks.min_pressure / 1e3, checks.max_pressure / 1e3
    cividis = matplotlib.colormaps["cividis"]
    edges = [0.0, *np.linspace(lo, hi, 5)]
    p = pp["pressure_kpa"].to_numpy()
    k = np.searchsorted(edges, p, side="right")  # 0: below atmospheric ... 6: above the maximum
    centres = np.r_[0.0, (np.arange(4) + 0.5) / 4, 1.0]
    for cls in np.unique(k):
        got = set(pp["colour"][k == cls])
        want = "#1a1423" if cls == 0 else matplotlib.colors.to_hex(cividis(centres[cls - 1]))
        assert got == {want}, cls
    # every class colour the package holds is matplotlib's cividis sample
    from gisgrade.output.style import CLASS_COLOURS

    assert list(CLASS_COLOURS) == [matplotlib.colors.to_hex(cividis(c)) for c in centres]
    # perceptual: CIE L* rises with pressure through the classes (CIE 15:2004 sRGB -> L*)
    scale = PressureScale.from_limits(checks.min_pressure, checks.max_pressure)
    lab_l = [cie_lightness(c) for c in scale.colours]
    assert np.all(np.diff(lab_l) > 0)


def cie_lightness(hex_colour) -> float:
    """CIE L* of an sRGB colour (IEC 61966-2-1 linearisation; CIE 15:2004, D65)."""
    rgb = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    y = float(lin @ [0.2126, 0.7152, 0.0722])
    return 116 * np.cbrt(y) - 16 if y > (6 / 29) ** 3 else y * (29 / 3) ** 3


STATE_PLANE = "EPSG:2229"  # NAD83 / California zone 5 (US survey feet)
UTM11 = "EPSG:32611"


@pytest.fixture
def state_plane_site(tmp_path):
    """An invented 1.2 km main near 34.05 N 118.2 W, the centerline drawn in
    State Plane feet, the DEM (a tilted plane) in UTM 11N metres."""
    import pyproj

    x0, y0 = 385_000.0, 3_768_000.0  # UTM 11N, metres
    yy, xx = np.mgrid[0:200, 0:200]
    z = 120.0 - 0.02 * (xx * 10.0) + 0.01 * (yy * 10.0)  # falls to the east
    write_dem(tmp_path / "dem.tif", z, x0=x0, y0=y0 + 2000.0, crs=UTM11)
    utm = [(x0 + 300.0, y0 + 1000.0), (x0 + 900.0, y0 + 1200.0), (x0 + 1400.0, y0 + 1150.0)]
    to_sp = pyproj.Transformer.from_crs(UTM11, STATE_PLANE, always_xy=True)
    sp = [to_sp.transform(x, y) for x, y in utm]
    write_lines(tmp_path / "line.geojson", [sp], crs=STATE_PLANE)
    text = PROJECT.replace('source_head = "200 m"', 'source_head = "160 m"')
    (tmp_path / "project.toml").write_text(text + '\n[output]\nunits = "US"\n')
    return tmp_path / "project.toml", sp


def test_layers_stay_in_the_centerlines_state_plane_feet_or_output_crs(state_plane_site, tmp_path):
    import pyproj

    import gisgrade

    project, sp = state_plane_site
    gisgrade.run(project, tmp_path / "a", figures=False)  # layers only: no figure is needed
    assert not (tmp_path / "a" / "profile.png").exists() and not (tmp_path / "a" / "sheets").exists()
    assert "not drawn in this run" in (tmp_path / "a" / "report.html").read_text()
    layers = read_layers(tmp_path / "a" / "layers.gpkg")
    assert layers["route"].crs == pyproj.CRS(STATE_PLANE)
    # the route's vertices are the input's, back from the working CRS (pyproj round trip)
    got = np.asarray(layers["route"].geometry.iloc[0].coords)
    np.testing.assert_allclose(got[[0, -1]], np.asarray(sp)[[0, -1]], atol=1e-4)  # feet
    # US display: a US-foot column beside each metre one
    st = layers["stations"]
    np.testing.assert_allclose(st["cover_ft"], st["cover_m"] / FT, rtol=1e-12)
    project.write_text(project.read_text() + f'crs = "{UTM11}"\n')
    gisgrade.run(project, tmp_path / "b", figures=False)
    b = read_layers(tmp_path / "b" / "layers.gpkg")["valves"]
    a = read_layers(tmp_path / "a" / "layers.gpkg")["valves"]
    assert b.crs == pyproj.CRS(UTM11)
    fwd = pyproj.Transformer.from_crs(STATE_PLANE, UTM11, always_xy=True)
    x, y = fwd.transform(a.geometry.x.to_numpy(), a.geometry.y.to_numpy())
    np.testing.assert_allclose(np.c_[b.geometry.x, b.geometry.y], np.c_[x, y], atol=1e-3)


def test_an_unknown_output_crs_is_an_input_error(state_plane_site, tmp_path, capsys):
    from gisgrade.cli import main

    project, _ = state_plane_site
    project.write_text(project.read_text() + 'crs = "EPSG:999999"\n')
    assert main(["run", str(project), "-o", str(tmp_path / "x"), "-q"]) == 2
    err = capsys.readouterr().err
    assert "output.crs" in err and "EPSG:999999" in err and err.count("\n") == 1
    assert not (tmp_path / "x").exists()


# --------------------------------------------------------------------------
# GeoJSON, KML, SLD
# --------------------------------------------------------------------------


def test_geojson_files_are_rfc7946_with_simplestyle(demo_si):
    import pyproj

    import gisgrade

    project, out = demo_si
    files = sorted((out / "geojson").glob("*.geojson"))
    assert {f.stem for f in files} == {n for n in read_layers(out / "layers.gpkg")}
    hexcolour = re.compile(r"^#[0-9a-f]{6}$")
    for f in files:
        doc = json.loads(f.read_text())
        assert doc["type"] == "FeatureCollection" and "crs" not in doc  # RFC 7946 s. 4
        assert "licensed professional engineer" in doc["description"]  # a foreign member (s. 6.1)
        for feat in doc["features"]:
            coords = np.asarray(feat["geometry"]["coordinates"], float).reshape(-1, 2)
            assert (np.abs(coords[:, 0]) <= 180).all() and (np.abs(coords[:, 1]) <= 90).all()
            props = feat["properties"]
            if feat["geometry"]["type"] == "LineString":  # simplestyle-spec 1.1.0 keys
                assert hexcolour.match(props["stroke"]) and props["stroke-width"] > 0
                assert 0 <= props["stroke-opacity"] <= 1
            else:
                assert hexcolour.match(props["marker-color"])
                assert props["marker-size"] in {"small", "medium", "large"}
    # lon/lat order: the route's vertices from the working CRS by pyproj (RFC 7946 s. 3.1.1)
    r = gisgrade.compute(project)
    to_ll = pyproj.Transformer.from_crs(r.alignment.crs, "EPSG:4326", always_xy=True)
    lon, lat = to_ll.transform(*r.alignment.coords.T)
    route = json.loads((out / "geojson" / "route.geojson").read_text())["features"][0]
    np.testing.assert_allclose(route["geometry"]["coordinates"], np.c_[lon, lat], atol=1e-7)
    # the pipe pieces as runs of one class: each run's colour and stations are
    # those of the GeoPackage's pieces it covers, and the runs cover the pipe once
    pipe = json.loads((out / "geojson" / "pipe_pieces.geojson").read_text())["features"]
    gpkg = read_layers(out / "layers.gpkg")["pipe_pieces"]
    assert len(pipe) < len(gpkg)
    s0 = gpkg["from_station_m"].to_numpy()
    for run in pipe:
        p = run["properties"]
        inside = (s0 >= p["from_station_m"] - 1e-6) & (s0 < p["to_station_m"] - 1e-6)
        assert set(gpkg.loc[inside, "colour"]) == {p["stroke"]}
    assert [p["properties"]["from_station_m"] for p in pipe][0] == pytest.approx(s0[0])
    assert sum(p["properties"]["length_m"] for p in pipe) == pytest.approx(gpkg["length_m"].sum())


def test_geojson_stations_and_runs_are_what_a_web_map_needs(demo_si):
    # stations: every station that is not regular or has bridged ground, and
    # the first at or past each 100 m (rule stated in docs/sharing.md), with
    # the GeoPackage's values;
    # runs: within 1 cm (and the 7-decimal rounding) of the GeoPackage's
    # pieces, both measured in metres in the UTM zone geopandas picks, the
    # runs' lon/lat (RFC 7946) brought there by pyproj
    import pyproj
    import shapely

    project, out = demo_si
    gpkg = read_layers(out / "layers.gpkg")
    st = gpkg["stations"]
    s = st["station_m"].to_numpy()
    want = ((st["kind"] != "regular").to_numpy() | st["ground_bridged"].to_numpy(bool)
            | np.r_[True, np.diff(np.floor(s / 100.0)) > 0])
    web = json.loads((out / "geojson" / "stations.geojson").read_text())["features"]
    assert 0 < len(web) < len(st)
    got = np.array([f["properties"]["station_m"] for f in web])
    np.testing.assert_array_equal(got, s[want])
    np.testing.assert_allclose([f["properties"]["cover_m"] for f in web],
                               st["cover_m"].to_numpy()[want], rtol=0, atol=1e-9)
    utm = gpkg["pipe_pieces"].estimate_utm_crs()
    to_crs = pyproj.Transformer.from_crs("EPSG:4326", utm, always_xy=True)
    pp = gpkg["pipe_pieces"].to_crs(utm)
    runs = json.loads((out / "geojson" / "pipe_pieces.geojson").read_text())["features"]
    for run in runs:
        xy = np.c_[to_crs.transform(*np.asarray(run["geometry"]["coordinates"], float).T)]
        p = run["properties"]
        mine = ((pp["from_station_m"] >= p["from_station_m"] - 1e-6)
                & (pp["to_station_m"] <= p["to_station_m"] + 1e-6)).to_numpy()
        assert mine.any()
        pieces = shapely.union_all(pp.geometry.to_numpy()[mine])
        assert shapely.hausdorff_distance(shapely.linestrings(xy), pieces) < 0.017


def test_geojson_runs_of_a_curved_line_stay_within_a_centimetre(tmp_path):
    # a 60 degree arc of 300 m radius drawn with 181 vertices (a curve where
    # the simplification of the runs has something to drop): each run is
    # within 1 cm (Hausdorff, shapely/GEOS) of the GeoPackage's pieces it
    # covers, in metres in the line's UTM zone, the run's lon/lat (RFC 7946)
    # brought back by pyproj, and it keeps fewer vertices than the pieces
    import pyproj
    import shapely

    import gisgrade

    a = np.radians(np.linspace(-90.0, -30.0, 181))
    arc = np.c_[500_400.0 + 300.0 * np.cos(a), 4_649_300.0 + 300.0 * np.sin(a)]
    write_dem(tmp_path / "dem.tif", np.full((200, 200), 100.0))
    write_lines(tmp_path / "line.geojson", [arc.tolist()])
    (tmp_path / "project.toml").write_text(PROJECT.replace('spacing = "10 m"', 'spacing = "1 m"'))
    gisgrade.compute(tmp_path / "project.toml").write(tmp_path / "out", figures=False)
    pp = read_layers(tmp_path / "out" / "layers.gpkg")["pipe_pieces"]
    to_utm = pyproj.Transformer.from_crs("EPSG:4326", pp.crs, always_xy=True)
    runs = json.loads((tmp_path / "out" / "geojson" / "pipe_pieces.geojson").read_text())["features"]
    kept = 0
    for run in runs:
        xy = np.c_[to_utm.transform(*np.asarray(run["geometry"]["coordinates"], float).T)]
        kept += len(xy)
        p = run["properties"]
        mine = ((pp["from_station_m"] >= p["from_station_m"] - 1e-6)
                & (pp["to_station_m"] <= p["to_station_m"] + 1e-6)).to_numpy()
        assert 2 <= len(xy) <= mine.sum() + 1
        pieces = shapely.union_all(pp.geometry.to_numpy()[mine])
        # 1 cm of simplification and GDAL's RFC 7946 rounding to 7 decimals
        # (half of 1e-7 deg: under 0.6 cm)
        assert shapely.hausdorff_distance(shapely.linestrings(xy), pieces) < 0.017
    assert kept < len(pp) / 2


def test_kml_validates_against_the_ogc_schema_and_holds_the_layers(demo_si):
    from fastkml import kml

    project, out = demo_si
    doc = kml.KML.parse(out / "layers.kml", validate=True).features[0]  # OGC KML 2.2 XSD
    folders = {f.name: f for f in doc.features}
    valves = read_layers(out / "layers.gpkg")["valves"]
    placemarks = folders["air valves and drains"].features
    assert len(placemarks) == len(valves)
    styles = {s.id for s in doc.styles}
    assert all(p.style_url.url.lstrip("#") in styles for f in doc.features for p in f.features)
    # the first valve: at the layer's point, lon/lat (OGC KML 2.2, kml:coordinates)
    first = placemarks[0].geometry
    assert (first.x, first.y) == pytest.approx((valves.geometry.x.iloc[0],
                                                 valves.geometry.y.iloc[0]), abs=1e-7)
    assert "licensed professional engineer" in doc.description


#: SLD 1.0.0 (OGC 02-070) content models of the elements written, as the
#: schema orders them (children allowed, in order); Filter 1.0 (OGC 02-059)
#: comparison operators; the SvgParameter names SLD 1.0 lists for Stroke,
#: Fill and Font; the well-known mark names it defines.
SLD_ORDER = {
    "StyledLayerDescriptor": ["Name", "Title", "Abstract", "NamedLayer", "UserLayer"],
    "NamedLayer": ["Name", "LayerFeatureConstraints", "NamedStyle", "UserStyle"],
    "UserStyle": ["Name", "Title", "Abstract", "IsDefault", "FeatureTypeStyle"],
    "FeatureTypeStyle": ["Name", "Title", "Abstract", "FeatureTypeName",
                         "SemanticTypeIdentifier", "Rule"],
    "Rule": ["Name", "Title", "Abstract", "LegendGraphic", "Filter", "ElseFilter",
             "MinScaleDenominator", "MaxScaleDenominator", "Symbolizer"],
    "LineSymbolizer": ["Geometry", "Stroke"],
    "PointSymbolizer": ["Geometry", "Graphic"],
    "TextSymbolizer": ["Geometry", "Label", "Font", "LabelPlacement", "Halo", "Fill"],
    "Graphic": ["ExternalGraphic", "Mark", "Opacity", "Size", "Rotation"],
    "Mark": ["WellKnownName", "Fill", "Stroke"],
    "Stroke": ["GraphicFill", "GraphicStroke", "CssParameter"],
    "Fill": ["GraphicFill", "CssParameter"],
    "Font": ["CssParameter"], "Halo": ["Radius", "Fill"],
    "LabelPlacement": ["PointPlacement", "LinePlacement"],
    "PointPlacement": ["AnchorPoint", "Displacement", "Rotation"],
    "Displacement": ["DisplacementX", "DisplacementY"],
}
SYMBOLIZERS = {"LineSymbolizer", "PolygonSymbolizer", "PointSymbolizer", "TextSymbolizer",
               "RasterSymbolizer"}
CSS = {"stroke", "stroke-opacity", "stroke-width", "stroke-linejoin", "stroke-linecap",
       "stroke-dasharray", "stroke-dashoffset", "fill", "fill-opacity", "font-family",
       "font-style", "font-weight", "font-size"}
MARKS = {"square", "circle", "triangle", "star", "cross", "x"}
COMPARISONS = {"PropertyIsEqualTo", "PropertyIsNotEqualTo", "PropertyIsLessThan",
               "PropertyIsGreaterThan", "PropertyIsLessThanOrEqualTo",
               "PropertyIsGreaterThanOrEqualTo"}
SLD_NS, OGC_NS = "{http://www.opengis.net/sld}", "{http://www.opengis.net/ogc}"


def check_sld(root, fields):
    """The structure checks, named: root and version; each element's children
    drawn from its content model in the schema's order; CssParameter names,
    mark names and colours from the lists the specification gives; filters
    built of Filter 1.0 operators on fields the layer has."""
    assert root.tag == SLD_NS + "StyledLayerDescriptor" and root.get("version") == "1.0.0"
    for el in root.iter():
        tag = el.tag.split("}")[1]
        if el.tag.startswith(SLD_NS) and tag in SLD_ORDER:
            model = SLD_ORDER[tag]
            kids = [("Symbolizer" if k.tag.split("}")[1] in SYMBOLIZERS else k.tag.split("}")[1])
                    for k in el]
            assert all(k in model for k in kids), (tag, kids)
            assert [model.index(k) for k in kids] == sorted(model.index(k) for k in kids), (tag, kids)
        if tag == "Rule":
            assert any(k.tag.split("}")[1] in SYMBOLIZERS for k in el), "a rule draws something"
        if tag == "CssParameter":
            assert el.get("name") in CSS
            if el.get("name") in ("stroke", "fill"):
                assert re.match(r"^#[0-9a-fA-F]{6}$", el.text)
        if tag == "WellKnownName":
            assert el.text in MARKS
        if el.tag == OGC_NS + "Filter":
            ops = {k.tag.split("}")[1] for k in el.iter() if k is not el}
            assert ops <= COMPARISONS | {"And", "Or", "Not", "PropertyName", "Literal"}
        if el.tag == OGC_NS + "PropertyName":
            assert el.text in fields, el.text


def test_sld_files_follow_the_sld_structure_and_style_the_layers(demo_si):
    from lxml import etree

    project, out = demo_si
    layers = read_layers(out / "layers.gpkg")
    files = sorted((out / "styles").glob("*.sld"))
    assert {f.stem for f in files} == set(layers)
    for f in files:
        root = etree.parse(str(f)).getroot()
        assert root.find(f"{SLD_NS}NamedLayer/{SLD_NS}Name").text == f.stem
        check_sld(root, set(layers[f.stem].columns))
    # The pressure rules, evaluated here on the layer's own values (Filter 1.0
    # semantics), give every piece exactly one rule, and that rule's colour is
    # the piece's colour field.
    pp = layers["pipe_pieces"]
    root = etree.parse(str(out / "styles" / "pipe_pieces.sld")).getroot()
    hits = np.zeros(len(pp), int)
    for rule in root.iter(SLD_NS + "Rule"):
        ok = np.ones(len(pp), bool)
        for cmp in rule.find(OGC_NS + "Filter").iter():
            name = cmp.tag.split("}")[1]
            if name in COMPARISONS:
                v = pp[cmp.find(OGC_NS + "PropertyName").text].to_numpy()
                lit = float(cmp.find(OGC_NS + "Literal").text)
                ok &= {"PropertyIsLessThan": v < lit,
                       "PropertyIsGreaterThanOrEqualTo": v >= lit}[name]
        colour = rule.find(f".//{SLD_NS}CssParameter[@name='stroke']").text
        assert set(pp["colour"][ok]) <= {colour}
        hits += ok
    assert (hits == 1).all()
    valves = etree.parse(str(out / "styles" / "valves.sld")).getroot()
    kinds = [lit.text for lit in valves.iter(OGC_NS + "Literal")]
    assert set(layers["valves"]["kind"]) <= set(kinds)


# --------------------------------------------------------------------------
# Figures
# --------------------------------------------------------------------------


def test_hillshade_is_horns_gradient_lit_as_matplotlib_lights_it():
    # matplotlib's LightSource gives the unit vector to a sun at (azdeg,
    # altdeg); its hillshade lights the normal (-dz/dx, -dz/dy, 1) from
    # numpy's central differences, row 0 the top (dy negative). On a
    # quadratic surface central differences and Horn's 3x3 gradient agree
    # exactly inside, so the illumination must agree there.
    from matplotlib.colors import LightSource

    from gisgrade.output.mapfig import hillshade

    y, x = np.mgrid[0:40, 0:50] * 5.0
    z = 0.004 * (x - 90) ** 2 - 0.003 * (y - 60) ** 2 + 0.002 * x * y
    ours = hillshade(z, 5.0, 5.0, azimuth=315, altitude=45)[1:-1, 1:-1]
    e_dy, e_dx = np.gradient(z, -5.0, 5.0)
    normal = np.dstack([-e_dx, -e_dy, np.ones_like(z)])
    normal /= np.linalg.norm(normal, axis=2, keepdims=True)
    theirs = np.clip(normal @ LightSource(azdeg=315, altdeg=45).direction, 0, 1)[1:-1, 1:-1]
    np.testing.assert_allclose(ours, theirs, atol=1e-12)
    # a plane facing the sun (rising to the south-east at 45 deg) is fully lit
    yy, xx = np.mgrid[0:5, 0:5] * 1.0
    plane = (xx + yy) / np.sqrt(2)  # rows run south: z rises east and south
    assert hillshade(plane, 1.0, 1.0, azimuth=315, altitude=45)[2, 2] == pytest.approx(1.0)


def test_sheets_hold_their_stated_scales_on_the_paper(demo_si):
    # scale = ground length / paper length: the drawn axes' size in inches
    # (1 in = 0.0254 m, NIST SP 811) times the stated 1:n is their data span.
    import gisgrade
    from gisgrade.output.sheets import INCH, PAPER, Layout, sheet_figure, sheet_ranges, sheet_scales

    project, out = demo_si
    pdf = (out / "sheets" / "profile_sheets.pdf").read_bytes()
    svgs = sorted((out / "sheets").glob("sheet_*.svg"))
    pages = len(re.findall(rb"/Type\s*/Page\b", pdf))
    assert pages == len(svgs) >= 2
    # A3 landscape is 420 x 297 mm (ISO 216): in points of 1/72 in
    box = [float(v) for v in re.search(rb"/MediaBox\s*\[([^\]]+)\]", pdf).group(1).split()]
    assert box[2:] == pytest.approx([420 / 25.4 * 72, 297 / 25.4 * 72], abs=1.0)
    r = gisgrade.compute(project)
    d = Display()
    layout = Layout(*PAPER["A3"])
    s = r.table["station_m"].to_numpy()
    ranges = sheet_ranges(s[0], s[-1], 1460.0, 50.0)
    assert len(ranges) + 1 == pages  # the sheets and one page of crossing close-ups
    scales = sheet_scales(r, ranges, layout, d)
    fig = sheet_figure(r, d, scales, layout, ranges[1], 2, pages, "A3")
    ax = fig.axes[0]
    w_in, h_in = fig.get_size_inches()
    pos = ax.get_position()
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    assert (x1 - x0) / (pos.width * w_in * INCH) == pytest.approx(scales.horizontal, rel=1e-9)
    assert (y1 - y0) / (pos.height * h_in * INCH) == pytest.approx(scales.vertical, rel=1e-9)
    text = " ".join(t.get_text() for a in fig.axes for t in a.texts)
    assert f"1:{scales.horizontal:g}" in text and f"1:{scales.vertical:g}" in text
    assert "licensed professional engineer" in text.replace("\n", " ")
    assert "Sheet 2 of" in text and "match line" in text
    # the overlap: sheet 2 starts 50 m before sheet 1 ends
    assert ranges[1][0] == pytest.approx(ranges[0][2] - 50.0)


def test_overview_legend_drops_an_egl_hidden_under_its_hgl(demo_si):
    # At 40 L/s in 305 mm pipe, V^2/2g = 0.015 m (continuity; g CGPM 1901):
    # the EGL is within a line's width of the HGL, so it is not drawn, and the
    # legend says so rather than listing a line nobody can see.
    import gisgrade
    from gisgrade.output.plot import profile_figure

    r = gisgrade.compute(demo_si[0])
    labels = [t.get_text() for t in profile_figure(r).axes[0].get_legend().get_texts()]
    v = 0.040 / (np.pi * 0.305 ** 2 / 4)
    assert f"HGL average day (EGL within {v ** 2 / 2 / G:.2f} m)" in labels
    assert not any(lab.startswith("EGL average day") for lab in labels)
    assert "demo/project" in profile_figure(r).axes[0].get_title(loc="left")


# --------------------------------------------------------------------------
# Units
# --------------------------------------------------------------------------


def test_us_and_si_outputs_agree_after_conversion(demo_si, demo_us):
    # NIST SP 811: 1 psi = 6.894757293168361 kPa, 1 ft = 0.3048 m; NIST HB 44: 1 gal = 3.785411784 L
    si, us = demo_si[1], demo_us[1]
    g_si, g_us = pd.read_csv(si / "gradelines.csv"), pd.read_csv(us / "gradelines.csv")
    # both columns written to 6 decimals
    np.testing.assert_allclose(g_us["pressure_psi"], g_us["pressure_kpa"] * 1e3 / PSI, atol=2e-6)
    np.testing.assert_allclose(g_us["flow_gpm"], g_us["flow_m3_s"] * 60 / 3.785411784e-3, atol=1e-3)
    np.testing.assert_allclose(g_us["pressure_kpa"], g_si["pressure_kpa"])  # the SI columns kept
    f_si, f_us = pd.read_csv(si / "findings.csv"), pd.read_csv(us / "findings.csv")
    assert list(f_us["severity"]) == sorted(f_us["severity"], key=["critical", "warning"].index)
    for a, b in zip(f_si.itertuples(), f_us.itertuples()):
        factor = {"kPa": 1e3 / PSI, "m": 1 / FT}[a.unit]
        assert b.worst_value_us == pytest.approx(a.worst_value * factor, abs=1e-3)  # 4 decimals
        pairs_si = re.findall(r"(-?\d+(?:\.\d+)?) (kPa|m)\b", a.message)
        pairs_us = re.findall(r"(-?\d+(?:\.\d+)?) (psi|ft)\b", b.message)
        assert len(pairs_si) == len(pairs_us) > 0, (a.message, b.message)
        for (x, ux), (y, uy) in zip(pairs_si, pairs_us):
            assert {"kPa": "psi", "m": "ft"}[ux] == uy
            to_us = {"kPa": 1e3 / PSI, "m": 1 / FT}[ux]
            # each printed to its decimals: half a step of each is rounding
            tol = 0.5 * 10.0 ** -decimals(x) * to_us + 0.5 * 10.0 ** -decimals(y) + 1e-9
            assert float(y) == pytest.approx(float(x) * to_us, abs=tol), (a.message, b.message)
    text = (us / "summary.txt").read_text()
    assert "psi" in text and "gpm" in text and "ft/s" in text
    body = text.split("CAUTION")[0]
    assert not re.search(r"\d (m|kPa|L/s|m/s)\b", body), "an SI unit left in the US summary"
    lines = text.splitlines()
    listed = [ln for ln in lines if ln.startswith("  CRITICAL") or ln.startswith("  WARNING")]
    assert len(listed) == len(f_us)  # summary.txt lists every finding, most serious first
    assert listed[0].startswith("  CRITICAL")


def decimals(number: str) -> int:
    return len(number.split(".")[1]) if "." in number else 0


def test_an_input_error_speaks_the_display_units(demo_copy, tmp_path, capsys):
    from gisgrade.cli import main

    demo_copy.write_text(demo_copy.read_text() + '\n[[fittings]]\nstation = "9 km"\nk = 0.5\n'
                         '\n[output]\nunits = "US"\n')
    assert main(["run", str(demo_copy), "-o", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert f"{9000 / FT:.1f} ft" in err and " m " not in err and err.count("\n") == 1


# --------------------------------------------------------------------------
# The report, in a real browser
# --------------------------------------------------------------------------


CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(CHROMIUM is None, reason="headless Chromium is not installed here "
                    "(Debian package 'chromium'; .ci/run installs it)")
def test_report_renders_in_chromium_with_its_figures_and_key_numbers(demo_us, tmp_path):
    project, out = demo_us
    html = (out / "report.html").read_text()
    assert "src=\"http" not in html and "href=\"http" not in html  # self-contained
    proc = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         f"--user-data-dir={tmp_path / 'profile'}", "--virtual-time-budget=5000", "--dump-dom",
         (out / "report.html").as_uri()], capture_output=True, text=True, timeout=120)
    dom = proc.stdout
    assert "<body" in dom, proc.stderr[-2000:]
    # the inline script ran after load: both figures (profile.png, map.png) decoded
    assert 'data-figures-loaded="2/2"' in dom
    # key numbers, recomputed here from gradelines.csv in psi (NIST SP 811)
    g = pd.read_csv(out / "gradelines.csv")
    for name in ("average day", "peak hour", "static"):
        p = g[g["scenario"] == name]["pressure_kpa"] * 1e3 / PSI
        assert f"{p.max():.1f} psi" in dom, name
    assert "licensed professional engineer" in dom and "below vapour pressure (the column separates)" in dom
    # the settings' meanings quote their rules of thumb in feet too, as round figures:
    # 400 m = 1312 ft and 800 m = 2625 ft (NIST SP 811: 1 ft = 0.3048 m), to two figures
    assert "1300 ft to 2600 ft is usual" in html and "800 m" not in html
    assert "(common practice: about 20 psi)" in html  # 140 kPa = 20.3 psi


def test_surge_and_energy_are_shown_when_a_run_has_them(demo_si, tmp_path):
    # The names another stage puts on a Result (surge: names, head_max, head_min as
    # scenario x station arrays; summary["energy"]: a list of plain dicts) are
    # drawn and reported when present. The envelope is the given heads +/- 20 m.
    from types import SimpleNamespace

    import gisgrade
    from gisgrade.output.plot import profile_figure
    from gisgrade.output.report import report_html

    r = gisgrade.compute(demo_si[0])
    hgl = r.grades.hgl[:1]
    r.surge = SimpleNamespace(names=("average day",), head_max=hgl + 20.0, head_min=hgl - 20.0,
                              wave_speed=1100.0)
    r.summary = dict(r.summary, energy=[{"scenario": "average day", "pump_kw": 12.5,
                                         "annual_mwh": 61.3}])
    ax = profile_figure(r).axes[0]
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    surge = [t for t in labels if t.startswith("surge envelope, average day (screening)")]
    assert surge
    # the profile keeps its own scale: an envelope beyond it says how far it runs
    lo, hi = ax.get_ylim()
    if (hgl + 20.0).max() > hi:
        assert f"up to {(hgl + 20.0).max():.2f} m" in surge[0]
    tops = [ln for ln in ax.get_lines() if len(ln.get_ydata()) == hgl.shape[1]
            and np.allclose(ln.get_ydata(), hgl[0] + 20.0)]
    assert tops, "the envelope's upper line is the given head_max"
    html = report_html(r, tmp_path, gisgrade.display.Display())
    assert "<h2>Energy</h2>" in html and "61.3" in html and "12.5" in html
    assert "Surge results are screening only" in html


def test_the_geopackage_writer_leaves_gdal_config_as_it_found_it(demo_si):
    # layers.gpkg is written with OGR_SQLITE_SYNCHRONOUS=OFF (the folder being
    # built is swapped in whole); the option is restored afterwards, and the
    # file passes SQLite's own integrity check (sqlite3, Python's standard library)
    import sqlite3

    import pyogrio

    from gisgrade.output.layers import unsynced_sqlite

    with unsynced_sqlite():
        assert pyogrio.get_gdal_config_option("OGR_SQLITE_SYNCHRONOUS") in ("OFF", False)
    assert pyogrio.get_gdal_config_option("OGR_SQLITE_SYNCHRONOUS") is None
    with sqlite3.connect(demo_si[1] / "layers.gpkg") as db:
        assert db.execute("PRAGMA integrity_check").fetchone() == ("ok",)


def test_a_pressure_element_is_a_named_station_on_every_map(tmp_path):
    # a PRV given at 500 m of the flat test line: its station's kind says so in
    # the GeoPackage, and the GeoJSON a web map gets keeps it
    import gisgrade
    from conftest import flat_site

    p = flat_site(tmp_path, '\n[[pressure_elements]]\nkind = "prv"\nstation = "503 m"\n'
                            'setting = "300 kPa"\n')
    gisgrade.compute(p).write(tmp_path / "out", figures=False)
    st = read_layers(tmp_path / "out" / "layers.gpkg")["stations"]
    assert st.loc[st["station_m"] == 503.0, "kind"].tolist() == ["pressure element"]
    web = json.loads((tmp_path / "out" / "geojson" / "stations.geojson").read_text())["features"]
    assert [f["properties"]["kind"] for f in web if f["properties"]["station_m"] == 503.0] == [
        "pressure element"]
