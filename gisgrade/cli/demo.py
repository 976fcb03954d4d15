"""``gisgrade demo``: the bundled invented scenario, end to end."""
from __future__ import annotations

from importlib import resources
from pathlib import Path

import click

from . import caution_help, setup_logging, verbosity
from .common import compute_and_write


def demo_project() -> Path:
    """Path of the bundled demo project file."""
    return Path(str(resources.files("gisgrade") / "data" / "demo" / "project.toml"))


@click.command("demo", short_help="run the bundled invented demo scenario (Sallow Creek)",
               help=caution_help("Run the bundled demo project, an invented scenario on a "
                                 "synthetic DEM.", "gisgrade demo -o demo-out"))
@click.option("-o", "--outdir", type=click.Path(), default="gisgrade-demo",
              show_default=True, help="output folder")
@verbosity
def command(outdir, verbose, quiet):
    verbose, quiet = setup_logging(verbose, quiet)
    return compute_and_write(demo_project(), outdir, quiet)
