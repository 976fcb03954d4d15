"""Tests of gisgrade.terrain against outside sources.

Sources named beside each check:
- exact analytic results (a plane, a quadratic surface);
- the linear interpolation error bound |f - p| <= h^2/8 max|f''| (Burden &
  Faires, Numerical Analysis, 9th ed., Theorem 3.3 with n = 1; theorem number from memory), applied per
  axis for the tensor-product (bilinear) interpolant;
- Keys (1981), IEEE Trans. ASSP 29(6): cubic convolution with a = -1/2
  reproduces quadratics exactly (third-order accuracy);
- GDAL's own sampling and resampling through rasterio (`DatasetReader.sample`,
  `read(out_shape=..., resampling=...)`);
- pyproj for coordinate transforms;
- the foot definitions: international foot = 0.3048 m exactly, US survey
  foot = 1200/3937 m exactly (NIST Handbook 44, Appendix C; appendix from memory).
"""
from __future__ import annotations

import numpy as np
import pytest
import rasterio
import rasterio.shutil
from pyproj import Geod, Transformer
from rasterio.enums import Resampling
from rasterio.transform import Affine, from_origin

from gisgrade.errors import InputError
from gisgrade.terrain import (
    VERTICAL_UNITS,
    GroundProfile,
    bicubic,
    bilinear,
    resolve_dem_paths,
    sample_ground,
    vertical_unit_factor,
)

UTM33 = "EPSG:32633"


def write_dem(path, data, transform, crs=UTM33, nodata=None, block=None, scale=None, offset=None):
    """Write a one-band GeoTIFF; ``block`` makes it tiled with square blocks."""
    data = np.asarray(data)
    profile = dict(
        driver="GTiff", width=data.shape[1], height=data.shape[0], count=1,
        dtype=data.dtype, crs=crs, transform=transform, nodata=nodata,
    )
    if block:
        profile.update(tiled=True, blockxsize=block, blockysize=block)
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(data, 1)
        if scale is not None or offset is not None:
            dst.scales = (1.0 if scale is None else scale,)
            dst.offsets = (0.0 if offset is None else offset,)
    return path


def centres(transform, shape):
    """World x, y of every cell centre (GDAL: centre = corner + half a cell)."""
    rows, cols = np.mgrid[0 : shape[0], 0 : shape[1]]
    x, y = transform @ (cols + 0.5, rows + 0.5)
    return np.asarray(x), np.asarray(y)


def plane(x, y, x0=500000.0, y0=4000000.0):
    return 250.0 + 0.031 * (x - x0) - 0.017 * (y - y0)


def random_points_in(transform, shape, n, rng, margin=0.0):
    """Random points over the raster footprint (cell-edge coordinates)."""
    u = rng.uniform(margin, shape[1] - margin, n)
    v = rng.uniform(margin, shape[0] - margin, n)
    x, y = transform @ (u, v)
    return np.asarray(x), np.asarray(y)


# ---------------------------------------------------------------------------
# Units and paths
# ---------------------------------------------------------------------------

def test_vertical_units_definitions():
    # NIST Handbook 44 App. C: international foot 0.3048 m; US survey foot 1200/3937 m.
    assert VERTICAL_UNITS["m"] == 1.0
    assert VERTICAL_UNITS["ft"] == 0.3048
    assert VERTICAL_UNITS["us-ft"] == 1200 / 3937
    # each alias its own factor (NIST SP 811, App. B: metre; foot = 0.3048 m exactly)
    for alias, factor in (("metre", 1.0), ("Meter", 1.0), ("foot", 0.3048), ("feet", 0.3048)):
        assert vertical_unit_factor(alias) == factor, alias
    for alias in ("us_survey_foot", "ftUS", "US survey foot", "us-ft"):
        assert vertical_unit_factor(alias) == 1200 / 3937


def test_vertical_unit_unknown_names_key_and_value():
    with pytest.raises(InputError, match=r"terrain\.vertical_unit = 'yards'"):
        vertical_unit_factor("yards")


