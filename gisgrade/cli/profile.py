"""``gisgrade profile``: the ground profile alone, for screening routes."""
from __future__ import annotations

from pathlib import Path

import click

from . import caution_help, setup_logging, verbosity
from .common import compute_and_write


@click.command("profile", short_help="the ground profile alone, for screening routes before "
                                     "pipe data exist",
               help=caution_help(
                   "Station the centerline and sample the ground along it; write profile.csv, "
                   "the layers (route, stations and crossings), profile.png, map.png, "
                   "report.html and summary files. Only "
                   "[alignment] and [terrain] are needed in PROJECT.",
                   "gisgrade profile project.toml -o ground"))
@click.argument("project", type=click.Path(path_type=Path))
@click.option("-o", "--outdir", type=click.Path(), default=None,
              help="output folder (default: [output] dir, else gisgrade-out beside PROJECT)")
@verbosity
def command(project, outdir, verbose, quiet):
    verbose, quiet = setup_logging(verbose, quiet)
    return compute_and_write(project, outdir, quiet, ground=True)
