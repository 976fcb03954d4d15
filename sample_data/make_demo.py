"""Build the invented "Sallow Creek" demo scenario for gisgrade.

Run from the repository root::

    python sample_data/make_demo.py

It writes the same four files to two folders:

* ``sample_data/sallow_creek/`` (to look at and edit), and
* ``gisgrade/data/demo/`` (shipped inside the package for ``gisgrade demo``).

Everything here is invented: the place names, the terrain, the utilities
and the numbers. The terrain is a sum of smooth analytic functions plus a
little smoothed noise from a fixed-seed generator, so the same script gives
the same raster values every time.

Only numpy, rasterio, shapely, pyproj and json are used.
"""
from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import pyproj
import rasterio
from rasterio.transform import from_origin
from shapely import LineString, Point

SCENARIO = "sallow_creek"
ROOT = Path(__file__).resolve().parent.parent
OUT_DIRS = (ROOT / "sample_data" / SCENARIO, ROOT / "gisgrade" / "data" / "demo")

# --- DEM grid ---------------------------------------------------------------
DEM_CRS = "EPSG:32632"  # WGS 84 / UTM zone 32N, metres
CELL = 10.0  # m
X_MIN, Y_MIN = 451_000.0, 5_207_000.0  # south-west corner of the grid
NCOLS, NROWS = 750, 400  # 7.5 km east-west, 4.0 km north-south
NODATA = -9999.0
SEED = 20240611

# --- Centerline, in local grid metres (u east, v north of the SW corner) ------
# Along Mill Road from the Tolley Hill tank site, down the west slope, across
# Sallow Creek, over a low knoll and up into Harrowmere.
CENTERLINE_UV = [
    (1100, 2100),  # Tolley Hill tank site (start)
    (1350, 2050),
    (1700, 1960),
    (2100, 1900),
    (2500, 1880),
    (2900, 1830),
    (3300, 1800),
    (3600, 1790),
    (4100, 1800),
    (4500, 1850),
    (4900, 1950),
    (5300, 2050),
    (5700, 2100),
    (6100, 2150),
    (6500, 2160),
    (6900, 2210),  # Harrowmere, Church Hill end (finish)
]


def creek_u(v):
    """East coordinate (local m) of Sallow Creek's thalweg at north coordinate v."""
    return 3800.0 + 120.0 * np.sin(2.0 * np.pi * v / 2600.0 + 0.7)


def mill_road_v(u):
    """North coordinate (local m) of Mill Road where it crosses the valley floor."""
    return 1790.0 + 0.02 * (u - 3600.0)


def terrain(u, v):
    """Smooth ground elevation (m) at local coordinates u, v (m); no noise."""
    d = u - creek_u(v)
    # valley floor falls gently to the north (the creek flows north)
    z = 114.0 - 0.003 * (v - 2000.0)
    # valley walls
    z = z + 28.0 * (1.0 - np.exp(-((d / 1100.0) ** 2)))
    # Tolley Hill (tank site)
    z = z + 30.0 * np.exp(-(((u - 1100.0) ** 2 + (v - 2150.0) ** 2) / (2 * 650.0**2)))
    # Gorse Knoll, east of the creek
    z = z + 6.0 * np.exp(-(((u - 5300.0) ** 2 + (v - 2080.0) ** 2) / (2 * 260.0**2)))
    # Church Hill under Harrowmere, rising to the east end
    z = z + 19.0 * np.exp(-(((u - 7000.0) ** 2 + (v - 2250.0) ** 2) / (2 * 800.0**2)))
    # rolling hills
    z = z + 2.5 * np.sin(2 * np.pi * u / 1700.0) * np.sin(2 * np.pi * v / 1300.0)
    z = z + 1.5 * np.sin(2 * np.pi * (u + v) / 900.0 + 1.3)
    # creek channel: about 30 m wide, 2.5 m deep, filled where Mill Road
    # crosses on its embankment over the box culvert
    road = np.exp(-(((v - mill_road_v(u)) / 10.0) ** 4))
    z = z - 2.5 * np.exp(-((d / 12.0) ** 2)) * (1.0 - road)
    return z


