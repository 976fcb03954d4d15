"""Output: every file a run writes, each by one registered writer.

A writer is a function in one module of this package, registered with
:func:`writer` under the file names it writes and a test of whether the
result has what it needs. :func:`write_all` calls every writer that applies
into a temporary folder beside OUTDIR, which replaces OUTDIR whole once all
are written, with a checksum manifest written last (:mod:`.atomic`): a
failed or killed run leaves the earlier result, never a mix.

A new output file is a module with a registered writer, and one line in
:data:`WRITER_MODULES`.
"""
from __future__ import annotations

import importlib
import logging
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from ..errors import InputError

__all__ = ["write_all", "writer", "output_names", "WRITERS"]

log = logging.getLogger("gisgrade")


@dataclass(frozen=True)
class Writer:
    files: tuple  #: the file (and folder) names it writes
    write: Callable  #: ``write(result, folder, display)``
    applies: Callable  #: ``applies(result) -> bool``
    figure: bool = False  #: draws figures (the costly part): a batch run may skip it
    layer: bool = False  #: writes map layers (a batch run has them in one file of all routes)


#: Every registered writer, in registration order.
WRITERS: list[Writer] = []

#: The modules holding the writers, imported in this order.
WRITER_MODULES = ("profile_csv", "gradelines_csv", "findings_csv", "fittings_csv", "valves_csv",
                  "surge_csv", "layers", "geojson", "kml", "sld", "figures",
                  "summary", "report")


def writer(*files: str, applies: Callable = lambda result: True, figure: bool = False,
           layer: bool = False):
    """Register the decorated ``write(result, folder, display)`` as the writer of ``files``
    (a name may be a folder it fills, e.g. ``sheets``); ``figure``: it draws figures;
    ``layer``: it writes map layers (or their styles)."""
    def register(fn):
        WRITERS[:] = ([w for w in WRITERS if w.files != files]
                      + [Writer(files, fn, applies, figure, layer)])
        return fn

    return register


def has_pipe(result) -> bool:
    """The result carries a designed pipe and grade lines (not the ground alone)."""
    return result.grades is not None


def _load() -> list[Writer]:
    for name in WRITER_MODULES:
        importlib.import_module(f"{__name__}.{name}")
    return WRITERS


def output_names() -> tuple[str, ...]:
    """Every file (and folder) name a run may write."""
    return tuple(f for w in _load() for f in w.files)


def write_all(result, outdir, figures: bool = True, layers: bool = True) -> list[Path]:
    """Write every output of ``result`` into ``outdir``; return the paths.
    ``figures=False`` skips the writers registered with ``figure=True``,
    ``layers=False`` those with ``layer=True``.

    The writers fill a temporary folder that replaces OUTDIR whole, with a
    ``MANIFEST.json`` written last (:func:`gisgrade.output.atomic.atomic_folder`):
    a run that fails or is killed leaves the earlier result as it was.
    Refuses (InputError, nothing written) an OUTDIR that is a file, cannot be
    made, holds an input or holds files no gisgrade run wrote.
    """
    from ..display import display_of
    from .atomic import MANIFEST, atomic_folder

    names = output_names()
    inputs = [p for p in result.project.input_paths()]
    resolved = {Path(p).resolve() for p in inputs}
    clash = [n for n in names if (Path(outdir) / n).resolve() in resolved] if str(outdir) else []
    if clash:
        raise InputError(f"output folder {outdir}: writing {clash[0]} there would replace an "
                         "input of this project; choose another -o or output.dir")
    display = display_of(result.project)
    with atomic_folder(outdir, inputs=inputs) as tmp:
        for w in WRITERS:
            if w.applies(result) and (figures or not w.figure) and (layers or not w.layer):
                t0 = time.perf_counter()
                w.write(result, tmp, display)
                log.debug("writer %-22s %7.3f s", w.files[0], time.perf_counter() - t0)
        written = [Path(outdir) / f.name for f in sorted(tmp.iterdir())]
    return written + [Path(outdir) / MANIFEST]