def test_resolve_dem_paths(tmp_path):
    # Requirement (issue 3): a DEM is one file or several tiles (a list, or a
    # folder/glob); a folder lists its rasters in name order (our documented rule).
    t = from_origin(0, 10, 1, 1)
    d = tmp_path / "tiles"
    d.mkdir()
    for name in ("b.tif", "a.TIF", "c.vrt"):
        (d / name).write_bytes(b"")
    (d / "notes.txt").write_text("x")
    write_dem(tmp_path / "one.tif", np.zeros((3, 3), "float32"), t)
    assert resolve_dem_paths("one.tif", tmp_path) == [tmp_path / "one.tif"]
    assert resolve_dem_paths(["one.tif", str(tmp_path / "one.tif")], tmp_path) == [tmp_path / "one.tif"] * 2
    assert resolve_dem_paths("tiles", tmp_path) == [d / "a.TIF", d / "b.tif", d / "c.vrt"]
    assert resolve_dem_paths("tiles/*.tif", tmp_path) == [d / "b.tif"]
    with pytest.raises(InputError, match=r"terrain\.dem: DEM file not found: .*missing\.tif"):
        resolve_dem_paths(["one.tif", "missing.tif"], tmp_path)
    with pytest.raises(InputError, match=r"terrain\.dem: no file matches"):
        resolve_dem_paths("tiles/*.png", tmp_path)
    with pytest.raises(InputError, match="terrain.dem"):
        resolve_dem_paths([], tmp_path)


# ---------------------------------------------------------------------------
# Pure kernels
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("interp", [bilinear, bicubic])
def test_kernels_exact_on_plane_including_edge_half_cell(interp):
    # Exact analytic result: both kernels reproduce a plane (Keys 1981 for the cubic).
    i, j = np.mgrid[0:7, 0:9]
    grid = 3.0 + 0.5 * i - 1.25 * j
    rng = np.random.default_rng(3)
    r = rng.uniform(-0.5, 6.5, 500)
    c = rng.uniform(-0.5, 8.5, 500)
    np.testing.assert_allclose(interp(grid, r, c), 3.0 + 0.5 * r - 1.25 * c, rtol=0, atol=1e-12)
    # Outside the footprint (beyond the outer cell edge) there is no value.
    assert np.isnan(interp(grid, [-0.6, 3.0], [3.0, 8.6])).all()


def test_bicubic_reproduces_quadratic():
    # Keys (1981): cubic convolution with a = -1/2 is exact for quadratics,
    # with the boundary condition f(-1) = 3f(0) - 3f(1) + f(2) (his eq. 25, number from memory).
    i, j = np.mgrid[0:8, 0:6]
    grid = 1.0 + 0.3 * i * i - 0.2 * j * j + 0.1 * i * j + i - j
    rng = np.random.default_rng(4)
    r = rng.uniform(-0.5, 7.5, 400)
    c = rng.uniform(-0.5, 5.5, 400)
    exact = 1.0 + 0.3 * r * r - 0.2 * c * c + 0.1 * r * c + r - c
    np.testing.assert_allclose(bicubic(grid, r, c), exact, rtol=0, atol=1e-11)


@pytest.mark.parametrize("interp", [bilinear, bicubic])
def test_nan_in_stencil_makes_result_nan(interp):
    grid = np.ones((6, 6))
    grid[2, 2] = np.nan
    out = interp(grid, [2.0, 2.5, 4.6, 2.0], [1.5, 2.0, 4.6, 1.0])
    assert np.isnan(out[:2]).all()
    # Far from the NaN, and exactly at a cell centre beside it (zero weight on it).
    np.testing.assert_allclose(out[2:], [1.0, 1.0], rtol=0, atol=1e-12)


