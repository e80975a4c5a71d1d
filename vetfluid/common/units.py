"""Units: body weight with a unit, and laboratory unit conversions.

Conversions use exact definitions (1 lb = 0.45359237 kg, international
avoirdupois pound, 1959 agreement) and the molar mass of each analyte's formula as
recorded in ``species_data/molar_masses.csv`` (computed with molmass from IUPAC
standard atomic weights and checked by the tests against molmass and periodictable;
:mod:`vetfluid.common.chemistry`): glucose C6H12O6, urea CH4N2O, urea nitrogen as N2 (BUN
counts the two N of urea), creatinine C4H7N3O.
"""

from __future__ import annotations

import math
import re

from vetfluid.common.checks import require_number
from vetfluid.common.chemistry import molar_mass_g_per_mol
from vetfluid.common.errors import InputError
from vetfluid.common.formatting import entered_number

KG_PER_LB = 0.45359237
_WEIGHT_UNITS = {"g": 1e-3, "kg": 1.0, "lb": KG_PER_LB, "lbs": KG_PER_LB, "mg": 1e-6}
_WEIGHT_PATTERN = re.compile(r"^\s*([0-9]*[.,]?[0-9]+(?:[eE][-+]?[0-9]+)?)\s*([a-zA-Z]*)\s*$")


_THOUSANDS_OR_DECIMAL = re.compile(r"[-+]?[1-9]\d{0,2},\d{3}")  # "0,500" is 0.5: no group starts 0


def _not_ambiguous(digits: str, text: object, field: str, unit: str = "") -> None:
    """ "1,500" may mean 1500 (thousands) or 1.5 (decimal comma): never guess."""
    if _THOUSANDS_OR_DECIMAL.fullmatch(digits):
        plain, decimal = digits.replace(",", ""), digits.replace(",", ".")
        raise InputError(
            "this number is ambiguous",
            field=field,
            value=text,
            fix=f"write {plain} or {decimal}{unit}, without a thousands separator",
        )


def _plain_digits(text: object, field: str) -> None:
    """Numbers are typed with the digits 0–9 only. Python reads other scripts' digits
    (``٢٠``, ``２０``) and ``1_000`` as numbers; a clinic keyboard seldom types them, so one
    that arrives is a paste or a slip, refused everywhere rather than read in some places."""
    if any(ch == "_" or (ch.isdigit() and ch not in "0123456789") for ch in str(text)):
        raise InputError(
            "a number must be written with the digits 0–9",
            field=field, value=text, fix="retype it with the digits 0–9 and a decimal point",
        )  # fmt: skip


def read_number(text: str, *, field: str = "value") -> float:
    """A number that must be given (:func:`read_decimal`, never empty): for the command
    line's options, so every typed number follows the same rules."""
    number = read_decimal(text, field=field)
    if number is None:
        raise InputError("a number is needed here", field=field, value=text, fix="e.g. 7.5")
    return number


def read_whole_number(text: str, *, field: str = "value") -> int:
    """A whole number typed with the digits 0–9 (``3``; never ``3.5`` or ``٣``)."""
    _plain_digits(text, field)
    cleaned = str(text).strip()
    if not re.fullmatch(r"[-+]?[0-9]+", cleaned):
        raise InputError("not a whole number", field=field, value=text, fix="e.g. 3")
    return int(cleaned)


def read_decimal(text: str, *, field: str = "value") -> float | None:
    """The number typed in a field (a decimal comma is accepted: ``7,5`` is 7.5), None
    when empty. ``1,500`` is refused as ambiguous (thousands or decimal?), never guessed."""
    cleaned = str(text).strip()
    if not cleaned:
        return None
    _plain_digits(text, field)
    _not_ambiguous(cleaned, text, field)
    try:
        number = float(cleaned.replace(",", "."))
    except ValueError:
        number = math.nan  # "abc" and "nan" get the same message
    if not math.isfinite(number):
        raise InputError("not a number", field=field, value=text, fix="type digits, e.g. 7.5")
    return number


