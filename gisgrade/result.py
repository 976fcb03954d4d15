"""What a run computed: :class:`Result`, written by :meth:`Result.write`."""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import pandas as pd


@dataclass(eq=False)
class Result:
    """Everything a run computed, in SI; nothing here has touched a file.

    ``table`` has one row per station (geometry, ground, pipe);
    ``grades`` every scenario's grade lines as (scenario x station) arrays
    (:class:`~gisgrade.hydraulics.gradeset.GradeSet`), ``gradelines`` the
    same as one row per scenario and station; ``clearances`` the achieved
    clearance at each crossing's governing point; ``summary`` the key
    figures of ``summary.json``; ``timings`` seconds per stage.
    """

    project: object  # project.Project
    alignment: object  # alignment.Alignment
    crossings: object  # alignment.Crossings
    table: pd.DataFrame
    grades: object = None  # hydraulics.GradeSet (None for the ground alone)
    findings: pd.DataFrame | None = None
    bends: pd.DataFrame | None = None
    relaxations: list = field(default_factory=list)
    profile: object = None  # design.PipeProfile
    clearances: object = None  # design.Clearances
    points: pd.DataFrame | None = None  # the pipe's high and low points, with why
    valves: pd.DataFrame | None = None  # air valves and drains sited
    surge: object = None  # hydraulics.surge.SurgeSet: the surge screening envelope
    energy: object = None  # hydraulics.energy.Energy: pumps, power and annual energy
    suggestions: object = None  # hydraulics.elements.Proposal: pressure elements proposed
    notes: list = field(default_factory=list)  # stage remarks for the summary
    summary: dict = field(default_factory=dict)
    timings: dict = field(default_factory=dict)  # stage name -> seconds

    @cached_property
    def gradelines(self) -> pd.DataFrame | None:
        """One row per scenario and station (see :meth:`GradeSet.frame`)."""
        return None if self.grades is None else self.grades.frame()

    @property
    def cases(self) -> pd.DataFrame | None:
        """One row per scenario: the boundary and the heads used, solved or required."""
        return None if self.grades is None else self.grades.cases

    def write(self, outdir=None, figures: bool = True, layers: bool = True) -> list[Path]:
        """Write every output into ``outdir`` (default: the project's
        ``[output] dir``, else ``gisgrade-out`` beside the project file), all
        at once or not at all; returns the paths written. ``figures=False``
        leaves out the figures (profile.png, sheets/, map.png), the costly part;
        ``layers=False`` the map layers and their styles (layers.gpkg, geojson/,
        layers.kml, styles/)."""
        from .output import write_all

        return write_all(self, resolve_outdir(self.project, outdir), figures=figures,
                         layers=layers)


def resolve_outdir(project, outdir=None) -> Path:
    """The output folder: ``outdir``, else ``[output] dir``, else
    ``gisgrade-out`` beside the project file."""
    if outdir is not None:
        from .output.atomic import refuse_empty

        refuse_empty(outdir)
        return Path(outdir)
    if project.output.dir is not None:
        return project.output.dir
    return project.base_dir / "gisgrade-out"


def command_outdir(project, outdir, suffix: str) -> Path:
    """A command's own folder: ``outdir``, else the run's output folder
    (:func:`resolve_outdir`) with ``suffix`` added (``gisgrade-out-corridors``),
    so the command never replaces a run's result (each folder is replaced whole)."""
    if outdir is not None:
        return resolve_outdir(project, outdir)
    run_out = resolve_outdir(project)
    return run_out.with_name(run_out.name + suffix)
