"""Which pipe size to buy: the whole job per candidate size, compared.

:func:`candidates_from_text` and :func:`candidates_from_project` give the
candidates (:class:`Candidate`); :func:`candidate_project` builds each one's
:class:`~gisgrade.project.Project` with :func:`dataclasses.replace` (the
candidate is the pipe along the whole line); the ``sizes`` command runs
:func:`gisgrade.pipeline.compute` on each, and :func:`compare` (pure over
the results) tabulates ``sizes.csv``: one row per candidate and scenario,
whether it passes every check, and with costs the life-cycle cost (capital
plus the present value of a year's energy cost over ``[energy] period`` at
``[energy] discount_rate``) and the cheapest size that passes.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from .errors import InputError
from .hydraulics.atmosphere import vapour_floor
from .hydraulics.energy import KWH, present_value_factor
from .hydraulics.friction import G

#: sizes.csv columns (then fails, the checks failing the scenario in words;
#: inflow_m3_s, the flow entering: the result with
#: ``two-heads``; below_vapour, true where min_pressure_kpa is under the lowest
#: gauge pressure water holds, the column separates; then capital_cost and life_cycle_cost when costs are given;
#: with a US display a US column beside each SI one).
COLUMNS = ["candidate", "inside_diameter_m", "scenario", "head_loss_m", "min_pressure_kpa",
           "max_pressure_kpa", "max_velocity_m_s", "surge_head_m", "pump_head_m",
           "annual_energy_kwh", "annual_cost", "passes"]

#: The largest inside diameter taken as a candidate (m): larger is a typing
#: slip (the widest pressure conduits are a few metres; common practice).
MAX_DIAMETER = 10.0

#: Findings that say a size does not carry a scenario (cover and design
#: rules do not depend on it).
HYDRAULIC_CHECKS = ("sub-atmospheric", "low-pressure", "high-pressure", "high-velocity",
                    "low-velocity", "rating", "column-separation", "surge-rating",
                    "surge-column-separation")


@dataclass(frozen=True)
class Candidate:
    """One pipe size (SI); ``None``: as the project's pipe."""

    name: str
    inside_diameter: float
    outside_diameter: float
    material: str | None = None
    roughness: float | None = None
    pressure_rating: float | None = None
    cost: float | None = None  #: currency per m laid


def _wall(project) -> float:
    return project.pipe.outside_diameter - project.pipe.inside_diameter


def check_size(d: float, text, key: str) -> float:
    """``d`` (m) if it is a finite inside diameter above zero and up to
    :data:`MAX_DIAMETER`; else an InputError naming ``key`` and ``text``.

    >>> check_size(0.25, "250 mm", "--candidates")
    0.25
    >>> check_size(float("inf"), "inf mm", "--candidates")
    Traceback (most recent call last):
    ...
    gisgrade.errors.InputError: --candidates: 'inf mm' is not a finite inside diameter
    """
    if not np.isfinite(d):
        raise InputError(f"{key}: {text!r} is not a finite inside diameter")
    if not d > 0:
        raise InputError(f"{key}: {text!r} must be greater than zero")
    if d > MAX_DIAMETER:
        raise InputError(f"{key}: {text!r} is larger than any pipe ({MAX_DIAMETER:g} m at most)")
    return d


def _size_name(d: float, project) -> str:
    """A candidate's name in the reader's units: "250 mm" or "10 in"."""
    if getattr(getattr(project, "output", None), "units", "SI") == "US":
        return f"{round(d / 0.0254, 3):g} in"
    return f"{round(d * 1e3, 3):g} mm"


def candidates_from_text(project, text: str, key: str = "--candidates") -> list[Candidate]:
    """Candidates from a comma-separated list of inside diameters
    (``"200 mm, 250 mm"``), each with the project pipe's wall and named as
    the user typed it (``sizes.csv`` gives the diameter in the display units
    beside the name).

    >>> from types import SimpleNamespace as NS
    >>> p = NS(pipe=NS(inside_diameter=0.305, outside_diameter=0.326), output=NS(units="SI"))
    >>> [(c.name, round(c.outside_diameter, 3)) for c in candidates_from_text(p, "250 mm, 0.4 m")]
    [('250 mm', 0.271), ('0.4 m', 0.421)]
    """
    from .units import parse_quantity

    parts = [p.strip() for p in text.split(",") if p.strip()]
    if not parts:
        raise InputError(f"{key} = {text!r}: give inside diameters such as \"200 mm, 250 mm\"")
    out, seen = [], {}
    for part in parts:
        d = check_size(parse_quantity(part, "length", key), part, key)
        name = " ".join(part.split())
        if round(d, 9) in seen:  # "250 mm" and "0.25 m": one size, whatever the spelling
            raise InputError(f"{key}: candidate {name!r} is the same inside diameter as "
                             f"{seen[round(d, 9)]!r}")
        seen[round(d, 9)] = name
        out.append(Candidate(name, d, d + _wall(project)))
    return _unique(out, key)


