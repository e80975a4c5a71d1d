"""Small numpy helpers the layers share."""

from __future__ import annotations

import numpy as np


def distinct_sorted(values: np.ndarray) -> np.ndarray:
    """The distinct values, sorted (what ``np.unique`` returns for a 1-D float array).

    Not ``np.unique``: its first call imports numpy's masked arrays, about 2 MiB of the
    window's memory, for what a sort and a comparison do."""
    ordered = np.sort(np.asarray(values, dtype=float).ravel())
    if not len(ordered):
        return ordered
    return ordered[np.concatenate(([True], np.diff(ordered) != 0))]
