"""Surge screening: wave speed, Joukowsky head change and the head envelope.

A **screening, not a transient analysis**: the largest head change a fast
valve closure or pump stop can cause, ΔH = a ΔV / g (Joukowsky) for a change
faster than the wave's return time 2L/a, laid on each scenario's steady HGL
as an envelope HGL ± ΔH. It neglects friction damping, line packing, wave
reflections at section changes and offtakes, column separation and its
rejoining (which can exceed ΔH) and every surge device. A specialist's
transient analysis governs.

Pure, vectorized numpy functions in SI units; :func:`stage_surge` applies
them to a run.

References
----------
.. [1] Joukowsky, N. (1898). "Über den hydraulischen Stoss in
   Wasserleitungsröhren." Mémoires de l'Académie Impériale des Sciences de
   St.-Pétersbourg, 8e série, 9(5) (ΔH = a ΔV / g).
.. [2] Korteweg, D. J. (1878). "Über die Fortpflanzungsgeschwindigkeit des
   Schalles in elastischen Röhren." Annalen der Physik 241(12), 525-542.
.. [3] Wylie, E. B., Streeter, V. L. (1993). *Fluid Transients in Systems*.
   Prentice Hall, chapter 2 (wave speed with the restraint factor c1:
   1 - nu/2 anchored upstream only, 1 - nu^2 anchored throughout, 1 with
   expansion joints; the return time 2L/a; from memory).
.. [4] Marczak, W. (1997). "Water as a standard in the measurements of speed
   of sound in liquids." J. Acoust. Soc. Am. 102(5), 2776-2779 (speed of
   sound in water, 0-95 degC).
.. [5] Michaud, J. (1878). "Coups de bélier dans les conduites. Étude des
   moyens employés pour en atténuer les effets." Bulletin de la Société
   Vaudoise des Ingénieurs et des Architectes 4 (ΔH = 2 L ΔV / (g t) for a
   closure slower than 2L/a; from memory of [3]).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .friction import G, _out

#: The statement every surge output carries.
SCREENING = ("Surge results are screening only (Joukowsky head change on the steady grade "
             "line), not a transient analysis; a specialist's analysis governs.")

#: Coefficients of Marczak's polynomial for the speed of sound in water [4], m/s, t in degC.
_MARCZAK = (1.402385e3, 5.038813, -5.799136e-2, 3.287156e-4, -1.398845e-6, 2.787860e-9)

#: Korteweg's restraint factor c1 by how the pipe is held lengthwise [3].
RESTRAINTS = ("anchored", "upstream-anchor", "expansion-joints")


def speed_of_sound(temperature):
    """Speed of sound in pure water at atmospheric pressure, Marczak (1997) [4].

    c = 1402.385 + 5.038813 t - 5.799136e-2 t² + 3.287156e-4 t³
        - 1.398845e-6 t⁴ + 2.787860e-9 t⁵, t in degC (0-95 degC).

    Parameters
    ----------
    temperature : float or array
        Water temperature [K].

    Returns
    -------
    c : float or array
        Speed of sound [m/s].

    Examples
    --------
    >>> round(float(speed_of_sound(293.15)), 1)
    1482.4
    """
    t = np.asarray(temperature, dtype=float) - 273.15
    return _out(np.polynomial.polynomial.polyval(t, _MARCZAK))


def bulk_modulus(temperature, density):
    """Bulk modulus of water, K = ρ c² (isentropic; the isothermal value
    differs by under 1 % at 0-40 degC).

    Parameters
    ----------
    temperature : float or array
        [K].
    density : float or array
        [kg/m³], e.g. :func:`gisgrade.hydraulics.water.density`.

    Returns
    -------
    K : float or array
        [Pa].

    Examples
    --------
    >>> round(float(bulk_modulus(293.15, 998.2)) / 1e9, 3)
    2.193
    """
    return _out(np.asarray(density, dtype=float) * speed_of_sound(temperature) ** 2)


def restraint_factor(restraint: str, poisson_ratio):
    """Korteweg's restraint factor c1 [3].

    ``"anchored"`` (throughout, against axial movement): 1 - ν²;
    ``"upstream-anchor"`` (at its upstream end only): 1 - ν/2;
    ``"expansion-joints"`` (free lengthwise): 1.

    Parameters
    ----------
    restraint : str
        One of :data:`RESTRAINTS`.
    poisson_ratio : float or array
        Poisson's ratio of the wall [-].

    Returns
    -------
    c1 : float or array
        [-].

    Examples
    --------
    >>> round(float(restraint_factor("anchored", 0.3)), 4), float(restraint_factor("upstream-anchor", 0.3))
    (0.91, 0.85)
    """
    nu = np.asarray(poisson_ratio, dtype=float)
    if restraint == "anchored":
        return _out(1.0 - nu ** 2)
    if restraint == "upstream-anchor":
        return _out(1.0 - nu / 2.0)
    if restraint == "expansion-joints":
        return _out(np.ones_like(nu))
    raise ValueError(f"restraint {restraint!r}: expected one of {', '.join(RESTRAINTS)}")


def korteweg_wave_speed(bulk_modulus, density, diameter, wall, elastic_modulus, c1=1.0):
    """Pressure wave speed in a thin-walled elastic pipe full of water,
    Korteweg (1878) [2] with the restraint factor of [3].

    a = √( (K/ρ) / (1 + c1 K D / (E e)) )

    Parameters
    ----------
    bulk_modulus : float or array
        K of the water [Pa].
    density : float or array
        ρ of the water [kg/m³].
    diameter : float or array
        Inside diameter D [m].
    wall : float or array
        Wall thickness e [m].
    elastic_modulus : float or array
        Young's modulus E of the wall [Pa].
    c1 : float or array
        Restraint factor [-] (:func:`restraint_factor`).

    Returns
    -------
    a : float or array
        [m/s].

    Examples
    --------
    A rigid pipe carries the speed of sound in the water:

    >>> round(float(korteweg_wave_speed(2.19e9, 1000.0, 0.3, 0.01, np.inf)), 1)
    1479.9
    >>> round(float(korteweg_wave_speed(2.19e9, 1000.0, 0.3, 0.01, 207e9, 0.91)))
    1304
    """
    K, rho = np.asarray(bulk_modulus, float), np.asarray(density, float)
    stretch = c1 * K * np.asarray(diameter, float) / (np.asarray(elastic_modulus, float)
                                                        * np.asarray(wall, float))
    return _out(np.sqrt((K / rho) / (1.0 + stretch)))


def joukowsky_head(wave_speed, velocity_change):
    """Head change of a flow change faster than the return time 2L/a,
    Joukowsky (1898) [1]: ΔH = a ΔV / g (g = 9.80665 m/s²).

    Parameters
    ----------
    wave_speed : float or array
        a [m/s].
    velocity_change : float or array
        ΔV [m/s].

    Returns
    -------
    dH : float or array
        [m].

    Examples
    --------
    >>> round(float(joukowsky_head(1000.0, 1.0)), 2)
    101.97
    """
    return _out(np.asarray(wave_speed, float) * np.asarray(velocity_change, float) / G)


def return_time(length, wave_speed):
    """The wave's return time over a line of pieces, 2 Σ L_i / a_i [3]: a
    change faster than this meets the full Joukowsky head.

    Parameters
    ----------
    length : float or array
        Length of each piece [m].
    wave_speed : float or array
        Wave speed of each piece [m/s].

    Returns
    -------
    T : float
        [s].

    Examples
    --------
    >>> return_time([600.0, 400.0], [1200.0, 400.0])
    3.0
    """
    return float(2.0 * np.sum(np.asarray(length, float) / np.asarray(wave_speed, float)))


def slow_closure_factor(return_time_s: float, closure_time: float | None) -> float:
    """Share of the Joukowsky head a closure of ``closure_time`` (s) reaches:
    1 when it is faster than the return time, else T / t (Michaud [5]:
    ΔH = 2 L ΔV / (g t) = (a ΔV / g)(2L/a)/t).

    Examples
    --------
    >>> slow_closure_factor(3.0, None), slow_closure_factor(3.0, 2.0), slow_closure_factor(3.0, 12.0)
    (1.0, 1.0, 0.25)
    """
    if closure_time is None or closure_time <= return_time_s:
        return 1.0
    return return_time_s / closure_time


def envelope(hgl_high, hgl_low, head_change):
    """The screening envelope: (HGL + ΔH, HGL - ΔH), each from the higher or
    lower side of any point loss.

    Examples
    --------
    >>> hi, lo = envelope(np.array([100.0, 90.0]), np.array([100.0, 89.0]), np.array([20.0, 20.0]))
    >>> hi.tolist(), lo.tolist()
    ([120.0, 110.0], [80.0, 69.0])
    """
    dh = np.asarray(head_change, float)
    return np.asarray(hgl_high, float) + dh, np.asarray(hgl_low, float) - dh


@dataclass(frozen=True, eq=False)
class SurgeSet:
    """The surge screening of a run: (scenario x station) arrays like the
    :class:`~gisgrade.hydraulics.gradeset.GradeSet` it was made from (SI)."""

    names: tuple  #: (k,) scenario names, the static case last
    station: np.ndarray  #: (n,) m
    wave_speed: np.ndarray  #: (n,) m/s, of the pipe leaving each station
    head_change: np.ndarray  #: (k, n) m, the Joukowsky (or slow-closure) head change
    head_max: np.ndarray  #: (k, n) m
    head_min: np.ndarray  #: (k, n) m
    pressure_max: np.ndarray  #: (k, n) Pa at the axis
    pressure_min: np.ndarray  #: (k, n) Pa at the axis
    return_time: float  #: s, 2 sum(L/a) over the line
    factor: float  #: share of the Joukowsky head the closure time reaches
    restraint: str
    velocity_change: float | None  #: m/s given, or None: each scenario's flow stopped
    allowance: np.ndarray  #: (n,) Pa a transient may reach above the rating (0: none given)
    vapour_deficit: np.ndarray = None  #: (k, n) m the down-surge would fall below the vapour line


def stage_surge(project, table, grades):
    """The surge screening of a run's grade set, or ``(None, note)`` where the
    pipe's wave speed cannot be known (no material, modulus or wave speed).

    The table needs the pipe stage's columns; the wave speed per station
    comes from ``[pipe]`` and ``[[sections]]`` (``wave_speed``, else
    Korteweg from ``elastic_modulus``, ``poisson_ratio`` and
    ``wall_thickness`` or half the outside less the inside diameter).
    Returns ``(SurgeSet | None, notes)``.
    """
    from ..hydraulics.cases import segment_values
    from . import water

    pipe, secs, cfg = project.pipe, project.sections, project.surge
    station = table["station_m"].to_numpy(dtype=float)
    starts, ends = [s.start for s in secs], [s.end for s in secs]

    def per_station(attr):
        return segment_values(station, starts, ends, [getattr(s, attr) for s in secs],
                              getattr(pipe, attr))[1]

    inside = table["inside_diameter_m"].to_numpy(dtype=float)
    wall = per_station("wall_thickness")
    wall = np.where(np.isfinite(wall), wall, (table["outside_diameter_m"].to_numpy(float) - inside) / 2)
    given, modulus, nu = per_station("wave_speed"), per_station("elastic_modulus"), per_station("poisson_ratio")
    T = project.hydraulics.temperature
    K = cfg.bulk_modulus if cfg.bulk_modulus is not None else float(
        bulk_modulus(T, water.density(T)))
    c1 = restraint_factor(cfg.restraint, np.nan_to_num(nu, nan=0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        a = np.where(np.isfinite(given), given,
                     korteweg_wave_speed(K, grades.density, inside, wall, modulus, c1))
    if not np.all(np.isfinite(a) & (a > 0)):
        i = int(np.flatnonzero(~(np.isfinite(a) & (a > 0)))[0])
        from ..display import token
        return None, [f"surge screening skipped: no wave speed for the pipe at "
                      f"{token(float(station[i]), 'station')} (give [pipe] material, "
                      "elastic_modulus or wave_speed and a wall thickness)"]
    L = np.hypot(np.diff(station), np.diff(grades.axis))
    t_return = return_time(L, a[:-1])
    factor = slow_closure_factor(t_return, cfg.closure_time)
    area = np.pi * inside ** 2 / 4
    dv = (np.abs(grades.flow) / area if cfg.velocity_change is None
          else np.where(grades.flow.any(axis=1, keepdims=True), cfg.velocity_change, 0.0)
          * np.ones_like(grades.flow))
    dh = joukowsky_head(a, dv) * factor
    hgl_high = np.maximum(grades.hgl, grades.hgl_upstream)
    head_max, head_min = envelope(hgl_high, grades.hgl_low, dh)
    rho_g = grades.density * G
    # the head cannot fall below the vapour-pressure line at the top of the
    # pipe: there the column separates (a finding), and the envelope stops
    from .atmosphere import atmospheric_pressure
    from .water import vapour_pressure

    top = table["top_m"].to_numpy(dtype=float) if "top_m" in table else grades.axis
    vapour_line = top + (float(vapour_pressure(T)) - atmospheric_pressure(top)) / rho_g
    deficit = np.maximum(vapour_line - head_min, 0.0)
    head_min = np.maximum(head_min, vapour_line)
    return SurgeSet(names=grades.names, station=station, wave_speed=a, head_change=dh,
                    head_max=head_max, head_min=head_min,
                    pressure_max=rho_g * (head_max - grades.axis),
                    pressure_min=rho_g * (head_min - grades.axis), return_time=t_return,
                    factor=factor, restraint=cfg.restraint,
                    velocity_change=cfg.velocity_change,
                    allowance=np.nan_to_num(per_station("surge_allowance")),
                    vapour_deficit=deficit), []
