"""Numbers printed the safe way.

Safe-number rules for medication orders (the trade's long-standing rules, e.g.
ISMP's list of error-prone abbreviations and dose designations): always a leading
zero (``0.5 mL``, never ``.5 mL``), never a trailing zero (``5 mL``, never
``5.0 mL``), the unit always shown, a space between number and unit.
Everything that shows a quantity — CLI, window, printed sheet — calls
:func:`format_quantity`.
"""

from __future__ import annotations

import math

from vetfluid.common.errors import InputError


def default_decimals(value: float) -> int:
    """Decimals that keep about three significant figures without false precision."""
    magnitude = abs(value)
    if magnitude >= 100:
        return 0
    if magnitude >= 10:
        return 1
    if magnitude >= 1:
        return 2
    if magnitude == 0:
        return 0
    # keep two significant figures for small volumes (0.035 mL)
    return min(8, 1 - math.floor(math.log10(magnitude)))


def format_number(value: float, *, decimals: int | None = None) -> str:
    """A number with a leading zero and no trailing zeros (``0.5``, ``5``, ``12.25``)."""
    if not math.isfinite(value):
        raise InputError("cannot format a number that is not finite", field="value", value=value)
    if decimals is not None and (isinstance(decimals, bool) or not 0 <= decimals <= 8):
        raise InputError("decimals must be 0 to 8", field="decimals", value=decimals)
    places = default_decimals(value) if decimals is None else decimals
    text = f"{value:.{places}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    if text in ("-0", ""):
        text = "0"
    return text


def format_quantity(value: float, unit: str, *, decimals: int | None = None) -> str:
    """A number with its unit, the safe way: ``format_quantity(0.5, "mL") == "0.5 mL"``."""
    if not unit:
        raise InputError("a quantity needs a unit", field="unit", value=unit)
    return f"{format_number(value, decimals=decimals)} {unit}"


# A weight is printed with every figure it has, up to this many significant figures (a
# 117 g gerbil is "117 g", never "0.12 kg"); more than any scale reads.
WEIGHT_SIGNIFICANT_FIGURES = 6


def entered_number(value: float) -> str:
    """A number someone entered (a weight, a lab value) with all its figures, up to
    :data:`WEIGHT_SIGNIFICANT_FIGURES`, the safe way (``146.5``, ``0.35``, never
    ``147`` or ``.35``): the fewest decimals that keep the value
    (117.00000000000001 is 117)."""
    if value == 0:
        return "0"
    most = max(0, min(8, WEIGHT_SIGNIFICANT_FIGURES - 1 - math.floor(math.log10(abs(value)))))
    decimals = next(
        (d for d in range(most) if abs(round(value, d) - value) <= 1e-9 * abs(value)), most
    )
    return format_number(value, decimals=decimals)


# A value the program worked out (basis ``derived``: a puppy's body water by its age, say)
# is shown to this many significant figures: its inputs carry no more.
DERIVED_SIGNIFICANT_FIGURES = 3


def table_value_text(value: float, *, basis: str) -> str:
    """A species value as the table, the Values-used tab and the CLI show it: a value on
    record with every figure it has (:func:`entered_number`: 0.0125 stays 0.0125), one
    worked out by the program to :data:`DERIVED_SIGNIFICANT_FIGURES` (0.723077 is 0.723)."""
    if basis != "derived" or value == 0:
        return entered_number(value)
    decimals = DERIVED_SIGNIFICANT_FIGURES - 1 - math.floor(math.log10(abs(value)))
    return format_number(value, decimals=max(0, min(8, decimals)))


def weeks_text(weeks: float) -> str:
    """An age in weeks in words: ``1 week``, ``0.5 weeks``, ``40 weeks``."""
    return f"{weeks:g} week" if weeks == 1 else f"{weeks:g} weeks"


def hour_text(hour: float) -> str:
    """An hour into a plan in words: "hour 9", or "hour 9 h 35 min" off the whole hour
    (never "hour 9.58333"), to the minute."""
    minutes = int(round(hour * 60.0))
    whole, rest = divmod(minutes, 60)
    return f"hour {whole}" if rest == 0 else f"hour {whole} h {rest:02d} min"
