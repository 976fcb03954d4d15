"""Small array helpers shared by the stages."""
from __future__ import annotations

import numpy as np


def runs(mask) -> np.ndarray:
    """First and last index (inclusive) of each run of True in ``mask``, as a (k, 2) array.

    >>> runs(np.array([0, 1, 1, 0, 1], dtype=bool)).tolist()
    [[1, 2], [4, 4]]
    >>> runs(np.zeros(3, dtype=bool)).shape
    (0, 2)
    """
    m = np.concatenate([[False], np.asarray(mask, dtype=bool), [False]])
    edges = np.flatnonzero(np.diff(m.astype(np.int8)))
    return edges.reshape(-1, 2) - np.array([0, 1])
