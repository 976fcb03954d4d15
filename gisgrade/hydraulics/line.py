"""The main as the grade-line engine sees it: arrays along the stations.

:class:`HydraulicLine` gathers, once per run, what every scenario shares: the
stations and pipe axis, the pipe data per station, the point losses that do
not depend on the flow (fittings, a tank entrance and exit), the offtakes and
the designed bends. Its methods give a scenario's demands, segment flows and
point-loss coefficients (bend K follow the Reynolds number). Pure numpy.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..arrays import station_index
from ..errors import InputError
from . import friction, minor
from .gradelines import segment_flows


@dataclass(frozen=True)
class HydraulicLine:
    """Arrays along the main (SI). Per-station pipe data describe the pipe
    leaving each station (the last: the pipe reaching it)."""

    station: np.ndarray  #: (n,) m
    axis: np.ndarray  #: (n,) m, pipe axis elevation
    diameter: np.ndarray  #: (n,) m, inside diameter
    roughness: np.ndarray  #: (n,) m (Darcy-Weisbach)
    hw_c: np.ndarray  #: (n,) Hazen-Williams C
    method: str  #: "darcy-weisbach" or "hazen-williams"
    base_k: np.ndarray  #: (n,) K of fittings, tank entrance and exit
    offtake_station: np.ndarray  #: (k,) m
    offtake_flow: np.ndarray  #: (k,) m3/s in the base case
    bend_index: np.ndarray  #: (b,) station index of each bend fitting
    bend_angle: np.ndarray  #: (b,) rad
    density: float  #: kg/m3
    viscosity: float  #: Pa s
    source_at_rest: bool = False  #: the line starts in a tank
    end_at_rest: bool = False  #: the line ends in a tank

    @property
    def n(self) -> int:
        return len(self.station)

    def engine(self) -> dict:
        """Keyword arguments of :func:`~gisgrade.hydraulics.gradelines.grade_lines`
        shared by every case (per-segment data from the per-station columns)."""
        hw = self.method == "hazen-williams"
        return dict(diameter=self.diameter[:-1], method=self.method,
                    roughness=None if hw else self.roughness[:-1],
                    hw_c=self.hw_c[:-1] if hw else None,
                    density=self.density, viscosity=self.viscosity,
                    source_at_rest=self.source_at_rest, end_at_rest=self.end_at_rest)

    def point_k(self, flows: np.ndarray) -> np.ndarray:
        """K at every station for segment ``flows`` (m3/s): the fixed point
        losses plus each bend's K at its Reynolds number (none at rest)."""
        k = self.base_k.copy()
        at = self.bend_index
        if len(at):
            d = self.diameter[at]
            q = np.append(flows, flows[-1])[at]
            re = friction.reynolds(q / (np.pi * d ** 2 / 4), d, self.density, self.viscosity)
            k_bend = minor.bend_k(self.bend_angle, Re=np.where(re > 0, re, minor.DEFAULT_BEND_RE),
                                  rel_roughness=np.nan_to_num(self.roughness[at] / d))
            np.add.at(k, at, np.where(re > 0, k_bend, 0.0))
        return k

    def demands(self, case) -> tuple[np.ndarray, np.ndarray]:
        """Where water leaves in ``case`` and how much: the offtakes times its
        scale, and its fire flow at its fire station (default the last)."""
        xs, qs = self.offtake_station, self.offtake_flow * case.scale
        if not case.fire_flow:
            return xs, qs
        at = (self.station[-1] if case.fire_station is None else
              self.station[station_index(self.station, case.fire_station,
                                         f"{case.key}.fire_station")[0]])
        return np.append(xs, at), np.append(qs, case.fire_flow)

    def flows(self, case, inflow: float) -> np.ndarray:
        """Flow in each segment (m3/s) for ``case`` with ``inflow`` entering."""
        out_at, out_q = self.demands(case)
        taken = float(np.sum(out_q))
        if taken > inflow * (1 + 1e-12) + 1e-15:  # every offtake counts, the last station's too
            from ..display import current

            d = current()  # in the reader's units
            raise InputError(f"scenario {case.name!r}: the offtakes take {d.text(taken, 'flow', 3)}, "
                             f"more than the {d.text(inflow, 'flow', 3)} entering ({case.inflow_key}; "
                             "the offtakes scale with it)")
        return np.maximum(segment_flows(self.station, inflow, out_at, out_q), 0.0)
