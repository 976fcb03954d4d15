"""The hydraulics stage: grade lines for every scenario and the static case."""
from __future__ import annotations

import numpy as np
import pandas as pd

from . import minor, water
from .boundaries import BOUNDARIES, ends
from .friction import G
from .gradelines import grade_lines
from .gradeset import GradeSet
from .line import HydraulicLine
from .scenarios import scenarios

#: Station-table columns the stage reads (the pipe stage adds all but axis_m).
NEEDS = ("station_m", "axis_m", "inside_diameter_m", "roughness_m", "hw_c", "fitting_k",
         "offtake_m3_s")


def hydraulic_line(project, table: pd.DataFrame, bends: pd.DataFrame) -> HydraulicLine:
    """The :class:`HydraulicLine` of a station table (pipe stage columns and
    the pipe axis) with the design's bends (``station_m, angle_deg``)."""
    missing = [c for c in NEEDS if c not in table.columns]
    if missing:
        raise ValueError(f"hydraulics: the station table lacks {', '.join(missing)} "
                         "(run the pipe stage first)")
    hyd = project.hydraulics
    col = lambda name: table[name].to_numpy(dtype=float)  # noqa: E731
    station = col("station_m")
    base_k = col("fitting_k").copy()
    if hyd.start == "tank":
        base_k[0] += minor.NAMED_K[f"entrance_{hyd.entrance}"].k
    if hyd.end == "tank":
        base_k[-1] += minor.NAMED_K["exit"].k
    off = col("offtake_m3_s")
    at = np.clip(np.searchsorted(station, bends["station_m"].to_numpy()), 0, len(station) - 1)
    return HydraulicLine(
        station=station, axis=col("axis_m"), diameter=col("inside_diameter_m"),
        roughness=col("roughness_m"), hw_c=col("hw_c"), method=project.pipe.friction,
        base_k=base_k, offtake_station=station[off > 0], offtake_flow=off[off > 0],
        bend_index=at, bend_angle=np.radians(bends["angle_deg"].to_numpy(dtype=float)),
        density=float(water.density(hyd.temperature)),
        viscosity=float(water.dynamic_viscosity(hyd.temperature)),
        source_at_rest=hyd.start == "tank", end_at_rest=hyd.end == "tank",
    )


def stage_hydraulics(project, table: pd.DataFrame, bends: pd.DataFrame) -> GradeSet:
    """HGL, EGL, velocity and pressure per scenario, and the heads used.

    The table needs ``station_m, axis_m`` and the pipe stage's columns. The
    design's vertical bends (``bends``: ``station_m, angle_deg``) are point
    losses, K by angle at each scenario's Reynolds number; fittings, a tank
    entrance at the first station and a tank exit at the last add theirs.
    ``GradeSet.cases`` has one row per scenario: ``scenario, boundary,
    inflow_m3_s, source_head_m, required_head_m, pump_head_m, end_head_m,
    pumps_off`` (the static case of a pumped main: no minimum pressure).
    """
    line = hydraulic_line(project, table, bends)
    boundary = project.hydraulics.boundary
    solve = BOUNDARIES[boundary]
    e = ends(project, line)
    solved, lines, names = [], [], []
    for case in scenarios(project):
        s = solve(line, case, e, solved)
        solved.append(s)
        names.append(case.name)
        lines.append(grade_lines(line.station, line.axis, source_head=s.head, flow=s.flows,
                                 point_k=s.point_k, **line.engine()))
    # a pipe laid at its cover below a ground line that is off by the DEM's
    # 95 % band sits that much higher or lower: pressure +/- rho g band
    band = table["ground_band_m"].to_numpy() if "ground_band_m" in table else np.zeros(line.n)
    stack = lambda attr: np.stack([getattr(g, attr) for g in lines])  # noqa: E731
    flow = np.stack([np.append(s.flows, s.flows[-1]) for s in solved])
    hgl, hgl_up, egl, elements = element_lines(project, table, line, flow, stack("hgl"),
                                               stack("hgl_upstream"), stack("egl"), names)
    cases = pd.DataFrame([dict(scenario=n, boundary=boundary, inflow_m3_s=float(s.inflow),
                               source_head_m=float(s.head), required_head_m=s.required_head,
                               pump_head_m=s.pump_head, end_head_m=s.end_head,
                               pumps_off=bool(s.pumps_off))
                          for n, s in zip(names, solved)])
    return GradeSet(
        names=tuple(names), station=line.station, axis=line.axis,
        flow=flow, velocity=stack("velocity"), hgl=hgl, egl=egl, hgl_upstream=hgl_up,
        density=line.density, pressure_band=line.density * G * np.broadcast_to(band, (line.n,)),
        cases=cases, elements=elements, plain=(stack("hgl"), stack("hgl_upstream"), stack("egl")),
    )


def project_elements(project, table: pd.DataFrame) -> list:
    """The project's ``[[pressure_elements]]`` as :class:`~.elements.Element`
    records on the table's stations (a break tank's level defaults to the ground)."""
    from ..arrays import station_index
    from .elements import Element

    station = table["station_m"].to_numpy(dtype=float)
    out = []
    for e in project.pressure_elements:
        i = int(station_index(station, e.station, f"{e.key}.station")[0])
        level = e.level
        if e.kind == "break-tank" and level is None:
            level = float(table["ground_m"].to_numpy(dtype=float)[i])
        out.append(Element(e.kind, i, setting=e.setting, head=e.head, level=level))
    return out


def element_lines(project, table, line, flow, hgl, hgl_up, egl, names):
    """The grade arrays with the project's pressure elements applied, and one
    row per element and scenario: ``element, kind, station_m, scenario,
    step_m, flow_m3_s`` (the head each adds; negative: taken)."""
    from .elements import apply_elements

    elements = project_elements(project, table)
    if not elements:
        return hgl, hgl_up, egl, pd.DataFrame()
    applied = apply_elements(elements, line.axis, hgl, hgl_up, egl, flow.any(axis=1), line.density)
    rows = [dict(element=m, kind=e.kind, station_m=float(line.station[e.index]), scenario=name,
                 step_m=float(applied.step[m, k]), flow_m3_s=float(flow[k, e.index]))
            for m, e in enumerate(elements) for k, name in enumerate(names)]
    return applied.hgl, applied.hgl_upstream, applied.egl, pd.DataFrame(rows)

