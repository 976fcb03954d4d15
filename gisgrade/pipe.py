"""The pipe stage: pipe data per station from [pipe], [[sections]],
[[fittings]] and [[offtakes]], and the stations those tables need.

:func:`special_stations` tells the alignment stage where fittings, offtakes
(and scenarios' fire stations) and section boundaries lie, snapping offtake
point layers onto the line (the one file this stage reads);
:func:`stage_pipe` then fills the per-station columns.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd

from . import alignment as al
from .arrays import station_index
from .errors import InputError
from .hydraulics.cases import segment_values


def special_stations(project, line: al.Alignment, crossings=()):
    """Stations the hydraulics needs on the table.

    Returns ``(extra, located, line)``: ``extra`` is ``(stations, flag)``
    pairs measured from the line's first point (fittings, offtakes and fire
    stations, section boundaries, and, when a pipe is to be designed, its
    joints: :func:`joint_stations`, with a full pipe length centred on each of
    the ``crossings`` (stations from the line's first point)); ``located`` the offtake point layers
    snapped to the line as ``(station, flow m3/s)`` arrays (or None); and the
    line with a note on how far the points lay from it.
    """
    s0 = line.start_station
    extra = [(np.array([f.station for f in project.fittings]) - s0, al.FITTING),
             (np.array([o.station for o in project.offtakes if o.station is not None]
                       + [sc.fire_station for sc in project.scenarios
                          if sc.fire_station is not None]) - s0, al.OFFTAKE),
             (np.array([b for sec in project.sections for b in (sec.start, sec.end)]) - s0,
              al.SECTION)]
    layers = [o for o in project.offtakes if o.path is not None]
    located = None
    if layers:
        extra, located, line = _offtake_layers(layers, extra, line)
    if project.pipe is not None:  # the pipe will be designed: its joints are stations
        L = project.design.joint_length
        # a full pipe length centred on each crossing, its joints equidistant from
        # the crossed feature (Ten States Standards, from memory)
        centred = np.concatenate([np.asarray(crossings, float) - L / 2,
                                  np.asarray(crossings, float) + L / 2])
        anchors = np.concatenate([line.vertex_stations, centred] + [e[0] for e in extra])
        extra.append((np.r_[joint_stations(anchors, line.length, L), centred], al.JOINT))
    # pressure elements are stations, not joint anchors: a suggested element at
    # an existing station leaves the laid pipe as it was
    extra.append((np.array([e.station for e in project.pressure_elements]) - s0, al.ELEMENT))
    return extra, located, line


def joint_stations(anchors, length: float, joint_length: float) -> np.ndarray:
    """Stations (m from the line's start) of the pipe joints: one every
    ``joint_length`` from each anchor (the start, vertices, fittings, section
    ends), the length before the next anchor cut to fit.

    >>> joint_stations([0.0, 20.0], 30.0, 6.0).tolist()
    [6.0, 12.0, 18.0, 26.0]
    """
    a = np.unique(np.clip(np.r_[0.0, np.asarray(anchors, float), length], 0.0, length))
    gaps = np.diff(a)
    count = np.maximum(np.ceil(gaps / joint_length - 1e-9).astype(int) - 1, 0)
    start = np.repeat(a[:-1], count)
    k = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count) + 1
    return start + k * joint_length


def _offtake_layers(layers, extra, line):
    """Offtake point layers snapped to the line: (extra, located, line)."""
    s0 = line.start_station
    stations, flows, notes = [], [], []
    for o in layers:
        gdf, st, offset = al.locate_points(line, o.path, f"{o.key}.path", layer=o.layer)
        if o.flow_field not in gdf.columns:
            raise InputError(f"{o.key}.flow_field = {o.flow_field!r}: no such attribute in "
                             f"{o.path.name} (has {', '.join(c for c in gdf.columns if c != 'geometry')})")
        q = pd.to_numeric(gdf[o.flow_field], errors="coerce").to_numpy(dtype=float)
        bad = ~np.isfinite(q) | (q < 0)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"{o.key}.flow_field: feature {i} of {o.path.name} has "
                             f"{o.flow_field} = {gdf[o.flow_field].iloc[i]!r}, not a flow >= 0")
        stations.append(st)
        flows.append(q * o.flow_factor)
        if len(st):
            k = int(np.argmax(offset))
            from .display import token

            notes.append(f"{o.key}: {len(st)} offtake points from {o.path.name} snapped to the "
                         f"line; farthest {token(offset[k], 'length', 1)} away (station "
                         f"{token(st[k] + s0, 'station')})")
    st, q = np.concatenate(stations), np.concatenate(flows)
    extra.append((st, al.OFFTAKE))
    line = replace(line, notes=line.notes + tuple(notes))
    return extra, (st + s0, q), line


def stage_pipe(project, table: pd.DataFrame) -> pd.DataFrame:
    """Pipe data per station.

    Adds ``inside_diameter_m, outside_diameter_m, roughness_m, hw_c,
    rating_pa, fitting_k, offtake_m3_s``. A station carries the data of the
    pipe that leaves it (the last station: of the pipe that reaches it), so
    the design stage lays each section at its own outside diameter.
    ``fitting_k`` sums the K of the fittings at a station; ``offtake_m3_s``
    the base-case flow leaving there (point-layer offtakes are already in
    the column from the alignment stage).
    """
    pipe, secs = project.pipe, project.sections
    station = table["station_m"].to_numpy(dtype=float)
    starts, ends = [s.start for s in secs], [s.end for s in secs]

    def per_station(attr, default):
        return segment_values(station, starts, ends, [getattr(s, attr) for s in secs], default)[1]

    inside = per_station("inside_diameter", pipe.inside_diameter)
    outside = per_station("outside_diameter", pipe.outside_diameter)
    if np.any(outside < inside):
        i = int(np.argmax(outside < inside))
        raise InputError(f"[[sections]]: outside diameter {outside[i] * 1e3:g} mm is smaller than "
                         f"the inside diameter {inside[i] * 1e3:g} mm at station {station[i]:g} m "
                         "(give both diameters in a section that changes one)")
    for sec in secs:  # ends inside the line must be stations; beyond it, the line's end holds
        for value, which in ((sec.start, "from"), (sec.end, "to")):
            if station[0] < value < station[-1]:
                station_index(station, value, f"{sec.key}.{which}")
    fitting_k = np.zeros(len(station))
    for f in project.fittings:
        fitting_k[station_index(station, f.station, f"{f.key}.station")] += f.k
    offtake = (table["offtake_m3_s"].to_numpy(dtype=float).copy() if "offtake_m3_s" in table
               else np.zeros(len(station)))
    for o in project.offtakes:
        if o.station is not None:
            offtake[station_index(station, o.station, f"{o.key}.station")] += o.flow
    return table.assign(
        inside_diameter_m=inside, outside_diameter_m=outside,
        roughness_m=per_station("roughness", pipe.roughness),
        hw_c=per_station("hazen_williams_c", pipe.hazen_williams_c),
        rating_pa=per_station("pressure_rating", pipe.pressure_rating),
        fitting_k=fitting_k, offtake_m3_s=offtake,
    )
