"""``gisgrade check``: every problem of a project file at once, nothing written."""
from __future__ import annotations

import logging
from pathlib import Path

import click

from . import caution_help, setup_logging, verbosity


def check_project(path, *, ground_only: bool = False) -> list:
    """Every problem of the project file at ``path`` as
    :class:`~gisgrade.screening.Problem` records, errors first: each bad key
    (all of them, not the first), then what the files show (the line, the
    DEM, the ground, the crossings, the pipe and flows: the stages run up to
    the hydraulics; each route on its own, named, where ``[alignment]
    route_field`` groups the layer into several), then an earlier result
    folder without a valid manifest. Writes nothing."""
    from ..display import display_of, using
    from ..errors import InputError
    from ..output.atomic import verify_folder
    from ..project import load
    from ..result import resolve_outdir
    from ..screening import error, screen, screen_config, screen_dems, warning

    found: list[InputError] = []
    try:
        project = load(path, ground_only=ground_only, problems=found)
    except InputError as exc:  # the file itself: missing, not TOML, a byte-order mark
        return [error(str(exc))]
    problems = [error(str(e)) for e in found]
    if project is None:
        return problems
    with using(display_of(project)):
        problems += screen_config(project) + screen_dems(project, project.alignment.spacing)
        try:
            routes = _routes(project)
        except InputError as exc:
            return problems + [error(str(exc))]
        whole = set(problems)  # (the stages repeat these; said once, not for each route)
        said = {}  # problem -> the routes it was found on, in order
        for name, frame in routes:  # each route of a layer of several on its own
            for p in _stages(project, ground_only, frame, error, screen):
                if p not in whole:
                    said.setdefault(p, []).append(name)
        problems += [p if names == [None] else type(p)(p.level, f"{_on(names, len(routes))}: {p.text}")
                     for p, names in said.items()]
    out = resolve_outdir(project)
    if out.is_dir():
        try:
            verify_folder(out)
        except InputError as exc:
            problems.append(warning(f"earlier output {exc}"))
    unique = list(dict.fromkeys(problems))
    return sorted(unique, key=lambda p: p.level != "error")


def _on(names, total: int) -> str:
    """Which routes a problem was found on: one named, a few named, or every one.

    >>> _on(["A"], 3), _on(["A", "B"], 3), _on(["A", "B", "C"], 3)
    ("route 'A'", "routes 'A' and 'B'", 'every route (3)')
    >>> _on([f"r{i}" for i in range(7)], 9)
    "routes 'r0', 'r1', 'r2', 'r3' and 3 more"
    """
    from ..errors import some_of

    if len(names) == 1:
        return f"route {names[0]!r}"
    if len(names) == total:
        return f"every route ({total})"
    quoted = [repr(n) for n in names]
    if len(quoted) > 4:
        return f"routes {some_of(quoted, 4)}"
    return f"routes {', '.join(quoted[:-1])} and {quoted[-1]}"


def _routes(project) -> list:
    """``[(name, features)]`` of a layer of several routes by ``[alignment]
    route_field`` (each checked on its own, as ``gisgrade routes`` runs them),
    else ``[(None, None)]``: the one centerline."""
    if project.alignment.route_field is None:
        return [(None, None)]
    from ..routes import read_routes

    routes = read_routes(project)
    return routes if len(routes) > 1 else [(None, None)]


def _stages(project, ground_only, frame, error, screen) -> list:
    """What the files show of one centerline (``frame``: a route's features,
    or None for the project's own): its stages run up to the hydraulics."""
    from ..alignment import stage_alignment
    from ..errors import InputError
    from ..terrain import stage_terrain

    try:
        line, crossings, table = stage_alignment(project, frame)
        table, _ = stage_terrain(project, line, table)
    except InputError as exc:
        return [error(str(exc))]
    problems = screen(project, line, crossings, table)
    if ground_only or project.pipe is None or any(p.level == "error" for p in problems):
        return problems
    from ..design import stage_design
    from ..hydraulics.stage import stage_hydraulics
    from ..pipe import stage_pipe

    try:
        table = stage_pipe(project, table)
        table, design = stage_design(project, table, crossings)
        stage_hydraulics(project, table, design.bends)
    except InputError as exc:
        problems.append(error(str(exc)))
    return problems


@click.command("check", short_help="every problem of a project file at once, nothing written",
               help=caution_help(
                   "Check PROJECT (TOML) and the files it names without writing anything: every "
                   "bad key at once, each naming the file, key or feature with a hint, then "
                   "what the files show (the line's shape, the DEM's bands, voids and units, "
                   "crossings, velocities, the source head against the ground). Errors are "
                   "what a run would refuse; warnings are possible but suspicious input (a run "
                   "prints the same warnings). Exit status 0 without errors, 2 with any.",
                   "gisgrade check project.toml"))
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--ground", is_flag=True, help="check as for gisgrade profile (no pipe data needed)")
@verbosity
def command(project, ground, verbose, quiet):
    import warnings

    verbose, quiet = setup_logging(verbose, quiet)
    log = logging.getLogger("gisgrade")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        problems = check_project(project, ground_only=ground)
    for w in caught:
        log.debug("library warning: %s: %s", w.category.__name__, " ".join(str(w.message).split()))
    for p in problems:
        click.echo(p.line(), err=True)
    errors = sum(p.level == "error" for p in problems)
    if not quiet:
        warned = len(problems) - errors
        click.echo(f"{Path(project).name}: " + (f"{errors} error(s), {warned} warning(s)"
                                                if problems else "no problems found"))
    return 2 if errors else 0
