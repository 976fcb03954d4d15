"""Tests that can fail: each catches a one-line mistake the mutation trial
(tools/mutation_trial.py) showed the suite let through.

- the checks read both sides of every point loss (the low-pressure,
  sub-atmospheric and column-separation checks the lower side, the high
  pressure and rating checks the higher side), on grade sets made here
  where the two sides differ; pressure p = rho g (HGL - z) (hydrostatics),
  rho from IAPWS-95 (``iapws``);
- column separation at the project's temperature: saturation pressure from
  IAPWS-IF97 (``iapws.IAPWS97``) at 40 degC, 7.38 kPa, not at 15 degC, 1.7 kPa;
- a butterfly valve and each tank entrance lose their K times the velocity
  head on a run: K from Crane TP-410 (2009) A-27/A-29, from memory
  (butterfly 10-14 in: 35 f_T with f_T = 0.013; entrances: sharp 0.5,
  rounded 0.04, inward-projecting 0.78);
- the 95 % band is the normal distribution's two-sided 95 % point times the
  RMSE (NSSDA), z from ``scipy.stats.norm``;
- the static pressure uses the water's density at its temperature (IAPWS-95);
- a cover short by 1 cm is a finding;
- an independent number for the demo: its friction head loss recomputed with
  ``fluids`` (Colebrook) and ``iapws`` water over the demo pipe's length.
"""
from __future__ import annotations

import math
from types import SimpleNamespace as NS

import numpy as np
import pandas as pd
import pytest

import gisgrade
from conftest import flat_site
from gisgrade.findings import Inputs
from gisgrade.findings import pressure as pressure_checks
from gisgrade.findings import rating as rating_checks
from gisgrade.findings import vapour as vapour_checks
from gisgrade.hydraulics.gradeset import GradeSet

G = 9.80665  # standard gravity (CGPM 1901)


def rho_at(t_k):
    from iapws import IAPWS95

    return IAPWS95(T=t_k, P=0.101325).rho


def grade_set(hgl, hgl_upstream, density):
    n = len(hgl)
    return GradeSet(names=("s",), station=np.arange(n) * 10.0, axis=np.zeros(n),
                    flow=np.full((1, n), 0.05), velocity=np.full((1, n), 0.7),
                    hgl=np.array([hgl], float), egl=np.array([hgl], float) + 0.025,
                    hgl_upstream=np.array([hgl_upstream], float), density=density,
                    pressure_band=np.zeros(n))


def inputs(hgl, hgl_upstream, t_k=288.15, rating=600e3):
    rho = rho_at(t_k)
    n = len(hgl)
    table = pd.DataFrame({"station_m": np.arange(n) * 10.0, "top_m": np.full(n, 0.15),
                          "rating_pa": np.full(n, rating)})
    project = NS(checks=NS(min_pressure=140e3, max_pressure=550e3),
                 hydraulics=NS(temperature=t_k))
    return Inputs(project, table, grade_set(hgl, hgl_upstream, rho)), rho


def stations(rows):
    return [r.worst_station_m for r in rows]


def test_low_side_checks_see_the_upstream_side_of_a_point_loss():
    # At 10 m the upstream side (an expansion: higher velocity head) is the lower one.
    inp, rho = inputs([30.0, 30.0, 30.0], [30.0, 10.0, 30.0])
    assert rho * G * 10.0 < 140e3 < rho * G * 30.0  # only the upstream side is low
    assert stations(pressure_checks.low_pressure(inp, 0)) == [10.0]
    inp, _ = inputs([30.0, 30.0, 30.0], [30.0, -1.0, 30.0])  # below the top of pipe (0.15 m)
    assert stations(pressure_checks.sub_atmospheric(inp, 0)) == [10.0]


def test_high_side_checks_see_the_upstream_side_of_a_point_loss():
    # At 10 m the upstream side of a loss is the higher one: 70 m of head, 686 kPa.
    inp, rho = inputs([30.0, 30.0, 30.0], [30.0, 70.0, 30.0])
    assert rho * G * 30.0 < 550e3 < 600e3 < rho * G * 70.0
    assert stations(pressure_checks.high_pressure(inp, 0)) == [10.0]
    assert stations(rating_checks.rating(inp, 0)) == [10.0]
    inp, _ = inputs([30.0, 70.0, 30.0], [30.0, 30.0, 30.0])  # and the downstream side too
    assert stations(rating_checks.rating(inp, 0)) == [10.0]


def test_column_separation_at_the_project_temperature():
    from iapws import IAPWS97

    from gisgrade.hydraulics.atmosphere import atmospheric_pressure

    p_abs = 5.0e3  # Pa at the top of pipe: between the two vapour pressures
    pv40 = IAPWS97(T=313.15, x=0).P * 1e6  # 7.38 kPa
    pv15 = IAPWS97(T=288.15, x=0).P * 1e6  # 1.71 kPa
    assert pv15 < p_abs < pv40
    for t_k, expected in ((313.15, [10.0]), (288.15, [])):
        rho = rho_at(t_k)
        h = 0.15 + (p_abs - atmospheric_pressure(0.15)) / (rho * G)
        inp, _ = inputs([30.0, h, 30.0], [30.0, h, 30.0], t_k=t_k)
        assert stations(vapour_checks.column_separation(inp, 0)) == expected, t_k


