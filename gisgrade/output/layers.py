"""Map layers in one GeoPackage (``layers.gpkg``), in the working CRS.

- ``pipe_pieces``: one line per pair of consecutive stations, carrying the
  lowest and highest pressure of each scenario and a display colour (hex) for
  the first flow scenario's lowest pressure, from the perceptual, colour-vision
  friendly *cividis* colormap (Nuñez et al. 2018);
- ``crossings``: one point per crossing with required and achieved clearance;
- ``fittings``: one point per vertical bend fitting (angle, sag or crest);
- ``stations``: one point per station with ground, pipe and cover.

The ground-only run (``gisgrade profile``) writes ``crossings`` and
``stations`` without the pipe columns.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import shapely

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
    t = result.table
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
    first_flow = None
    for name, g in result.gradelines.groupby("scenario", sort=False):
        p = g["pressure_kpa"].to_numpy()
        data[f"{name}_pmin_kpa"] = np.minimum(p[:-1], p[1:])
        data[f"{name}_pmax_kpa"] = np.maximum(p[:-1], p[1:])
        if first_flow is None and (g["flow_m3_s"].to_numpy() > 0).any():
            first_flow = name
    first_flow = first_flow or result.gradelines["scenario"].iloc[0]
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
    if "top_m" in t.columns:  # at the point of the footprint where clearance is least
        clearance, governing, top = governing_point(result)
        frame["governing_station_m"] = governing
        frame["top_of_pipe_m"] = top
        frame["clearance_achieved_m"] = clearance
    frame["geometry"] = shapely.points(c.x, c.y)
    return frame


def fittings_points(result) -> "pd.DataFrame":
    f = result.bends
    frame = f.drop(columns=["x", "y"]).copy()
    frame["geometry"] = shapely.points(f["x"].to_numpy(), f["y"].to_numpy())
    return frame


def clearance_achieved(result) -> np.ndarray:
    """Least vertical separation at each crossing (m); see :func:`governing_point`."""
    return governing_point(result)[0]


def governing_point(result):
    """Vertical separation between the outsides at each crossing (m), the
    least over the feature's footprint (its centre and the two edges where
    the pipe enters and leaves it), with the station and top of pipe where it
    is least: under a feature, its bottom minus the top of pipe; over it, the
    pipe's bottom (top minus outside diameter) minus the feature's top.
    Returns ``(clearance, station, top)`` arrays."""
    c, t = result.crossings, result.table
    s = t["station_m"].to_numpy()
    r = c.reach()
    at = np.stack([c.station - r, c.station, c.station + r])
    top = np.interp(at, s, t["top_m"].to_numpy())
    od_col = "outside_diameter_m" if "outside_diameter_m" in t else None
    od = (np.interp(c.station, s, t[od_col].to_numpy()) if od_col
          else result.project.pipe.outside_diameter)
    ground = np.interp(c.station, s, t["ground_m"].to_numpy())
    feature_top = np.where(np.isfinite(c.size), c.top, ground - c.depth)
    over = c.side == "over"
    k = np.where(over, top.argmin(axis=0), top.argmax(axis=0))  # the governing point
    cols = np.arange(len(c))
    top_k = top[k, cols]
    clearance = np.where(over, top_k - od - feature_top, c.bottom - top_k)
    return clearance, at[k, cols], top_k


def station_points(result) -> "pd.DataFrame":
    t = result.table
    cols = [c for c in ("station_m", "ground_m", "ground_band_m", "ground_bridged", "top_m",
                        "axis_m", "invert_m", "cover_m", "kind") if c in t.columns]
    frame = t[cols].copy()
    frame["geometry"] = shapely.points(t["x"].to_numpy(), t["y"].to_numpy())
    return frame


def write_layers(result, folder: Path) -> None:
    import geopandas as gpd

    path = folder / "layers.gpkg"
    crs = result.alignment.crs
    layers = {}
    if result.gradelines is not None:
        layers["pipe_pieces"] = pipe_pieces(result)
    if result.bends is not None:
        layers["fittings"] = fittings_points(result)
    layers["crossings"] = crossing_points(result)
    layers["stations"] = station_points(result)
    for i, (name, frame) in enumerate(layers.items()):
        gdf = gpd.GeoDataFrame(frame, geometry="geometry", crs=crs)
        kind = "LineString" if name == "pipe_pieces" else "Point"  # declared even when empty
        gdf.to_file(path, layer=name, driver="GPKG", engine="pyogrio",
                    mode="w" if i == 0 else "a", geometry_type=kind)
