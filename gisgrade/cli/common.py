"""What the commands share: running a stage function with the error
contract, the progress bar, and the printed summary."""
from __future__ import annotations

import logging
import sys
import time

import click

from ..errors import InputError


class Progress:
    """A one-line bar of the stages done, on stderr, only when it is a
    terminal (quiet in pipes and CI)."""

    WIDTH = 24

    def __init__(self, stream=None, enabled=True):
        self.stream = stream or sys.stderr
        self.shown = enabled and hasattr(self.stream, "isatty") and self.stream.isatty()
        self.t0 = time.perf_counter()

    def __call__(self, stage, done, total):
        if not self.shown:
            return
        filled = int(self.WIDTH * done / max(total, 1))
        if stage is None:
            self.stream.write("\r" + " " * (self.WIDTH + 40) + "\r")
        else:
            self.stream.write(f"\r[{'#' * filled}{'.' * (self.WIDTH - filled)}] {stage:<11}"
                              f"{time.perf_counter() - self.t0:6.1f} s")
        self.stream.flush()


def guarded(fn, *args, **kwargs):
    """Call ``fn``; an InputError becomes one line on stderr and exit status 2.
    Warnings the libraries raise on the way (shapely, rasterio, geopandas)
    never reach stderr ahead of it: they are logged at debug level (``-vv``)."""
    import logging
    import warnings

    log = logging.getLogger("gisgrade")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            return fn(*args, **kwargs), 0
        except InputError as exc:
            click.echo(f"gisgrade: error: {exc}", err=True)
            return None, 2
        finally:
            for w in caught:
                log.debug("library warning: %s: %s", w.category.__name__,
                          " ".join(str(w.message).split()))


def compute_and_write(project_path, outdir, quiet, *, ground=False, figures=True):
    """Load, compute (with a progress bar) and write; print the summary. Exit status."""
    from ..output.summary import summary_text
    from ..pipeline import compute, compute_ground
    from ..project import load
    from ..output.atomic import refuse_outdir
    from ..result import resolve_outdir

    log = logging.getLogger("gisgrade")

    def work():
        project = load(project_path, ground_only=ground)
        out = resolve_outdir(project, outdir)
        refuse_outdir(out, inputs=project.input_paths())  # before the long part
        result = (compute_ground if ground else compute)(project, progress=Progress(enabled=not quiet))
        t0 = time.perf_counter()
        result.write(out, figures=figures)
        log.info("stage %-10s %7.3f s", "write", time.perf_counter() - t0)
        return result, out

    done, status = guarded(work)
    if status == 0 and not quiet:
        result, out = done
        click.echo(summary_text(result.summary))
        click.echo(f"outputs written to {out}")
    return status
