"""The data the pipe-profile designer takes and gives back.

:class:`Crossing` and :class:`DesignRules` go in; :class:`PipeProfile` (with
its :class:`Relaxation` records) comes out. All values are SI: metres and
radians. Defaults marked *common practice* have no single source; those
marked *from memory* were written from memory of the cited source and must
be checked against the maker's table or the utility's standard before use.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import InputError
from ..project import DesignConfig as _DEFAULTS  # the project file's defaults, defined once

#: Standard vertical bend fitting angles, rad (11.25, 22.5, 45 and 90 degrees;
#: the usual fitting series, *common practice*): the project's default.
STANDARD_BEND_ANGLES = _DEFAULTS.bend_angles

#: Trench width beyond the pipe's outside diameter, 0.3 m each side (common
#: practice for preliminary quantities; the utility's standard governs).
TRENCH_SIDE_ROOM = 0.6


def trench_width(outside_diameter, given=None):
    """Trench width (m): ``given`` if set, else the outside diameter (m, a
    scalar or per station) plus :data:`TRENCH_SIDE_ROOM`.

    >>> float(trench_width(0.4)), trench_width(0.4, 1.2)
    (1.0, 1.2)
    """
    return given if given is not None else np.asarray(outside_diameter) + TRENCH_SIDE_ROOM

#: The rules in the order they give way, most important first (see
#: docs/design.md for the reasons). A rule lower in the list is relaxed
#: before any rule above it.
PRIORITY = (
    "crossing clearance",
    "min cover",
    "joint deflection",
    "max cover",
    "max grade",
    "min grade",
    "grade direction",
)


@dataclass(frozen=True)
class Crossing:
    """One crossed feature, already located on the line.

    station: m along the line (should be one of the design stations; a
    crossing between two stations is enforced on the straight pipe between
    them). limit: m elevation; for ``side="under"`` the crossed feature's
    bottom, for ``"over"`` its top. clearance: m vertical separation kept
    between the outsides. side: ``"under"`` (pipe passes below, default) or
    ``"over"`` (pipe passes above; its bottom, top minus the outside
    diameter, must clear the feature).
    """

    station: float
    limit: float
    clearance: float
    side: str = "under"
    name: str = ""


@dataclass(frozen=True)
class DesignRules:
    """The rules the profile must keep (SI units: m, rad, m/m).

    min_cover, max_cover: m from ground to top of pipe, a scalar or one value
    per station (zones give per-station values); ``max_cover=None`` means no
    limit, and so does nan or inf at a station. outside_diameter: m (over-crossings need it). joint_length: m of
    one pipe length (about 5.5-6 m, *common practice*). max_joint_deflection:
    rad allowed at each joint (3 degrees; 2-5 degrees is typical for push-on
    and mechanical joints, falling with size, *from memory*: the maker's
    table governs). bend_angles: rad, the standard vertical bend fittings
    available (empty: no fittings, joints only). min_grade: m/m kept on every segment (e.g. 0.001), or None.
    trench_width: m, scalar or per station, weights excavation (None:
    :func:`trench_width` of the outside diameter).
    max_transition_grade: m/m cap on the absolute grade, or None.
    bend_cost: m^3 of excavation judged equal to one radian of bend angle
    beyond what the joints allow; the large default means bends are placed
    only where the rules need them or where they save a great deal of
    digging (a judgement, not a standard).

    knots: bool per station, where the pipe may change grade (its joints,
    fittings, plan vertices); between knots the pipe is straight, and a
    knot's joint turns at most ``max_joint_deflection`` (or its
    ``allowance``). None: every station is a knot and the allowance is
    spread, ``max_joint_deflection`` per ``joint_length`` of line.
    allowance: rad per station a knot's joint may turn in the vertical
    (a plan turn there takes its share), or None.
    grade_break_cost: m^3 of excavation judged equal to one radian of grade
    change (an l1 penalty on the change of grade at every knot, which makes
    the profile straight grade runs between few grade breaks [1]); 0: least
    excavation alone.
    high_point_tolerance: m; a high or low point of the pipe less prominent
    than this is removed (the runs either side are held to one direction
    and solved again); None: the profile's own extrema are kept.

    [1] Kim, S.-J., Koh, K., Boyd, S., Gorinevsky, D. (2009). l1 trend
        filtering. SIAM Review 51(2), 339-360.
    """

    min_cover: float | np.ndarray
    max_cover: float | np.ndarray | None = None
    outside_diameter: float = 0.0
    joint_length: float = _DEFAULTS.joint_length
    max_joint_deflection: float = _DEFAULTS.max_joint_deflection
    bend_angles: tuple = STANDARD_BEND_ANGLES
    min_grade: float | None = None
    trench_width: float | np.ndarray | None = None
    max_transition_grade: float | None = None
    bend_cost: float = 1.0e5
    knots: np.ndarray | None = None
    allowance: np.ndarray | None = None
    grade_break_cost: float = 0.0
    high_point_tolerance: float | None = None

    def check(self, n: int) -> None:
        """Raise :class:`InputError` naming the first rule value that cannot be used."""
        def arr(name, lo, strict=False, open_ended=False):
            v = np.asarray(getattr(self, name), dtype=float)
            if v.ndim not in (0, 1) or (v.ndim == 1 and len(v) != n):
                raise InputError(f"design rule {name}: expected one value or {n} values, got shape {v.shape}")
            if open_ended:  # nan or +inf: no limit at that station
                v = np.where(np.isnan(v) | (v == np.inf), lo, v)
            bad = ~np.isfinite(v) | ((v <= lo) if strict else (v < lo))
            if np.any(bad):
                raise InputError(f"design rule {name}: {float(np.ravel(v)[np.argmax(np.ravel(bad))])!r} "
                                 f"is not a finite value {'>' if strict else '>='} {lo}")

        arr("min_cover", 0.0)
        for name in ("knots", "allowance"):
            v = getattr(self, name)
            if v is not None and np.shape(v) != (n,):
                raise InputError(f"design rule {name}: expected {n} values, got shape {np.shape(v)}")
        if self.allowance is not None:
            arr("allowance", 0.0)
        for name in ("grade_break_cost", "high_point_tolerance"):
            v = getattr(self, name)
            if v is not None and (not np.isfinite(v) or v < 0):
                raise InputError(f"design rule {name}: {v!r} must be a finite value >= 0")
        if self.max_cover is not None:
            arr("max_cover", 0.0, open_ended=True)
        if self.trench_width is not None:
            arr("trench_width", 0.0, strict=True)
        for name, strict in (("outside_diameter", False), ("joint_length", True),
                             ("max_joint_deflection", False), ("bend_cost", True)):
            v = getattr(self, name)
            if not np.isfinite(v) or v < 0 or (strict and v == 0):
                raise InputError(f"design rule {name}: {v!r} must be a finite value {'>' if strict else '>='} 0")
        for name in ("min_grade", "max_transition_grade"):
            v = getattr(self, name)
            if v is not None and (not np.isfinite(v) or v <= 0):
                raise InputError(f"design rule {name}: {v!r} must be a finite value > 0 (or unset)")
        if self.min_grade is not None and self.max_transition_grade is not None \
                and self.min_grade > self.max_transition_grade:
            raise InputError(f"design rule min_grade {self.min_grade} exceeds max_transition_grade "
                             f"{self.max_transition_grade}")
        for a in self.bend_angles:
            if not (0 < a < np.pi / 2 + 1e-12):
                raise InputError(f"design rule bend_angles: {a!r} rad is not in (0, pi/2]")


@dataclass(frozen=True)
class Relaxation:
    """One rule that gave way: where (a station range, m), by how much, why."""

    rule: str             # one of PRIORITY, or "bend angle"
    station_from: float   # m
    station_to: float     # m
    amount: float         # largest shortfall in the range, in `unit`
    unit: str             # "m", "rad" or "m/m"
    message: str


@dataclass(frozen=True)
class PipeProfile:
    """The designed pipe profile, one value per input station.

    top: m, top of pipe. reason: what set the pipe there (see
    :data:`REASONS` in :mod:`gisgrade.design.profile`). bends: one row per
    fitting (station, angle_deg, direction "sag"/"crest", index into the
    stations). relaxations: rules that gave way. excavation_volume: m^3,
    trench below the minimum-cover line, sum of trench width x (min-cover
    line - top) x tributary length. length_3d: m along the pipe.
    upper_limit / lower_limit: m, the top-of-pipe limits from cover and
    crossings (nan where none). deflection: rad, change of pipe angle at
    each station (positive = sag). deflection_limit: rad the joints allow
    there (nan at the ends). trench_volume: m^3 from ground down to the pipe
    bottom (top - outside diameter), times trench width. direction: +1/-1,
    the direction the segment leaving each station is held to (the last
    station: the segment reaching it), or None where no direction is held.
    """

    station: np.ndarray
    top: np.ndarray
    reason: np.ndarray
    bends: pd.DataFrame
    relaxations: list = field(default_factory=list)
    excavation_volume: float = 0.0
    length_3d: float = 0.0
    upper_limit: np.ndarray | None = None
    lower_limit: np.ndarray | None = None
    deflection: np.ndarray | None = None
    deflection_limit: np.ndarray | None = None
    trench_volume: float = 0.0
    direction: np.ndarray | None = None
