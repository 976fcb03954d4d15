"""Pressure findings (low, high, sub-atmospheric) and designed bends in the
hydraulics, through the pipeline's stage functions and the whole run.

The pressure profile is made in the test: a main whose axis steps between
levels under a 200 m source head, so that in the static case (hydrostatics,
exact) each check's failing stations are known in advance. Water density
from IAPWS-95 (the `iapws` package); bend loss coefficients from
``fluids.fittings.bend_rounded`` (Rennels & Hudson 2012, in fluids).
"""
import math

import numpy as np
import pytest

import fluids.fittings
import fluids.friction
from iapws import IAPWS95

from gisgrade.arrays import runs
from gisgrade.pipeline import run as run_all
from gisgrade.pipeline import stage_findings, stage_hydraulics, stage_pipe
from gisgrade.project import load

import pandas as pd

from conftest import CROSSING_X, X0, Y, flat_site

G = 9.80665  # standard gravity, CGPM 1901 (exact)
RHO15 = IAPWS95(T=288.15, P=0.101325).rho  # water at 15 degC, 1 atm (IAPWS-95)
NO_BENDS = pd.DataFrame({"station_m": [], "angle_deg": []})

S = np.arange(0.0, 1000.0 + 1e-9, 10.0)


def _axis():
    """Axis levels [m]: deep (high pressure), normal, shallow (low pressure),
    normal, just above the source head (sub-atmospheric), normal."""
    z = np.full(S.shape, 170.0)
    deep = S <= 200
    z[deep] = 100.0 + 10.0 * S[deep] / 200.0  # 100 -> 110 m
    shallow = (S >= 410) & (S <= 500)
    z[shallow] = 188.0 + 4.0 * (S[shallow] - 410.0) / 90.0  # 188 -> 192 m
    above = (S >= 610) & (S <= 700)
    z[above] = 200.01 + 0.04 * (S[above] - 610.0) / 90.0  # 200.01 -> 200.05 m
    return z


def _findings(flat_project, axis):
    flat_project.write_text(flat_project.read_text()
                            + '\n[checks]\nmin_pressure = "140 kPa"\nmax_pressure = "550 kPa"\n')
    p = load(flat_project)
    t = stage_pipe(p, pd.DataFrame({"station_m": S, "axis_m": axis}))
    t = t.assign(top_m=t["axis_m"] + t["outside_diameter_m"] / 2, cover_m=1.5, min_cover_m=1.2)
    grades = stage_hydraulics(p, t, NO_BENDS)
    return t, grades, stage_findings(p, t, grades)


def _ranges(mask):
    return [(float(S[a]), float(S[b])) for a, b in runs(mask)]


def _got(found, scenario, check):
    rows = found[(found["scenario"] == scenario) & (found["check"] == check)]
    return rows, [(float(a), float(b)) for a, b in zip(rows["from_station_m"], rows["to_station_m"])]


def test_static_pressure_findings_on_known_ranges(flat_project):
    axis = _axis()
    t, grades, found = _findings(flat_project, axis)
    top = t["top_m"].to_numpy()  # axis + 0.16 m (320 mm OD)
    # Hydrostatics (exact): no flow, HGL level at the 200 m source head,
    # p = rho g (200 - z) with rho from IAPWS-95.
    p = RHO15 * G * (200.0 - axis)
    sub = 200.0 < top  # sub-atmospheric: HGL below the top of pipe (field notes)
    high = p > 550e3  # limits from the project file ([checks])
    low = (p < 140e3) & ~sub  # a sub-atmospheric station has its own (critical) finding
    # The ranges built into the profile, written out.
    assert _ranges(high) == [(0.0, 200.0)]
    assert _ranges(low) == [(410.0, 500.0)]
    assert _ranges(sub) == [(610.0, 700.0)]

    rows, got = _got(found, "static", "high pressure")
    assert got == [(0.0, 200.0)]
    assert rows["worst_station_m"].iloc[0] == 0.0  # deepest point
    assert rows["worst_value"].iloc[0] == pytest.approx(p[0] / 1e3, rel=2e-6)  # our density vs IAPWS-95
    assert rows["limit"].iloc[0] == pytest.approx(550.0)

    rows, got = _got(found, "static", "low pressure")
    assert got == [(410.0, 500.0)]
    assert rows["worst_station_m"].iloc[0] == 500.0  # shallowest point of the range
    assert rows["worst_value"].iloc[0] == pytest.approx(p[S == 500.0][0] / 1e3, rel=2e-6)
    assert rows["limit"].iloc[0] == pytest.approx(140.0)

    # HGL 0.17-0.21 m below the top of pipe: flagged however little.
    rows, got = _got(found, "static", "sub-atmospheric")
    assert got == [(610.0, 700.0)]
    assert rows["worst_station_m"].iloc[0] == 700.0
    assert rows["worst_value"].iloc[0] == pytest.approx(200.05 + 0.16 - 200.0, abs=1e-9)