def test_kernels_match_gdal_resampling(tmp_path):
    # GDAL's own bilinear and cubic (Keys a = -0.5) resampling of an upsampled
    # read; output pixel k of an f-times upsampling has its centre at input
    # cell-centre coordinate (k + 0.5)/f - 0.5. Compared away from the edges,
    # where GDAL treats borders differently; float32 rounding tolerance.
    rng = np.random.default_rng(11)
    a = rng.normal(100.0, 5.0, (24, 20)).astype("float32")
    path = write_dem(tmp_path / "r.tif", a, from_origin(500000, 4000024, 1, 1))
    f = 4
    with rasterio.open(path) as src:
        for resampling, interp in ((Resampling.bilinear, bilinear), (Resampling.cubic, bicubic)):
            gdal = src.read(1, out_shape=(24 * f, 20 * f), resampling=resampling)
            r = (np.arange(24 * f) + 0.5) / f - 0.5
            c = (np.arange(20 * f) + 0.5) / f - 0.5
            R, C = np.meshgrid(r, c, indexing="ij")
            ours = interp(a.astype(float), R, C)
            m = 2 * f
            np.testing.assert_allclose(ours[m:-m, m:-m], gdal[m:-m, m:-m], rtol=0, atol=1e-4)


# ---------------------------------------------------------------------------
# sample_ground on files
# ---------------------------------------------------------------------------

def _plane_dem(tmp_path, name="plane.tif", shape=(30, 40), cell=2.0, factor=1.0, dtype="float64",
               transform=None, block=None):
    t = transform or from_origin(500000.0, 4000060.0, cell, cell)
    cx, cy = centres(t, shape)
    write_dem(tmp_path / name, (plane(cx, cy) / factor).astype(dtype), t, block=block)
    return tmp_path / name, t, shape


@pytest.mark.parametrize("method", ["bilinear", "bicubic"])
@pytest.mark.parametrize(
    "unit,factor",
    # NIST Handbook 44 App. C: 1 ft = 0.3048 m, 1 US survey ft = 1200/3937 m.
    [("m", 1.0), ("ft", 0.3048), ("us-ft", 1200 / 3937)],
)
def test_plane_exact_projected(tmp_path, method, unit, factor):
    # Exact analytic result: a plane DEM (values at cell centres) comes back exactly
    # anywhere in the raster footprint, in metres whatever the DEM's vertical unit.
    path, t, shape = _plane_dem(tmp_path, factor=factor)
    x, y = random_points_in(t, shape, 300, np.random.default_rng(5))
    prof = sample_ground([path], x, y, UTM33, vertical_unit=unit, method=method)
    np.testing.assert_allclose(prof.z, plane(x, y), rtol=0, atol=1e-9)
    assert not prof.bridged.any() and (prof.source == 0).all()


@pytest.mark.parametrize("method", ["bilinear", "bicubic"])
def test_plane_exact_rotated_geotransform(tmp_path, method):
    # Exact analytic result on a DEM whose geotransform is rotated 30 degrees.
    t = Affine.translation(500000.0, 4000060.0) @ Affine.rotation(30.0) @ Affine.scale(2.0, -2.0)
    path, t, shape = _plane_dem(tmp_path, transform=t, shape=(20, 25))
    x, y = random_points_in(t, shape, 200, np.random.default_rng(6))
    prof = sample_ground(path, x, y, UTM33, method=method)
    np.testing.assert_allclose(prof.z, plane(x, y), rtol=0, atol=1e-9)


@pytest.mark.parametrize("method", ["bilinear", "bicubic"])
@pytest.mark.parametrize(
    "unit,factor",
    # NIST Handbook 44 App. C: 1 ft = 0.3048 m, 1 US survey ft = 1200/3937 m.
    [("m", 1.0), ("ft", 0.3048), ("us-ft", 1200 / 3937)],
)
def test_plane_geographic_dem_utm_stations(tmp_path, method, unit, factor):
    # A DEM in EPSG:4326 with values linear in lon/lat is a plane in the DEM's own
    # coordinates: exact. Stations are given in UTM 33N; pyproj gives their lon/lat.
    t = from_origin(15.0, 36.01, 0.0005, 0.0005)  # ~50 m cells near 36 N
    shape = (20, 24)
    lon, lat = centres(t, shape)

    def f(lo, la):
        return 120.0 + 800.0 * (lo - 15.0) - 1500.0 * (la - 36.0)

    write_dem(tmp_path / "geo.tif", f(lon, lat) / factor, t, crs="EPSG:4326")
    rng = np.random.default_rng(7)
    plon, plat = random_points_in(t, shape, 200, rng, margin=0.01)
    ux, uy = Transformer.from_crs("EPSG:4326", UTM33, always_xy=True).transform(plon, plat)
    prof = sample_ground([tmp_path / "geo.tif"], ux, uy, UTM33, vertical_unit=unit, method=method)
    # Round trip UTM -> lon/lat is exact to ~1e-11 deg; 1500 m/deg * 1e-11 deg << 1e-6 m.
    np.testing.assert_allclose(prof.z, f(plon, plat), rtol=0, atol=1e-6)
    # Cell size in metres: the east-west cell width at the stations' latitude, from
    # pyproj.Geod (WGS84); ours uses a sphere, so agree to 0.5 %.
    lat = plat.mean()
    _, _, width = Geod(ellps="WGS84").inv(15.0, lat, 15.0005, lat)
    assert prof.cell_size == pytest.approx(width, rel=5e-3)
    assert prof.max_gap == pytest.approx(3 * prof.cell_size)