def candidates_from_project(project) -> list[Candidate]:
    """The project's ``[[size_candidates]]``."""
    for n, c in enumerate(project.size_candidates):
        key = f"size_candidates[{n}]"
        check_size(c.inside_diameter, f"{c.inside_diameter} m", f"{key}.inside_diameter")
        if c.outside_diameter is not None:
            check_size(c.outside_diameter, f"{c.outside_diameter} m", f"{key}.outside_diameter")
    out = [Candidate(c.name or _size_name(c.inside_diameter, project), c.inside_diameter,
                     c.outside_diameter if c.outside_diameter is not None
                     else c.inside_diameter + _wall(project),
                     c.material, c.roughness, c.pressure_rating, c.cost)
           for c in project.size_candidates]
    return _unique(out, "[[size_candidates]]")


def _unique(out, key):
    names = [c.name for c in out]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise InputError(f"{key}: candidate {dup[0]!r} given twice")
    return out


def candidate_project(project, c: Candidate):
    """``project`` with candidate ``c`` as the pipe along the whole line:
    [[sections]] dropped, a given wave speed or wall thickness dropped (they
    belong to the project's own pipe), the material's data where ``c`` names one."""
    from .hydraulics.materials import material

    pipe = replace(project.pipe, inside_diameter=c.inside_diameter,
                   outside_diameter=c.outside_diameter, wave_speed=None, wall_thickness=None)
    if c.material is not None:
        m = material(c.material, "size_candidates.material")
        pipe = replace(pipe, material=c.material, roughness=m.roughness,
                       hazen_williams_c=m.hazen_williams_c, elastic_modulus=m.elastic_modulus,
                       poisson_ratio=m.poisson_ratio)
    if c.roughness is not None:
        pipe = replace(pipe, roughness=c.roughness)
    if c.pressure_rating is not None:
        pipe = replace(pipe, pressure_rating=c.pressure_rating)
    return replace(project, pipe=pipe, sections=())


def scenario_rows(result, c: Candidate) -> list[dict]:
    """One row of :data:`COLUMNS` per scenario of one candidate's result."""
    g, f = result.grades, result.findings
    per = result.energy.per_scenario(g.names) if result.energy is not None else None
    tank = result.project.hydraulics.start == "tank"
    v0 = g.velocity[:, 0]
    egl_in = g.hgl_upstream[:, 0] + (0.0 if tank else v0 ** 2 / (2 * G))
    steps = (g.elements.groupby("scenario")["step_m"].sum() if len(g.elements)
             else pd.Series(dtype=float))
    bad = f[f["code"].isin(HYDRAULIC_CHECKS)] if f is not None else None
    why = ({n: ", ".join(dict.fromkeys(grp["check"])) for n, grp in bad.groupby("scenario")}
           if bad is not None else {})  # scenario -> the checks failing it
    floor = vapour_floor(g.axis, result.project.hydraulics.temperature)
    rows = []
    for k, name in enumerate(g.names):
        e = per.iloc[k] if per is not None else None
        rows.append(dict(
            candidate=c.name, inside_diameter_m=c.inside_diameter, scenario=name,
            head_loss_m=float(egl_in[k] - g.egl[k, -1] + steps.get(name, 0.0)),
            min_pressure_kpa=float(g.pressure_low[k].min() / 1e3),
            max_pressure_kpa=float(g.pressure_high[k].max() / 1e3),
            max_velocity_m_s=float(g.velocity[k].max()),
            surge_head_m=(float(result.surge.head_change[k].max()) if result.surge is not None
                          else np.nan),
            pump_head_m=float(e.pump_head_m) if e is not None else 0.0,
            annual_energy_kwh=float(e.energy_j / KWH) if e is not None else 0.0,
            annual_cost=(np.nan if e is None or e.cost is None else float(e.cost)),
            passes=name not in why, fails=why.get(name, ""), inflow_m3_s=float(g.flow[k, 0]),
            below_vapour=bool((g.pressure_low[k] < floor).any())))
    return rows