def test_flowing_pressure_findings_follow_their_definitions(flat_project):
    # Design scenario (50 L/s): the stations flagged are exactly those where the
    # definitions hold, from the lower side of any point loss (HGL just upstream
    # or downstream), pressure rho g (HGL - axis) with IAPWS-95 density. Stations
    # within 0.1 kPa (or 1 mm of HGL) of a limit are left out (density model
    # differences); there are none in this profile.
    axis = _axis()
    t, grades, found = _findings(flat_project, axis)
    g = grades.frame()[lambda f: f["scenario"] == "design"]
    top = t["top_m"].to_numpy()
    hgl = np.minimum(g["hgl_m"], g["hgl_upstream_m"]).to_numpy()
    hgl_hi = np.maximum(g["hgl_m"], g["hgl_upstream_m"]).to_numpy()
    p = RHO15 * G * (hgl - axis)
    p_hi = RHO15 * G * (hgl_hi - axis)
    assert np.abs(p - 140e3).min() > 100 and np.abs(p_hi - 550e3).min() > 100
    assert np.abs(hgl - top).min() > 1e-3
    sub = hgl < top
    for check, mask, worst in (("sub-atmospheric", sub, top - hgl),
                               ("low pressure", (p < 140e3) & ~sub, -p / 1e3),
                               ("high pressure", p_hi > 550e3, p_hi / 1e3)):
        rows, got = _got(found, "design", check)
        assert got == _ranges(mask), check
        assert got, check  # the profile makes each one
        for (a, b), ws, wv in zip(got, rows["worst_station_m"], rows["worst_value"]):
            inside = (S >= a) & (S <= b)
            k = np.flatnonzero(inside)[np.argmax(worst[inside])]
            assert ws == S[k], check
            assert abs(wv) == pytest.approx(abs(worst[k]), rel=2e-6, abs=1e-9), check


# --------------------------------------------------------------------------
# Designed bends feed the hydraulics
# --------------------------------------------------------------------------

def test_designed_bends_drop_the_egl_by_their_rennels_k(tmp_path):
    # Flat ground at 100 m, a culvert (bottom 95 m) across the line at 500 m and
    # rigid joints: the design dips under it with standard vertical bends.
    project = flat_site(tmp_path, CROSSING_X + """
[design]
joint_length = "6 m"
max_joint_deflection = "0 deg"
""", crossings=[([(X0 + 500, Y - 20), (X0 + 500, Y + 20)], {"bottom": 95.0})])
    r = run_all(project, write=False)
    assert len(r.bends) >= 2
    s = r.table["station_m"].to_numpy()
    g = r.gradelines[r.gradelines["scenario"] == "design"].reset_index(drop=True)
    # Water at 15 degC from IAPWS-95 / IAPWS 2008 (iapws); 300 mm, 0.1 mm, 50 L/s.
    state = IAPWS95(T=288.15, P=0.101325)
    D, eps, Q = 0.3, 1e-4, 0.05
    V = Q / (math.pi * D**2 / 4)
    Re = state.rho * V * D / state.mu
    fd = fluids.friction.friction_factor(Re=Re, eD=eps / D)
    hv = V**2 / (2 * G)
    stations = r.bends["station_m"].to_numpy()
    for x in np.unique(stations):
        i = int(np.flatnonzero(np.isclose(s, x, atol=1e-6))[0])
        # Rennels & Hudson rounded bend (fluids.fittings.bend_rounded), r/D = 1.5
        # (common practice for water-main bends), f of the pipe; bends at one station add.
        k = sum(fluids.fittings.bend_rounded(Di=D, angle=float(a), fd=fd, bend_diameters=1.5)
                for a in r.bends["angle_deg"][np.isclose(stations, x)])
        assert k > 0
        # The EGL steps down by K V^2/2g at the station (same pipe both sides,
        # so the HGL step is the same).
        step = g["hgl_upstream_m"].iloc[i] - g["hgl_m"].iloc[i]
        assert step == pytest.approx(k * hv, rel=2e-3), x  # our water correlations vs IAPWS
    # Away from the bends there is no point loss.
    bent = np.isin(np.round(s, 6), np.round(stations, 6))
    assert np.abs(g["hgl_upstream_m"] - g["hgl_m"])[~bent].max() < 1e-12
