"""``gisgrade sizes``: the whole job per candidate pipe size, compared."""
from __future__ import annotations

from pathlib import Path

import click

from . import caution_help, setup_logging, verbosity
from .common import guarded

#: The files the command writes.
FILES = ("sizes.csv", "sizes.png", "sizes.txt")


def run_sizes(project_path, candidates_text, outdir, echo=lambda s: None):
    """Load, run every candidate, compare and write :data:`FILES` into
    ``outdir`` all at once or not at all; returns the verdict lines."""
    from ..cautions import CAUTIONS
    from ..errors import InputError
    from ..hydraulics.surge import SCREENING
    from ..pipeline import compute
    from ..output.atomic import atomic_folder, refuse_outdir
    from ..project import load
    from ..result import command_outdir
    from ..sizes import (candidate_project, candidates_from_project, candidates_from_text,
                         compare, comparison_figure)

    project = load(project_path)
    out = command_outdir(project, outdir, "-sizes")
    refuse_outdir(out, inputs=project.input_paths())  # before the candidates are run
    if candidates_text is not None:
        candidates = candidates_from_text(project, candidates_text)
    elif project.size_candidates:
        candidates = candidates_from_project(project)
    else:
        raise InputError(f"{project.path.name}: no candidates: give --candidates \"200 mm, 250 mm\" "
                         "or [[size_candidates]] tables")
    results = []
    if project.alignment.route_field is not None:  # one route, said before any candidate runs
        from ..routes import the_one_route

        the_one_route(project)
    for c in candidates:
        echo(f"candidate {c.name} ...")
        results.append(compute(candidate_project(project, c)))
    table, lines = compare(project, candidates, results)
    notes = ([f"[[sections]] of the project are not used: each candidate is the pipe along the "
              f"whole line"] if project.sections else [])
    text = "\n".join(lines + notes + [SCREENING, "CAUTION: " + CAUTIONS]) + "\n"
    with atomic_folder(out, inputs=project.input_paths()) as tmp:
        from ..display import Display
        from ..output.csv import write_csv

        write_csv(us_diameters(Display(project.output.units).dual(table)), tmp / "sizes.csv", 6)
        comparison_figure(table, project, lines).savefig(tmp / "sizes.png", dpi=120)
        (tmp / "sizes.txt").write_text(text)
    return lines + notes, out


def us_diameters(frame):
    """``frame`` with the US twin of ``inside_diameter_m`` in inches, as pipe
    sizes are read (``inside_diameter_in``; 1 in = 0.0254 m, NIST SP 811), not feet."""
    if "inside_diameter_ft" not in frame:
        return frame
    frame = frame.rename(columns={"inside_diameter_ft": "inside_diameter_in"})
    frame["inside_diameter_in"] = frame["inside_diameter_m"] / 0.0254
    return frame


@click.command("sizes", short_help="run the whole job per candidate pipe size and compare them",
               help=caution_help(
                   "Run PROJECT once per candidate pipe size (inside diameters given with "
                   "--candidates, each with the project pipe's wall, or the project's "
                   "[[size_candidates]] tables) and write sizes.csv (one row per candidate and "
                   "scenario: head loss, pressures, velocity, surge, pump head, energy and "
                   "whether every check passes), sizes.png and sizes.txt (which size carries "
                   "each scenario; with costs, the cheapest that passes).",
                   'gisgrade sizes project.toml --candidates "250 mm, 300 mm, 400 mm" -o sizes'))
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--candidates", default=None,
              help='inside diameters, e.g. "200 mm, 250 mm, 300 mm" (default: [[size_candidates]])')
@click.option("-o", "--outdir", type=click.Path(), default=None,
              help="output folder (default: the run's output folder with -sizes added, "
                   "e.g. gisgrade-out-sizes beside PROJECT)")
@verbosity
def command(project, candidates, outdir, verbose, quiet):
    verbose, quiet = setup_logging(verbose, quiet)
    echo = (lambda s: None) if quiet else (lambda s: click.echo(s, err=True))
    done, status = guarded(run_sizes, project, candidates, outdir, echo)
    if status == 0 and not quiet:
        lines, out = done
        for line in lines:
            click.echo(line)
        click.echo(f"outputs written to {out}")
    return status
