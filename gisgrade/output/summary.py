"""The run summary: key figures as JSON (``summary.json``) and as text."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .. import __version__
from ..cautions import CAUTIONS
from ..findings import pressure_sides


def summarize(result) -> dict:
    """Key figures of a run, plain JSON-able values, SI units in the key names."""
    t = result.table
    s = t["station_m"].to_numpy()
    line = result.alignment
    out = {
        "gisgrade_version": __version__,
        "project": str(result.project.path),
        "working_crs": line.crs.to_string(),
        "length_m": round(line.length, 3),
        "geodesic_length_m": round(line.geodesic_length, 3),
        "stations": int(len(t)),
        "first_station_m": float(s[0]),
        "last_station_m": float(s[-1]),
        "ground_min_m": float(t["ground_m"].min()),
        "ground_max_m": float(t["ground_m"].max()),
        "ground_bridged_stations": int(t["ground_bridged"].sum()) if "ground_bridged" in t else 0,
        "ground_band_95_m": float(t["ground_band_m"].iloc[0]) if "ground_band_m" in t else None,
        "notes": list(line.notes) + list(result.notes),
        "crossings": [
            {"name": str(n), "station_m": float(st), "angle_deg": _num(a),
             "bottom_m": float(b), "clearance_required_m": float(c)}
            for n, st, a, c, b in zip(result.crossings.name, result.crossings.station,
                                      result.crossings.angle_deg, result.crossings.clearance,
                                      result.crossings.bottom)
        ],
        "scenarios": [],
        "display_units": result.project.output.units,
        "cautions": CAUTIONS,
    }
    if "top_m" in t.columns:
        out["cover_min_m"] = float(t["cover_m"].min())
        out["cover_max_m"] = float(t["cover_m"].max())
        from .layers import clearance_achieved

        for c, achieved in zip(out["crossings"], clearance_achieved(result)):
            c["clearance_achieved_m"] = float(achieved)
    if result.profile is not None:
        out["excavation_m3"] = float(result.profile.excavation_volume)
        out["trench_volume_m3"] = float(result.profile.trench_volume)
        out["pipe_length_3d_m"] = float(result.profile.length_3d)
        out["relaxations"] = [_plain(r) for r in result.relaxations]
        out["bends"] = int(len(result.bends))
    if result.findings is not None:
        out["findings"] = int(len(result.findings))
        sep = result.findings[result.findings["check"] == "column separation"]["scenario"]
        out["column_separation"] = list(dict.fromkeys(sep))
    if result.gradelines is None:
        return out
    cases = {}
    if result.cases is not None and len(result.cases):
        cases = {r["scenario"]: r for r in result.cases.to_dict("records")}
        out["boundary"] = str(result.cases["boundary"].iloc[0])
    for name, g in result.gradelines.groupby("scenario", sort=False):
        # Lowest and highest pressure on either side of any point loss.
        p_lo, p_hi, _ = (x / 1e3 for x in pressure_sides(g, t["axis_m"].to_numpy()))
        i, j = int(np.argmin(p_lo)), int(np.argmax(p_hi))
        row = {
            "scenario": name, "flow_m3_s": float(g["flow_m3_s"].iloc[0]),
            "velocity_max_m_s": float(g["velocity_m_s"].max()),
            "pressure_min_kpa": float(p_lo[i]), "pressure_min_station_m": float(s[i]),
            "pressure_max_kpa": float(p_hi[j]), "pressure_max_station_m": float(s[j]),
            "hgl_start_m": float(g["hgl_m"].iloc[0]),
            "hgl_end_m": float(g["hgl_m"].iloc[-1]),
            # False where the pressure falls below vapour pressure somewhere:
            # the grade lines are then not physically reachable at this flow
            "achievable": name not in out.get("column_separation", []),
        }
        case = cases.get(name, {})
        for key in ("source_head_m", "required_head_m", "pump_head_m", "end_head_m"):
            if case.get(key) is not None and np.isfinite(case[key]):
                row[key] = float(case[key])
        out["scenarios"].append(row)
    return out


def _num(v):
    v = float(v)
    return None if not np.isfinite(v) else v


def _plain(obj):
    if isinstance(obj, dict):
        return {k: _plain(v) for k, v in obj.items()}
    if hasattr(obj, "__dataclass_fields__"):
        return {k: _plain(getattr(obj, k)) for k in obj.__dataclass_fields__}
    if isinstance(obj, (np.floating, np.integer)):
        return obj.item()
    if isinstance(obj, (list, tuple, np.ndarray)):
        return [_plain(v) for v in obj]
    return obj


def summary_text(summary: dict) -> str:
    """A short human-readable account of the run."""
    from ..alignment import format_station as label

    units = summary.get("display_units", "SI")

    def format_station(values):
        return label(values, units)

    lines = [
        f"route: {summary['length_m']:.1f} m in {summary['working_crs']} "
        f"({summary['stations']} stations)",
        f"ground: {summary['ground_min_m']:.2f} to {summary['ground_max_m']:.2f} m"
        + (f" (95 % band +/- {summary['ground_band_95_m']:.2f} m)"
           if summary.get("ground_band_95_m") is not None else ""),
    ]
    if "cover_min_m" in summary:
        lines.append(f"cover: {summary['cover_min_m']:.2f} to {summary['cover_max_m']:.2f} m")
    if summary.get("ground_bridged_stations"):
        lines.append(f"ground bridged over nodata at {summary['ground_bridged_stations']} stations")
    lines += [f"note: {n}" for n in summary["notes"]]
    for c in summary["crossings"]:
        achieved = (f"clearance {c['clearance_achieved_m']:.2f} m (required "
                    f"{c['clearance_required_m']:.2f} m)" if "clearance_achieved_m" in c
                    else f"bottom {c['bottom_m']:.2f} m")
        lines.append(f"crossing {c['name']} at {format_station([c['station_m']])[0]}: {achieved}")
    separated = set(summary.get("column_separation", []))
    for sc in summary["scenarios"]:
        low = (f"{sc['pressure_min_kpa']:.0f} kPa" if sc["scenario"] not in separated
               else "below vapour pressure (not achievable)")
        lines.append(
            f"{sc['scenario']}: {sc['flow_m3_s'] * 1e3:.1f} L/s, pressure "
            f"{low} at {format_station([sc['pressure_min_station_m']])[0]}"
            f" to {sc['pressure_max_kpa']:.0f} kPa at "
            f"{format_station([sc['pressure_max_station_m']])[0]}, "
            f"max velocity {sc['velocity_max_m_s']:.2f} m/s"
        )
        if "required_head_m" in sc:
            pump = (f"; pump head needed {sc['pump_head_m']:.2f} m beyond the available source head"
                    if "pump_head_m" in sc else "")
            lines.append(f"  {sc['scenario']}: source head needed {sc['required_head_m']:.2f} m "
                         f"for the required pressure{pump}")
        elif summary.get("boundary") == "two-heads" and "end_head_m" in sc:
            lines.append(f"  {sc['scenario']}: flow solved between source head "
                         f"{sc['source_head_m']:.2f} m and end head {sc['end_head_m']:.2f} m")
    if "excavation_m3" in summary:
        lines.append(f"earthwork: trench {summary['trench_volume_m3']:.0f} m3, of which "
                     f"{summary['excavation_m3']:.1f} m3 below the minimum-cover line; "
                     f"pipe length (3D) {summary['pipe_length_3d_m']:.1f} m")
    if "findings" in summary:
        lines.append(f"findings: {summary['findings']}; bends: {summary['bends']}; "
                     f"rules relaxed: {len(summary['relaxations'])}")
    for r in summary.get("relaxations", []):
        lines.append(f"relaxed: {r.get('message', r) if isinstance(r, dict) else r}")
    if summary.get("column_separation"):
        lines.append(f"COLUMN SEPARATION in {', '.join(summary['column_separation'])}: the pressure "
                     "falls below the vapour pressure; the flow cannot be carried as computed")
    lines.append("CAUTION: " + summary["cautions"])
    return "\n".join(lines)


def write_summary(result, folder: Path) -> None:
    (folder / "summary.json").write_text(json.dumps(result.summary, indent=2) + "\n")
    (folder / "summary.txt").write_text(summary_text(result.summary) + "\n")
