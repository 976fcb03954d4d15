"""Tables to CSV by a columnar path (Arrow's CSV writer).

Writing a station table with pandas' ``to_csv`` formats every value in
Python; Arrow's writer formats whole columns in C++, several times faster
on long lines (``benchmarks/bench_run.py``). Floats are rounded to a fixed
number of decimals first and written in their shortest round-trip form
(``12.5``, not ``12.500000``), so the same inputs give byte-identical files.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

__all__ = ["write_csv"]


def write_csv(frame, path, decimals: int | None = 6) -> Path:
    """Write the DataFrame ``frame`` to ``path`` (no index); floats rounded to
    ``decimals`` (None: as they are); NaN and None as empty fields.

    >>> import pandas as pd, tempfile, os
    >>> p = os.path.join(tempfile.mkdtemp(), "t.csv")
    >>> _ = write_csv(pd.DataFrame({"a": [1.23456789, float("nan")], "b": ["x", "y, z"]}), p, 3)
    >>> print(open(p).read())
    "a","b"
    1.235,"x"
    ,"y, z"
    <BLANKLINE>
    """
    import pyarrow as pa
    import pandas as pd
    import pyarrow.csv as pacsv

    columns = {}
    for name in frame.columns:
        col = frame[name]
        values = col.to_numpy()
        if values.dtype.kind == "f":
            if decimals is not None:
                values = np.round(values, decimals) + 0.0  # + 0.0: no "-0"
            columns[str(name)] = pa.array(values, from_pandas=True)
        elif values.dtype.kind in "iub":
            columns[str(name)] = pa.array(values)
        elif pd.api.types.infer_dtype(values, skipna=True) in ("string", "empty"):  # text, whole
            columns[str(name)] = pa.array(values, type=pa.string(), from_pandas=True)
        else:  # objects mixing numbers, text and None
            columns[str(name)] = _object_column(values, decimals)
    table = pa.table(columns)
    pacsv.write_csv(table, str(path))
    return Path(path)


def _object_column(values, decimals):
    import pyarrow as pa

    out = []
    for v in values:  # short columns only: per-route figures, findings, fittings (text: above)
        if v is None or (isinstance(v, float) and np.isnan(v)):
            out.append(None)
        elif isinstance(v, (float, np.floating)):
            out.append(str(round(float(v), decimals) + 0.0 if decimals is not None else float(v)))
        else:
            out.append(str(v))
    return pa.array(out, type=pa.string())