@pytest.mark.parametrize(
    "kind,unit,factor",
    # NIST Handbook 44 App. C: 1 ft = 0.3048 m, 1 US survey ft = 1200/3937 m.
    [("projected", "m", 1.0), ("projected", "ft", 0.3048), ("projected", "us-ft", 1200 / 3937),
     ("geographic", "m", 1.0), ("geographic", "ft", 0.3048),
     ("geographic", "us-ft", 1200 / 3937)],
)
def test_paraboloid_within_bilinear_error_bound(tmp_path, kind, unit, factor):
    # Linear interpolation error <= h^2/8 * max|f''| (Burden & Faires, Thm 3.3, n = 1);
    # for the tensor-product bilinear interpolant the per-axis bounds add:
    # |f - p| <= hx^2/8 * max|f_xx| + hy^2/8 * max|f_yy|, in the DEM's own coordinates
    # (metres for UTM, degrees for EPSG:4326). Checked between the outer cell centres,
    # where the interpolant is not extrapolating.
    shape = (30, 30)
    if kind == "projected":
        crs, cell, x0, y0 = UTM33, 5.0, 500000.0, 4000150.0
    else:
        crs, cell, x0, y0 = "EPSG:4326", 0.0005, 15.0, 36.015
    t = from_origin(x0, y0, cell, cell)
    xc, yc = x0 + 15 * cell, y0 - 15 * cell
    ax, ay = 0.004 * (5.0 / cell) ** 2, 0.0025 * (5.0 / cell) ** 2  # same curvature per cell

    def f(x, y):
        return 50.0 + ax * (x - xc) ** 2 + ay * (y - yc) ** 2

    cx, cy = centres(t, shape)
    write_dem(tmp_path / "p.tif", f(cx, cy) / factor, t, crs=crs)
    px, py = random_points_in(t, shape, 500, np.random.default_rng(8), margin=0.5)
    # Stations always in UTM 33N; pyproj gives the DEM-CRS position of each.
    sx, sy = Transformer.from_crs(crs, UTM33, always_xy=True).transform(px, py)
    prof = sample_ground([tmp_path / "p.tif"], sx, sy, UTM33, vertical_unit=unit)
    err = np.abs(prof.z - f(px, py))
    bound = cell**2 / 8 * (2 * ax) + cell**2 / 8 * (2 * ay)
    assert err.max() <= bound * (1 + 1e-6)
    assert err.max() > 0.3 * bound  # the bound is nearly reached: the check has teeth
    # Keys (1981): the a = -1/2 cubic reproduces the quadratic exactly.
    prof3 = sample_ground([tmp_path / "p.tif"], sx, sy, UTM33, vertical_unit=unit, method="bicubic")
    np.testing.assert_allclose(prof3.z, f(px, py), rtol=0, atol=1e-6)


@pytest.mark.parametrize("method", ["bilinear", "bicubic"])
def test_matches_gdal_sample_at_cell_centres(tmp_path, method):
    # GDAL's own nearest sampling (rasterio DatasetReader.sample) at cell centres
    # must equal our interpolation there (weights 1 at the centre, 0 elsewhere).
    rng = np.random.default_rng(9)
    data = rng.normal(300.0, 20.0, (40, 50)).astype("float32")
    t = from_origin(500000.0, 4000080.0, 2.0, 2.0)
    path = write_dem(tmp_path / "r.tif", data, t, block=16)
    cx, cy = centres(t, data.shape)
    pick = rng.choice(data.size, 300, replace=False)
    x, y = cx.ravel()[pick], cy.ravel()[pick]
    with rasterio.open(path) as src:
        gdal = np.array([v[0] for v in src.sample(zip(x, y))], dtype=float)
    prof = sample_ground([path], x, y, UTM33, method=method)
    np.testing.assert_allclose(prof.z, gdal, rtol=1e-12, atol=0)


