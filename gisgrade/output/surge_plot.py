"""The surge screening envelope on the profile sheet's pressure strip (one
call from :mod:`gisgrade.output.plot`)."""
from __future__ import annotations

import numpy as np

from ..display import ATMOSPHERE

#: The envelope's look, of our own choosing.
ENVELOPE = dict(color="#8c2d5a", alpha=0.12, lw=0)
ENVELOPE_EDGE = dict(color="#8c2d5a", lw=0.8, ls=(0, (3, 2)))
RATING = dict(color="#5b2a86", lw=0.9, ls=(0, (4, 1, 1, 1)))


def draw_surge(axp, result, s, pa) -> None:
    """Shade, on the pressure strip ``axp``, the surge envelope of the
    scenario with the largest head change (``pa``: Pa to the display unit),
    below a vacuum shown at the vacuum, with the pipe's rating beside it;
    called a screening. Call it after the strip is drawn."""
    surge = getattr(result, "surge", None)
    if surge is None or not np.any(surge.head_change > 0):
        return
    i = int(np.argmax(surge.head_change.max(axis=1)))
    vacuum = -pa(ATMOSPHERE)
    p_max = pa(surge.pressure_max[i])
    p_min = np.maximum(pa(surge.pressure_min[i]), vacuum)
    axp.fill_between(s, p_min, p_max, **ENVELOPE,
                     label=f"surge envelope, {surge.names[i]} (screening)")
    axp.plot(s, p_max, **ENVELOPE_EDGE)
    t = result.table
    lo, hi = axp.get_ylim()
    top = max(hi, 1.08 * float(np.max(p_max)))
    if "rating_pa" in t and np.isfinite(t["rating_pa"]).any():
        if not any(line.get_label() == "pipe rating" for line in axp.get_lines()):
            for text in [x for x in axp.texts if x.get_text().startswith("pipe rating")]:
                text.remove()
            rating = pa(t["rating_pa"].to_numpy(dtype=float))
            if np.nanmin(rating) <= 1.5 * top:
                axp.step(s, rating, where="post", label="pipe rating", **RATING)
                top = max(top, 1.08 * float(np.nanmax(rating)))
        if np.any(surge.allowance > 0):
            axp.step(s, pa(t["rating_pa"].to_numpy(dtype=float) + surge.allowance), where="post",
                     label="rating + surge allowance", **{**RATING, "lw": 0.6})
    axp.set_ylim(min(lo, vacuum * 1.15), top)
    axp.legend(loc="upper left", bbox_to_anchor=(1.005, 1.0), fontsize=7, framealpha=0.9)
