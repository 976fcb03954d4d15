"""Minor (local) losses: bends, diameter changes and named fittings.

A minor loss is h_m = K V^2/(2 g), a step down of the EGL (and HGL) at the
fitting. Each K here says which velocity it is referred to.

References
----------
.. [1] Rennels, D. C., Hudson, H. M. "Pipe Flow: A Practical and
   Comprehensive Guide." 1st ed. Wiley, Hoboken, N.J., 2012 (rounded bend,
   sharp contraction and sudden expansion correlations).
.. [2] Crane Co. "Flow of Fluids Through Valves, Fittings, and Pipe."
   Technical Paper No. 410 (TP-410), 2009 edition (K = n fT tables).
.. [3] Borda-Carnot sudden-expansion loss, e.g. White, F. M. "Fluid
   Mechanics", McGraw-Hill, section on minor losses.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from gisgrade.errors import InputError
from gisgrade.hydraulics.friction import _out, friction_factor
from gisgrade.names import normalise, suggest

#: Default bend radius in pipe diameters (r/D = 1.5, a "long-radius" bend;
#: common practice for fabricated and cast bends in water mains, where r/D
#: is about 1-2; the maker's drawing governs).
DEFAULT_BEND_DIAMETERS = 1.5
#: Reynolds number used for the bend friction factor when neither ``fd`` nor
#: ``Re`` is given: about 1 m/s in a 300 mm main at 15 degC (common practice).
DEFAULT_BEND_RE = 3.0e5


def bend_k(angle, bend_diameters=DEFAULT_BEND_DIAMETERS, fd=None, Re=None, rel_roughness=0.0):
    """Loss coefficient of a rounded bend, Rennels & Hudson (2012) [1].

    K = f a r/D + (0.10 + 2.4 f) sin(a/2) + 6.6 f (sqrt(sin(a/2)) + sin(a/2))
    / (r/D)^(4a/pi), with a the deflection angle in radians and f the Darcy
    friction factor of the pipe. Referred to the velocity head in the bend.
    K(0) = 0, and the sign of the angle (up or down bend) does not matter.

    Parameters
    ----------
    angle : float or array
        Deflection angle [rad], 0 to pi.
    bend_diameters : float or array, optional
        Bend centreline radius over inside diameter r/D [-]; default 1.5.
    fd : float or array, optional
        Darcy friction factor [-]. If not given, computed by
        :func:`~gisgrade.hydraulics.friction.friction_factor` from ``Re``
        (default 3e5) and ``rel_roughness``.
    Re : float or array, optional
        Reynolds number [-], used only when ``fd`` is not given.
    rel_roughness : float or array, optional
        Relative roughness eps/D [-], used only when ``fd`` is not given.

    Returns
    -------
    K : float or array
        Loss coefficient [-].

    Examples
    --------
    >>> round(float(bend_k(np.pi / 2, fd=0.018)), 4)
    0.2254
    >>> round(float(bend_k(np.radians(22.5))), 3)
    0.084
    """
    a = np.abs(np.asarray(angle, dtype=float))
    rD = np.asarray(bend_diameters, dtype=float)
    if fd is None:
        fd = friction_factor(DEFAULT_BEND_RE if Re is None else Re, rel_roughness)
    f = np.asarray(fd, dtype=float)
    s = np.sin(0.5 * a)
    K = f * a * rD + (0.10 + 2.4 * f) * s + 6.6 * f * (np.sqrt(s) + s) / rD ** (4.0 * a / np.pi)
    return _out(K)


def sudden_expansion_k(d_up, d_down):
    """Borda-Carnot loss of a sudden expansion [3], K = (1 - (d_up/d_down)^2)^2.

    Referred to the UPSTREAM (smaller pipe) velocity head. Where d_down <=
    d_up there is no expansion and K = 0.

    Parameters
    ----------
    d_up : float or array
        Inside diameter upstream [m].
    d_down : float or array
        Inside diameter downstream [m].

    Returns
    -------
    K : float or array
        Loss coefficient [-], on V_up^2/(2 g).

    Examples
    --------
    >>> float(sudden_expansion_k(0.5, 1.0))
    0.5625
    """
    beta = np.minimum(np.asarray(d_up, dtype=float) / np.asarray(d_down, dtype=float), 1.0)
    r = 1.0 - beta * beta
    return _out(r * r)


def sudden_contraction_k(d_up, d_down):
    """Loss of a sharp-edged sudden contraction, Rennels & Hudson (2012) [1].

    K = 0.0696 (1 - b^5) L^2 + (L - 1)^2 with L = 1 + 0.622 (1 - 0.215 b^2
    - 0.785 b^5) and b = d_down/d_up. Referred to the DOWNSTREAM (smaller
    pipe) velocity head. Where d_down >= d_up there is no contraction and
    K = 0.

    Parameters
    ----------
    d_up : float or array
        Inside diameter upstream [m].
    d_down : float or array
        Inside diameter downstream [m].

    Returns
    -------
    K : float or array
        Loss coefficient [-], on V_down^2/(2 g).

    Examples
    --------
    >>> round(float(sudden_contraction_k(1.0, 0.4)), 6)
    0.530127
    """
    b = np.minimum(np.asarray(d_down, dtype=float) / np.asarray(d_up, dtype=float), 1.0)
    b2 = b * b
    b5 = b2 * b2 * b
    lam = 1.0 + 0.622 * (1.0 - 0.215 * b2 - 0.785 * b5)
    return _out(0.0696 * (1.0 - b5) * lam * lam + (lam - 1.0) ** 2)


class NamedK(NamedTuple):
    """A named fitting's loss coefficient and where the value comes from."""

    k: float
    source: str


