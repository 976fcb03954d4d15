"""The summary's operating decisions: surge screening, pumping energy and
pressure management (``summary.json`` keys ``surge``, ``wave_speeds``,
``energy``, ``energy_year``, ``pressure_elements``, ``pressure_management``;
lines in ``summary.txt``)."""
from __future__ import annotations

import numpy as np

from ..display import Display
from ..hydraulics.energy import KWH
from ..hydraulics.surge import SCREENING


def _runs(station, values):
    """(from, to, value) for each run of equal ``values`` along ``station``."""
    cut = np.flatnonzero(np.abs(np.diff(values)) > 1e-9) + 1
    starts, ends = np.r_[0, cut], np.r_[cut, len(values) - 1]
    return [(float(station[a]), float(station[b]), float(values[a])) for a, b in zip(starts, ends)]


def operations_summary(result) -> dict:
    """Plain JSON-able figures (SI in the key names) of the operations stage."""
    out = {}
    surge, g = getattr(result, "surge", None), result.grades
    if surge is not None:
        s = surge.station
        rating = (result.table["rating_pa"].to_numpy(float) if "rating_pa" in result.table
                  else np.full(len(s), np.nan)) + surge.allowance
        rows = []
        for k, name in enumerate(surge.names):
            i, j = int(np.argmax(surge.pressure_max[k])), int(np.argmin(surge.pressure_min[k]))
            over = np.isfinite(rating) & (surge.pressure_max[k] > rating + 1e-3)
            rows.append({"scenario": name, "head_change_max_m": float(surge.head_change[k].max()),
                         "pressure_max_kpa": float(surge.pressure_max[k, i] / 1e3),
                         "pressure_max_station_m": float(s[i]),
                         "pressure_min_kpa": float(surge.pressure_min[k, j] / 1e3),
                         "pressure_min_station_m": float(s[j]),
                         "above_rating": bool(over.any()),
                         "column_separates": bool(surge.vapour_deficit is not None
                                                  and (surge.vapour_deficit[k] > 0).any())})
        out["surge"] = rows
        out["wave_speeds"] = [{"from_station_m": a, "to_station_m": b, "wave_speed_m_s": v}
                              for a, b, v in _runs(s, surge.wave_speed)]
        out["surge_return_time_s"] = float(surge.return_time)
        out["surge_closure_factor"] = float(surge.factor)
        out["surge_restraint"] = surge.restraint
        out["surge_note"] = SCREENING
    energy = getattr(result, "energy", None)
    if energy is not None and g is not None:
        per = energy.per_scenario(g.names)
        out["energy"] = [{"scenario": r.scenario, "pump_head_m": r.pump_head_m,
                          "power_kw": r.power_w / 1e3, "hours_per_year": r.seconds / 3600,
                          "annual_energy_kwh": r.energy_j / KWH,
                          "annual_cost": None if r.cost is None else float(r.cost),
                          "annual_emissions_kg": None if r.emissions_kg is None
                          else float(r.emissions_kg)}
                         for r in per.itertuples()]
        total = float(per["energy_j"].sum())
        out["energy_year"] = {
            "annual_energy_kwh": total / KWH, "efficiency": energy.efficiency,
            "annual_cost": None if energy.tariff is None else total * energy.tariff,
            "currency": energy.currency,
            "annual_emissions_kg": (None if energy.emission_factor is None
                                    else total * energy.emission_factor),
            "pumps": [{"scenario": p.scenario, "pump": p.pump, "station_m": float(p.station_m),
                       "flow_m3_s": float(p.flow_m3_s), "head_m": float(p.head_m),
                       "power_kw": float(p.power_w) / 1e3} for p in energy.pumps.itertuples()]}
    if g is not None and len(g.elements):
        el = g.elements
        out["pressure_elements"] = [
            {"kind": str(grp["kind"].iloc[0]), "station_m": float(grp["station_m"].iloc[0]),
             "step_m": {r.scenario: float(r.step_m) for r in grp.itertuples()}}
            for _, grp in el.groupby("element", sort=True)]
    proposal = getattr(result, "suggestions", None)
    if proposal is not None:
        out["pressure_management"] = [
            {"kind": p.kind, "station_m": p.station_m, "setting_kpa": p.setting / 1e3,
             "step_m": {n: float(v) for n, v in zip(g.names, p.step)}, "reason": p.reason,
             "toml": p.toml, "applied": False} for p in proposal.suggestions]
        out["pressure_management_unfixable"] = [
            {"from_station_m": u.from_station_m, "to_station_m": u.to_station_m,
             "reason": u.reason} for u in getattr(proposal, "unfixable", ())]
        out["pressure_management_solved"] = bool(proposal.solved)
        out["pressure_management_note"] = proposal.reason
    return out


