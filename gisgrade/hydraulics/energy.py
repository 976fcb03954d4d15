"""Pumping energy: power, annual energy, its cost and emissions, present value.

Pure functions in SI units (W, J, s); :func:`stage_energy` gathers the pumps
of a run per scenario: the head a min-pressure boundary needs beyond the
available source head (or, with ``[energy] suction_head``, the whole lift of a
pumped source) and every in-line booster's head.

References
----------
.. [1] Karassik, I. J., Messina, J. P., Cooper, P., Heald, C. C. (2008).
   *Pump Handbook*, 4th ed. McGraw-Hill (hydraulic power ρ g Q H; wire-to-water
   efficiency = hydraulic power over electrical input; from memory).
.. [2] Field notes of this project (wire-to-water efficiency typically
   0.6-0.8; annual energy = Σ P x hours; cost = energy x tariff).
.. [3] Grant, E. L., Ireson, W. G., Leavenworth, R. S. (1990). *Principles of
   Engineering Economy*, 8th ed. Wiley (the uniform-series present-worth
   factor (1 - (1 + i)^-n) / i; from memory).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .friction import G, _out

#: Seconds in a year of 365 days (8760 h): the single design case runs all of it.
YEAR = 8760 * 3600.0
#: Joules per kilowatt-hour.
KWH = 3.6e6


def pump_power(flow, head, density, efficiency):
    """Electrical power a pump draws: P = ρ g Q H / η [1].

    Parameters
    ----------
    flow : float or array
        Q [m³/s].
    head : float or array
        H [m].
    density : float
        ρ [kg/m³].
    efficiency : float
        Wire-to-water efficiency η (0-1].

    Returns
    -------
    P : float or array
        [W].

    Examples
    --------
    100 L/s lifted 50 m at 70 %:

    >>> round(float(pump_power(0.1, 50.0, 1000.0, 0.7)))
    70048
    """
    return _out(density * G * np.asarray(flow, float) * np.asarray(head, float) / efficiency)


def annual_energy(power, seconds):
    """Energy of ``power`` (W) drawn for ``seconds`` a year: E = P t [J].

    >>> float(annual_energy(1000.0, 3600.0)) / KWH
    1.0
    """
    return _out(np.asarray(power, float) * np.asarray(seconds, float))


def present_value_factor(rate: float, years: float) -> float:
    """Present value of 1 a year for ``years`` at ``rate`` a year, the
    uniform-series present-worth factor (1 - (1 + i)^-n) / i [3]; n at i = 0.

    >>> round(present_value_factor(0.05, 30), 4), present_value_factor(0.0, 30)
    (15.3725, 30.0)
    """
    if rate == 0:
        return float(years)
    return float((1.0 - (1.0 + rate) ** -years) / rate)


@dataclass(frozen=True, eq=False)
class Energy:
    """A run's pumping: one row per scenario and pump, and the year's totals."""

    pumps: pd.DataFrame  #: scenario, pump, station_m, flow_m3_s, head_m, power_w, seconds, energy_j
    efficiency: float
    tariff: float | None  #: currency per J
    currency: str
    emission_factor: float | None  #: kg per J
    seconds: dict  #: scenario name -> seconds a year it runs

    def per_scenario(self, names) -> pd.DataFrame:
        """One row per scenario: pump_head_m, power_w, seconds, energy_j, cost, emissions_kg."""
        p = self.pumps
        rows = []
        for name in names:
            mine = p[p["scenario"] == name] if len(p) else p
            energy = float(mine["energy_j"].sum()) if len(mine) else 0.0
            rows.append(dict(
                scenario=name, pump_head_m=float(mine["head_m"].sum()) if len(mine) else 0.0,
                power_w=float(mine["power_w"].sum()) if len(mine) else 0.0,
                seconds=float(self.seconds.get(name, 0.0)), energy_j=energy,
                cost=None if self.tariff is None else energy * self.tariff,
                emissions_kg=None if self.emission_factor is None else energy * self.emission_factor))
        return pd.DataFrame(rows)


def scenario_seconds(project, names) -> np.ndarray:
    """Seconds a year each scenario runs: its ``hours_per_year`` (default 0);
    the one design case of a project without [[scenarios]]: the whole year;
    the static case: 0."""
    given = {sc.name: sc.hours_per_year or 0.0 for sc in project.scenarios}
    if not project.scenarios:
        given = {"design": YEAR}
    return np.array([given.get(n, 0.0) for n in names])


def stage_energy(project, grades) -> Energy:
    """The pumps of a run per flowing scenario (source pump and boosters),
    with their power, annual energy, cost and emissions."""
    cfg = project.energy
    names, seconds = grades.names, scenario_seconds(project, grades.names)
    cases = {r["scenario"]: r for r in grades.cases.to_dict("records")} if len(grades.cases) else {}
    rows = []
    for k, name in enumerate(names):
        q_in = float(grades.flow[k, 0])
        if q_in <= 0:
            continue
        case = cases.get(name, {})
        if cfg.suction_head is not None:
            head = max(0.0, float(case.get("source_head_m", grades.hgl[k, 0])) - cfg.suction_head)
        else:
            head = case.get("pump_head_m")
            head = float(head) if head is not None and np.isfinite(head) else 0.0
        if head > 0:
            rows.append(dict(scenario=name, pump="source", station_m=float(grades.station[0]),
                             flow_m3_s=q_in, head_m=head))
        el = grades.elements
        if len(el):
            boost = el[(el["scenario"] == name) & (el["kind"] == "booster") & (el["step_m"] > 0)]
            rows += [dict(scenario=name, pump=f"booster {int(r.element)}", station_m=r.station_m,
                          flow_m3_s=r.flow_m3_s, head_m=r.step_m) for r in boost.itertuples()]
    pumps = pd.DataFrame(rows, columns=["scenario", "pump", "station_m", "flow_m3_s", "head_m"])
    power = pump_power(pumps["flow_m3_s"].to_numpy(float), pumps["head_m"].to_numpy(float),
                       grades.density, cfg.efficiency)
    t = np.array([seconds[names.index(n)] for n in pumps["scenario"]], dtype=float)
    pumps = pumps.assign(power_w=power, seconds=t, energy_j=annual_energy(power, t))
    return Energy(pumps, cfg.efficiency, cfg.tariff, cfg.currency, cfg.emission_factor,
                  dict(zip(names, seconds.tolist())))
