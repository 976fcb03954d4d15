"""Map layers in one GeoPackage (``layers.gpkg``), in the working CRS.

- ``pipe_pieces``: one line per pair of consecutive stations, carrying the
  lowest and highest pressure of each scenario and a display colour (hex) for
  the first flow scenario's lowest pressure, from the perceptual, colour-vision
  friendly *cividis* colormap (Nuñez et al. 2018);
- ``crossings``: one point per crossing with required and achieved clearance;
- ``fittings``: one point per fitting: bends (vertical, horizontal,
  combined) and the given fittings, with their K;
- ``valves``: one point per air valve or drain, with its kind and reason;
- ``stations``: one point per station with ground, pipe and cover.

The ground-only run (``gisgrade profile``) writes ``crossings`` and
``stations`` without the pipe columns.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import shapely

from . import writer

#: Colormap for pressure colours on the pipe pieces.
PRESSURE_CMAP = "cividis"


def pressure_colours(values: np.ndarray, vmin: float, vmax: float) -> np.ndarray:
    """Hex colours (``#rrggbb``) for ``values`` on the pressure colormap.

    >>> pressure_colours(np.array([0.0, 1.0]), 0.0, 1.0).tolist()
    ['#00224e', '#fee838']
    """
    import matplotlib

    cmap = matplotlib.colormaps[PRESSURE_CMAP]
    span = vmax - vmin if vmax > vmin else 1.0
    rgba = cmap(np.clip((values - vmin) / span, 0.0, 1.0))
    rgb = np.round(rgba[:, :3] * 255).astype(int)
    return np.array([f"#{r:02x}{g:02x}{b:02x}" for r, g, b in rgb], dtype=object)


def pipe_pieces(result) -> "pd.DataFrame":
    """Attributes and geometry of the pipe pieces between stations."""
    t, g = result.table, result.grades
    s = t["station_m"].to_numpy()
    xy = t[["x", "y"]].to_numpy()
    geom = shapely.linestrings(np.stack([xy[:-1], xy[1:]], axis=1))
    cover = t["cover_m"].to_numpy()
    data = {
        "from_station_m": s[:-1], "to_station_m": s[1:],
        "length_m": np.diff(s),
        "grade_pct": np.diff(t["top_m"].to_numpy()) / np.diff(s) * 100.0,
        "cover_min_m": np.minimum(cover[:-1], cover[1:]),
    }
    for i, name in enumerate(g.names):
        p = g.pressure[i] / 1e3
        data[f"{name}_pmin_kpa"] = np.minimum(p[:-1], p[1:])
        data[f"{name}_pmax_kpa"] = np.maximum(p[:-1], p[1:])
    first_flow = g.names[(g.flowing or [0])[0]]
    pmin = data[f"{first_flow}_pmin_kpa"]
    data["colour_scenario"] = first_flow
    data["colour"] = pressure_colours(pmin, float(pmin.min()), float(pmin.max()))
    frame = pd.DataFrame(data)
    frame["geometry"] = geom
    return frame


def crossing_points(result) -> "pd.DataFrame":
    c = result.crossings
    t = result.table
    station = c.station
    frame = pd.DataFrame({
        "station_m": station, "name": c.name.astype(str), "layer": c.layer.astype(str),
        "side": c.side.astype(str), "angle_deg": c.angle_deg, "bottom_m": c.bottom,
        "size_m": c.size, "clearance_required_m": c.clearance,
        "ground_m": np.interp(station, t["station_m"], t["ground_m"]),
    })
    if result.clearances is not None:  # at the point of the footprint where clearance is least
        frame["governing_station_m"] = result.clearances.station
        frame["top_of_pipe_m"] = result.clearances.top
        frame["clearance_achieved_m"] = result.clearances.achieved
    frame["geometry"] = shapely.points(c.x, c.y)
    return frame


def fittings_points(result, display) -> "pd.DataFrame":
    from .fittings_csv import fittings_listing

    f = fittings_listing(result, display)
    frame = f.drop(columns=["x", "y"]).copy()
    frame["geometry"] = shapely.points(f["x"].to_numpy(float), f["y"].to_numpy(float))
    return frame


def valve_points(result) -> "pd.DataFrame":
    v = result.valves
    frame = v.drop(columns=["x", "y"]).copy()
    frame["geometry"] = shapely.points(v["x"].to_numpy(float), v["y"].to_numpy(float))
    return frame


def station_points(result) -> "pd.DataFrame":
    t = result.table
    cols = [c for c in ("station_m", "ground_m", "ground_band_m", "ground_bridged", "top_m",
                        "axis_m", "invert_m", "cover_m", "kind") if c in t.columns]
    frame = t[cols].copy()
    frame["geometry"] = shapely.points(t["x"].to_numpy(), t["y"].to_numpy())
    return frame


@writer("layers.gpkg")
def write_layers(result, folder: Path, display=None) -> None:
    import geopandas as gpd

    from ..display import display_of

    display = display or display_of(result.project)
    path = folder / "layers.gpkg"
    crs = result.alignment.crs
    layers = {}
    if result.grades is not None:
        layers["pipe_pieces"] = pipe_pieces(result)
    if result.bends is not None:
        layers["fittings"] = fittings_points(result, display)
    if result.valves is not None:
        layers["valves"] = valve_points(result)
    layers["crossings"] = crossing_points(result)
    layers["stations"] = station_points(result)
    for i, (name, frame) in enumerate(layers.items()):
        gdf = gpd.GeoDataFrame(frame, geometry="geometry", crs=crs)
        kind = "LineString" if name == "pipe_pieces" else "Point"  # declared even when empty
        gdf.to_file(path, layer=name, driver="GPKG", engine="pyogrio",
                    mode="w" if i == 0 else "a", geometry_type=kind)
