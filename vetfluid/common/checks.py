"""One way to check a number the user gave: a real, finite number in range, or an InputError."""

from __future__ import annotations

import math
from decimal import Decimal

from vetfluid.common.errors import InputError
from vetfluid.common.formatting import entered_number


def require_number(
    value: object,
    name: str,
    *,
    low: float | None = None,
    high: float | None = None,
    unit: str = "",
    positive: bool = False,
    fix: str | None = None,
) -> float:
    """``value`` as a float; bools, NaN, infinities and out-of-range values are refused.

    ``positive`` demands more than zero; ``low``/``high`` bound it inclusively.
    """
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise InputError(f"{name} must be a finite number", field=name, value=value, fix=fix)
    number = float(value)
    unit_text = f" {unit}" if unit else ""
    if positive and number <= 0:
        raise InputError(f"{name} must be more than 0{unit_text}", field=name, value=value, fix=fix)
    if (low is not None and number < low) or (high is not None and number > high):
        if low is not None and high is not None:
            bounds = f"between {low:g} and {high:g}{unit_text}"
        elif low is not None:
            bounds = f"at least {low:g}{unit_text}"
        else:
            bounds = f"at most {high:g}{unit_text}"
        raise InputError(f"{name} must be {bounds}", field=name, value=value, fix=fix)
    return number


# Bounds of any weight vetfluid plans for, from a 0.1 g hatchling to a 5 t animal: a
# sanity range for typing errors, not a clinical limit (each species' own range gives
# those as findings). Set by us, no source.
PATIENT_WEIGHT_KG = (1e-4, 5000.0)


def _plain(number: float) -> str:
    """A number as a person would write it: plain decimals with the figures it has, up to
    six (0.00005, not 5e-05; 24500; 6047.75, not the 6047.7470692100005 a conversion
    leaves); past a billion or under a millionth, where plain digits stop being readable,
    the short exponent form (1e+30)."""
    if number and not 1e-6 <= abs(number) < 1e9:
        return f"{number:g}"
    return entered_number(number)


def require_patient_weight(weight_kg: object, field: str = "weight_kg") -> float:
    """A body weight (kg) within :data:`PATIENT_WEIGHT_KG`; outside it the message names
    the weight in words and the likely slip (the unit), not the field's code."""
    number = require_number(
        weight_kg, field, fix="type the weight as a number with its unit (g, kg or lb)"
    )
    low, high = PATIENT_WEIGHT_KG
    if not low <= number <= high:
        shown = _plain(number)
        if low <= float(shown) <= high:  # rounded onto the range's edge: every figure it has
            shown = format(Decimal(f"{number:.12g}"), "f")  # past the edge, no conversion noise
        raise InputError(
            f"a weight of {shown} kg is beyond any patient vetfluid plans for "
            f"({low * 1000:g} g to {high:g} kg)",
            field=field,
            value=weight_kg,
            fix="check the number and its unit (g, kg or lb)",
        )
    return number
