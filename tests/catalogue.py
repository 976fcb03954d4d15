"""The bad-input catalogue: bad or suspicious inputs and the class of message each must get.

Every case starts from one small, valid site made in a temporary folder (a
1 km straight line east over flat ground at 100 m, in UTM 33N, with one
crossed pipe at 400 m; invented for the tests) and breaks one thing. An
``error`` case must end a run (and ``gisgrade check``) with exit status 2
and one line naming the culprit; a ``warning`` case must pass ``check`` with
exit status 0 and one warning line. ``words`` are what the message must
contain: the key, file or value, and the hint.
"""
from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from conftest import CROSSING_X, PROJECT, write_dem, write_lines

UTM = "EPSG:32633"
X0, Y = 500_100.0, 4_649_000.0

#: The site's project file: the shared test project with one crossing layer.
SITE = PROJECT + CROSSING_X


def make_site(folder):
    """The valid site: dem.tif, line.geojson, x.geojson and project.toml in ``folder``."""
    write_dem(folder / "dem.tif", np.full((200, 200), 100.0))
    write_lines(folder / "line.geojson", [[(X0, Y), (X0 + 1000.0, Y)]])
    write_lines(folder / "x.geojson", [[(X0 + 400, Y - 30), (X0 + 400, Y + 30)]],
                props=[{"name": "water 1", "bottom": 97.0, "width": 0.5}])
    (folder / "project.toml").write_text(SITE)
    return folder / "project.toml"


@dataclass(frozen=True)
class Case:
    name: str
    cls: str  #: the class of input fault (the issue's headings)
    setup: Callable  #: ``setup(folder)`` breaks the site
    words: tuple  #: what the message must say
    level: str = "error"
    command: tuple = ("run",)  #: the command and its options (the project path goes after it)
    outdir: Callable | None = None  #: ``outdir(folder) -> str`` for ``-o`` (default: folder/out)
    extra: dict = field(default_factory=dict)


# -- helpers that break one thing ---------------------------------------------------------

def edit(old, new):
    def f(folder):
        p = folder / "project.toml"
        text = p.read_text()
        assert old in text, old
        p.write_text(text.replace(old, new, 1))
    return f


def add(text):
    def f(folder):
        p = folder / "project.toml"
        p.write_text(p.read_text() + "\n" + text + "\n")
    return f


def line(coords, crs=UTM):
    return lambda folder: write_lines(folder / "line.geojson", [coords], crs=crs)


def crossing(props, coords=((X0 + 400, Y - 30), (X0 + 400, Y + 30))):
    return lambda folder: write_lines(folder / "x.geojson", [list(coords)], props=[props])


def dem(z, **kw):
    return lambda folder: write_dem(folder / "dem.tif", z, **kw)


def flat(value=100.0, n=200):
    return np.full((n, n), value)


def both(*fns):
    def f(folder):
        for fn in fns:
            fn(folder)
    return f


def multiband(folder):
    import rasterio
    from rasterio.transform import from_origin

    with rasterio.open(folder / "dem.tif", "w", driver="GTiff", width=200, height=200, count=3,
                       dtype="uint8", crs=UTM, transform=from_origin(500_000.0, 4_650_000.0, 10, 10)) as d:
        d.write(np.full((3, 200, 200), 120, dtype="uint8"))


def voids(folder):
    z = flat()
    z[95:105, 50:60] = -9999.0  # a void on the line (row 100 is y = 4649000), no nodata tag
    write_dem(folder / "dem.tif", z)


def feet_band(folder):
    import rasterio

    write_dem(folder / "dem.tif", flat(100.0))
    with rasterio.open(folder / "dem.tif", "r+") as d:
        d.units = ("ft",)


