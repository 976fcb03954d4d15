"""Alignment: stationing, CRS choice, crossings located on the line."""
import math

import numpy as np
import pyproj
import pytest
from shapely.geometry import LineString, MultiLineString

from gisgrade import alignment as al
from gisgrade.errors import InputError
from gisgrade.project import CrossingLayerConfig

from conftest import write_lines


def test_stations_hold_spacing_vertices_and_end():
    # Exact by construction: 3-4-5 triangle legs (Pythagoras).
    coords = np.array([[0.0, 0.0], [30.0, 40.0], [30.0, 77.0]])
    line = al.Alignment(LineString(coords), pyproj.CRS("EPSG:32633"), pyproj.CRS("EPSG:32633"),
                        87.0, 87.0)
    s, x, y, kind = al.stations(line, 20.0, al.Crossings.empty())
    assert s.tolist() == [0.0, 20.0, 40.0, 50.0, 60.0, 80.0, 87.0]
    assert kind[3] & al.VERTEX and kind[-1] & al.END and kind[0] & al.VERTEX
    # station 20 lies on the first leg at 20/50 of (30, 40)
    assert (x[1], y[1]) == pytest.approx((12.0, 16.0), abs=1e-12)
    assert (x[4], y[4]) == pytest.approx((30.0, 50.0), abs=1e-12)


def test_geographic_line_is_stationed_in_utm_and_matches_the_geodesic(tmp_path):
    # Reference: pyproj.Geod (Karney 2013 geodesics on WGS 84). The UTM grid
    # length is the geodesic length times the point scale factor, integrated
    # along the line: each of many short geodesic pieces times PROJ's own scale
    # factor at its midpoint (pyproj.Proj.get_factors; UTM is conformal, so
    # the meridional scale is the scale in every direction).
    lonlat = [(8.30, 47.00), (8.33, 47.01), (8.36, 47.00), (8.40, 47.02)]
    path = write_lines(tmp_path / "geo.geojson", [lonlat], crs="EPSG:4326")
    line = al.read_alignment(path)
    assert line.crs.to_epsg() == 32632  # UTM zone 32N holds 8.3 E (zone = floor((lon+180)/6)+1)
    lon, lat = zip(*lonlat)
    geod = pyproj.Geod(ellps="WGS84").line_length(lon, lat)
    assert line.geodesic_length == pytest.approx(geod, rel=1e-9)
    g = pyproj.Geod(ellps="WGS84")
    pts = np.vstack([np.array([(a[0], a[1])] + g.npts(*a, *b, 400) + [(b[0], b[1])])[:-1]
                     for a, b in zip(lonlat[:-1], lonlat[1:])] + [np.array([lonlat[-1]])])
    az, _, piece = g.inv(pts[:-1, 0], pts[:-1, 1], pts[1:, 0], pts[1:, 1])
    mlon, mlat, _ = g.fwd(pts[:-1, 0], pts[:-1, 1], az, piece / 2)
    k = pyproj.Proj("EPSG:32632").get_factors(mlon, mlat).meridional_scale
    assert line.length == pytest.approx(np.sum(piece * k), rel=1e-9)


def test_reverse_turns_the_line(tmp_path):
    path = write_lines(tmp_path / "l.geojson", [[(500000.0, 4649000.0), (500100.0, 4649000.0)]])
    line = al.read_alignment(path, reverse=True)
    assert line.coords[0].tolist() == [500100.0, 4649000.0]


def test_multipart_lines_merge_in_order_and_gaps_are_errors():
    parts = MultiLineString([[(0, 0), (10, 0)], [(10, 0), (20, 5)], [(30, 5), (20, 5)]])
    merged = al.merge_parts(parts, "alignment.path", "x.geojson")
    assert np.asarray(merged.coords).tolist() == [[0, 0], [10, 0], [20, 5], [30, 5]]
    gap = MultiLineString([[(0, 0), (10, 0)], [(13, 4), (20, 5)]])
    with pytest.raises(InputError, match=r"part 2 .*gap of 5\.000 CRS units at 11\.5"):
        al.merge_parts(gap, "alignment.path", "x.geojson")  # 3-4-5 triangle


def test_multipart_gap_in_lonlat_is_reported_in_metres(tmp_path):
    # Reference: pyproj.Geod inverse on WGS 84 (Karney 2013) for the gap size.
    import json
    doc = {"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {},
           "geometry": {"type": "MultiLineString",
                        "coordinates": [[[8.30, 47.0], [8.31, 47.0]], [[8.311, 47.0], [8.32, 47.0]]]}}]}
    (tmp_path / "m.geojson").write_text(json.dumps(doc))
    gap = pyproj.Geod(ellps="WGS84").inv(8.31, 47.0, 8.311, 47.0)[2]
    with pytest.raises(InputError, match=rf"gap of {gap:.3f} m at 8\.3105"):
        al.read_alignment(tmp_path / "m.geojson")


