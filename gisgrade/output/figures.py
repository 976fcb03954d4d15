"""The figure writers: ``profile.png`` (:mod:`.plot`), ``sheets/``
(:mod:`.sheets`) and ``map.png`` (:mod:`.mapfig`).

Registered here, drawn there: matplotlib (about a third of a second to
import) is loaded only when a figure is drawn, not by every command that
lists the outputs or by a batch run without figures.
"""
from __future__ import annotations

from pathlib import Path

from . import has_pipe, writer


@writer("profile.png", figure=True)
def write_profile_png(result, folder: Path, display) -> None:
    from .plot import write_plot

    write_plot(result, folder, display)


@writer("sheets", applies=has_pipe, figure=True)
def write_sheets(result, folder: Path, display) -> None:
    from .sheets import write_sheets as draw

    draw(result, folder, display)


@writer("map.png", figure=True)
def write_map_png(result, folder: Path, display) -> None:
    from .mapfig import write_map

    write_map(result, folder, display)
