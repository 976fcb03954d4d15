"""The ground-profile run (``gisgrade profile``): route choice, direction,
start station, and the ground against an exact analytic surface."""
import json

import numpy as np
import pandas as pd
import pytest

from gisgrade.cli import main
from gisgrade.pipeline import run_ground

from conftest import UTM, write_dem, write_lines

GROUND_ONLY = """\
[alignment]
path = "routes.gpkg"
spacing = "25 m"
{extra}

[terrain]
dem = "dem.tif"
vertical_unit = "ft"
"""


def plane_ft(x, y):
    """An exact plane in feet: 300 ft + 0.01 ft/m east - 0.02 ft/m north."""
    return 300.0 + 0.01 * (x - 500_000.0) - 0.02 * (y - 4_649_000.0)


@pytest.fixture
def routes(tmp_path):
    """Two candidate routes in one GeoPackage layer over a plane DEM in feet."""
    import geopandas as gpd
    from shapely.geometry import LineString

    cell = 10.0
    cols = np.arange(200) * cell + cell / 2 + 500_000.0   # cell centres (x)
    rows = 4_650_000.0 - (np.arange(200) * cell + cell / 2)  # cell centres (y), north first
    X, Y = np.meshgrid(cols, rows)
    write_dem(tmp_path / "dem.tif", plane_ft(X, Y), dtype="float64")
    gdf = gpd.GeoDataFrame(
        {"name": ["north", "south"]},
        geometry=[LineString([(500_100, 4_649_800), (501_100, 4_649_800)]),
                  LineString([(500_100, 4_649_200), (500_700, 4_649_500), (501_500, 4_649_300)])],
        crs=UTM)
    gdf.to_file(tmp_path / "routes.gpkg", layer="candidates", engine="pyogrio")
    return tmp_path


def project(folder, extra):
    path = folder / "project.toml"
    path.write_text(GROUND_ONLY.format(extra=extra))
    return path


def test_where_picks_a_route_and_the_plane_comes_back_exactly(routes):
    r = run_ground(project(routes, "where = \"name = 'south'\""), write=False)
    t = r.table
    # Exact plane, converted with the international foot (0.3048 m, NIST SP 811).
    assert np.allclose(t["ground_m"], plane_ft(t["x"], t["y"]) * 0.3048, atol=1e-9)
    assert t["station_m"].iloc[-1] == pytest.approx(np.hypot(600, 300) + np.hypot(800, 200))
    assert 500_700.0 in t["x"].round(6).tolist()  # the vertex is a station


def test_several_routes_without_a_choice_is_an_input_error(routes, capsys):
    assert main(["profile", str(project(routes, "")), "-o", str(routes / "o")]) == 2
    err = capsys.readouterr().err
    assert "2 separate lines" in err and "alignment.where" in err
    assert not (routes / "o").exists()


def test_feature_id_reverse_and_start_station(routes):
    # GeoPackage feature ids start at 1 (OGC GeoPackage 1.3, table rows).
    fwd = run_ground(project(routes, "feature = 1"), write=False).table
    rev = run_ground(project(routes, 'feature = 1\nreverse = true\nstart_station = "2 km"'),
                     write=False).table
    assert fwd["x"].iloc[0] == pytest.approx(500_100.0) and rev["x"].iloc[0] == pytest.approx(501_100.0)
    assert rev["station_m"].iloc[0] == 2000.0 and rev["station_m"].iloc[-1] == pytest.approx(3000.0)
    assert np.allclose(rev["ground_m"].to_numpy()[::-1], fwd["ground_m"].to_numpy(), atol=1e-9)


def test_profile_command_writes_ground_outputs(routes):
    out = routes / "ground"
    assert main(["profile", str(project(routes, "feature = 2")), "-o", str(out), "-q"]) == 0
    assert {p.name for p in out.iterdir()} == {"profile.csv", "layers.gpkg", "profile.png",
                                               "summary.json", "summary.txt", "geojson",
                                               "layers.kml", "styles", "map.png", "report.html",
                                               "MANIFEST.json"}
    prof = pd.read_csv(out / "profile.csv")
    assert prof["station"].iloc[1] == "0+025.00"
    summary = json.loads((out / "summary.json").read_text())
    # No vertical_accuracy given: 10 m cells are taken as a national model with
    # 3 m RMSE (common practice, docs/terrain.md); the 95 % band is 1.96 RMSE
    # (NSSDA, FGDC-STD-007.3-1998).
    assert summary["ground_band_95_m"] == pytest.approx(1.96 * 3.0)
    assert any("vertical_accuracy not given" in n for n in summary["notes"])


def test_summary_geodesic_length_of_a_lon_lat_line(tmp_path):
    import pyproj

    # Reference: pyproj.Geod line length on WGS 84 (Karney 2013); the summary
    # gives it to the millimetre. The grid length in UTM differs by the scale
    # factor (about 0.9996 here), far more than that.
    lonlat = [(8.30, 47.00), (8.33, 47.01), (8.36, 47.00), (8.40, 47.02)]
    write_dem(tmp_path / "dem.tif", np.full((40, 120), 400.0), x0=8.29, y0=47.03, cell=0.001,
              crs="EPSG:4326")
    write_lines(tmp_path / "line.geojson", [lonlat], crs="EPSG:4326")
    (tmp_path / "project.toml").write_text(
        '[alignment]\npath = "line.geojson"\nspacing = "50 m"\n\n[terrain]\ndem = "dem.tif"\n')
    s = run_ground(tmp_path / "project.toml", write=False).summary
    lon, lat = zip(*lonlat)
    geod = pyproj.Geod(ellps="WGS84").line_length(lon, lat)
    assert s["geodesic_length_m"] == pytest.approx(geod, abs=5e-4)
    assert abs(s["length_m"] - geod) > 1.0  # grid and ground lengths differ: the check has teeth