def test_crossing_station_angle_and_bottom(tmp_path):
    # Analytic: a line through (500060, 4649000) at 60 degrees to the x axis
    # crosses the centerline y = 4649000 at x = 500060, station 60 m.
    line_path = write_lines(tmp_path / "l.geojson", [[(500000.0, 4649000.0), (500200.0, 4649000.0)]])
    t = math.tan(math.radians(60))
    xing = write_lines(tmp_path / "x.geojson",
                       [[(500060.0 - 10, 4649000.0 - 10 * t), (500060.0 + 10, 4649000.0 + 10 * t)],
                        [(500300.0, 4648000.0), (500300.0, 4650000.0)]],  # misses the line
                       props=[{"name": "old main", "bot": 95.5}, {"name": "far", "bot": 90.0}])
    line = al.read_alignment(line_path)
    cfg = CrossingLayerConfig(path=xing, bottom_field="bot", clearance=0.3, key="crossings[0]")
    c = al.locate_crossings(line, [cfg], vertical_factor=0.3048)
    assert len(c) == 1
    assert c.station[0] == pytest.approx(60.0, abs=1e-9)
    assert c.angle_deg[0] == pytest.approx(60.0, abs=1e-9)
    assert c.bottom[0] == pytest.approx(95.5 * 0.3048)  # feet to metres (NIST SP 811)
    s, *_ = al.stations(line, 25.0, c)
    assert 60.0 in s.tolist()


def test_crossing_bottom_field_must_exist(tmp_path):
    line_path = write_lines(tmp_path / "l.geojson", [[(500000.0, 4649000.0), (500200.0, 4649000.0)]])
    xing = write_lines(tmp_path / "x.geojson", [[(500050.0, 4648900.0), (500050.0, 4649100.0)]],
                       props=[{"name": "a", "depth": 2.0}])
    line = al.read_alignment(line_path)
    cfg = CrossingLayerConfig(path=xing, bottom_field="bottom", clearance=0.3, key="crossings[0]")
    with pytest.raises(InputError, match=r"crossings\[0\]\.bottom_field = 'bottom'.*depth"):
        al.locate_crossings(line, [cfg])


@pytest.mark.parametrize("station, units, label", [
    (1250.0, "SI", "1+250.00"),     # metric km+m (common practice)
    (381.0, "US", "12+50.00"),      # 1250 ft = 381 m exactly (0.3048 m/ft, NIST SP 811)
    (0.004, "SI", "0+000.00"),
    (99999.995, "SI", "100+000.00"),
])
def test_station_labels(station, units, label):
    assert al.format_station([station], units)[0] == label


def test_a_feature_crossed_twice_and_a_crossing_at_a_vertex(tmp_path):
    # Analytic: the centerline bends at (500100, 4649000); a U-shaped feature
    # crosses the first leg twice (x = 500020 and 500060) and a straight one
    # passes exactly through the vertex.
    line_path = write_lines(tmp_path / "l.geojson",
                            [[(500000.0, 4649000.0), (500100.0, 4649000.0), (500100.0, 4649100.0)]])
    xing = write_lines(tmp_path / "x.geojson",
                       [[(500020.0, 4648990.0), (500020.0, 4649010.0), (500060.0, 4649010.0),
                         (500060.0, 4648990.0)],
                        [(500090.0, 4648990.0), (500110.0, 4649010.0)]],
                       props=[{"name": "loop", "bot": 90.0}, {"name": "diag", "bot": 91.0}])
    line = al.read_alignment(line_path)
    cfg = CrossingLayerConfig(path=xing, bottom_field="bot", clearance=0.3, key="crossings[0]")
    c = al.locate_crossings(line, [cfg])
    assert c.station.tolist() == pytest.approx([20.0, 60.0, 100.0])
    assert c.name.tolist() == ["loop", "loop", "diag"]
    assert c.angle_deg[:2].tolist() == pytest.approx([90.0, 90.0])
    s, _, _, kind = al.stations(line, 30.0, c)
    at_vertex = kind[s.tolist().index(100.0)]
    assert at_vertex & al.VERTEX and at_vertex & al.CROSSING  # one station, both kinds