def test_abutting_tiles_plane_exact_across_seam(tmp_path):
    # Two tiles that meet without overlap: the plane is exact on both sides of the
    # seam (exact analytic result); each station's source is the tile that holds it.
    t0 = from_origin(500000.0, 4000040.0, 2.0, 2.0)
    t1 = from_origin(500040.0, 4000040.0, 2.0, 2.0)
    for name, t in (("w.tif", t0), ("e.tif", t1)):
        cx, cy = centres(t, (20, 20))
        write_dem(tmp_path / name, plane(cx, cy), t)
    x = np.linspace(500000.5, 500079.5, 400)
    y = np.full_like(x, 4000020.3)
    for method in ("bilinear", "bicubic"):
        prof = sample_ground([tmp_path / "w.tif", tmp_path / "e.tif"], x, y, UTM33, method=method)
        np.testing.assert_allclose(prof.z, plane(x, y), rtol=0, atol=1e-9)
        np.testing.assert_array_equal(prof.source, np.where(x <= 500040.0, 0, 1))


def test_overlapping_tiles_first_listed_valid_wins(tmp_path):
    # Documented overlap rule: the first listed file with valid data at a station wins.
    ta = from_origin(500000.0, 4000040.0, 2.0, 2.0)  # x 500000..500040
    tb = from_origin(500020.0, 4000040.0, 2.0, 2.0)  # x 500020..500060
    cx, cy = centres(ta, (20, 20))
    a = plane(cx, cy)
    a[:, 15:] = -9999.0  # A has no data over x >= 500030
    write_dem(tmp_path / "a.tif", a, ta, nodata=-9999.0)
    cx, cy = centres(tb, (20, 20))
    write_dem(tmp_path / "b.tif", plane(cx, cy) + 100.0, tb)  # B is the plane + 100 m
    x = np.linspace(500001.0, 500059.0, 300)
    y = np.full_like(x, 4000021.0)
    both = [tmp_path / "a.tif", tmp_path / "b.tif"]
    prof = sample_ground(both, x, y, UTM33)
    # A's bilinear stencil touches its nodata column 15 from x > 500029 (centre of col 14).
    from_a = x < 500029.0
    np.testing.assert_array_equal(prof.source, np.where(from_a, 0, 1))
    np.testing.assert_allclose(prof.z, plane(x, y) + np.where(from_a, 0.0, 100.0), rtol=0, atol=1e-9)
    # Reverse the list: B wins wherever it covers the station.
    prof = sample_ground(both[::-1], x, y, UTM33)
    in_b = x >= 500020.0
    np.testing.assert_array_equal(prof.source, np.where(in_b, 0, 1))
    np.testing.assert_allclose(prof.z, plane(x, y) + np.where(in_b, 100.0, 0.0), rtol=0, atol=1e-9)


def test_integer_dem_scale_offset_nodata_short_gap_bridged(tmp_path):
    # int16 DEM with scale 0.01 and offset 100 (GDAL: value = raw * scale + offset);
    # raw is an integer plane, so z is a plane. One nodata cell on the line makes a
    # short gap, bridged linearly along the stations -- exact for a plane sampled
    # along a straight line (exact analytic result).
    t = from_origin(500000.0, 4000040.0, 1.0, 1.0)
    i, j = np.mgrid[0:40, 0:40]
    raw = (20 * i + 7 * j).astype("int16")
    raw[20, 20] = -32768
    write_dem(tmp_path / "int.tif", raw, t, nodata=-32768, scale=0.01, offset=100.0)
    x = np.linspace(500005.0, 500035.0, 61)  # 0.5 m stations along row 20.5 (y = 4000019.5)
    y = np.full_like(x, 4000019.5)
    col = x - 500000.0 - 0.5
    row = 4000040.0 - y - 0.5
    expected = (20 * row + 7 * col) * 0.01 + 100.0
    prof = sample_ground([tmp_path / "int.tif"], x, y, UTM33)
    np.testing.assert_allclose(prof.z, expected, rtol=0, atol=1e-9)
    # Bilinear touches cell (20, 20) for 19 < col < 21, i.e. 500019.5 < x < 500021.5.
    gap = (col > 19) & (col < 21)
    np.testing.assert_array_equal(prof.bridged, gap)
    np.testing.assert_array_equal(prof.source, np.where(gap, -1, 0))
    assert prof.max_gap == pytest.approx(3.0)  # default: 3 cells of 1 m