def point_jump(result, station, scenario=0):
    g = result.grades
    k = int(np.argmin(np.abs(g.station - station)))
    v = g.velocity[scenario, k]
    return (g.hgl_upstream[scenario, k] - g.hgl[scenario, k]) / (v * v / (2 * G))


def test_a_butterfly_valve_loses_its_crane_k(tmp_path):
    r = gisgrade.compute(flat_site(tmp_path, '\n[[fittings]]\nstation = "500 m"\n'
                                             'kind = "butterfly_valve_open"\n'))
    assert point_jump(r, 500.0) == pytest.approx(35 * 0.013, abs=0.01)


@pytest.mark.parametrize("entrance, k", [("sharp", 0.5), ("rounded", 0.04), ("projecting", 0.78)])
def test_each_tank_entrance_loses_its_crane_k(tmp_path, entrance, k):
    text = flat_site(tmp_path).read_text().replace(
        'temperature = "15 degC"', f'temperature = "15 degC"\nstart = "tank"\nentrance = "{entrance}"')
    (tmp_path / "project.toml").write_text(text)
    r = gisgrade.compute(tmp_path / "project.toml")
    g = r.grades
    v = g.velocity[0, 0]
    # tank level 200 m at rest: what is lost is the velocity head made plus K of it
    lost = (200.0 - g.hgl[0, 0]) / (v * v / (2 * G))
    assert lost == pytest.approx(1.0 + k, abs=1e-6)


def test_the_95_percent_band_is_the_normal_two_sided_point():
    from scipy.stats import norm

    from gisgrade.terrain import accuracy_95

    assert accuracy_95(1.0) == pytest.approx(norm.ppf(0.975), abs=5e-5)  # 1.95996...


def test_static_pressure_uses_the_density_at_the_temperature(tmp_path):
    text = flat_site(tmp_path).read_text().replace('temperature = "15 degC"', 'temperature = "40 degC"')
    (tmp_path / "project.toml").write_text(text)
    r = gisgrade.compute(tmp_path / "project.toml")
    g = r.grades
    s = g.names.index("static")
    expected = rho_at(313.15) * G * (200.0 - g.axis)
    np.testing.assert_allclose(g.pressure[s], expected, rtol=2e-6)


def test_a_cover_short_by_a_centimetre_is_a_finding():
    from gisgrade.findings.cover import cover_findings

    rows = cover_findings(np.array([0.0, 5.0, 10.0]), np.array([1.5, 1.19, 1.5]), 1.2)
    assert [r.worst_station_m for r in rows] == [5.0]


def test_the_demo_friction_loss_recomputed_with_fluids_and_iapws(demo_si):
    # The demo's "average day": 40 L/s entering, 6 L/s taken at 4100 m (its project
    # file); DN300 cement-lined ductile iron, 305 mm inside, 0.1 mm roughness, 12 degC.
    # Friction over each piece of pipe along its axis (profile.csv), Colebrook's f
    # (fluids) with IAPWS-95 water (iapws), against the EGL drop less the point jumps.
    import fluids
    from iapws import IAPWS95

    _, out = demo_si
    prof = pd.read_csv(out / "profile.csv")
    grades = pd.read_csv(out / "gradelines.csv")
    g = grades[grades["scenario"] == "average day"].reset_index(drop=True)
    s, axis = prof["station_m"].to_numpy(), prof["axis_m"].to_numpy()
    length = np.hypot(np.diff(s), np.diff(axis))
    q = np.where(s[:-1] < 4100.0 - 1e-6, 0.040, 0.034)
    w = IAPWS95(T=285.15, P=0.101325)
    d, eps = 0.305, 0.1e-3
    v = q / (math.pi * d * d / 4)
    f = np.array([fluids.friction.Colebrook(Re=w.rho * vi * d / w.mu, eD=eps / d) for vi in v])
    friction = float(np.sum(f * length / d * v * v / (2 * G)))
    assert 2.0 < friction < 20.0  # metres of head over 5.9 km at 0.55 m/s: the right order
    # The run's EGL drop from the first station (just past the tank entrance) to the
    # last, less each fitting's and bend's K (fittings.csv) times the velocity head
    # there, is its friction.
    fittings = pd.read_csv(out / "fittings.csv")
    egl, vel, st = g["egl_m"].to_numpy(), g["velocity_m_s"].to_numpy(), g["station_m"].to_numpy()
    at = np.searchsorted(st, fittings["station_m"].to_numpy() - 1e-6)
    inside = (at > 0) & (at < len(st))
    point = float(np.sum(fittings["k"].to_numpy()[inside] * vel[at[inside]] ** 2 / (2 * G)))
    # At the offtake the HGL runs on (pressure continuous at a junction) while the
    # velocity drops, so the EGL steps down by the difference of velocity heads.
    v1, v2 = v[0], v[-1]
    junction = (v1 * v1 - v2 * v2) / (2 * G)
    # 3e-4: gisgrade's viscosity correlation lies within 0.1 % of IAPWS at 12 degC
    # (measured: the run's friction per piece agrees with this one to 1.5e-4)
    assert egl[0] - egl[-1] - point - junction == pytest.approx(friction, rel=3e-4)
