"""``fittings.csv``: the bend fittings the pipe profile needs."""
from __future__ import annotations

from . import writer


@writer("fittings.csv", applies=lambda result: result.bends is not None)
def write_fittings(result, folder, display):
    result.bends.to_csv(folder / "fittings.csv", index=False, float_format="%.4f")