@pytest.mark.parametrize("epsg, why, working", [
    # California zone 3, ftUS: the same zone in metres, NAD83 / California zone 3 (EPSG:26943)
    (2227, "US survey foot", (26943,)),
    (3857, "stretches", (26910, 32610)),  # Web Mercator: scale 1/cos(lat), ~1.37 at 43 N: UTM 10N
])
def test_projected_lines_not_in_true_metres_are_stationed_in_metres(tmp_path, epsg, why, working):
    # Reference: pyproj.Geod (Karney 2013). The same ground line, given in a
    # feet CRS or in Web Mercator, must get the same metres of stationing; a
    # State Plane line in feet keeps its own zone and datum, in metres (the
    # EPSG registry's metre twin of the zone is what pyproj identifies).
    lonlat = np.array([(-122.30, 37.80), (-122.25, 37.82), (-122.20, 37.81)])
    to = pyproj.Transformer.from_crs("EPSG:4326", f"EPSG:{epsg}", always_xy=True)
    xy = np.column_stack(to.transform(lonlat[:, 0], lonlat[:, 1]))
    path = write_lines(tmp_path / "l.geojson", [xy.tolist()], crs=f"EPSG:{epsg}")
    line = al.read_alignment(path)
    geod = pyproj.Geod(ellps="GRS80").line_length(lonlat[:, 0], lonlat[:, 1])
    assert line.crs.to_epsg() in working
    assert al.metres_per_unit(line.crs) == 1.0
    assert line.length == pytest.approx(geod, rel=1e-3)
    assert any(why in n for n in line.notes)


def test_features_join_in_file_order_whatever_their_digitized_direction(tmp_path):
    # Three pieces of one route in flow order, the first two digitized backwards:
    # the route must start at the first feature's free end (exact geometry).
    pieces = [[(100.0, 0.0), (0.0, 0.0)], [(200.0, 0.0), (100.0, 0.0)], [(200.0, 0.0), (300.0, 50.0)]]
    path = write_lines(tmp_path / "p.geojson",
                       [[(500000.0 + x, 4649000.0 + y) for x, y in p] for p in pieces])
    line = al.read_alignment(path)
    xy = line.coords - [500000.0, 4649000.0]
    assert xy.tolist() == [[0.0, 0.0], [100.0, 0.0], [200.0, 0.0], [300.0, 50.0]]
    assert any("in file order" in n for n in line.notes)


@pytest.mark.parametrize("lon, lat", [(8.3, 85.0), (-122.3, -85.0), (179.9, 86.0), (-3.0, 84.5)])
def test_utm_fallback_beyond_the_database_zones(lon, lat):
    # North of 84 N and south of 80 S the CRS database holds no UTM zone
    # (checked here, so the fallback really runs); the fallback is the WGS 84
    # zone by the UTM numbering, zone = floor((lon + 180) / 6) + 1, EPSG 32600
    # + zone north, 32700 + zone south (EPSG registry; DMA TM 8358.2, from memory).
    from pyproj.aoi import AreaOfInterest
    from pyproj.database import query_utm_crs_info

    assert query_utm_crs_info(datum_name="WGS 84",
                              area_of_interest=AreaOfInterest(lon, lat, lon, lat)) == []
    crs = al.working_crs(pyproj.CRS("EPSG:4326"), lon, lat)
    zone = math.floor((lon + 180.0) / 6.0) + 1
    assert crs.to_epsg() == (32600 if lat >= 0 else 32700) + zone
    # and the zone's central meridian (PROJ's own parameters) is within 3 deg of the line
    cm = {p.name: p.value for p in crs.coordinate_operation.params}["Longitude of natural origin"]
    assert abs(lon - cm) <= 3.0


def test_a_nad83_line_keeps_its_datum_in_the_working_crs(tmp_path):
    # A line in NAD83 longitude/latitude (EPSG:4269) and one in NAD83 Web-Mercator-like
    # stretch both go to a NAD83 UTM zone (EPSG:26910, the EPSG registry), not WGS 84.
    lonlat = [(-122.30, 37.80), (-122.25, 37.82)]
    path = write_lines(tmp_path / "g.geojson", [lonlat], crs="EPSG:4269")
    line = al.read_alignment(path)
    assert line.crs.to_epsg() == 26910 and "1983" in line.crs.datum.name


@pytest.mark.parametrize("coords, words", [
    ([(0, 0), (100, 0), (100, 100), (0, 100), (0, 0)], "closes into a ring"),
    ([(0, 0), (100, 0), (50, 0.1), (200, 0)], "turns back on itself"),  # a spike
    ([(0, 0), (100, 0), (100, 50), (50, 50), (50, -50), (200, -50)], "crosses or runs over itself"),
])
def test_routes_that_cross_retrace_or_close_are_refused(tmp_path, coords, words):
    # Exact plane geometry: each shape is drawn so that the named fault is the first one met.
    path = write_lines(tmp_path / "l.geojson", [[(500000.0 + x, 4649000.0 + y) for x, y in coords]])
    with pytest.raises(InputError, match=words):
        al.read_alignment(path)
