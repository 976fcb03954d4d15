"""The command line: the demo end to end, and the bad-input contract.

Bad input must end with exit status 2, one line on stderr naming the file,
key or value, no traceback, nothing written, and the inputs untouched.
"""
import hashlib
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

from gisgrade.cli import main

from conftest import DEMO, write_dem, write_lines

OUTPUTS = {"profile.csv", "gradelines.csv", "findings.csv", "fittings.csv", "layers.gpkg",
           "profile.png", "summary.json", "summary.txt", "valves.csv", "high_low_points.csv",
           "geojson", "layers.kml", "styles", "sheets", "map.png", "report.html"}


def digest(folder):
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.iterdir()) if p.is_file()}


def test_version_and_help(capsys):
    assert main(["--version"]) == 0
    assert capsys.readouterr().out.startswith("gisgrade ")
    assert main(["run", "--help"]) == 0
    text = capsys.readouterr().out
    assert "licensed professional engineer" in text and "example" in text


def test_demo_writes_every_output(tmp_path, capsys):
    out = tmp_path / "demo-out"
    assert main(["demo", "-o", str(out)]) == 0
    assert OUTPUTS <= {p.name for p in out.iterdir()}
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no temp folder left
    profile = pd.read_csv(out / "profile.csv")
    assert list(profile.columns[:8]) == ["station_m", "x", "y", "ground_m", "top_m", "axis_m",
                                         "invert_m", "cover_m"]
    grades = pd.read_csv(out / "gradelines.csv")
    assert list(grades.columns[:7]) == ["scenario", "station_m", "flow_m3_s", "velocity_m_s",
                                        "hgl_m", "egl_m", "pressure_kpa"]
    # The DEM's 95 % band (1.96 x 0.5 m RMSE, NSSDA) carried to pressure: rho g band,
    # rho of water at 12 degC from IAPWS-95 (iapws package).
    from iapws import IAPWS95

    rho = IAPWS95(T=285.15, P=0.101325).rho
    assert grades["pressure_band_kpa"].to_numpy() == pytest.approx(rho * 9.80665 * 0.98 / 1e3,
                                                                   rel=1e-5)
    assert set(grades["scenario"]) == {"average day", "peak hour", "max day + fire", "static"}
    # every scenario's rows join the profile's stations exactly
    for _, g in grades.groupby("scenario"):
        assert g["station_m"].tolist() == profile["station_m"].tolist()
    text = capsys.readouterr().out
    assert "CAUTION" in text


def test_demo_layers_are_readable(demo_si):
    import pyogrio

    out = demo_si[1]
    names = {row[0] for row in pyogrio.list_layers(out / "layers.gpkg")}
    assert {"pipe_pieces", "crossings", "stations"} <= names
    crossings = pyogrio.read_dataframe(out / "layers.gpkg", layer="crossings")
    assert len(crossings) == 3
    # Achieved clearance recomputed from the inputs alone: each feature's bottom
    # as given in the demo's crossings.geojson, minus the top of pipe of
    # profile.csv interpolated at its station (the demo's features are lines,
    # no width: the footprint is the crossing point; plane geometry).
    import json

    given = {f["properties"]["name"]: f["properties"]["bottom_elev"] for f in
             json.loads((DEMO / "crossings.geojson").read_text())["features"]}
    prof = pd.read_csv(out / "profile.csv")
    top = np.interp(crossings["station_m"], prof["station_m"], prof["top_m"])
    expected = np.array([given[n] for n in crossings["name"]]) - top
    # profile.csv holds 0.1 mm (4 decimals): agree to that
    np.testing.assert_allclose(crossings["clearance_achieved_m"], expected, atol=2e-4)
    # the demo's 0.3 m clearance (its project file) is met at every crossing
    assert (expected >= 0.3 - 2e-4).all()


def test_module_entry_point_runs_without_traceback(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "gisgrade", "run", str(tmp_path / "none.toml")],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert "none.toml" in proc.stderr


def _edit(project, old, new):
    text = project.read_text()
    assert old in text, old
    project.write_text(text.replace(old, new))


