"""``gisgrade corridors``: candidate routes from the terrain (docs/corridors.md)."""
from __future__ import annotations

from pathlib import Path

import click

from . import caution_help, setup_logging, verbosity
from .common import guarded


def run_corridors(project_path, start, end, via, crs, k, outdir, compare=False, workers=None,
                  echo=lambda s: None):
    """Load, plan the corridors (and compare them), write; returns (result, folder)."""
    from ..corridors import plan_corridors
    from ..corridors.stage import read_point
    from ..errors import InputError
    from ..project import load
    from ..result import command_outdir

    if k is not None and k < 1:
        raise InputError(f"-k {k}: at least one route")
    project = load(project_path, ground_only=not compare)
    out = command_outdir(project, outdir, "-corridors")
    if out.exists() and not out.is_dir():
        raise InputError(f"output folder {out} is a file; give -o a folder")
    if crs is None:
        from ..corridors.stage import dem_crs
        crs = dem_crs(project)[0]
    points = [read_point(start, "--from", crs)]
    points += [read_point(v, "--via", crs) for v in via]
    points.append(read_point(end, "--to", crs))
    result = plan_corridors(project, points, crs=crs, k=k)
    if compare:
        from ..corridors.compare import compare_candidates
        echo("running the candidates through the whole job ...")
        result.comparison, _ = compare_candidates(project, result.candidates, drawn=result.drawn,
                                                  workers=workers)
    result.write(out)
    return result, out


def comparison_lines(project, table) -> list[str]:
    """One line per route of the comparison: length, the lowest pressure of
    any scenario and the most findings of one, or why it failed."""
    from ..display import display_of
    from ..routes import route_line

    d, out = display_of(project), []
    for route, rows in table.groupby("route", sort=False):
        bad = rows[rows.status != "ok"]
        if len(bad):
            out.append(f"compared {route}: {bad.status.iloc[0]}")
            continue
        out.append(f"compared {route}: {route_line(rows, d)}")
    return out


@click.command("corridors", short_help="propose candidate routes from the terrain",
               help=caution_help(
                   "Find the K cheapest distinct routes over PROJECT's DEM from --from to --to "
                   "(through each --via in order), each step costed by length, steep ground, "
                   "rough ground, crossings, preferred corridors, no-go areas and the ground "
                   "the flow from the source cannot reach with the minimum pressure (the "
                   "[corridors] table, docs/corridors.md). Writes candidates.gpkg (a line layer "
                   "with a route field that gisgrade routes reads), cost.tif, corridors.png and "
                   "corridors.csv; with --compare also comparison.csv, every candidate and the "
                   "drawn centerline run through the whole job. Points are X,Y in --crs "
                   "(default: the DEM's) or a point layer file holding one point.",
                   "gisgrade corridors sample_data/sallow_creek/project.toml --from "
                   "8.3695517,47.0336827 --to 8.4458757,47.0350673 --crs EPSG:4326 -k 3 "
                   "-o corridors"))
@click.argument("project", type=click.Path(path_type=Path))
@click.option("--from", "start", required=True, help="the source: X,Y or a point layer")
@click.option("--to", "end", required=True, help="the destination: X,Y or a point layer")
@click.option("--via", multiple=True,
              help="a waypoint, X,Y or a point layer (repeatable, in order)")
@click.option("--crs", default=None, help="CRS of X,Y points, e.g. EPSG:32633 (default: the DEM's)")
@click.option("-k", "k", type=int, default=None, help="how many candidates (default: corridors.k)")
@click.option("--compare", is_flag=True,
              help="run every candidate and the drawn centerline through the whole job")
@click.option("--workers", type=int, default=None,
              help="with --compare: processes running the routes (0: this one; default: the cores)")
@click.option("-o", "--outdir", type=click.Path(path_type=Path), default=None,
              help="output folder (default: the run's output folder with -corridors added, "
                   "e.g. gisgrade-out-corridors beside PROJECT)")
@verbosity
def command(project, start, end, via, crs, k, compare, workers, outdir, verbose, quiet):
    verbose, quiet = setup_logging(verbose, quiet)
    echo = (lambda s: None) if quiet else (lambda s: click.echo(s, err=True))
    done, status = guarded(run_corridors, project, start, end, via, crs, k, outdir, compare,
                           workers, echo)
    if status == 0 and not quiet:
        result, out = done
        from ..display import display_of

        d = display_of(result.project)
        for row in result.table.itertuples():
            click.echo(f"{row.route}: {d.text(row.length_m, 'length', 0)}, cost x{row.cost_ratio:.2f}, "
                       f"{row.crossings} crossings, {row.shared:.0%} shared with cheaper routes")
        if result.comparison is not None:
            for line in comparison_lines(result.project, result.comparison):
                click.echo(line)
        for note in result.notes:
            click.echo(f"note: {note}")
        click.echo(f"outputs written to {out}")
    return status