def operations_text(summary: dict, d: Display) -> list[str]:
    """Lines of ``summary.txt`` for the operating decisions."""
    lines = []
    at = lambda s: d.station([s])[0]  # noqa: E731
    for sc in summary.get("surge", []):
        if sc["head_change_max_m"] <= 0:
            continue
        low = ("down to the vapour pressure (the column separates)"
               if sc.get("column_separates") else d.text(sc['pressure_min_kpa'] * 1e3, 'pressure'))
        lines.append(f"surge ({sc['scenario']}): head change up to "
                     f"{d.text(sc['head_change_max_m'], 'head')}, pressure "
                     f"{low} at {at(sc['pressure_min_station_m'])} to "
                     f"{d.text(sc['pressure_max_kpa'] * 1e3, 'pressure')} at "
                     f"{at(sc['pressure_max_station_m'])}"
                     + ("; ABOVE THE RATING" if sc["above_rating"] else ""))
    if "wave_speeds" in summary:
        speeds = ", ".join(f"{d.text(w['wave_speed_m_s'], 'velocity', 0)} from "
                           f"{at(w['from_station_m'])}" for w in summary["wave_speeds"])
        lines.append(f"surge: wave speed {speeds}; return time 2L/a "
                     f"{summary['surge_return_time_s']:.1f} s. {summary['surge_note']}")
    year = summary.get("energy_year")
    if year is not None:
        if not year["pumps"]:
            lines.append("energy: no pumping (the source head carries every scenario)")
        else:
            cost = ("" if year["annual_cost"] is None else
                    f", cost {year['annual_cost']:.0f} {year['currency']}".rstrip())
            co2 = ("" if year["annual_emissions_kg"] is None else
                   f", emissions {year['annual_emissions_kg'] / 1e3:.1f} t")
            lines.append(f"energy: {year['annual_energy_kwh']:.0f} kWh a year{cost}{co2} "
                         f"(wire-to-water efficiency {year['efficiency']:.0%})")
            for e in summary["energy"]:
                if e["pump_head_m"] > 0:
                    lines.append(f"  {e['scenario']}: pump head {d.text(e['pump_head_m'], 'head')}, "
                                 f"{e['power_kw']:.1f} kW for {e['hours_per_year']:.0f} h a year")
    for e in summary.get("pressure_elements", []):
        steps = ", ".join(f"{n} {d.text(v, 'head')}" for n, v in e["step_m"].items())
        lines.append(f"pressure element: {e['kind']} at {at(e['station_m'])} (head step {steps})")
    for p in summary.get("pressure_management", []):
        lines.append(f"suggested (not applied): {p['reason']}")
    for u in summary.get("pressure_management_unfixable", []):
        lines.append(f"pressure management: {u['reason']}")
    left = summary.get("pressure_management_note", "")
    for u in summary.get("pressure_management_unfixable", []):
        left = left.replace(u["reason"], "").strip("; ")
    if left:
        lines.append(f"pressure management: {left}")
    tables = [p["toml"] for p in summary.get("pressure_management", []) if p.get("toml")]
    if tables:
        lines.append("to apply the suggestions, add to the project file (these give the heads "
                     "stated above):")
        lines += ["  " + t for block in tables for t in block.splitlines()]
    return lines