def test_long_gap_lists_station_ranges(tmp_path):
    t = from_origin(500000.0, 4000040.0, 1.0, 1.0)
    data = np.full((40, 60), 10.0)
    data[:, 20:30] = np.nan  # a 10-cell hole across the line (NaN, no nodata tag)
    write_dem(tmp_path / "hole.tif", data, t)
    x = np.linspace(500000.0, 500059.5, 120)
    y = np.full_like(x, 4000019.7)
    station = 1000.0 + (x - 500000.0)
    # Bilinear touches cols 20..29 for 19 < col < 30, i.e. 500019.5 < x < 500030.5.
    with pytest.raises(InputError) as exc:
        sample_ground([tmp_path / "hole.tif"], x, y, UTM33, station=station)
    msg = str(exc.value)
    assert msg.startswith("terrain.dem: no ground data at stations 1020.0-1030.0 m")
    assert "max_gap 3.0 m" in msg
    # A larger max_gap bridges it: 1019.5 .. 1030.5 is 11 m.
    prof = sample_ground([tmp_path / "hole.tif"], x, y, UTM33, station=station, max_gap=11.0)
    assert prof.bridged.sum() == 21 and np.allclose(prof.z, 10.0)


def test_outside_every_tile_and_nodata_at_line_end(tmp_path):
    t = from_origin(500000.0, 4000020.0, 1.0, 1.0)
    data = np.full((20, 20), 5.0, dtype="float32")
    data[:, 18:] = -1.0
    write_dem(tmp_path / "d.tif", data, t, nodata=-1.0)
    x = np.array([499990.0, 499995.0, 500001.0, 500005.0, 500010.0, 500019.0])
    y = np.full_like(x, 4000010.0)
    with pytest.raises(InputError) as exc:
        sample_ground([tmp_path / "d.tif"], x, y, UTM33)
    msg = str(exc.value)
    assert "outside every DEM at stations 0.0-5.0 m" in msg
    assert "no ground data at stations 29.0 m (nodata at an end of the line" in msg
    # A run that is part nodata, part outside: only the outside stations are listed
    # as outside, and such a run is never bridged, however short.
    # Nodata cells are columns 18-19 (x 500018..500020); x = 500020.4 is off the raster.
    x = np.array([500001.0, 500017.9, 500019.9, 500020.4, 500001.0])
    with pytest.raises(InputError) as exc:
        sample_ground([tmp_path / "d.tif"], x, y[:5], UTM33,
                      station=[0.0, 1.0, 2.0, 3.0, 4.0], max_gap=100.0)
    assert "outside every DEM at stations 3.0 m" in str(exc.value)


def test_unreadable_or_crs_less_dem(tmp_path):
    (tmp_path / "junk.tif").write_text("not a raster")
    with pytest.raises(InputError, match=r"terrain\.dem: cannot open DEM .*junk\.tif"):
        sample_ground([tmp_path / "junk.tif"], [0.0], [0.0], UTM33)
    write_dem(tmp_path / "nocrs.tif", np.zeros((4, 4)), from_origin(0, 4, 1, 1), crs=None)
    with pytest.raises(InputError, match="has no coordinate reference system"):
        sample_ground([tmp_path / "nocrs.tif"], [1.0], [1.0], UTM33)


