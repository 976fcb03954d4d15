"""The candidates run through the whole job, beside the hand-drawn line.

:func:`compare_candidates` hands the candidate lines (and the project's own
centerline as route ``drawn``) to ``gisgrade.routes.run_routes`` and returns
its comparison table, one row per route and scenario.
"""
from __future__ import annotations


def compare_candidates(project, candidates, *, drawn=None, workers=None, progress=None):
    """The comparison table of ``candidates`` (a GeoDataFrame with a ``route``
    column, CRS set, each from the source) and the ``drawn`` line (a LineString
    in the same CRS in the direction of flow, or None), each run through the
    whole job by ``gisgrade.routes.run_routes`` (``workers``: its Dask
    processes, 0: in this process; ``progress(done, total)``).

    Needs the ``routes`` module (``gisgrade routes``); without it an
    :class:`~gisgrade.errors.InputError` says so. Returns (table, result).
    """
    import geopandas as gpd
    import pandas as pd

    from ..errors import InputError
    try:
        from ..routes import run_routes
    except ImportError:
        raise InputError("--compare needs gisgrade routes, which this installation lacks") from None
    lines = candidates[["route", "geometry"]].copy()
    if drawn is not None:
        lines = gpd.GeoDataFrame(pd.concat([gpd.GeoDataFrame({"route": ["drawn"]},
                                                             geometry=[drawn], crs=lines.crs),
                                            lines], ignore_index=True), crs=lines.crs)
    # The lines already run in the direction of flow (candidates from the source,
    # the drawn line as read_alignment oriented it): no reversal, no filter again.
    from dataclasses import replace
    project = replace(project, alignment=replace(project.alignment, reverse=False, where=None,
                                                 feature=None))
    result = run_routes(project, lines, workers=workers, figures=False, progress=progress)
    return result.table, result
