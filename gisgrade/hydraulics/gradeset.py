"""Every scenario's grade lines at every station, as (scenario x station) arrays.

:class:`GradeSet` is what the hydraulics stage hands on. Findings, layers,
the summary and the plots read its arrays (row ``i`` is scenario
``names[i]``, the static case last); :meth:`GradeSet.frame` gives the
long table of ``gradelines.csv``. The pressure on both sides of every point
loss is computed once here (:attr:`GradeSet.pressure_low`,
:attr:`GradeSet.pressure_high`).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import pandas as pd

from .friction import G


@dataclass(frozen=True, eq=False)
class GradeSet:
    """Grade lines of ``k`` scenarios at ``n`` stations (SI)."""

    names: tuple  #: (k,) scenario names, the static case last
    station: np.ndarray  #: (n,) m
    axis: np.ndarray  #: (n,) m, pipe axis the pressures refer to
    flow: np.ndarray  #: (k, n) m3/s in the pipe leaving each station (last: arriving)
    velocity: np.ndarray  #: (k, n) m/s (see GradeLines.velocity)
    hgl: np.ndarray  #: (k, n) m, just downstream of any point loss
    egl: np.ndarray  #: (k, n) m
    hgl_upstream: np.ndarray  #: (k, n) m, just upstream of any point loss
    density: float  #: kg/m3
    pressure_band: np.ndarray  #: (n,) Pa, +/- the DEM's 95 % band puts on pressure
    cases: pd.DataFrame = field(default_factory=pd.DataFrame)  #: one row per scenario: heads used
    #: one row per pressure element and scenario: element, kind, station_m, scenario, step_m, flow_m3_s
    elements: pd.DataFrame = field(default_factory=pd.DataFrame)
    #: (hgl, hgl_upstream, egl) before the project's pressure elements (None: as above)
    plain: tuple | None = None

    @property
    def minimum_applies(self) -> np.ndarray:
        """(k,) bool: scenarios the minimum pressure applies to (all but the
        static case of a pumped main, pumps off behind a check valve)."""
        c = self.cases
        if "pumps_off" not in c or len(c) != len(self.names):
            return np.ones(len(self.names), dtype=bool)
        return ~c["pumps_off"].fillna(False).to_numpy(dtype=bool)

    def __len__(self) -> int:
        return len(self.names)

    def index(self, name: str) -> int:
        return self.names.index(name)

    @cached_property
    def pressure(self) -> np.ndarray:
        """(k, n) Pa at the pipe axis, rho g (HGL - axis)."""
        return self.density * G * (self.hgl - self.axis)

    @cached_property
    def hgl_low(self) -> np.ndarray:
        """(k, n) m, the lower HGL of the two sides of any point loss."""
        return np.minimum(self.hgl, self.hgl_upstream)

    @cached_property
    def pressure_low(self) -> np.ndarray:
        """(k, n) Pa, the lowest pressure at each station over both sides of
        any point loss there (what the low-pressure checks see)."""
        return self.density * G * (self.hgl_low - self.axis)

    @cached_property
    def pressure_high(self) -> np.ndarray:
        """(k, n) Pa, the highest pressure over both sides of any point loss."""
        return self.density * G * (np.maximum(self.hgl, self.hgl_upstream) - self.axis)

    @property
    def flowing(self) -> list[int]:
        """Rows of the scenarios with flow somewhere."""
        return [i for i in range(len(self)) if (self.flow[i] > 0).any()]

    def frame(self) -> pd.DataFrame:
        """One row per scenario and station: ``scenario, station_m, flow_m3_s,
        velocity_m_s, hgl_m, egl_m, pressure_kpa, pressure_band_kpa,
        hgl_upstream_m, density_kg_m3``."""
        k, n = self.hgl.shape
        return pd.DataFrame({
            "scenario": np.repeat(np.asarray(self.names, dtype=object), n),
            "station_m": np.tile(self.station, k),
            "flow_m3_s": self.flow.ravel(), "velocity_m_s": self.velocity.ravel(),
            "hgl_m": self.hgl.ravel(), "egl_m": self.egl.ravel(),
            "pressure_kpa": self.pressure.ravel() / 1e3,
            "pressure_band_kpa": np.tile(self.pressure_band, k) / 1e3,
            "hgl_upstream_m": self.hgl_upstream.ravel(), "density_kg_m3": self.density,
        })