def make_dem():
    """Elevation array (float32, rows north to south) and its geotransform."""
    u = (np.arange(NCOLS) + 0.5) * CELL  # cell centres
    v = (NROWS - np.arange(NROWS) - 0.5) * CELL  # row 0 is the north edge
    uu, vv = np.meshgrid(u, v)
    z = terrain(uu, vv)
    rng = np.random.default_rng(SEED)
    noise = rng.normal(0.0, 0.4, size=(NROWS + 2, NCOLS + 2))
    # 3 x 3 box smoothing of the noise (std about 0.13 m)
    smooth = sum(
        noise[i : i + NROWS, j : j + NCOLS] for i in range(3) for j in range(3)
    ) / 9.0
    z = z + smooth
    # a missing-data corner (north-east), far from the line, as real DEM tiles have
    cols, rows = np.meshgrid(np.arange(NCOLS), np.arange(NROWS))
    z[(NCOLS - cols) + rows < 60] = NODATA
    transform = from_origin(X_MIN, Y_MIN + NROWS * CELL, CELL, CELL)
    return z.astype(np.float32), transform


def bilinear(z, transform, x, y):
    """Bilinear ground (m) at map x, y from cell-centre values."""
    col, row = ~transform * (x, y)
    c, r = col - 0.5, row - 0.5
    c0, r0 = int(math.floor(c)), int(math.floor(r))
    fc, fr = c - c0, r - r0
    q = z[r0 : r0 + 2, c0 : c0 + 2].astype(float)
    return float(
        q[0, 0] * (1 - fc) * (1 - fr)
        + q[0, 1] * fc * (1 - fr)
        + q[1, 0] * (1 - fc) * fr
        + q[1, 1] * fc * fr
    )


def to_map(uv):
    return [(X_MIN + u, Y_MIN + v) for u, v in uv]


def crossings_uv():
    """(name, kind, extra properties, local vertices, depth of bottom below ground).

    The depth is taken below the ground where the feature meets the
    centerline, except for the culvert: there the road embankment hides the
    creek, so the depth is taken below the lower of the two channel-bed
    elevations at the culvert's ends.
    """
    v_cul = float(mill_road_v(creek_u(1795.0)))
    return [
        (
            "Westfield transmission main",
            "water_main",
            {"diameter": "600 mm", "material": "steel"},
            [(2640, 1450), (2600, 1900), (2580, 2350)],
            1.8,
        ),
        (
            "Mill Road box culvert",
            "culvert",
            {"span": "3.0 m", "rise": "2.0 m"},
            [(float(creek_u(v_cul - 15)), v_cul - 15), (float(creek_u(v_cul + 15)), v_cul + 15)],
            0.3,
        ),
        (
            "Chapel Street storm drain",
            "storm_drain",
            {"diameter": "450 mm", "material": "concrete"},
            [(6290, 1850), (6305, 2150), (6320, 2480)],
            1.7,
        ),
    ]


def feature_collection(features, crs_name=None):
    fc = {"type": "FeatureCollection"}
    if crs_name:
        fc["crs"] = {"type": "name", "properties": {"name": crs_name}}
    fc["features"] = features
    return fc


def dump(obj, path):
    path.write_text(json.dumps(obj, indent=1) + "\n", encoding="utf-8")


