"""The design stage: the pipe profile along the station table.

The pipe is laid in straight lengths between its joints (the station
table's knots: joints, vertices, fittings, section ends, the ends), in grade
runs between few grade breaks; plan turns at the vertices are taken by the
joints or by horizontal bends (:mod:`~gisgrade.design.plan`), and what a
joint gives to a plan turn it cannot give to a change of grade.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .. import alignment as al
from .crossings import choose_sides, design_crossings
from .fittings import fittings_table
from .plan import joint_deflection, plan_design
from .points import high_low_points
from .profile import design_profile
from .rules import DesignRules, trench_width

#: Largest default high-point tolerance (m). A DEM's stated accuracy is its
#: absolute error; its error between points a few pipe lengths apart (what makes
#: a spurious high point) is smaller, and a coarse DEM's 95 % band of metres
#: would design out real hills (common practice: ripples are decimetres).
HIGH_POINT_TOLERANCE_CAP = 0.5
#: A grade break's cost ([design] grade_break_cost) is stated per this change of grade (1 %).
GRADE_BREAK_UNIT = 0.01


@dataclass(frozen=True)
class Design:
    """What the design stage hands on besides the grown station table."""

    crossings: object  #: alignment.Crossings, bottoms resolved and sides settled
    profile: object  #: design.PipeProfile
    bends: pd.DataFrame  #: every bend fitting (vertical, horizontal, combined) with x, y
    points: pd.DataFrame  #: the pipe's high and low points (design.points.COLUMNS)
    notes: list  #: remarks for the summary


def knots_of(table: pd.DataFrame) -> np.ndarray:
    """Where the pipe may change grade: stations whose kind is a knot (its
    joints, vertices, fittings, section ends and the line's ends)."""
    knot = (table["kind"].to_numpy() & al.KNOTS) != 0 if "kind" in table else np.ones(len(table), bool)
    knot[[0, -1]] = True
    return knot


def rules_for(project, table: pd.DataFrame, allowance=None) -> DesignRules:
    """The :class:`DesignRules` of a project on a station table (cover limits
    and outside diameter per station from the earlier stages)."""
    cfg = project.design
    od = table["outside_diameter_m"].to_numpy(dtype=float)
    tolerance = cfg.high_point_tolerance
    if tolerance is None and "ground_band_m" in table:  # what the DEM cannot resolve ...
        band = float(np.nanmax(table["ground_band_m"].to_numpy(dtype=float)))
        tolerance = min(band, HIGH_POINT_TOLERANCE_CAP)  # ... over a few pipe lengths
    return DesignRules(
        min_cover=table["min_cover_m"].to_numpy(),
        max_cover=table["max_cover_m"].to_numpy(),  # inf where there is no limit
        outside_diameter=float(od.max()),
        joint_length=cfg.joint_length,
        max_joint_deflection=cfg.max_joint_deflection,
        bend_angles=cfg.bend_angles,
        min_grade=cfg.min_grade,
        max_transition_grade=cfg.max_grade,
        trench_width=trench_width(od, cfg.trench_width),
        knots=knots_of(table),
        allowance=allowance,
        grade_break_cost=cfg.grade_break_cost / GRADE_BREAK_UNIT,
        high_point_tolerance=tolerance,
    )


def stage_design(project, table: pd.DataFrame, crossings):
    """Pipe profile: top of pipe, axis, invert and cover at every station.

    Returns ``(table, design)``: the grown table (``top_m, axis_m, invert_m,
    cover_m``, the limits, the change of grade at each joint
    ``deflection_deg``, the centerline's plan turn ``plan_turn_deg``, the
    share of it each joint takes ``plan_share_deg``, the joint's whole (3D)
    deflection ``joint_deflection_deg``, reason) and a :class:`Design`.
    """
    station = table["station_m"].to_numpy()
    ground = table["ground_m"].to_numpy()
    x, y = table["x"].to_numpy(), table["y"].to_numpy()
    od = table["outside_diameter_m"].to_numpy(dtype=float)
    cfg = project.design
    crossings = crossings.resolve(lambda s: np.interp(s, station, ground))
    crossings, moved = choose_sides(crossings, station, ground, table["min_cover_m"].to_numpy(), od)
    notes = [f"crossing {n}: passing over it would leave less than the minimum cover; the pipe "
             "passes under it" for n in crossings.name[moved]]
    knots = knots_of(table)
    vertices = (table["kind"].to_numpy() & al.VERTEX) != 0 if "kind" in table else None
    plan = plan_design(station, x, y, knots, cfg.max_joint_deflection, cfg.bend_angles,
                       int(cfg.curve_joints), vertices=vertices)
    notes += jitter_note(station[plan.fittings["index"].to_numpy(int)], cfg.joint_length)
    profile = design_profile(station, ground, design_crossings(crossings, station, ground),
                             rules_for(project, table, plan.allowance))
    axis = profile.top - od / 2
    grown = table.assign(
        top_m=profile.top,
        axis_m=axis,
        invert_m=axis - table["inside_diameter_m"].to_numpy(dtype=float) / 2,
        cover_m=ground - profile.top,
        upper_limit_m=profile.upper_limit,
        lower_limit_m=profile.lower_limit,
        deflection_deg=np.degrees(profile.deflection),
        deflection_limit_deg=np.degrees(profile.deflection_limit),
        plan_turn_deg=np.degrees(plan.turn),
        plan_share_deg=np.degrees(plan.share),
        joint_deflection_deg=np.degrees(np.where(
            knots, joint_deflection(plan.share, profile.deflection), 0.0)),
        reason=profile.reason,
    )
    points = high_low_points(station, profile.top, profile.reason, near=cfg.joint_length)
    bends = bends_frame(profile, plan, grown, cfg.bend_angles)
    return grown, Design(crossings, profile, bends, points, notes)


#: Plan bends closer than this many joint lengths, this share of them or more:
#: the centerline is a trace (GPS, hand digitizing), not the intended vertices.
JITTER_SHARE = 0.25


def jitter_note(at, joint_length: float) -> list[str]:
    """A remark when many plan bends (stations ``at``, m) are within a joint
    length of the next: each is a vertex of a noisy trace, not a turn a main
    would be laid with (common practice: simplify the centerline first).

    >>> jitter_note([10.0, 12.0, 13.5, 400.0], 6.0)[0][:40]
    'centerline: 3 of the 4 plan bends are wi'
    >>> jitter_note([10.0, 400.0], 6.0)
    []
    """
    at = np.sort(np.asarray(at, float))
    if len(at) < 4:
        return []
    close = np.zeros(len(at), bool)
    near = np.diff(at) < joint_length
    close[1:] |= near
    close[:-1] |= near
    if close.sum() < JITTER_SHARE * len(at):
        return []
    from ..display import token

    return [f"centerline: {int(close.sum())} of the {len(at)} plan bends are within one joint "
            f"length ({token(joint_length, 'length')}) of another: the line looks like a GPS or "
            "digitized trace; simplify it to the intended vertices before reading bends and joints"]


def bends_frame(profile, plan, table: pd.DataFrame, angles=()) -> pd.DataFrame:
    """Every bend fitting with its map position: the design's vertical bends
    and the plan's horizontal ones; where both fall at one station they are
    one combined fitting (its angle the 3D angle the two make, to the
    nearest standard combination), listed per fitting piece.

    Columns: ``station_m, angle_deg, direction, plane, index, fitting, x, y``.
    """
    from .fittings import standard_combination

    vertical = fittings_table(profile).assign(plane="vertical")
    s = table["station_m"].to_numpy()
    rows = []
    for _, f in plan.fittings.iterrows():  # few: one per plan fitting
        i = int(f["index"])
        here = vertical["index"] == i
        if here.any():  # a vertical bend at the same joint: one fitting in the combined plane
            v = np.radians(vertical.loc[here, "angle_deg"].sum())
            combined = float(np.arccos(np.clip(np.cos(f["angle"]) * np.cos(v), -1, 1)))
            combo = standard_combination(combined, angles or f["combo"])
            vertical = vertical[~here]
            direction, plane, pieces = f["direction"], "combined", combo
        else:
            direction, plane, pieces = f["direction"], "horizontal", f["combo"]
        for a in pieces:
            rows.append(dict(station_m=float(s[i]), angle_deg=round(float(np.degrees(a)), 6),
                             direction=direction, index=i, plane=plane,
                             fitting=f"{plane} bend {np.degrees(a):g} deg {direction}"))
    frame = pd.concat([vertical, pd.DataFrame(rows, columns=vertical.columns)], ignore_index=True)
    frame = frame.astype({"station_m": float, "angle_deg": float, "index": int})
    frame = frame.sort_values(["station_m", "plane"], kind="stable").reset_index(drop=True)
    frame["x"] = np.interp(frame["station_m"], s, table["x"])
    frame["y"] = np.interp(frame["station_m"], s, table["y"])
    return frame[["station_m", "angle_deg", "direction", "plane", "index", "fitting", "x", "y"]]
