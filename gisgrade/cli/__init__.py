"""Command line: a thin layer over the stages (:mod:`gisgrade.pipeline`).

One module per command (:data:`COMMANDS`), each a click command with a
runnable example. ``-v`` shows each stage's time (writing too), ``-vv`` adds
each writer's time and the libraries' warnings and log records, ``-q``
prints nothing on success; a progress bar shows on a terminal only. Exit
status 0 on success, 2 on bad input (one line naming the file, key or
value; no traceback; nothing written).
"""
from __future__ import annotations

import importlib
import logging
import sys
import textwrap

import click

from .. import __version__
from ..cautions import CAUTIONS

DESCRIPTION = f"""\
gisgrade sets out a new water main along a GIS centerline: the ground profile
from a DEM, a pipe profile that keeps cover and passes crossings with
clearance at least excavation, the hydraulic and energy grade lines (HGL,
EGL) for each demand scenario and the static case, and where pressure is too
low, too high or below atmospheric. It writes tables (CSV), map layers
(GeoPackage), a profile sheet (PNG) and a summary.

\b
{textwrap.fill("CAUTION: " + CAUTIONS, 78)}

\b
examples:
  gisgrade demo -o demo-out          run the bundled invented scenario
  gisgrade run project.toml -o out   run your own project file
  gisgrade check project.toml        every problem of a project file at once, nothing written
  gisgrade profile project.toml      the ground profile alone (no pipe data needed)
  gisgrade routes project.toml -o out   every route of the centerline layer, on Dask
  gisgrade sizes project.toml --candidates "250 mm, 300 mm"   compare pipe sizes
  gisgrade corridors project.toml --from X,Y --to X,Y -o c   candidate routes
  gisgrade schema > project.schema.json   the project file's JSON Schema
"""

#: The command modules, each defining ``command`` (a click command).
COMMANDS = ("run", "check", "profile", "routes", "demo", "sizes", "corridors", "schema")


def caution_help(text: str, example: str) -> str:
    """A command's help: its description, the cautions and a runnable example."""
    return (textwrap.fill(text, 78) + "\n\n\b\n" + textwrap.fill("CAUTION: " + CAUTIONS, 78)
            + f"\n\n\b\nexample:\n  {example}")


def verbosity(fn):
    """``-v/--verbose`` (repeatable) and ``-q/--quiet``, mapped to logging;
    accepted before the command (``gisgrade -v run``) or after it."""
    fn = click.option("-q", "--quiet", is_flag=True, help="print nothing on success")(fn)
    return click.option("-v", "--verbose", count=True,
                        help="show each stage's time (-vv: each writer's time and the libraries' warnings)")(fn)


def setup_logging(verbose: int, quiet: bool) -> tuple[int, bool]:
    """Logging for ``verbose`` and ``quiet`` (with the group's own -v/-q
    added); returns the combined ``(verbose, quiet)``."""
    ctx = click.get_current_context(silent=True)
    outer = ctx.find_root().params if ctx is not None else {}
    verbose += outer.get("verbose", 0)
    quiet = quiet or outer.get("quiet", False)
    level = logging.ERROR if quiet else (logging.WARNING, logging.INFO, logging.DEBUG)[min(verbose, 2)]
    log = logging.getLogger("gisgrade")
    log.handlers[:] = []
    handler = _Stderr()
    handler.setFormatter(logging.Formatter("gisgrade: %(message)s"))
    log.addHandler(handler)
    log.setLevel(level)
    log.propagate = False
    # The libraries' own warnings (GDAL through rasterio, pyogrio, ...) go to our
    # handler at -vv only, never to Python's last-resort stderr handler; their
    # debug records (matplotlib's font search: hundreds of lines) never.
    for name in LIBRARY_LOGGERS:
        lib = logging.getLogger(name)
        lib.handlers[:] = [handler] if verbose >= 2 and not quiet else [logging.NullHandler()]
        lib.setLevel(logging.WARNING if verbose >= 2 else logging.CRITICAL)
        lib.propagate = False
    return verbose, quiet


#: Loggers of the libraries gisgrade calls.
LIBRARY_LOGGERS = ("rasterio", "pyogrio", "fiona", "shapely", "geopandas", "pyproj", "matplotlib")


class _Stderr(logging.StreamHandler):
    """A handler writing to whatever ``sys.stderr`` is when a record comes
    (never to a stream that was replaced and closed since)."""

    @property
    def stream(self):
        return sys.stderr

    @stream.setter
    def stream(self, value):
        pass


class _Group(click.Group):
    def list_commands(self, ctx):
        return list(COMMANDS)

    def get_command(self, ctx, name):
        if name not in COMMANDS:
            return None
        return importlib.import_module(f"{__name__}.{name}").command


@click.group(cls=_Group, help=DESCRIPTION, context_settings={"max_content_width": 100})
@click.version_option(__version__, prog_name="gisgrade", message="%(prog)s %(version)s")
@verbosity
def cli(verbose, quiet):
    pass


def main(argv=None) -> int:
    """Run the command line with ``argv`` (default: ``sys.argv[1:]``); the exit status."""
    try:
        rv = cli.main(args=argv, prog_name="gisgrade", standalone_mode=False)
    except click.UsageError as exc:
        exc.show()
        return 2
    except (click.Abort, KeyboardInterrupt):  # Ctrl-C: the shell's 128 + SIGINT
        click.echo("gisgrade: interrupted; the output folder is as it was before", err=True)
        return 130
    return rv or 0


def entry() -> None:
    """The ``gisgrade`` program (and ``python -m gisgrade``): :func:`main`,
    then the process exits with its status. Before it does, every object is
    frozen out of the garbage collector (``gc.freeze``): the interpreter's
    shutdown then frees them as their references go, without collecting
    through the hundred thousand objects of the libraries again, a fifth of
    a second less for every command. Files are all closed by then, and
    ``atexit`` handlers (temporary folders, Dask) still run."""
    import gc

    status = main()
    gc.freeze()
    sys.exit(status)