def compare(project, candidates, results) -> tuple[pd.DataFrame, list[str]]:
    """``sizes.csv`` as a table, and the verdict lines (which size carries each
    scenario, the cheapest that passes). ``results`` one per candidate."""
    rows = [r for c, res in zip(candidates, results) for r in scenario_rows(res, c)]
    table = pd.DataFrame(rows, columns=COLUMNS + ["fails", "inflow_m3_s", "below_vapour"])
    lines = []
    from .display import Display
    d = Display(project.output.units)
    passing = [c for c in candidates if table.loc[table["candidate"] == c.name, "passes"].all()]
    for name in dict.fromkeys(table["scenario"]):
        ok = table[(table["scenario"] == name) & table["passes"]]
        carried = ", ".join(ok["candidate"]) if len(ok) else "none of the candidates"
        gravity = ok[ok["pump_head_m"] <= 0]["candidate"].tolist()
        extra = ("" if not len(ok) or len(gravity) == len(ok) else
                 f" (without pumping: {', '.join(gravity)})" if gravity else " (each with pumping)")
        lines.append(f"{name}: carried within every check by {carried}{extra}")
        if project.hydraulics.boundary == "two-heads" and name != "static":
            r = table[table["scenario"] == name]
            lines.append(f"{name}: the heads drive " + ", ".join(
                f"{d.text(q, 'flow')} through {c}" for c, q in zip(r["candidate"], r["inflow_m3_s"])))
    en = project.energy
    costs = all(c.cost is not None for c in candidates)
    given = [c.name for c in candidates if c.cost is not None]
    if given and not costs:
        lines.append(f"costs are given for {len(given)} of {len(candidates)} candidates "
                     f"({', '.join(given)}): no cost comparison; give every candidate a cost")
    if costs:
        length = {c.name: float(res.profile.length_3d) for c, res in zip(candidates, results)}
        capital = {c.name: c.cost * length[c.name] for c in candidates}
        annual = table.groupby("candidate", sort=False)["annual_cost"].sum(min_count=1)
        lcc_ready = en.period is not None and en.discount_rate is not None
        years = en.period / (365.25 * 86400) if en.period is not None else None
        pv = present_value_factor(en.discount_rate, years) if lcc_ready else None
        energy_cost = {n: (0.0 if not np.isfinite(annual.get(n, np.nan)) else float(annual[n]))
                       for n in capital}
        has_pumping = (table["annual_energy_kwh"] > 0).any()
        table["capital_cost"] = table["candidate"].map(capital)
        if lcc_ready and (en.tariff is not None or not has_pumping):
            lcc = {n: capital[n] + pv * energy_cost[n] for n in capital}
            table["life_cycle_cost"] = table["candidate"].map(lcc)
            basis = (f"life-cycle cost (capital + present value of energy over {years:g} years at "
                     f"{en.discount_rate:.1%})")
        else:
            lcc = capital
            missing = [k for k, v in (("energy.period", en.period), ("energy.discount_rate",
                       en.discount_rate), ("energy.tariff", en.tariff)) if v is None]
            basis = f"capital cost (no life-cycle cost: {', '.join(missing)} not given)"
        if passing:
            best = min(passing, key=lambda c: lcc[c.name])
            cur = f" {en.currency}" if en.currency else ""
            lines.append(f"cheapest size that passes every check, by {basis}: {best.name} "
                         f"({lcc[best.name]:,.0f}{cur})")
    if not passing:
        lines.append("no candidate passes every check in every scenario")
        for c in candidates:  # what stops each: the checks that fail, per scenario
            r = table[(table["candidate"] == c.name) & ~table["passes"]]
            lines.append(f"{c.name} fails: " + "; ".join(f"{n}: {w}" for n, w in
                                                        zip(r["scenario"], r["fails"])))
    elif not costs:
        smallest = min(passing, key=lambda c: c.inside_diameter)
        lines.append(f"smallest size that passes every check: {smallest.name}"
                     + ("" if given else " (give each candidate a cost for the cheapest)"))
    return table, lines