def parse_weight_kg(text: str | float | int, *, default_unit: str | None = None) -> float:
    """Body weight in kg from text such as ``"350 g"``, ``"0.35 kg"``, ``"4.2 lb"``, ``"20kg"``.

    A bare number needs ``default_unit``; without one it is an error, never a
    silent guess (the gram/kilogram slip is a classic dosing error).
    """
    if isinstance(text, bool):
        raise InputError("weight must be a number with a unit", field="weight", value=text)
    if isinstance(text, int | float):
        if default_unit is None:
            raise InputError(
                "weight needs a unit",
                field="weight",
                value=text,
                fix='write e.g. "350 g" or "20 kg"',
            )
        text = f"{text} {default_unit}"
    _plain_digits(text, "weight")
    match = _WEIGHT_PATTERN.match(str(text))
    if not match:
        raise InputError(
            "cannot read this weight",
            field="weight",
            value=text,
            fix='write a number and a unit, e.g. "350 g", "0.35 kg", "4.2 lb"',
        )
    digits = match.group(1)
    _not_ambiguous(digits, text, "weight", " with its unit")
    number = float(digits.replace(",", "."))
    unit = (match.group(2) or default_unit or "").lower()
    if not unit:
        raise InputError(
            "weight needs a unit", field="weight", value=text, fix='write e.g. "350 g" or "20 kg"'
        )
    if unit not in _WEIGHT_UNITS:
        raise InputError(
            f"unknown weight unit {unit!r}",
            field="weight",
            value=text,
            fix=f"use one of: {', '.join(sorted(_WEIGHT_UNITS))}",
        )
    kg = number * _WEIGHT_UNITS[unit]
    if not math.isfinite(kg) or kg <= 0:
        raise InputError("weight must be more than zero", field="weight", value=text)
    return kg


WEIGHT_UNITS = ("g", "kg", "lb")


def weight_in_unit(weight_kg: float, unit: str) -> float:
    """A weight in kg expressed in g, kg or lb (for showing it in the unit the user chose)."""
    if unit not in WEIGHT_UNITS:
        raise InputError(
            f"unknown weight unit {unit!r}", field="unit", value=unit, fix=", ".join(WEIGHT_UNITS)
        )
    return require_number(weight_kg, "weight_kg", low=0) / _WEIGHT_UNITS[unit]


def preferred_weight_unit(typical_weight_kg: float) -> str:
    """g for patients usually under 1 kg (a 65 g gerbil reads better than 0.065 kg), else kg."""
    return "g" if typical_weight_kg < 1.0 else "kg"


# Lab analytes: the formula whose molar mass (molar_masses.csv) converts mmol/L to mg/dL.
_ANALYTE_FORMULA = {
    "glucose": "C6H12O6",
    "urea": "CH4N2O",
    "bun": "N2",  # blood urea *nitrogen*: mg of N per dL, two N per urea
    "creatinine": "C4H7N3O",
}


def _analyte_mass(analyte: str) -> float:
    """Molar mass (g/mol) of a lab analyte's formula, from molar_masses.csv."""
    key = analyte.lower()
    if key not in _ANALYTE_FORMULA:
        raise InputError(
            f"unknown analyte {analyte!r}",
            field="analyte",
            value=analyte,
            fix=f"use one of: {', '.join(_ANALYTE_FORMULA)}",
        )
    return molar_mass_g_per_mol(_ANALYTE_FORMULA[key])


def _concentration(value: float) -> float:
    return require_number(value, "concentration", low=0)


def mmol_per_l_to_mg_per_dl(value: float, analyte: str) -> float:
    """mmol/L → mg/dL: multiply by molar mass (g/mol) and divide by 10 (L → dL, g → mg)."""
    return _concentration(value) * _analyte_mass(analyte) / 10.0


def mg_per_dl_to_mmol_per_l(value: float, analyte: str) -> float:
    """mg/dL → mmol/L, the inverse of :func:`mmol_per_l_to_mg_per_dl`."""
    return _concentration(value) * 10.0 / _analyte_mass(analyte)


def mg_per_dl_to_umol_per_l(value: float, analyte: str) -> float:
    """mg/dL → µmol/L (creatinine is usually reported in µmol/L)."""
    return mg_per_dl_to_mmol_per_l(value, analyte) * 1000.0


def umol_per_l_to_mg_per_dl(value: float, analyte: str) -> float:
    """µmol/L → mg/dL."""
    return mmol_per_l_to_mg_per_dl(_concentration(value) / 1000.0, analyte)


def weight_text(weight_kg: float, unit: str) -> str:
    """A body weight in ``unit`` (g, kg or lb) with all its figures: ``65 g``, ``117 g``,
    ``24 kg``, ``4.25 kg``. Never rounded to fewer figures than it has (up to
    :data:`vetfluid.common.formatting.WEIGHT_SIGNIFICANT_FIGURES`): a weight that is rounded is
    a different weight. A unit that is not a weight unit raises InputError."""
    if isinstance(weight_kg, bool) or not isinstance(weight_kg, int | float):
        raise InputError("the weight is not a number", field="weight_kg", value=weight_kg)
    if not math.isfinite(weight_kg):
        raise InputError("cannot print a weight that is not finite", field="weight_kg",
                         value=weight_kg)  # fmt: skip
    return f"{entered_number(weight_in_unit(weight_kg, unit))} {unit}"
