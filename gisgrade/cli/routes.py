"""``gisgrade routes``: the whole job on every route of the centerline layer, on Dask."""
from __future__ import annotations

import sys
import time
from pathlib import Path

import click

from . import caution_help, setup_logging, verbosity
from .common import guarded


class RoutesBar:
    """A one-line bar of the routes done, on stderr when it is a terminal."""

    WIDTH = 30

    def __init__(self, enabled=True, stream=None):
        self.stream = stream or sys.stderr
        self.shown = enabled and hasattr(self.stream, "isatty") and self.stream.isatty()
        self.t0 = time.perf_counter()

    def __call__(self, done, total):
        if not self.shown:
            return
        filled = int(self.WIDTH * done / max(total, 1))
        end = "\n" if done == total else ""
        self.stream.write(f"\r[{'#' * filled}{'.' * (self.WIDTH - filled)}] {done}/{total} routes "
                          f"{time.perf_counter() - self.t0:6.1f} s{end}")
        self.stream.flush()


@click.command("routes", short_help="run every route of the centerline layer, on Dask",
               help=caution_help(
                   "Run the whole job on every route of PROJECT's centerline layer "
                   "([alignment] route_field groups features into routes; without it each "
                   "feature is a route), one Dask task a route, and write OUT/routes.csv (one "
                   "row per route and scenario), OUT/routes.gpkg (every route's layers with a "
                   "route field), OUT/routes.png and each route's own outputs under "
                   "OUT/<route>/. A failed route is a row with its reason; exit status 1 when "
                   "any route failed, 2 for bad input to the command.",
                   "gisgrade routes project.toml -o routes-out --workers 2"))
@click.argument("project", type=click.Path(path_type=Path))
@click.option("-o", "--outdir", type=click.Path(path_type=Path), required=True,
              help="output folder (replaced whole when the run ends)")
@click.option("--workers", type=click.IntRange(min=0), default=None,
              help="LocalCluster worker processes (default: the cores; 0: no Dask, one at a time)")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="an existing Dask scheduler (e.g. tcp://10.0.0.5:8786) whose workers see "
                   "the project's files at the same paths")
@click.option("--figures", is_flag=True,
              help="each route's figures too (profile.png, sheets/, map.png)")
@click.option("--layers", is_flag=True,
              help="each route's own layer files too (layers.gpkg, geojson/, layers.kml, "
                   "styles/); routes.gpkg has every route's layers either way")
@click.option("--parquet", is_flag=True,
              help="also routes.parquet and parquet/<layer>.parquet (GeoParquet), for large runs")
@verbosity
def command(project, outdir, workers, scheduler, figures, layers, parquet, verbose, quiet):
    verbose, quiet = setup_logging(verbose, quiet)
    if workers is not None and scheduler:
        click.echo("gisgrade: error: --workers and --scheduler: give one or the other", err=True)
        return 2

    def work():
        from ..project import load
        from ..routes import run_routes

        from ..output.atomic import atomic_folder

        loaded = load(project)
        # built beside OUT (each route's worker writes its files there), swapped in at the end
        with atomic_folder(outdir, inputs=[loaded.path, *loaded.input_paths()]) as tmp:
            return run_routes(loaded, workers=workers, scheduler=scheduler, figures=figures,
                              layers=layers, progress=RoutesBar(enabled=not quiet), sink=tmp,
                              parquet=parquet)

    result, status = guarded(work)
    if status:
        return status
    if not quiet:
        click.echo(_summary(result))
        click.echo(f"outputs written to {outdir}")
    return 1 if result.failed else 0


def _summary(result) -> str:
    from ..display import display_of
    from ..routes import route_line

    d = display_of(result.project)
    t = result.table
    ok = t[t["status"] == "ok"]
    n = len(result.outcomes)
    lines = [f"{n} route{'' if n == 1 else 's'}, {n - len(result.failed)} ran, "
             f"{len(result.failed)} failed"]
    for o in result.outcomes:
        if o.error is not None:
            lines.append(f"  {o.name}: {o.error}")
        else:
            lines.append(f"  {o.name}: {route_line(ok[ok['route'] == o.name], d)}")
    return "\n".join(lines)