def _points_file(path):
    path.write_text('{"type": "FeatureCollection", "features": [{"type": "Feature", '
                    '"properties": {}, "geometry": {"type": "Point", "coordinates": [8.3, 47.0]}}]}')


BAD = {
    "unknown key": (lambda p: _edit(p, 'spacing = "10 m"', 'spacng = "10 m"'), ["alignment.spacng", "spacing"]),
    "bare number": (lambda p: _edit(p, 'flow = "40 L/s"', "flow = 40"), ["hydraulics.flow"]),
    "wrong dimension": (lambda p: _edit(p, 'minimum = "1.2 m"', 'minimum = "1.2 L/s"'), ["cover.minimum"]),
    "unknown unit": (lambda p: _edit(p, 'roughness = "0.1 mm"', 'roughness = "0.1 mmm"'), ["pipe.roughness", "mmm"]),
    "missing key": (lambda p: _edit(p, 'source_head = "190.0 m"', ""), ["hydraulics.source_head"]),
    "missing DEM": (lambda p: (p.parent / "dem.tif").unlink(), ["terrain.dem", "dem.tif"]),
    "DEM not a raster": (lambda p: (p.parent / "dem.tif").write_bytes(b"not a tiff"), ["dem.tif"]),
    "centerline of points": (lambda p: _points_file(p.parent / "centerline.geojson"), ["alignment.path", "Point"]),
    "crossing field": (lambda p: _edit(p, 'bottom_field = "bottom_elev"', 'bottom_field = "invert"'),
                       ["crossings[0].bottom_field", "invert"]),
    "not TOML": (lambda p: p.write_text("[alignment\npath = 1"), ["project.toml", "TOML"]),
    "unknown fitting kind": (lambda p: p.write_text(p.read_text() + '\n[[fittings]]\nstation = "100 m"\n'
                                                    'kind = "butterfly valv"\n'),
                             ["fittings[1].kind", "butterfly_valve_open"]),
    "unknown material": (lambda p: _edit(p, 'material = "ductile-iron-cement-lined"',
                                         'material = "ductile-iron-lined"'),
                         ["pipe.material", "ductile-iron-cement-lined"]),
    "scenario without flow": (lambda p: p.write_text(p.read_text() + '\n[[scenarios]]\nname = "peak"\n'),
                              ["scenarios[3]", "multiplier"]),
    "fitting off the line": (lambda p: p.write_text(p.read_text() + '\n[[fittings]]\nstation = "9 km"\n'
                                                    'k = 0.5\n'), ["fittings[1].station", "9000"]),
    "bad vertical unit": (lambda p: _edit(p, 'vertical_unit = "m"', 'vertical_unit = "yards"'),
                          ["terrain.vertical_unit", "yards"]),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_input_exits_2_names_the_culprit_and_writes_nothing(case, demo_copy, tmp_path, capsys):
    breaker, words = BAD[case]
    breaker(demo_copy)
    before = digest(demo_copy.parent)
    out = tmp_path / "out"
    assert main(["run", str(demo_copy), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("gisgrade: error: ") and err.count("\n") == 1, err
    for w in words:
        assert w in err, (w, err)
    assert not out.exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".out")]
    assert digest(demo_copy.parent) == before  # inputs never modified


def test_line_outside_the_dem_is_an_input_error(tmp_path, capsys):
    write_dem(tmp_path / "dem.tif", np.full((20, 20), 50.0))
    # The DEM covers x 500000-500200; this line runs to 500400.
    write_lines(tmp_path / "line.geojson", [[(500010.0, 4649900.0), (500400.0, 4649900.0)]])
    from conftest import PROJECT
    (tmp_path / "project.toml").write_text(PROJECT)
    assert main(["run", str(tmp_path / "project.toml"), "-o", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "terrain.dem" in err and err.count("\n") == 1
    assert not (tmp_path / "o").exists()


def test_outputs_never_replace_an_input(demo_copy, capsys):
    # An input named like an output, in the output folder: refused, untouched.
    import geopandas as gpd

    folder = demo_copy.parent
    gpd.read_file(folder / "centerline.geojson").to_file(folder / "layers.gpkg", layer="route")
    _edit(demo_copy, 'path = "centerline.geojson"', 'path = "layers.gpkg"')
    before = digest(folder)
    assert main(["run", str(demo_copy), "-o", str(folder)]) == 2
    err = capsys.readouterr().err
    # the folder holds the project's inputs and is replaced whole: refused before computing
    assert "an input of this project" in err and err.count("\n") == 1
    assert digest(folder) == before


def test_outdir_that_is_a_file_is_an_input_error(demo_copy, tmp_path, capsys):
    target = tmp_path / "taken"
    target.write_text("x")
    assert main(["run", str(demo_copy), "-o", str(target)]) == 2
    assert "is a file" in capsys.readouterr().err
    assert target.read_text() == "x"


def test_a_later_ground_only_run_leaves_no_stale_tables(demo_copy, tmp_path):
    out = tmp_path / "o"
    assert main(["run", str(demo_copy), "-o", str(out), "-q"]) == 0
    assert (out / "gradelines.csv").exists()
    assert main(["profile", str(demo_copy), "-o", str(out), "-q"]) == 0
    assert not (out / "gradelines.csv").exists() and not (out / "findings.csv").exists()


def test_crossing_layers_that_cannot_be_crossed_are_input_errors(demo_copy, capsys):
    import json

    folder = demo_copy.parent
    doc = json.loads((folder / "crossings.geojson").read_text())
    # 1) points instead of lines
    pts = dict(doc, features=[dict(f, geometry={"type": "Point",
                                                "coordinates": f["geometry"]["coordinates"][0]})
                              for f in doc["features"]])
    (folder / "crossings.geojson").write_text(json.dumps(pts))
    assert main(["run", str(demo_copy), "-o", str(folder / "o")]) == 2
    assert "Point features" in capsys.readouterr().err
    # 2) UTM coordinates in a GeoJSON that does not state its CRS: read as
    # lon/lat (RFC 7946 default), which those numbers cannot be
    (folder / "crossings.geojson").write_text(json.dumps({k: v for k, v in doc.items() if k != "crs"}))
    assert main(["run", str(demo_copy), "-o", str(folder / "o")]) == 2
    assert "does not state its CRS" in capsys.readouterr().err
    assert not (folder / "o").exists()


def test_a_crossing_layer_that_misses_the_line_is_noted(demo_copy):
    import json

    from gisgrade.pipeline import run

    folder = demo_copy.parent
    doc = json.loads((folder / "crossings.geojson").read_text())
    for f in doc["features"]:  # move every feature 100 km east
        f["geometry"]["coordinates"] = [[x + 1e5, y] for x, y in f["geometry"]["coordinates"]]
    (folder / "crossings.geojson").write_text(json.dumps(doc))
    r = run(demo_copy, write=False)
    assert len(r.crossings) == 0
    assert any("crossings[0]: no feature of crossings.geojson" in n for n in r.summary["notes"])


def test_us_display_labels_stations_in_feet(demo_us):
    import re

    out = demo_us[1]
    prof = pd.read_csv(out / "profile.csv")
    # last station in feet (1 ft = 0.3048 m, NIST SP 811), written hundreds + feet
    feet = prof["station_m"].iloc[-1] / 0.3048
    assert prof["station"].iloc[-1] == f"{int(feet // 100)}+{feet % 100:05.2f}"
    text = (out / "summary.txt").read_text()
    assert re.search(r"crossing .* at \d+\+\d{2}\.\d{2}:", text)


def test_summary_counts_one_high_point_in_the_singular():
    from gisgrade.output.summary import summary_text

    base = {"length_m": 1000.0, "working_crs": "EPSG:32633", "stations": 101,
            "ground_min_m": 100.0, "ground_max_m": 110.0, "notes": [], "scenarios": {},
            "crossings": [], "cautions": ""}
    text = summary_text({**base, "grade_breaks": 1, "high_points": 1, "low_points": 2})
    assert "pipe profile: 1 grade break; between the ends 1 high point and 2 low points" in text
    text = summary_text({**base, "grade_breaks": 0, "high_points": 0, "low_points": 1})
    assert "0 grade breaks; between the ends 0 high points and 1 low point" in text
