"""Chemical formulas: the atoms they hold, and the molar masses on record.

The core does no atomic-weight arithmetic. Every formula it converts with is
stored beside its molar mass in g/mol: the solutes weighed into fluids in
``species_data/solutes.csv`` and the other substances (the lab analytes and
anhydrous and hydrous glucose) in ``species_data/molar_masses.csv``. The masses
were computed from the formulas with the molmass package (IUPAC standard atomic
weights) and rounded to 0.0001 g/mol; the tests recompute each one from its
formula with molmass and with periodictable, so a wrong mass or a wrong formula
fails there rather than reaching a plan.

Formulas are written the molmass way: element symbols with counts, parentheses for
groups, water of hydration after a dot (``CaCl2.2H2O``). :func:`formula_atoms`
counts the atoms so a solute's ions can be checked against its formula.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from functools import cache
from pathlib import Path
from types import MappingProxyType

from vetfluid.common.csvfiles import unique_rows
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.paths import resource_dir

# The 118 element symbols named by IUPAC, in order of atomic number.
ELEMENT_SYMBOLS = frozenset(
    """
    H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge
    As Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm
    Eu Gd Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U
    Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh Fl Mc Lv Ts Og
    """.split()
)

MOLAR_MASS_COLUMNS = ("formula", "name", "molar_mass_g_per_mol", "note")
MOLAR_MASS_FILE = "molar_masses.csv"

_TOKEN = re.compile(r"([A-Z][a-z]?)|(\()|(\))|([0-9]+)")
_TOKENS_ONLY = re.compile(r"(?:[A-Z][a-z]?|\(|\)|[0-9]+)+")
_HYDRATE = re.compile(r"([0-9]*)(.*)")
_FORMULA_FIX = (
    "write element symbols with their counts, water of hydration after a dot, e.g. CaCl2.2H2O"
)


def _unreadable(formula: object) -> InputError:
    return InputError(
        f"cannot read chemical formula {formula!r}",
        field="formula",
        value=formula,
        fix=_FORMULA_FIX,
    )


def _count(digits: str, formula: str) -> int:
    if digits.startswith("0"):  # a zero count, or a leading zero, is a typing slip
        raise _unreadable(formula)
    return int(digits)


def _add(into: dict[str, int], atoms: Mapping[str, int], times: int = 1) -> None:
    for symbol, count in atoms.items():
        into[symbol] = into.get(symbol, 0) + count * times


def _part_atoms(text: str, formula: str) -> dict[str, int]:
    """Atoms of one dot-separated part without its leading multiplier (``H2O``, ``Ca(OH)2``)."""
    if not _TOKENS_ONLY.fullmatch(text):
        raise _unreadable(formula)
    stack: list[dict[str, int]] = [{}]
    last: Mapping[str, int] | None = None  # what a count written next multiplies
    for symbol, opening, closing, digits in _TOKEN.findall(text):
        if digits:
            if last is None:
                raise _unreadable(formula)
            _add(stack[-1], last, _count(digits, formula) - 1)  # `last` is already counted once
            last = None
        elif symbol:
            if symbol not in ELEMENT_SYMBOLS:
                raise InputError(
                    f"{symbol!r} in {formula!r} is not an element symbol",
                    field="formula",
                    value=formula,
                    fix=_FORMULA_FIX,
                )
            _add(stack[-1], {symbol: 1})
            last = {symbol: 1}
        elif opening:
            stack.append({})
            last = None
        elif closing:
            group = stack.pop() if len(stack) > 1 else {}
            if not group:  # an unmatched or empty pair of parentheses
                raise _unreadable(formula)
            _add(stack[-1], group)
            last = group
    if len(stack) != 1 or not stack[0]:
        raise _unreadable(formula)
    return stack[0]


def formula_atoms(formula: str) -> Mapping[str, int]:
    """Atoms per formula unit, by element symbol: ``"CaCl2.2H2O"`` → Ca 1, Cl 2, H 4, O 2.

    Method: each dot-separated part (``2H2O``) is its leading whole number (default 1)
    times the atoms of the rest; a count after a symbol or a closing parenthesis
    multiplies it. Unknown symbols and malformed text raise :class:`InputError`.
    """
    if not isinstance(formula, str) or not formula:
        raise _unreadable(formula)
    atoms: dict[str, int] = {}
    for part in formula.split("."):
        match = _HYDRATE.fullmatch(part)
        if match is None or not match.group(2):
            raise _unreadable(formula)
        times = _count(match.group(1), formula) if match.group(1) else 1
        _add(atoms, _part_atoms(match.group(2), formula), times)
    return MappingProxyType(atoms)


def parse_molar_mass(text: str, *, location: str) -> float:
    """A ``molar_mass_g_per_mol`` cell: a finite number of g/mol above zero, else an error.

    A missing mass is an error, never a default: the caller's formula would be converted
    with a mass nobody checked.
    """
    fix = "write the formula's molar mass in g/mol as molmass gives it, e.g. 58.4427 for NaCl"
    if not text:
        raise SpeciesDataError("molar_mass_g_per_mol is missing", location=location, fix=fix)
    try:
        mass = float(text)
    except ValueError:
        mass = math.nan
    if not math.isfinite(mass) or mass <= 0:
        raise SpeciesDataError(
            f"molar_mass_g_per_mol {text!r} is not a number above zero", location=location, fix=fix
        )
    return mass


@cache
def load_molar_masses(data_dir: Path | None = None) -> Mapping[str, float]:
    """Molar masses (g/mol) by formula from ``molar_masses.csv`` (shipped, or ``data_dir``).

    Each formula must be readable (:func:`formula_atoms`) and listed once; bad rows raise
    :class:`SpeciesDataError` naming ``file:line`` and the fix. Cached, read-only.
    """
    path = (data_dir or resource_dir("species_data")) / MOLAR_MASS_FILE
    if not path.is_file():
        raise SpeciesDataError(
            f"file missing from {path.parent}",
            location=MOLAR_MASS_FILE,
            fix=f"add {MOLAR_MASS_FILE} to the folder",
        )
    masses: dict[str, float] = {}
    for location, row in unique_rows(path, MOLAR_MASS_COLUMNS, key="formula", what="formula"):
        formula = row["formula"]
        try:
            formula_atoms(formula)
        except InputError as exc:
            raise SpeciesDataError(exc.message, location=location, fix=exc.fix) from exc
        masses[formula] = parse_molar_mass(row["molar_mass_g_per_mol"], location=location)
    return MappingProxyType(masses)


def molar_mass_g_per_mol(formula: str) -> float:
    """Molar mass (g/mol) of a formula, as recorded in the shipped ``molar_masses.csv``.

    The value was computed with molmass from IUPAC standard atomic weights (module
    docstring). A formula not on record raises :class:`InputError`: nothing is computed
    or guessed here.
    """
    masses = load_molar_masses()
    if formula not in masses:
        raise InputError(
            f"no molar mass on record for formula {formula!r}",
            field="formula",
            value=formula,
            fix=f"add the formula and its molar mass to species_data/{MOLAR_MASS_FILE} "
            f"(on record: {', '.join(masses)})",
        )
    return masses[formula]
