"""The run summary: key figures as JSON (``summary.json``) and as text."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .. import __version__
from ..cautions import CAUTIONS
from ..display import Display
from ..hydraulics.elements import VAPOUR
from . import writer
from .operations_summary import operations_summary, operations_text

#: A change of grade at a joint larger than this (deg) counts as a grade break.
GRADE_BREAK_DEG = 0.01


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
        "notes": [Display().render(n) for n in (*line.notes, *result.notes)],
        "note_templates": list(line.notes) + list(result.notes),
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
        for c, achieved in zip(out["crossings"], result.clearances.achieved):
            c["clearance_achieved_m"] = float(achieved)
    if result.profile is not None:
        out["excavation_m3"] = float(result.profile.excavation_volume)
        out["trench_volume_m3"] = float(result.profile.trench_volume)
        out["pipe_length_3d_m"] = float(result.profile.length_3d)
        out["relaxations"] = [_plain(r) for r in result.relaxations]
        out["bends"] = int(len(result.bends))
        planes = result.bends["plane"].value_counts() if len(result.bends) else {}
        out["bends_by_plane"] = {k: int(planes.get(k, 0)) for k in ("vertical", "horizontal", "combined")}
        knots = np.abs(t["deflection_deg"].to_numpy()) > GRADE_BREAK_DEG
        out["grade_breaks"] = int(knots.sum())
    if result.points is not None:
        p = result.points
        inner = p["why"] != "end"  # the ends are the tank or main the line joins
        out["high_points"] = int(((p["kind"] == "high") & inner).sum())
        out["low_points"] = int(((p["kind"] == "low") & inner).sum())
        out["high_low_points"] = [
            {"station_m": float(r.station_m), "kind": r.kind, "elevation_m": float(r.elevation_m),
             "prominence_m": float(r.prominence_m), "why": r.why} for r in p.itertuples()]
    if result.valves is not None:
        kinds = result.valves["kind"].value_counts()
        out["valves"] = {k: int(kinds.get(k, 0)) for k in ("combination", "air-release", "air-vacuum", "drain")}
    if result.findings is not None:
        out["findings"] = int(len(result.findings))
        out["findings_list"] = findings_list(result.findings)
        sep = result.findings[result.findings["check"] == "column separation"]["scenario"]
        out["column_separation"] = list(dict.fromkeys(sep))
    g = result.grades
    if g is None:
        return out
    cases = {}
    if len(g.cases):
        cases = {r["scenario"]: r for r in g.cases.to_dict("records")}
        out["boundary"] = str(g.cases["boundary"].iloc[0])
    for k, name in enumerate(g.names):
        # Lowest and highest pressure on either side of any point loss.
        p_lo, p_hi = g.pressure_low[k] / 1e3, g.pressure_high[k] / 1e3
        i, j = int(np.argmin(p_lo)), int(np.argmax(p_hi))
        row = {
            "scenario": name, "flow_m3_s": float(g.flow[k, 0]),
            "velocity_max_m_s": float(g.velocity[k].max()),
            "pressure_min_kpa": float(p_lo[i]), "pressure_min_station_m": float(s[i]),
            "pressure_max_kpa": float(p_hi[j]), "pressure_max_station_m": float(s[j]),
            "hgl_start_m": float(g.hgl[k, 0]),
            "hgl_end_m": float(g.hgl[k, -1]),
            # False where the pressure falls below vapour pressure somewhere:
            # the grade lines are then not physically reachable at this flow
            "achievable": name not in out.get("column_separation", []),
        }
        case = cases.get(name, {})
        for key in ("source_head_m", "required_head_m", "pump_head_m", "end_head_m"):
            if case.get(key) is not None and np.isfinite(case[key]):
                row[key] = float(case[key])
        out["scenarios"].append(row)
    out.update(operations_summary(result))
    return out


def findings_list(frame) -> list[dict]:
    """The findings most serious first, as plain dicts: severity, check,
    scenario, stations (m), the message in SI and as its template."""
    from ..findings import by_severity

    cols = ["severity", "check", "scenario", "from_station_m", "to_station_m", "worst_station_m",
            "message", "template"]
    rows = by_severity(frame)
    return [{k: (float(v) if k.endswith("_m") else str(v)) for k, v in zip(cols, r)}
            for r in rows[[c for c in cols if c in rows]].itertuples(index=False)]


def findings_lines(summary: dict, d: Display) -> list[str]:
    """One line per finding, most serious first, in ``d``'s units."""
    out = []
    for f in summary.get("findings_list", []):
        where = (d.station([f["from_station_m"]])[0] if f["from_station_m"] == f["to_station_m"]
                 else f"{d.station([f['from_station_m']])[0]} to {d.station([f['to_station_m']])[0]}")
        out.append(f"  {f['severity'].upper()}: {f['scenario']}: {f['check']} {where}: "
                   f"{d.render(f.get('template', f['message']))}")
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
    """A short human-readable account of the run, in its display units."""
    d = Display(summary.get("display_units", "SI"))

    def at(station_m):
        return d.station([station_m])[0]

    def m(value, decimals=2):
        return d.text(value, "length", decimals)

    band = summary.get("ground_band_95_m")
    lines = [
        f"route: {m(summary['length_m'], 1)} in {summary['working_crs']} "
        f"({summary['stations']} stations)",
        f"ground: {d.number(summary['ground_min_m'], 'elevation')} to "
        f"{d.text(summary['ground_max_m'], 'elevation')}"
        + (f" (95 % band +/- {m(band)})" if band is not None else ""),
    ]
    if "cover_min_m" in summary:
        lines.append(f"cover: {d.number(summary['cover_min_m'], 'length', 2)} to "
                     f"{m(summary['cover_max_m'])}")
    if summary.get("ground_bridged_stations"):
        lines.append(f"ground bridged over nodata at {summary['ground_bridged_stations']} stations")
    lines += [f"note: {d.render(n)}" for n in summary.get("note_templates", summary["notes"])]
    for c in summary["crossings"]:
        achieved = (f"clearance {m(c['clearance_achieved_m'])} (required "
                    f"{m(c['clearance_required_m'])})" if "clearance_achieved_m" in c
                    else f"bottom {d.text(c['bottom_m'], 'elevation')}")
        lines.append(f"crossing {c['name']} at {at(c['station_m'])}: {achieved}")
    separated = set(summary.get("column_separation", []))
    for sc in summary["scenarios"]:
        low = (d.text(sc["pressure_min_kpa"] * 1e3, "pressure") if sc["scenario"] not in separated
               else VAPOUR)
        lines.append(
            f"{sc['scenario']}: {d.text(sc['flow_m3_s'], 'flow')}, pressure "
            f"{low} at {at(sc['pressure_min_station_m'])}"
            f" to {d.text(sc['pressure_max_kpa'] * 1e3, 'pressure')} at "
            f"{at(sc['pressure_max_station_m'])}, "
            f"max velocity {d.text(sc['velocity_max_m_s'], 'velocity')}"
        )
        if "required_head_m" in sc:
            pump = (f"; pump head needed {d.text(sc['pump_head_m'], 'head')} beyond the available "
                    "source head" if "pump_head_m" in sc else "")
            lines.append(f"  {sc['scenario']}: source head needed {d.text(sc['required_head_m'], 'head')} "
                         f"for the required pressure{pump}")
        elif summary.get("boundary") == "two-heads" and "end_head_m" in sc:
            lines.append(f"  {sc['scenario']}: flow solved between source head "
                         f"{d.text(sc['source_head_m'], 'head')} and end head "
                         f"{d.text(sc['end_head_m'], 'head')}")
    lines += operations_text(summary, d)
    if "excavation_m3" in summary:
        lines.append(f"earthwork: trench {d.text(summary['trench_volume_m3'], 'volume')}, of which "
                     f"{d.text(summary['excavation_m3'], 'volume', 1)} below the minimum-cover line; "
                     f"pipe length (3D) {m(summary['pipe_length_3d_m'], 1)}")
    if "high_points" in summary:
        def count(n, what):
            return f"{n} {what}" if n == 1 else f"{n} {what}s"

        lines.append(f"pipe profile: {count(summary['grade_breaks'], 'grade break')}; between the "
                     f"ends {count(summary['high_points'], 'high point')} and "
                     f"{count(summary['low_points'], 'low point')}")
    if "valves" in summary:
        v = summary["valves"]
        lines.append(f"valves: {v['combination']} combination, {v['air-release']} air-release, "
                     f"{v['air-vacuum']} air-vacuum; drains: {v['drain']}")
    if "findings" in summary:
        planes = summary.get("bends_by_plane", {})
        split = (" (" + ", ".join(f"{n} {k}" for k, n in planes.items() if n) + ")"
                 if any(planes.values()) else "")
        lines.append(f"findings: {summary['findings']}; bends: {summary['bends']}{split}; "
                     f"rules relaxed: {len(summary['relaxations'])}")
        lines += findings_lines(summary, d)
    if summary.get("column_separation"):
        lines.append(f"COLUMN SEPARATION in {', '.join(summary['column_separation'])}: the pressure "
                     "falls below the vapour pressure; the flow cannot be carried as computed")
    lines.append("CAUTION: " + summary["cautions"])
    return "\n".join(lines)


def json_safe(obj):
    """``obj`` with every NaN or infinite number as null (JSON, RFC 8259, has none).

    >>> json_safe({"a": [1.0, float("nan")], "b": float("inf")})
    {'a': [1.0, None], 'b': None}
    """
    if isinstance(obj, dict):
        return {k: json_safe(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_safe(v) for v in obj]
    if isinstance(obj, float) and not np.isfinite(obj):
        return None
    return obj


@writer("summary.json", "summary.txt")
def write_summary(result, folder: Path, display=None) -> None:
    (folder / "summary.json").write_text(
        json.dumps(json_safe(result.summary), indent=2, allow_nan=False) + "\n")
    (folder / "summary.txt").write_text(summary_text(result.summary) + "\n")