PROJECT_TOML = """\
# gisgrade demo project: "Sallow Creek", an INVENTED scenario.
# Harrowmere, Tolley Hill, Sallow Creek, Mill Road and the utilities crossed
# are made up; the terrain is synthetic (sample_data/make_demo.py).
# A new 300 mm ductile iron main along Mill Road from the Tolley Hill tank
# down across Sallow Creek and up into Harrowmere. Not real data.

[alignment]
path = "centerline.geojson"
spacing = "10 m"

[terrain]
dem = "dem.tif"
vertical_unit = "m"
vertical_accuracy = "0.5 m"   # RMSE of the (synthetic) DEM

[pipe]
# DN300 ductile iron, cement-mortar lined (sizes approximate)
inside_diameter = "305 mm"
outside_diameter = "326 mm"
friction = "darcy-weisbach"
roughness = "0.1 mm"          # wins over the material's own roughness
material = "ductile-iron-cement-lined"   # gives the wall's modulus for the wave speed
pressure_rating = "2.5 MPa"   # invented for the demo

[cover]
minimum = "1.2 m"
maximum = "4 m"

[[cover_zones]]
# the Harrowmere bypass road corridor: deeper cover under traffic
path = "zones.geojson"
minimum_field = "min_cover_m"

[[crossings]]
path = "crossings.geojson"
bottom_field = "bottom_elev"
clearance = "0.3 m"

[design]
joint_length = "5.5 m"
max_joint_deflection = "3 deg"

[hydraulics]
# top water level of the Tolley Hill tank
source_head = "{head} m"
start = "tank"
flow = "40 L/s"               # average day
temperature = "12 degC"

[checks]
# The valley floor lies 45 m below Harrowmere's end, more than the 42 m between
# 140 and 550 kPa: no reducing valve keeps both within 550 kPa when no water
# flows. The valley stretch serves no connections, so the (invented) utility
# allows 750 kPa on this trunk main; the pipe is rated 2.5 MPa.
max_pressure = "750 kPa"

[surge]
# the utility's rule (invented): line valves close over at least a minute
closure_time = "60 s"

[energy]
# gravity supply: no pumping unless a size needs a booster; prices invented
efficiency = "70 %"
tariff = "0.18 / kWh"
currency = "EUR"
emission_factor = "0.3 kg/kWh"
period = "40 years"
discount_rate = "4 %"

[[scenarios]]
name = "average day"
multiplier = 1.0
hours_per_year = "7300 h"

[[scenarios]]
name = "peak hour"
multiplier = 2.0
hours_per_year = "1450 h"

[[scenarios]]
name = "max day + fire"
multiplier = 1.5              # max day: 1.5 x average day (the offtake too)
fire_flow = "63 L/s"          # not scaled; drawn at the last station (fire_station)
show_egl = false
hours_per_year = "10 h"

# `gisgrade sizes project.toml -o sizes` compares these (costs per metre laid, invented)
[[size_candidates]]
name = "DN300"
inside_diameter = "305 mm"
outside_diameter = "326 mm"
cost = "310 / m"

[[size_candidates]]
name = "DN350"
inside_diameter = "354 mm"
outside_diameter = "378 mm"
cost = "365 / m"

[[size_candidates]]
name = "DN400"
inside_diameter = "403 mm"
outside_diameter = "429 mm"
cost = "425 / m"

[[fittings]]
# isolation valve below the tank
station = "15 m"
kind = "butterfly_valve_open"

[[offtakes]]
# Gorse Knoll farms
station = "4100 m"
flow = "6 L/s"
"""
SOURCE_HEAD = 190.0  # m, top water level of the invented tank


def write_scenario(out):
    out.mkdir(parents=True, exist_ok=True)
    z, transform = make_dem()
    profile = dict(
        driver="GTiff",
        width=NCOLS,
        height=NROWS,
        count=1,
        dtype="float32",
        crs=DEM_CRS,
        transform=transform,
        nodata=NODATA,
        compress="deflate",
        predictor=3,
        tiled=True,
        blockxsize=256,
        blockysize=256,
    )
    with rasterio.open(out / "dem.tif", "w", **profile) as dst:
        dst.write(z, 1)
        dst.update_tags(AREA_OR_POINT="Area")
        dst.set_band_description(1, "ground elevation, invented demo terrain (Sallow Creek)")
        dst.set_band_unit(1, "metre")

    # centerline in EPSG:4326 (lon, lat), rounded to 1e-7 degree (about 1 cm)
    to_ll = pyproj.Transformer.from_crs(DEM_CRS, "EPSG:4326", always_xy=True)
    lonlat = [
        (round(lon, 7), round(lat, 7))
        for lon, lat in (to_ll.transform(x, y) for x, y in to_map(CENTERLINE_UV))
    ]
    dump(
        feature_collection([
            {
                "type": "Feature",
                "properties": {
                    "name": "Mill Road main (proposed)",
                    "from": "Tolley Hill tank",
                    "to": "Harrowmere, Church Hill",
                },
                "geometry": {"type": "LineString", "coordinates": [list(p) for p in lonlat]},
            }
        ]),
        out / "centerline.geojson",
    )

    # crossings in the DEM's CRS (UTM 32N), named with the legacy GeoJSON crs member
    to_xy = pyproj.Transformer.from_crs("EPSG:4326", DEM_CRS, always_xy=True)
    line = LineString([to_xy.transform(lon, lat) for lon, lat in lonlat])
    feats = []
    for name, kind, extra, uv, depth in crossings_uv():
        coords = [(round(x, 2), round(y, 2)) for x, y in to_map(uv)]
        hit = line.intersection(LineString(coords))
        assert isinstance(hit, Point), f"{name} must cross the centerline exactly once: {hit.wkt}"
        if kind == "culvert":
            ground = min(bilinear(z, transform, x, y) for x, y in (coords[0], coords[-1]))
        else:
            ground = bilinear(z, transform, hit.x, hit.y)
        bottom = round(ground - depth, 2)
        props = {"name": name, "kind": kind, "bottom_elev": bottom, **extra}
        feats.append({
            "type": "Feature",
            "properties": props,
            "geometry": {"type": "LineString", "coordinates": [list(p) for p in coords]},
        })
    dump(feature_collection(feats, "urn:ogc:def:crs:EPSG::32632"), out / "crossings.geojson")

    # cover zone: the Harrowmere bypass, a 40 m road corridor crossing the line
    u0, half = 4700.0, 20.0
    ring = [(u0 - half - 60, 1500), (u0 + half - 60, 1500), (u0 + half + 60, 2300),
            (u0 - half + 60, 2300), (u0 - half - 60, 1500)]
    zone = {"type": "Feature",
            "properties": {"name": "Harrowmere bypass corridor", "min_cover_m": 1.8},
            "geometry": {"type": "Polygon",
                         "coordinates": [[[round(x, 2), round(y, 2)] for x, y in to_map(ring)]]}}
    dump(feature_collection([zone], "urn:ogc:def:crs:EPSG::32632"), out / "zones.geojson")

    (out / "project.toml").write_text(PROJECT_TOML.format(head=f"{SOURCE_HEAD:.1f}"), encoding="utf-8")


