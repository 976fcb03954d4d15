"""``gisgrade run``: every stage on a project file, and every output."""
from __future__ import annotations

from pathlib import Path

import click

from . import caution_help, setup_logging, verbosity
from .common import compute_and_write


@click.command("run", short_help="run every stage on a project file and write the outputs",
               help=caution_help(
                   "Run every stage on PROJECT (TOML) and write the tables (profile.csv, "
                   "gradelines.csv, findings.csv, ...), the layers (layers.gpkg, geojson/, "
                   "layers.kml, styles/), profile.png, sheets/, map.png, report.html and the "
                   "summary files.",
                   "gisgrade run project.toml -o out"))
@click.argument("project", type=click.Path(path_type=Path))
@click.option("-o", "--outdir", type=click.Path(), default=None,
              help="output folder (default: [output] dir, else gisgrade-out beside PROJECT)")
@click.option("--no-figures", is_flag=True,
              help="leave out the figures (profile.png, sheets/, map.png), the costly part")
@verbosity
def command(project, outdir, no_figures, verbose, quiet):
    verbose, quiet = setup_logging(verbose, quiet)
    return compute_and_write(project, outdir, quiet, figures=not no_figures)
