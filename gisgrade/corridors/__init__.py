"""Candidate routes from the terrain: least-cost corridors between a source
and a destination (``gisgrade corridors``, docs/corridors.md).

- :mod:`.cost`: the cost of a metre of route in each cell (pure functions);
- :mod:`.path`: least-cost paths, distinct alternatives, simplification;
- :mod:`.stage`: the edges: the DEM window, the layers on the grid, the
  hydraulics, and :func:`plan_corridors` that puts them together;
- :mod:`.figure`: the map of the corridors over a hillshade;
- :mod:`.compare`: the candidates run through the whole job.
"""
from .stage import CorridorResult, plan_corridors

__all__ = ["CorridorResult", "plan_corridors"]