def comparison_figure(table: pd.DataFrame, project, lines=()):
    """The comparison plot: least pressure, head loss and annual energy per
    candidate and scenario (matplotlib object API)."""
    from matplotlib.figure import Figure

    from .cautions import SHORT
    from .display import Display

    d = Display(project.output.units)
    two_heads = project.hydraulics.boundary == "two-heads"
    fig = Figure(figsize=(12, 4.2))
    axes = fig.subplots(1, 3)
    flows = [n for n in dict.fromkeys(table["scenario"]) if n != "static"]
    x = table.drop_duplicates("candidate")
    dia = d.value(x["inside_diameter_m"].to_numpy(), "length") * (1000 if not d.us else 12)
    dunit = "mm" if not d.us else "in"
    from .output.plot import SCENARIO_COLOURS
    # a least pressure under the vapour floor is no pressure the line has: drawn at
    # the floor (sea level, the project temperature) as an open triangle, not its number
    floor = float(vapour_floor(0.0, project.hydraulics.temperature))
    marked = False
    for n, name in enumerate(flows):
        r = table[table["scenario"] == name]
        colour = SCENARIO_COLOURS[n % len(SCENARIO_COLOURS)]
        below = (r["below_vapour"].to_numpy(bool) if "below_vapour" in r
                 else np.zeros(len(r), dtype=bool))
        least = np.where(below, floor, r["min_pressure_kpa"].to_numpy() * 1e3)
        axes[0].plot(dia, d.value(least, "pressure"), "o-", color=colour, label=name)
        if below.any():
            axes[0].plot(dia[below], d.value(least[below], "pressure"), "v", ms=11, mfc="white",
                         color=colour, label=None if marked else
                         "below vapour pressure\n(the column separates)")
            marked = True
        if two_heads:  # the heads are given: the flow they drive is the result
            axes[1].plot(dia, d.value(r["inflow_m3_s"].to_numpy(), "flow"), "o-", color=colour,
                         label=name)
        else:
            axes[1].plot(dia, d.value(r["head_loss_m"].to_numpy(), "head"), "o-", color=colour,
                         label=name)
    axes[0].axhline(d.value(project.checks.min_pressure, "pressure"), color="#d9534f", lw=0.8,
                    ls="-.", label="min pressure")
    labels = list(x["candidate"])
    cost = next((c for c in ("life_cycle_cost", "capital_cost") if c in table), None)
    if cost is not None:  # the money the choice is about
        per = table.groupby("candidate", sort=False)[cost].first().to_numpy()
        axes[2].bar(labels, per / 1e6, color="#5b6770")
        cur = project.energy.currency or "currency units"
        axes[2].set_ylabel(f"{'life-cycle' if cost == 'life_cycle_cost' else 'capital'} cost, "
                           f"million {cur}")
    else:
        energy = table.groupby("candidate", sort=False)["annual_energy_kwh"].sum()
        axes[2].bar(labels, energy.to_numpy() / 1e3, color="#2f8f6a")
        axes[2].set_ylabel("pumping energy a year (MWh)")
        if not energy.to_numpy().any():
            axes[2].set_ylim(0, 1)
            axes[2].text(0.5, 0.5, "no pumping with any candidate", ha="center", va="center",
                         transform=axes[2].transAxes, fontsize=9, color="#555555")
    axes[0].set_ylabel(f"least pressure ({d.unit('pressure')})")
    axes[1].set_ylabel(f"flow the heads drive ({d.unit('flow')})" if two_heads
                       else f"head loss, start to end ({d.unit('head')})")
    for ax in axes[:2]:
        ax.set_xlabel(f"inside diameter ({dunit})")
    axes[2].set_xlabel("candidate")
    for ax in axes:
        ax.grid(True, lw=0.3, color="#cccccc")
    axes[0].legend(fontsize=7)
    passing = table.groupby("candidate", sort=False)["passes"].all()
    marks = [f"{n}: {'passes' if ok else 'fails'}" for n, ok in passing.items()]
    fig.suptitle(f"{project.path.name}: pipe sizes compared ({'; '.join(marks)})", fontsize=10,
                 x=0.01, ha="left")
    fig.text(0.01, 0.005, SHORT, fontsize=7, color="#555555")
    fig.tight_layout(rect=(0, 0.03, 1, 0.95))
    return fig
