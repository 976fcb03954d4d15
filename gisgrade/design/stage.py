"""The design stage: the pipe profile along the station table."""
from __future__ import annotations

import numpy as np
import pandas as pd

from .crossings import choose_sides, design_crossings
from .fittings import fittings_table
from .profile import design_profile
from .rules import DesignRules, trench_width


def rules_for(project, table: pd.DataFrame) -> DesignRules:
    """The :class:`DesignRules` of a project on a station table (cover limits
    and outside diameter per station from the earlier stages)."""
    cfg = project.design
    od = table["outside_diameter_m"].to_numpy(dtype=float)
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
    )


def stage_design(project, table: pd.DataFrame, crossings):
    """Pipe profile: top of pipe, axis, invert and cover at every station.

    Returns ``(table, crossings, profile, notes)``: the grown table, the
    crossings with their bottoms resolved (from depth below ground where
    given so) and their sides settled, the design's
    :class:`~gisgrade.design.PipeProfile`, and a note for each crossing the
    pipe could not pass over as asked.
    """
    station = table["station_m"].to_numpy()
    ground = table["ground_m"].to_numpy()
    od = table["outside_diameter_m"].to_numpy(dtype=float)
    crossings = crossings.resolve(lambda s: np.interp(s, station, ground))
    crossings, moved = choose_sides(crossings, station, ground, table["min_cover_m"].to_numpy(), od)
    notes = [f"crossing {n}: passing over it would leave less than the minimum cover; the pipe "
             "passes under it" for n in crossings.name[moved]]
    profile = design_profile(station, ground, design_crossings(crossings, station, ground),
                             rules_for(project, table))
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
        reason=profile.reason,
    )
    return grown, crossings, profile, notes


def bends_frame(profile, table: pd.DataFrame) -> pd.DataFrame:
    """The design's vertical bends with their map position (x, y)."""
    frame = fittings_table(profile)
    s = table["station_m"].to_numpy()
    frame["x"] = np.interp(frame["station_m"], s, table["x"])
    frame["y"] = np.interp(frame["station_m"], s, table["y"])
    return frame
