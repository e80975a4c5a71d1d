"""Small numpy helpers the layers share."""

from __future__ import annotations

import numpy as np

from vetfluid.common.errors import InputError


def distinct_sorted(values: np.ndarray) -> np.ndarray:
    """The distinct values of finite numbers (hours), sorted as floats: what ``np.unique``
    returns for them. Anything not finite is refused (InputError): no hour is NaN or inf.

    Not ``np.unique``: its first call imports numpy's masked arrays, about 2 MiB of the
    window's memory, for what a sort and a comparison do."""
    ordered = np.sort(np.asarray(values, dtype=float).ravel())
    if not np.isfinite(ordered).all():
        raise InputError(
            "an hour that is not a finite number", field="hours", value=None,
            fix="check the plan's times",
        )  # fmt: skip
    if not len(ordered):
        return ordered
    return ordered[np.concatenate(([True], np.diff(ordered) != 0))]
