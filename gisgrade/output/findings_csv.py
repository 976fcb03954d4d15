"""``findings.csv``: the station ranges that fail a check."""
from __future__ import annotations

from ..findings import COLUMNS
from . import writer


@writer("findings.csv", applies=lambda result: result.findings is not None)
def write_findings(result, folder, display):
    result.findings[COLUMNS].to_csv(folder / "findings.csv", index=False, float_format="%.4f")
