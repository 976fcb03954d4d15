"""The run: each stage's function, called in order, data flowing forward.

project file -> alignment -> terrain -> pipe -> design -> hydraulics -> findings

Each stage lives in the module that owns its rules; this module only calls
them in order and gathers a :class:`~gisgrade.result.Result`. Nothing here
writes a file: :meth:`Result.write` (or :func:`run`) does. The CLI and the
Python API (:func:`gisgrade.compute`, :func:`gisgrade.run`) call
:func:`compute`.
"""
from __future__ import annotations

import logging

import numpy as np
import time
from contextlib import contextmanager

from .alignment import stage_alignment
from .design import clearances, stage_design
from .display import display_of, using
from .findings import stage_findings
from .findings.valves import stage_valves
from .hydraulics.stage import stage_hydraulics
from .operations import stage_operations
from .pipe import stage_pipe
from .project import Project, load
from .result import Result, resolve_outdir
from .screening import enforce, screen
from .terrain import stage_terrain

__all__ = ["compute", "compute_ground", "run", "run_ground", "resolve_outdir", "stage_alignment",
           "stage_terrain", "stage_pipe", "stage_design", "stage_hydraulics", "stage_findings"]

log = logging.getLogger("gisgrade")

#: The stages of a whole run, in order (names for timings and progress).
STAGES = ("alignment", "terrain", "pipe", "design", "hydraulics", "operations", "findings", "valves",
          "summary")
#: The stages of the ground profile alone.
GROUND_STAGES = ("alignment", "terrain", "summary")


class _Clock:
    """Times each stage, logs it (``-v``) and reports progress."""

    def __init__(self, stages, progress=None):
        self.stages, self.progress, self.timings = stages, progress, {}

    @contextmanager
    def __call__(self, name):
        if self.progress:
            self.progress(name, len(self.timings), len(self.stages))
        t0 = time.perf_counter()
        yield
        self.timings[name] = dt = time.perf_counter() - t0
        log.info("stage %-10s %7.3f s", name, dt)
        if self.progress and len(self.timings) == len(self.stages):
            self.progress(None, len(self.stages), len(self.stages))


def _project(project, **kw) -> Project:
    return project if isinstance(project, Project) else load(project, **kw)


def compute(project, *, progress=None, frame=None) -> Result:
    """Every stage on a project (a path or a loaded :class:`Project`); writes nothing.

    ``frame``: the centerline's features already read (a GeoDataFrame holding
    one route, as ``routes`` hands each worker) in place of the
    ``[alignment]`` file.

    ``progress(stage, done, total)``, if given, is called as each stage
    starts (and with ``stage=None`` at the end). Messages raised on the way
    (input errors) give their quantities in the project's display units.
    """
    project = _project(project)
    with using(display_of(project)):
        return _compute(project, progress, frame)


def _compute(project, progress, frame=None) -> Result:
    clock = _Clock(STAGES, progress)
    with clock("alignment"):
        line, crossings, table = stage_alignment(project, frame)
    with clock("terrain"):
        table, notes = stage_terrain(project, line, table)
        enforce(screen(project, line, crossings, table))
    with clock("pipe"):
        table = stage_pipe(project, table)
    with clock("design"):
        table, design = stage_design(project, table, crossings)
    with clock("hydraulics"):
        grades = stage_hydraulics(project, table, design.bends)
    with clock("operations"):
        ops = stage_operations(project, table, grades)
    with clock("findings"):
        found = stage_findings(project, table, grades, design.profile.relaxations, ops.surge)
    with clock("valves"):
        valves = stage_valves(project, table, design.points, grades)
    result = Result(project, line, design.crossings, table, grades, found, design.bends,
                    list(design.profile.relaxations), profile=design.profile,
                    clearances=_clearances(design.crossings, table), points=design.points,
                    valves=valves, surge=ops.surge, energy=ops.energy,
                    suggestions=ops.suggestions, notes=notes + design.notes + ops.notes,
                    timings=clock.timings)
    with clock("summary"):
        _summarize(result)
    return result


def compute_ground(project, *, progress=None) -> Result:
    """Only the alignment and terrain stages: the ground profile for screening
    a route before any pipe data exist (the ``profile`` command)."""
    project = _project(project, ground_only=True)
    with using(display_of(project)):
        return _compute_ground(project, progress)


def _compute_ground(project, progress) -> Result:
    clock = _Clock(GROUND_STAGES, progress)
    with clock("alignment"):
        line, crossings, table = stage_alignment(project)
    with clock("terrain"):
        table, notes = stage_terrain(project, line, table)
        enforce(screen(project, line, crossings, table))
        # a feature given by its depth below ground has its bottom once the ground is known
        st, gr = table["station_m"].to_numpy(), table["ground_m"].to_numpy()
        crossings = crossings.resolve(lambda x: np.interp(x, st, gr))
    result = Result(project, line, crossings, table, notes=notes, timings=clock.timings)
    with clock("summary"):
        _summarize(result)
    return result


def _clearances(crossings, table):
    return clearances(crossings, table["station_m"].to_numpy(), table["top_m"].to_numpy(),
                      table["ground_m"].to_numpy(), table["outside_diameter_m"].to_numpy())


def _summarize(result: Result) -> None:
    from .output.summary import summarize

    result.summary = summarize(result)


def run(project, outdir=None, *, write: bool = True, figures: bool = True) -> Result:
    """:func:`compute`, then (with ``write``) :meth:`Result.write` to ``outdir``."""
    result = compute(project)
    if write:
        result.write(outdir, figures=figures)
    return result


def run_ground(project, outdir=None, *, write: bool = True) -> Result:
    """:func:`compute_ground`, then (with ``write``) :meth:`Result.write`."""
    result = compute_ground(project)
    if write:
        result.write(outdir)
    return result
