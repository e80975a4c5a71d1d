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


def linear_steps(start: float, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """x_0 = start, x_i = a_i·x_(i−1) + b_i, never below 0: in closed form,
    x_i = P_i·(x_0 + Σ b_j / P_j) with P_i = Π a_j, where that is safe (P stays far from
    underflow and x from 0); else step by step, holding x at 0 (an amount cannot be
    negative)."""
    product = np.cumprod(a)
    if product.size == 0 or (a > 0.0).all() and product[-1] > 1e-200:
        x = product * (start + np.cumsum(b / product))
        if (x >= 0.0).all():
            return np.concatenate(([start], x))
    values, x = [start], start
    for ai, bi in zip(a.tolist(), b.tolist(), strict=True):
        x = max(ai * x + bi, 0.0)
        values.append(x)
    return np.asarray(values)


def decaying_sum(added: list[float], keep: float) -> np.ndarray:
    """F_n = F_(n−1)·keep + added_n, stepped while anything is added, then in closed form."""
    size = len(added)
    last = max((i for i, a in enumerate(added) if a), default=-1)
    out = np.zeros(size)
    total = 0.0
    values = []
    for a in added[: last + 1]:
        total = total * keep + a
        values.append(total)
    out[: last + 1] = values
    if last + 1 < size:
        out[last + 1 :] = total * keep ** np.arange(1, size - last)
    return out