def damaged(folder):
    # a deflate-compressed, tiled DEM with bytes overwritten in its middle: it
    # opens (the header is intact) and fails while the tiles along the line are read
    import rasterio
    from rasterio.transform import from_origin

    z = (100.0 + np.random.default_rng(1).random((512, 512))).astype("float32")
    with rasterio.open(folder / "dem.tif", "w", driver="GTiff", width=512, height=512, count=1,
                       dtype="float32", crs=UTM, transform=from_origin(500_000.0, 4_650_000.0, 4, 4),
                       compress="deflate", tiled=True, blockxsize=64, blockysize=64) as d:
        d.write(z, 1)
    raw = bytearray((folder / "dem.tif").read_bytes())
    mid = len(raw) // 2
    raw[mid - 200_000:mid + 200_000] = b"\x00" * 400_000
    (folder / "dem.tif").write_bytes(bytes(raw))


def truncated(folder):
    damaged(folder)
    raw = (folder / "dem.tif").read_bytes()
    (folder / "dem.tif").write_bytes(raw[:len(raw) // 3])


def points_layer(folder, name):
    doc = {"type": "FeatureCollection", "crs": {"type": "name", "properties": {
        "name": "urn:ogc:def:crs:EPSG::32633"}}, "features": [{"type": "Feature", "properties": {
            "bottom": 97.0}, "geometry": {"type": "Point", "coordinates": [X0 + 400, Y]}}]}
    (folder / name).write_text(json.dumps(doc))


def bom(folder):
    p = folder / "project.toml"
    p.write_bytes(b"\xef\xbb\xbf" + p.read_bytes())


def foreign_files(folder):
    (folder / "out").mkdir()
    (folder / "out" / "notes.txt").write_text("mine")


def dangling(folder):
    (folder / "out").symlink_to(folder / "nowhere")


def outdir_file(folder):
    (folder / "out").write_text("a file")


def lonlat_of(utm_coords):
    import pyproj

    t = pyproj.Transformer.from_crs(UTM, "EPSG:4326", always_xy=True)
    return [t.transform(x, y) for x, y in utm_coords]


def swapped(folder):
    ll = lonlat_of([(X0, Y), (X0 + 1000.0, Y)])
    write_lines(folder / "line.geojson", [[(lat, lon) for lon, lat in ll]], crs="EPSG:4326")


def earlier_output(folder):
    (folder / "gisgrade-out").mkdir()
    (folder / "gisgrade-out" / "profile.csv").write_text("station_m\n0\n")


PRV = '[[pressure_elements]]\nkind = "prv"\nstation = "500 m"\nsetting = "-50 kPa"'
LINE = [(X0, Y), (X0 + 1000.0, Y)]

CASES = [
    # -- the project file itself
    Case("utf-8 byte-order mark", "messages", bom, ("byte-order mark", "without BOM")),
    Case("key above the first table", "messages",
         lambda f: (f / "project.toml").write_text('spacing = "5 m"\n' + SITE),
         ("spacing", "above the first [table]", "[alignment]")),
    Case("not TOML", "project file", lambda f: (f / "project.toml").write_text("[alignment\n"),
         ("project.toml", "not valid TOML")),
    Case("unknown section", "project file", add("[covers]\nminimum = \"1 m\""),
         ("unknown section [covers]", "cover")),
    Case("unknown key", "project file", edit('spacing = "10 m"', 'spacng = "10 m"'),
         ("alignment.spacng", "spacing")),
    Case("missing section", "project file", edit("[cover]\nminimum = \"1.2 m\"", ""),
         ("missing required section [cover]",)),
    Case("missing key", "project file", edit('source_head = "200 m"', ""),
         ("hydraulics.source_head",)),
    # -- units
    Case("bare number for a length", "units", edit('minimum = "1.2 m"', "minimum = 1.2"),
         ("cover.minimum", "with units")),
    Case("unknown flow unit", "units", edit('flow = "50 L/s"', 'flow = "50 cumecs"'),
         ("hydraulics.flow", "unknown unit 'cumecs'", "known:")),
    Case("unit misspelt", "units", edit('roughness = "0.1 mm"', 'roughness = "0.1 mmm"'),
         ("pipe.roughness", "mmm")),
    Case("trailing junk after a unit", "units",
         edit('inside_diameter = "300 mm"', 'inside_diameter = "300 mm 5"'),
         ("pipe.inside_diameter", "something follows the unit")),
    Case("wrong dimension", "units", edit('minimum = "1.2 m"', 'minimum = "1.2 L/s"'),
         ("cover.minimum", "expected a length")),
    Case("temperature in degrees of angle", "units", edit('temperature = "15 degC"', 'temperature = "15 deg"'),
         ("hydraulics.temperature", "expected a temperature")),
    Case("quoted bare number as an angle", "unitless numbers",
         add('[design]\nmax_joint_deflection = "3"'), ("design.max_joint_deflection", "radians")),
    Case("quoted bare number as a fraction", "unitless numbers",
         add('[energy]\nefficiency = "0.7"'), ("energy.efficiency", "needs a unit")),
    Case("grade as a bare number", "unitless numbers", add("[design]\nmin_grade = 0.001"),
         ("design.min_grade", "a grade needs its unit")),
    Case("valve grade as a bare number", "unitless numbers", add("[valves]\ngrade_change = 1"),
         ("valves.grade_change", "a grade needs its unit")),
    Case("grade above 100 %", "contradictory", add('[design]\nmax_grade = "150 %"'),
         ("design.max_grade", "above 100 %")),
    Case("discount rate above 100 %", "contradictory", add("[energy]\ndiscount_rate = 5"),
         ("energy.discount_rate", "more than 100 %")),
    Case("efficiency above 100 %", "contradictory", add('[energy]\nefficiency = "150 %"'),
         ("energy.efficiency", "more than 100 %")),
    # -- values that cannot be right
    Case("min_pressure above max_pressure", "contradictory",
         add('[checks]\nmin_pressure = "600 kPa"\nmax_pressure = "500 kPa"'),
         ("checks.min_pressure", "above", "checks.max_pressure")),
    Case("min_pressure above the default max", "contradictory", add('[checks]\nmin_pressure = "90 psi"'),
         ("checks.min_pressure", "default 550 kPa")),
    Case("negative PRV setting", "contradictory", add(PRV), ("setting", "below atmospheric")),
    Case("extreme start_station", "crashes", edit('spacing = "10 m"', 'spacing = "10 m"\nstart_station = "1e12 m"'),
         ("alignment.start_station", "beyond any real line")),
    Case("joint length 5 km", "contradictory", add('[design]\njoint_length = "5 km"'),
         ("design.joint_length", "1-50 m")),
    Case("joint length under 1 m", "contradictory", add('[design]\njoint_length = "0.5 m"'),
         ("design.joint_length", "1-50 m")),
    Case("fractional curve_joints", "contradictory", add("[design]\ncurve_joints = 2.5"),
         ("design.curve_joints", "whole number")),
    Case("roughness at the diameter", "cannot be right", edit('roughness = "0.1 mm"', 'roughness = "300 mm"'),
         ("pipe.roughness", "at or above")),
    Case("absurd Hazen-Williams C", "cannot be right",
         edit('friction = "darcy-weisbach"', 'friction = "hazen-williams"\nhazen_williams_c = 1000'),
         ("pipe.hazen_williams_c", "not a pipe")),
    Case("cover of tens of metres", "cannot be right", edit('minimum = "1.2 m"', 'minimum = "30 m"'),
         ("cover.minimum", "tunnel")),
    Case("max cover below min cover", "contradictory", edit('minimum = "1.2 m"', 'minimum = "1.2 m"\nmaximum = "1 m"'),
         ("cover.maximum", "less than")),
    Case("outside below inside diameter", "contradictory",
         edit('outside_diameter = "320 mm"', 'outside_diameter = "280 mm"'),
         ("pipe.outside_diameter", "smaller")),
    Case("temperature beyond 40 degC", "cannot be right",
         edit('temperature = "15 degC"', 'temperature = "80 degC"'),
         ("hydraulics.temperature", "0-40 degC")),
    Case("scenario named static", "project file", add('[[scenarios]]\nname = "static"\nmultiplier = 1.0'),
         ("scenarios[0].name", "static")),
    Case("section off the line", "contradictory",
         add('[[sections]]\nfrom = "2 km"\nto = "3 km"\ninside_diameter = "250 mm"'),
         ("sections[0]", "wholly off the line")),
    Case("fitting off the line", "contradictory", add('[[fittings]]\nstation = "9 km"\nk = 0.5'),
         ("fittings[0].station", "not on the line")),
    Case("spacing far too fine", "crashes", edit('spacing = "10 m"', 'spacing = "0.01 mm"'),
         ("alignment.spacing", "not a planning profile")),
    Case("unknown output CRS", "project file", add('[output]\ncrs = "EPSG:999999"'), ("output.crs",)),
    # -- the DEM
    Case("DEM missing", "DEM", lambda f: (f / "dem.tif").unlink(), ("terrain.dem", "dem.tif")),
    Case("DEM not a raster", "DEM", lambda f: (f / "dem.tif").write_bytes(b"not a tiff"),
         ("terrain.dem", "dem.tif")),
    Case("DEM damaged mid-file", "crashes", damaged, ("terrain.dem", "dem.tif", "damaged")),
    Case("DEM truncated", "crashes", truncated, ("terrain.dem", "dem.tif")),
    Case("DEM without a CRS", "DEM", dem(flat(), crs=None), ("dem.tif", "no coordinate reference system")),
    Case("multi-band image as DEM", "DEM", multiband, ("dem.tif", "3 bands")),
    Case("DEM voids without nodata", "DEM", voids, ("dem.tif", "voids without a nodata tag", "-9999")),
    Case("DEM of absurd magnitude", "DEM", dem(flat(25_000.0)), ("terrain.dem", "cannot be ground")),
    Case("DEM nodata along the line", "DEM",
         dem(np.where(np.arange(200)[None, :] < 100, flat(), -1.0), nodata=-1.0),
         ("terrain.dem", "no ground data")),
    Case("bad vertical unit", "units", edit('dem = "dem.tif"', 'dem = "dem.tif"\nvertical_unit = "yards"'),
         ("terrain.vertical_unit", "yards")),
    # -- the line and its CRS
    Case("points as centerline", "crashes", lambda f: points_layer(f, "line.geojson"),
         ("alignment.path", "Point", "line")),
    Case("route closes into a ring", "routes",
         line([(X0, Y), (X0 + 500, Y), (X0 + 500, Y + 300), (X0, Y + 300), (X0, Y)]), ("ring",)),
    Case("route with a spike", "routes", line([(X0, Y), (X0 + 600, Y), (X0 + 300, Y + 1), (X0 + 900, Y)]),
         ("turns back on itself",)),
    Case("route retraces itself", "routes",
         line([(X0, Y), (X0 + 600, Y), (X0 + 600, Y + 100), (X0 + 300, Y + 100), (X0 + 300, Y),
               (X0 + 300, Y - 100)]), ("crosses or runs over itself",)),
    Case("route loops across itself", "routes",
         line([(X0, Y), (X0 + 600, Y), (X0 + 600, Y + 200), (X0 + 300, Y + 200), (X0 + 300, Y - 200),
               (X0 + 900, Y - 200)]), ("crosses or runs over itself",)),
    Case("route of zero length", "routes", line([(X0, Y), (X0, Y)]), ("zero length",)),
    Case("route shorter than a millimetre", "routes", line([(X0, Y), (X0 + 0.0005, Y)]),
         ("alignment.path", "0.5 mm long", "stations closer than 1 mm")),
    Case("projected coordinates labelled lon/lat", "CRS", line(LINE, crs="EPSG:4326"),
         ("alignment.path", "does not state its CRS")),
    Case("wrong UTM zone", "CRS", line(LINE, crs="EPSG:32632"),
         ("terrain.dem", "the DEM covers", "UTM zone 33N")),
    Case("lon/lat swapped", "CRS", swapped, ("terrain.dem", "swapped")),
    Case("line partly outside the DEM", "CRS", line([(X0, Y), (X0 + 3000.0, Y)]),
         ("terrain.dem", "outside every DEM", "the DEM covers")),
    # -- crossings and their attributes
    Case("crossing lying along the main", "routes",
         crossing({"name": "water 1", "bottom": 97.0}, ((X0 + 300, Y), (X0 + 500, Y))),
         ("crossings[0]", "runs along the centerline")),
    Case("boolean as an elevation", "attributes", crossing({"name": "water 1", "bottom": True}),
         ("crossings[0].bottom_field", "true/false")),
    Case("text with a unit in a width field", "attributes",
         both(crossing({"name": "water 1", "bottom": 97.0, "width": "3.0 m"}),
              add('width_field = "width"')),
         ("crossings[0].width_field", "'3.0 m'", "not a number")),
    Case("crossing field missing", "attributes", edit('bottom_field = "bottom"', 'bottom_field = "invert"'),
         ("crossings[0].bottom_field", "invert", "no such attribute")),
    Case("crossing without its bottom", "attributes", crossing({"name": "water 1", "bottom": None}),
         ("crossings[0]", "empty")),
    Case("points as crossings", "attributes", lambda f: points_layer(f, "x.geojson"),
         ("crossings[0].path", "Point")),
    # -- output folders
    Case("-o empty", "output paths", lambda f: None, ('output folder ""',), outdir=lambda f: ""),
    Case("-o a file", "output paths", outdir_file, ("is a file",)),
    Case("-o a dangling symlink", "output paths", dangling, ("symbolic link", "does not exist")),
    Case("-o the project's own folder", "output paths", lambda f: None, ("an input of this project",),
         outdir=lambda f: str(f)),
    Case("-o a folder of the user's files", "output paths", foreign_files,
         ("notes.txt", "which no gisgrade run recorded")),
    Case("sizes into the project's folder", "output paths", lambda f: None, ("an input of this project",),
         command=("sizes", "--candidates", "250 mm, 300 mm"), outdir=lambda f: str(f)),
    Case("sizes with trailing junk", "units", lambda f: None, ("something follows the unit",),
         command=("sizes", "--candidates", "250 mm 5, 300 mm")),
    # -- suspicious but possible: warnings (check exits 0)
    Case("DEM coarser than the spacing", "warnings", both(dem(flat(n=20), cell=100.0)),
         ("dem.tif", "coarser than"), level="warning"),
    Case("DEM in feet declared metres", "warnings", feet_band, ("dem.tif", "'ft'", "vertical_unit"),
         level="warning"),
    Case("unusual Hazen-Williams C", "warnings",
         edit('friction = "darcy-weisbach"', 'friction = "hazen-williams"\nhazen_williams_c = 40'),
         ("pipe.hazen_williams_c", "usual"), level="warning"),
    Case("deep cover", "warnings", edit('minimum = "1.2 m"', 'minimum = "5 m"'),
         ("cover.minimum", "deeper than"), level="warning"),
    Case("crossing far above the ground", "warnings", crossing({"name": "water 1", "bottom": 130.0}),
         ("crossings[0]", "water 1", "above the ground"), level="warning"),
    Case("extreme velocity", "warnings", edit('flow = "50 L/s"', 'flow = "2000 L/s"'),
         ("scenario 'design'", "m/s"), level="warning"),
    Case("source head below the ground", "warnings", edit('source_head = "200 m"', 'source_head = "90 m"'),
         ("hydraulics.source_head", "below the ground"), level="warning"),
    Case("section reaching beyond the end", "warnings",
         add('[[sections]]\nfrom = "800 m"\nto = "3 km"\ninside_diameter = "250 mm"\n'
             'outside_diameter = "270 mm"'),
         ("sections[0]", "reaches beyond the line", "cut"), level="warning"),
    Case("earlier output without a manifest", "warnings", earlier_output,
         ("earlier output", "MANIFEST.json"), level="warning"),
]