_CRANE = "Crane TP-410 (2009)"
_BEND_SOURCE = "Rennels & Hudson 2012 rounded bend, r/D = 1.5, f at Re = 3e5, smooth pipe"

#: Named fittings with a default K (on the velocity head of the pipe the
#: fitting sits in; entrance and exit on the pipe's velocity head). Crane
#: values K = n fT are evaluated for 100-600 mm pipe (fT about 0.011-0.016)
#: and rounded to one value per kind.
NAMED_K: dict[str, NamedK] = {
    "entrance_sharp": NamedK(0.5, f"{_CRANE}: square-edged flush entrance"),
    "entrance_rounded": NamedK(0.04, f"{_CRANE}: rounded entrance, r/D >= 0.15"),
    "entrance_projecting": NamedK(0.78, f"{_CRANE}: inward-projecting (re-entrant) entrance"),
    "exit": NamedK(1.0, "Borda-Carnot: the whole velocity head is lost into a large tank"),
    "gate_valve_open": NamedK(0.12, f"{_CRANE}: gate valve fully open, K = 8 fT (0.09-0.13)"),
    "butterfly_valve_open": NamedK(0.45, f"{_CRANE}: centric butterfly valve fully open, K = 45/35/25 fT by size (0.28-0.73)"),
    "ball_valve_open": NamedK(0.04, f"{_CRANE}: full-port ball valve fully open, K = 3 fT (0.03-0.05)"),
    "swing_check_valve": NamedK(1.3, f"{_CRANE}: swing check valve, K = 100 fT (1.1-1.6)"),
    "tee_through": NamedK(0.3, f"{_CRANE}: standard tee, flow through run, K = 20 fT (0.23-0.33)"),
    "tee_branch": NamedK(0.8, f"{_CRANE}: standard tee, flow through branch, K = 60 fT (0.68-0.98)"),
    "bend_90": NamedK(round(float(bend_k(np.pi / 2)), 3), _BEND_SOURCE),
    "bend_45": NamedK(round(float(bend_k(np.pi / 4)), 3), _BEND_SOURCE),
    "bend_22_5": NamedK(round(float(bend_k(np.pi / 8)), 3), _BEND_SOURCE),
    "bend_11_25": NamedK(round(float(bend_k(np.pi / 16)), 3), _BEND_SOURCE),
}


def k_for(name: str) -> float:
    """Default K of a named fitting from :data:`NAMED_K`.

    The name is matched case-insensitively, with spaces and hyphens read as
    underscores ("Gate valve open" finds ``gate_valve_open``; see
    :func:`gisgrade.names.normalise`).

    Parameters
    ----------
    name : str
        Fitting kind.

    Returns
    -------
    K : float
        Loss coefficient [-].

    Raises
    ------
    InputError
        If the name is unknown; the message names it and suggests the
        nearest known kind.

    Examples
    --------
    >>> k_for("exit")
    1.0
    >>> k_for("Gate valve open")
    0.12
    """
    key = normalise(name, "_")
    if key in NAMED_K:
        return NAMED_K[key].k
    raise InputError(f"unknown fitting kind {name!r}{suggest(key, NAMED_K)}; "
                     f"known: {', '.join(sorted(NAMED_K))}")