def test_vrt_mosaic_and_cog_open_like_a_file(tmp_path):
    # A GDAL VRT mosaicking two tiles (GDAL VRT format: SimpleSource, SrcRect/DstRect).
    t0 = from_origin(500000.0, 4000020.0, 1.0, 1.0)
    t1 = from_origin(500020.0, 4000020.0, 1.0, 1.0)
    for name, t in (("w.tif", t0), ("e.tif", t1)):
        cx, cy = centres(t, (20, 20))
        write_dem(tmp_path / name, plane(cx, cy), t)
    with rasterio.open(tmp_path / "w.tif") as src:
        wkt = src.crs.to_wkt()
    sources = "".join(
        f"""<SimpleSource><SourceFilename relativeToVRT="1">{name}</SourceFilename>
        <SourceBand>1</SourceBand><SrcRect xOff="0" yOff="0" xSize="20" ySize="20"/>
        <DstRect xOff="{off}" yOff="0" xSize="20" ySize="20"/></SimpleSource>"""
        for name, off in (("w.tif", 0), ("e.tif", 20))
    )
    (tmp_path / "m.vrt").write_text(
        f"""<VRTDataset rasterXSize="40" rasterYSize="20"><SRS>{wkt}</SRS>
        <GeoTransform>500000.0, 1.0, 0.0, 4000020.0, 0.0, -1.0</GeoTransform>
        <VRTRasterBand dataType="Float64" band="1">{sources}</VRTRasterBand></VRTDataset>"""
    )
    x = np.linspace(500000.2, 500039.8, 200)
    y = np.full_like(x, 4000007.3)
    prof = sample_ground(resolve_dem_paths("*.vrt", tmp_path), x, y, UTM33, method="bicubic")
    np.testing.assert_allclose(prof.z, plane(x, y), rtol=0, atol=1e-9)
    # A Cloud-Optimized GeoTIFF (GDAL's COG driver) of the mosaic opens the same way.
    rasterio.shutil.copy(tmp_path / "m.vrt", tmp_path / "m_cog.tif", driver="COG")
    prof = sample_ground([tmp_path / "m_cog.tif"], x, y, UTM33)
    np.testing.assert_allclose(prof.z, plane(x, y), rtol=0, atol=1e-9)


def test_reads_only_windows_along_the_line(tmp_path, monkeypatch):
    # Requirement check: a diagonal line over a tiled 512x512 DEM reads small windows
    # (one per 64x64 block holding stations, plus a 2-cell halo), never the whole raster.
    t = from_origin(500000.0, 4000512.0, 1.0, 1.0)
    cx, cy = centres(t, (512, 512))
    path = write_dem(tmp_path / "big.tif", plane(cx, cy).astype("float32"), t, block=64)
    windows = []
    original = rasterio.io.DatasetReader.read

    def spy(self, *args, **kwargs):
        windows.append(kwargs.get("window"))
        return original(self, *args, **kwargs)

    monkeypatch.setattr(rasterio.io.DatasetReader, "read", spy)
    s = np.linspace(0.0, 1.0, 3000)
    x = 500000.5 + 511.0 * s
    y = 4000511.5 - 511.0 * s
    prof = sample_ground([path], x, y, UTM33, method="bicubic")
    assert all(w is not None for w in windows)
    assert max(w.width * w.height for w in windows) <= 68 * 68
    assert sum(w.width * w.height for w in windows) < 0.2 * 512 * 512
    np.testing.assert_allclose(prof.z, plane(x, y), rtol=0, atol=1e-3)  # float32 storage


def test_default_station_and_profile_type(tmp_path):
    # Requirement (issue 3): nodata gaps up to terrain.max_gap, default a few
    # cells (3 cells: our documented default, common practice), are bridged.
    path, t, shape = _plane_dem(tmp_path)
    x = np.array([500010.0, 500013.0, 500013.0 + 4.0])
    y = np.array([4000010.0, 4000014.0, 4000014.0])
    prof = sample_ground([path], x, y, UTM33)
    assert isinstance(prof, GroundProfile)
    # Default max_gap: 3 cells of the finest DEM (2 m cells here).
    assert prof.cell_size == 2.0 and prof.max_gap == pytest.approx(6.0)
    with pytest.raises(InputError, match="terrain.method"):
        sample_ground([path], x, y, UTM33, method="cubic spline")
