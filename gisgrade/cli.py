"""Command line: a thin layer over :mod:`gisgrade.pipeline`.

Exit status 0 on success, 2 on bad input (one line naming the file, key or
value; no traceback; nothing written).
"""
from __future__ import annotations

import argparse
import sys
from importlib import resources
from pathlib import Path

from . import __version__
from .cautions import CAUTIONS
from .errors import InputError

DESCRIPTION = f"""\
gisgrade sets out a new water main along a GIS centerline: the ground profile
from a DEM, a pipe profile that keeps cover and passes crossings with
clearance, the hydraulic and energy grade lines (HGL, EGL) for the design
flow, and where pressure is too low, too high or below atmospheric. It writes
tables (CSV), map layers (GeoPackage), a profile plot (PNG) and a summary.

CAUTION: {CAUTIONS}
"""

EXAMPLES = """\
examples:
  gisgrade demo -o demo-out          run the bundled invented scenario
  gisgrade run project.toml -o out   run your own project file
"""


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="gisgrade", description=DESCRIPTION, epilog=EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"gisgrade {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    run = sub.add_parser(
        "run", help="run every stage on a project file and write the outputs",
        description="Run every stage on PROJECT (TOML) and write profile.csv, gradelines.csv, "
                    "findings.csv, bends.csv, layers.gpkg, profile.png and summary files.\n\n"
                    f"CAUTION: {CAUTIONS}",
        epilog="example:\n  gisgrade run project.toml -o out",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    run.add_argument("project", type=Path, help="the project file (TOML)")
    run.add_argument("-o", "--outdir", type=Path, default=None,
                     help="output folder (default: [output] dir, else gisgrade-out beside PROJECT)")
    run.add_argument("-q", "--quiet", action="store_true", help="print nothing on success")

    demo = sub.add_parser(
        "demo", help="run the bundled invented demo scenario (Sallow Creek)",
        description="Run the bundled demo project, an invented scenario with a synthetic DEM.\n\n"
                    f"CAUTION: {CAUTIONS}",
        epilog="example:\n  gisgrade demo -o demo-out",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    demo.add_argument("-o", "--outdir", type=Path, default=Path("gisgrade-demo"),
                      help="output folder (default: ./gisgrade-demo)")
    demo.add_argument("-q", "--quiet", action="store_true", help="print nothing on success")
    return parser


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
    from .pipeline import resolve_outdir, run
    from .project import load

    try:
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