def verify(out):
    """Re-read the files with rasterio, shapely and pyproj and print a summary."""
    print(f"== {out.relative_to(ROOT)}")
    with rasterio.open(out / "dem.tif") as src:
        dem = src.read(1)
        print(
            f"DEM {src.width} x {src.height} cells of {src.res[0]:g} m, {src.crs}, "
            f"nodata={src.nodata}, compress={src.compression.value if src.compression else None}, "
            f"{(out / 'dem.tif').stat().st_size / 1024:.0f} KiB"
        )
        crs, transform, nodata = src.crs, src.transform, src.nodata
    gj = json.loads((out / "centerline.geojson").read_text())
    (feat,) = gj["features"]
    to_xy = pyproj.Transformer.from_crs("EPSG:4326", crs, always_xy=True)
    line = LineString([to_xy.transform(*p) for p in feat["geometry"]["coordinates"]])
    geod_len = pyproj.Geod(ellps="WGS84").geometry_length(
        LineString(feat["geometry"]["coordinates"])
    )
    print(
        f"centerline: {len(line.coords)} vertices, {line.length:.1f} m in {crs} "
        f"(geodesic {geod_len:.1f} m)"
    )
    for f in json.loads((out / "crossings.geojson").read_text())["features"]:
        hit = line.intersection(LineString(f["geometry"]["coordinates"]))
        assert isinstance(hit, Point)
        st = line.project(hit)
        p = f["properties"]
        print(f"  crossing at station {st:8.1f} m: {p['name']} ({p['kind']}), bottom_elev {p['bottom_elev']} m")
    s = np.arange(0.0, line.length, 10.0)
    s = np.append(s, line.length)
    pts = [line.interpolate(d) for d in s]
    rows, cols = rasterio.transform.rowcol(transform, [p.x for p in pts], [p.y for p in pts])
    g = dem[np.asarray(rows), np.asarray(cols)].astype(float)
    assert not np.any(g == nodata), "the line must not touch nodata cells"
    i_lo, i_hi = int(np.argmin(g)), int(np.argmax(g))
    print(
        f"ground along the line (nearest cell, every 10 m): {g.min():.1f} m at {s[i_lo]:.0f} m "
        f"to {g.max():.1f} m at {s[i_hi]:.0f} m; start {g[0]:.1f} m, end {g[-1]:.1f} m"
    )
    return line.length


def main():
    for out in OUT_DIRS:
        write_scenario(out)
    a, b = OUT_DIRS
    for name in ("dem.tif", "centerline.geojson", "crossings.geojson", "zones.geojson",
                 "project.toml"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), f"{name} differs between copies"
    verify(a)
    return 0


if __name__ == "__main__":
    sys.exit(main())
