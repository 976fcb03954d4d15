"""Command line: a thin layer over :mod:`gisgrade.pipeline`.

Exit status 0 on success, 2 on bad input (one line naming the file, key or
value; no traceback; nothing written).
"""
from __future__ import annotations

import argparse
import sys
import textwrap
from importlib import resources
from pathlib import Path

from . import __version__
from .cautions import CAUTIONS
from .errors import InputError

DESCRIPTION = f"""\
gisgrade sets out a new water main along a GIS centerline: the ground profile
from a DEM, a pipe profile that keeps cover and passes crossings with
clearance at least excavation, the hydraulic and energy grade lines (HGL,
EGL) for each demand scenario and the static case, and where pressure is too
low, too high or below atmospheric. It writes tables (CSV), map layers
(GeoPackage), a profile sheet (PNG) and a summary.

{textwrap.fill("CAUTION: " + CAUTIONS, 78)}
"""

EXAMPLES = """\
examples:
  gisgrade demo -o demo-out          run the bundled invented scenario
  gisgrade run project.toml -o out   run your own project file
  gisgrade profile project.toml      the ground profile alone (no pipe data needed)
"""


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="gisgrade", description=DESCRIPTION, epilog=EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"gisgrade {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    _command(sub, "run", "run every stage on a project file and write the outputs",
             "Run every stage on PROJECT (TOML) and write profile.csv, gradelines.csv, "
             "findings.csv, fittings.csv, layers.gpkg, profile.png and summary files.",
             "gisgrade run project.toml -o out")
    _command(sub, "profile",
             "the ground profile alone, for screening routes before pipe data exist",
             "Station the centerline and sample the ground along it; write profile.csv, "
             "layers.gpkg (stations and crossings), profile.png and summary files. Only "
             "[alignment] and [terrain] are needed in PROJECT.",
             "gisgrade profile project.toml -o ground")
    _command(sub, "demo", "run the bundled invented demo scenario (Sallow Creek)",
             "Run the bundled demo project, an invented scenario on a synthetic DEM.",
             "gisgrade demo -o demo-out", project=False)
    return parser


def _command(sub, name, summary, description, example, project=True):
    """One subcommand with its description, the cautions and a runnable example."""
    cmd = sub.add_parser(
        name, help=summary,
        description=textwrap.fill(description, 78) + "\n\n" + textwrap.fill("CAUTION: " + CAUTIONS, 78),
        epilog=f"example:\n  {example}", formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    if project:
        cmd.add_argument("project", type=Path, help="the project file (TOML)")
        cmd.add_argument("-o", "--outdir", type=Path, default=None,
                         help="output folder (default: [output] dir, else gisgrade-out beside "
                              "PROJECT)")
    else:
        cmd.add_argument("-o", "--outdir", type=Path, default=Path("gisgrade-demo"),
                         help="output folder (default: ./gisgrade-demo)")
    cmd.add_argument("-q", "--quiet", action="store_true", help="print nothing on success")
    return cmd


def demo_project() -> Path:
    """Path of the bundled demo project file."""
    return Path(str(resources.files("gisgrade") / "data" / "demo" / "project.toml"))


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 2
    from .output import summary_text
    from .pipeline import resolve_outdir, run, run_ground
    from .project import load

    try:
        if args.command == "profile":
            project = load(args.project, ground_only=True)
            outdir = resolve_outdir(project, args.outdir)
            result = run_ground(project, outdir)
        else:
            project = load(demo_project() if args.command == "demo" else args.project)
            outdir = resolve_outdir(project, args.outdir)
            result = run(project, outdir)
    except InputError as exc:
        print(f"gisgrade: error: {exc}", file=sys.stderr)
        return 2
    if not args.quiet:
        print(summary_text(result.summary))
        print(f"outputs written to {outdir}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
