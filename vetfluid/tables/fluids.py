"""The fluid library: solutes and fluids as data, composition computed from molar masses.

A fluid is written the pharmacopoeial way — grams of each solute per litre (the
USP–NF monographs give e.g. lactated Ringer's per 100 mL) — in
``species_data/fluids.csv``; its solutes, their molecular formulas and what one
formula unit gives in solution are in ``species_data/solutes.csv``. Every mmol/L,
mEq/L and mOsm/L is computed here from the grams per litre and each solute's molar
mass (the ``molar_mass_g_per_mol`` column, computed from the formula with molmass and
checked by the tests against molmass and periodictable; see :mod:`vetfluid.common.chemistry`),
never typed in, so the numbers printed on fluid labels are checks in the tests rather
than inputs.

What happens to a solute in the body (``metabolised`` in solutes.csv):

- ``no`` — stays in the extracellular fluid as given (Na+, K+, Cl−, Ca2+, Mg2+).
- ``yes`` — the whole solute is taken up and oxidised (glucose → CO2 + water), so
  it stops counting as an effective osmole and leaves free water behind.
- ``anion_to_bicarbonate`` — the organic anion (lactate, acetate, gluconate) is
  metabolised and each of its charges is replaced by one bicarbonate; the sodium
  stays. One anion becomes one anion, so the effective osmoles are unchanged:
  lactated Ringer's stays near isotonic in vivo while 5% dextrose becomes free water.

The CSVs are read with the ``csv`` module (not pandas) so the CLI starts fast.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cache, lru_cache
from pathlib import Path
from types import MappingProxyType

from vetfluid.common import paths
from vetfluid.common.checks import require_number
from vetfluid.common.chemistry import formula_atoms, molar_mass_g_per_mol, parse_molar_mass
from vetfluid.common.csvfiles import parse_number, read_rows, unique_rows
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.formatting import format_number, format_quantity
from vetfluid.tables.limits import limit
from vetfluid.tables.species import BASES

KINDS = ("crystalloid", "colloid", "additive_concentrate")
METABOLISED = ("no", "yes", "anion_to_bicarbonate")
TONICITY_CLASSES = ("hypotonic", "isotonic", "hypertonic")

# Label convention: 3.4 kcal per g of dextrose *hydrous* (USP-labelled 5% dextrose,
# 50 g hydrous/L, states 170 kcal/L).
KCAL_PER_G_DEXTROSE_HYDROUS = 3.4
GLUCOSE_FORMULA = "C6H12O6"
DEXTROSE_HYDROUS_FORMULA = "C6H12O6.H2O"
KCL_CONCENTRATE_ID = "kcl_2_meq_per_ml"
DEXTROSE_CONCENTRATE_ID = "dextrose_50"


def additive_volumes(
    bag_ml: float, *, kcl_mmol_per_l: float, dextrose_percent: float
) -> tuple[float, float]:
    """What a nurse adds to a bag of ``bag_ml``: the KCl concentrate for ``kcl_mmol_per_l``
    per litre of the fluid (2 mEq/mL: 28 mmol/L is 14 mL a litre, 7 mL in 500 mL), then the
    50 % dextrose that makes the whole bag ``dextrose_percent`` w/v, the KCl's volume
    included: x = (bag + KCl) × wanted ÷ (strength − wanted) (2.5 % from 50 % in a litre
    with 10 mL of KCl: 1010 × 2.5 ÷ 47.5 = 53.2 mL). Returns (KCl mL, dextrose mL); the
    plan's litre and every label use it."""
    kcl_ml = 0.0
    if kcl_mmol_per_l > 0:
        per_ml = composition(fluid(KCL_CONCENTRATE_ID)).k_mmol_per_l / 1000.0
        kcl_ml = kcl_mmol_per_l * bag_ml / 1000.0 / per_ml
    dextrose_ml = 0.0
    if dextrose_percent > 0:
        strength = composition(fluid(DEXTROSE_CONCENTRATE_ID)).dextrose_hydrous_g_per_l / 10.0
        if dextrose_percent >= strength:
            raise InputError(
                f"dextrose must be below the concentrate's {strength:g} %",
                field="dextrose_percent", value=dextrose_percent,
            )  # fmt: skip
        dextrose_ml = (bag_ml + kcl_ml) * dextrose_percent / (strength - dextrose_percent)
    return kcl_ml, dextrose_ml


# Ion spelling in solutes.csv → (Composition key, charge). Charges are chemistry.
_ION_TOKENS: dict[str, tuple[str, int]] = {
    "Na+": ("na", 1),
    "K+": ("k", 1),
    "Cl-": ("cl", -1),
    "Ca2+": ("ca", 2),
    "Mg2+": ("mg", 2),
    "lactate-": ("lactate", -1),
    "acetate-": ("acetate", -1),
    "gluconate-": ("gluconate", -1),
    "glucose": ("glucose", 0),
}
ION_CHARGE: Mapping[str, int] = MappingProxyType(dict(_ION_TOKENS.values()))
ION_KEYS = tuple(ION_CHARGE)
_ION_ELEMENT = {"na": "Na", "k": "K", "cl": "Cl", "ca": "Ca", "mg": "Mg"}
_BICARBONATE_PRECURSORS = frozenset({"lactate", "acetate", "gluconate"})
_ID_PATTERN = re.compile(r"^[a-z0-9_]+$")

SOLUTE_COLUMNS = (
    "solute_id", "name", "formula", "molar_mass_g_per_mol", "ions", "metabolised", "note",
)  # fmt: skip
FLUID_COLUMNS = ("fluid_id", "name", "kind", "solute_id", "g_per_l", "source_id", "basis", "note")
COLLOID_COLUMNS = (
    "fluid_id", "colloid", "g_per_l", "volume_half_life_h", "source_id", "basis", "note",
)  # fmt: skip


def _check_id(value: str, name: str) -> None:
    if not isinstance(value, str) or not _ID_PATTERN.match(value):
        raise InputError(
            "an id must be lower-case letters, digits and underscores",
            field=name,
            value=value,
            fix="write e.g. nacl_0_9",
        )


def _check_number(value: float, name: str, *, positive: bool) -> float:
    return require_number(value, name, low=0, positive=positive)


@dataclass(frozen=True, kw_only=True)
class Solute:
    """One salt or sugar as weighed into a fluid.

    ``formula`` is written with its water of hydration (``CaCl2.2H2O``) and
    ``molar_mass_g_per_mol`` is the molar mass of that formula, so it is the mass of
    the substance actually weighed (stored data, computed with molmass from IUPAC
    standard atomic weights; :mod:`vetfluid.common.chemistry`). ``ions`` is what one formula
    unit gives in solution, as (ion key, count) with keys from :data:`ION_KEYS`;
    ``metabolised`` is one of :data:`METABOLISED` (module docstring).
    """

    solute_id: str
    name: str
    formula: str
    molar_mass_g_per_mol: float
    ions: tuple[tuple[str, int], ...]
    metabolised: str = "no"
    note: str = field(default="", repr=False)

    def __post_init__(self) -> None:
        _check_id(self.solute_id, "solute_id")
        atoms = formula_atoms(self.formula)  # raises InputError if the formula is unreadable
        mass = require_number(
            self.molar_mass_g_per_mol,
            "molar_mass_g_per_mol",
            positive=True,
            fix=f"give the molar mass of {self.formula} in g/mol",
        )
        object.__setattr__(self, "molar_mass_g_per_mol", mass)
        if not self.ions:
            raise InputError("a solute needs at least one ion or molecule", field="ions")
        seen: set[str] = set()
        for key, count in self.ions:
            if key not in ION_CHARGE:
                raise InputError(
                    f"unknown ion {key!r}",
                    field="ions",
                    value=key,
                    fix=f"use: {', '.join(ION_KEYS)}",
                )
            if key in seen:
                raise InputError(f"ion {key!r} listed twice", field="ions", value=key)
            seen.add(key)
            if isinstance(count, bool) or not isinstance(count, int) or count <= 0:
                raise InputError(
                    "ion count must be a whole number above zero", field="ions", value=count
                )
        charge = sum(ION_CHARGE[key] * count for key, count in self.ions)
        if charge != 0:
            raise InputError(
                f"ions of {self.formula} carry a net charge of {charge:+d}",
                field="ions",
                value=self.ions,
                fix="list every ion with its count so the charges balance",
            )
        self._check_elements(atoms)
        if self.metabolised not in METABOLISED:
            raise InputError(
                "unknown metabolic fate",
                field="metabolised",
                value=self.metabolised,
                fix=f"use one of: {', '.join(METABOLISED)}",
            )
        if self.metabolised == "anion_to_bicarbonate" and not seen & _BICARBONATE_PRECURSORS:
            raise InputError(
                "anion_to_bicarbonate needs a lactate, acetate or gluconate ion",
                field="metabolised",
                value=self.metabolised,
                fix="list the lactate, acetate or gluconate ion in ions, or set metabolised to no",
            )

    def _check_elements(self, atoms: Mapping[str, int]) -> None:
        # Catches a wrong count (Cl-:1 for CaCl2) or an ion absent from the formula.
        listed = dict(self.ions)
        for key, element in _ION_ELEMENT.items():
            if listed.get(key, 0) != atoms.get(element, 0):
                raise InputError(
                    f"{self.formula} has {atoms.get(element, 0)} {element} "
                    f"but the ions give {listed.get(key, 0)}",
                    field="ions",
                    value=self.ions,
                    fix="make the ions match the formula",
                )

    @property
    def effective_osmoles_per_unit(self) -> int:
        """Osmoles that stay effective in vivo per formula unit (see module docstring)."""
        if self.metabolised == "yes":
            return 0
        # anion_to_bicarbonate: each precursor charge becomes one HCO3−, so the count holds
        return sum(
            count * abs(ION_CHARGE[key]) if key in _BICARBONATE_PRECURSORS else count
            for key, count in self.ions
        )


@dataclass(frozen=True, kw_only=True)
class SoluteAmount:
    """A solute at ``g_per_l`` grams (as weighed, hydrate included) per litre of fluid."""

    solute: Solute
    g_per_l: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "g_per_l", _check_number(self.g_per_l, "g_per_l", positive=False))


@dataclass(frozen=True, kw_only=True)
class Colloid:
    """The large molecule of a colloid fluid, which holds water in the plasma.

    It adds no effective osmoles of its own (a few mOsm/L at most); the course model
    keeps the volume it holds in the plasma and lets it go with
    ``volume_half_life_h`` (``docs/model.md``). ``basis`` as for fluids.
    """

    name: str
    g_per_l: float
    volume_half_life_h: float
    basis: str
    source_id: str = ""
    note: str = field(default="", repr=False)

    def __post_init__(self) -> None:
        _check_number(self.g_per_l, "g_per_l", positive=True)
        _check_number(self.volume_half_life_h, "volume_half_life_h", positive=True)
        if self.basis not in BASES:
            raise InputError("unknown basis", field="basis", value=self.basis)
        if self.basis == "published" and not self.source_id:
            raise InputError("a published value needs its source", field="source_id")


@dataclass(frozen=True, kw_only=True)
class Fluid:
    """A fluid as its formula: solutes in g/L, with the basis of that formula.

    ``basis`` is ``published`` (formula checked against ``source_id``), ``memory``
    (recalled, unverified — show it as such) or ``derived`` (computed, e.g. a bag
    with an additive; ``note`` says from what).
    """

    fluid_id: str
    name: str
    kind: str
    solutes: tuple[SoluteAmount, ...]
    basis: str
    source_id: str = ""
    note: str = field(default="", repr=False)
    colloid: Colloid | None = None

    def __post_init__(self) -> None:
        if not self.fluid_id:
            raise InputError("a fluid needs an id", field="fluid_id", value=self.fluid_id)
        if self.kind not in KINDS:
            raise InputError(
                "unknown kind of fluid",
                field="kind",
                value=self.kind,
                fix=f"use: {', '.join(KINDS)}",
            )
        if self.basis not in BASES:
            raise InputError(
                "unknown basis", field="basis", value=self.basis, fix=f"use: {', '.join(BASES)}"
            )
        if self.basis == "published" and not self.source_id:
            raise InputError(
                "a published formula needs its source",
                field="source_id",
                value=self.source_id,
                fix="give the source_id, or mark the basis memory",
            )
        if (self.kind == "colloid") != (self.colloid is not None):
            raise InputError(
                "a colloid fluid, and only a colloid fluid, names its colloid",
                field="colloid",
                value=self.fluid_id,
                fix="add or remove its row in colloids.csv",
            )
        ids = [amount.solute.solute_id for amount in self.solutes]
        duplicates = sorted({solute_id for solute_id in ids if ids.count(solute_id) > 1})
        if duplicates:
            raise InputError(
                f"solute listed twice: {', '.join(duplicates)}",
                field="solutes",
                value=duplicates,
                fix="give each solute once, with its total g/L",
            )

    def g_per_l(self, solute_id: str) -> float:
        """Grams per litre of one solute (0 if the fluid has none)."""
        return sum(a.g_per_l for a in self.solutes if a.solute.solute_id == solute_id)


def _check_fluid(value: object, name: str) -> None:
    if not isinstance(value, Fluid):
        raise InputError(
            "expected a fluid", field=name, value=value, fix="look it up with fluids.fluid(id)"
        )


@dataclass(frozen=True, kw_only=True)
class Composition:
    """What a fluid contains, per litre, computed from its formula.

    mmol/L per ion assumes complete dissociation. ``dextrose_g_per_l`` is
    *anhydrous* glucose (C6H12O6); :attr:`dextrose_hydrous_g_per_l` is the
    monohydrate equivalent that labels state. ``osmolarity_mosm_per_l`` is the
    calculated (ideal) osmolarity, the sum of all particles as labels print it;
    ``effective_osmolarity_mosm_per_l`` leaves out what the body clears (glucose).
    ``kcal_per_l`` is from dextrose only, at 3.4 kcal/g hydrous (label convention).
    """

    fluid_id: str
    na_mmol_per_l: float
    k_mmol_per_l: float
    cl_mmol_per_l: float
    ca_mmol_per_l: float
    mg_mmol_per_l: float
    lactate_mmol_per_l: float
    acetate_mmol_per_l: float
    gluconate_mmol_per_l: float
    glucose_mmol_per_l: float
    dextrose_g_per_l: float
    osmolarity_mosm_per_l: float
    effective_osmolarity_mosm_per_l: float
    kcal_per_l: float

    def mmol_per_l(self, ion: str) -> float:
        """mmol/L of one ion by key (``"na"``, ``"ca"``, ``"glucose"`` …)."""
        if ion not in ION_CHARGE:
            raise InputError(
                f"unknown ion {ion!r}", field="ion", value=ion, fix=f"use: {', '.join(ION_KEYS)}"
            )
        return getattr(self, f"{ion}_mmol_per_l")

    def meq_per_l(self, ion: str) -> float:
        """mEq/L of one ion: mmol/L × |charge| (0 for uncharged glucose)."""
        return self.mmol_per_l(ion) * abs(ION_CHARGE[ion])

    @property
    def cations_meq_per_l(self) -> float:
        """Sum of cation mEq/L."""
        return sum(self.meq_per_l(ion) for ion in ION_KEYS if ION_CHARGE[ion] > 0)

    @property
    def anions_meq_per_l(self) -> float:
        """Sum of anion mEq/L (equals the cations for any real fluid)."""
        return sum(self.meq_per_l(ion) for ion in ION_KEYS if ION_CHARGE[ion] < 0)

    @property
    def dextrose_hydrous_g_per_l(self) -> float:
        """Dextrose as the monohydrate (the way labels state strength), g/L."""
        return self.glucose_mmol_per_l * molar_mass_g_per_mol(DEXTROSE_HYDROUS_FORMULA) / 1000


def composition(fluid: Fluid) -> Composition:
    """Composition of a fluid from its formula.

    Method: mmol/L of each solute = g/L ÷ molar mass (g/mol) × 1000 (the solute's
    stored molar mass, from IUPAC standard atomic weights); each ion = solute mmol/L ×
    ions per formula unit; osmolarity = sum of all particles (ideal dissociation, the
    way labels calculate it); effective osmolarity = the same less solutes the body
    clears; energy = dextrose hydrous g/L × 3.4 kcal/g (label convention).
    """
    _check_fluid(fluid, "fluid")
    return _composition(fluid)


@lru_cache(maxsize=256)  # fluids are frozen; plans ask for the same few many times
def _composition(fluid: Fluid) -> Composition:
    mmol = dict.fromkeys(ION_KEYS, 0.0)
    osmolarity = 0.0
    effective = 0.0
    for amount in fluid.solutes:
        solute_mmol = amount.g_per_l / amount.solute.molar_mass_g_per_mol * 1000
        for key, count in amount.solute.ions:
            mmol[key] += solute_mmol * count
            osmolarity += solute_mmol * count
        effective += solute_mmol * amount.solute.effective_osmoles_per_unit
    glucose_mmol = mmol["glucose"]
    hydrous_g = glucose_mmol * molar_mass_g_per_mol(DEXTROSE_HYDROUS_FORMULA) / 1000
    return Composition(
        fluid_id=fluid.fluid_id,
        **{f"{key}_mmol_per_l": value for key, value in mmol.items()},
        dextrose_g_per_l=glucose_mmol * molar_mass_g_per_mol(GLUCOSE_FORMULA) / 1000,
        osmolarity_mosm_per_l=osmolarity,
        effective_osmolarity_mosm_per_l=effective,
        kcal_per_l=hydrous_g * KCAL_PER_G_DEXTROSE_HYDROUS,
    )


@dataclass(frozen=True, kw_only=True)
class Tonicity:
    """A fluid's tonicity against the patient's plasma, in the bag and in the body.

    Ratios are fluid osmolarity ÷ plasma osmolality; a class is ``isotonic`` when
    the ratio is within ``band_fraction`` of 1. Word it with :func:`tonicity_words` and
    explain the band with :func:`tonicity_band_text`; nothing else words tonicity.
    """

    fluid_id: str
    plasma_osmolality_mosm_per_kg: float
    band_fraction: float
    in_vitro_ratio: float
    effective_ratio: float
    in_vitro_class: str
    effective_class: str


# In the bag a fluid is only more or less concentrated than plasma (osmotic words); what
# it does to cells once given is its tonicity (what the body cannot clear stays).
_IN_THE_BAG_WORDS = {
    "hypotonic": "hypo-osmotic",
    "isotonic": "iso-osmotic",
    "hypertonic": "hyperosmotic",
}


def _tonicity_class(ratio: float, band_fraction: float) -> str:
    if ratio < 1 - band_fraction:
        return "hypotonic"
    if ratio > 1 + band_fraction:
        return "hypertonic"
    return "isotonic"


def tonicity(
    fluid: Fluid, *, plasma_osmolality_mosm_per_kg: float, band_fraction: float | None = None
) -> Tonicity:
    """Classify a fluid as hypotonic, isotonic or hypertonic for this patient.

    In vitro uses the calculated osmolarity (all particles); effective uses what
    remains once the body clears metabolised solutes, so 5% dextrose is free water.
    Method: the bedside convention of comparing calculated osmolarity (mOsm/L,
    ideal dissociation) with plasma osmolality (mOsm/kg); ideal dissociation
    overstates a salt's real osmolality, so treat results near a band edge as such.

    The band is one rule for every species: ``tonicity_band_fraction`` in
    ``species_data/safety_limits.csv`` (±20 %, common practice, no source) of the
    species' own plasma osmolality, used unless ``band_fraction`` is given. It is the
    narrowest round band in which the replacement crystalloids (lactated Ringer's
    273, 0.9 % NaCl 308 mOsm/L) read isotonic against every plasma on record
    (290–327 mOsm/kg) while 0.45 % NaCl (154) stays hypotonic. A published
    classification against human plasma (280–295 mOsm/kg) draws its lines at
    < 250 and ≥ 375 mOsm/L and calls 5 % dextrose isosmotic in the bag but hypotonic
    once given ("IV Fluid Safety", Hospital Pharmacy Technician's Letter, Therapeutic
    Research Center, 2016, updated 2025).
    """
    plasma = _check_number(
        plasma_osmolality_mosm_per_kg, "plasma_osmolality_mosm_per_kg", positive=True
    )
    if band_fraction is None:  # the band is data, with its basis (safety_limits.csv)
        band_fraction = limit("tonicity_band_fraction").value
    band = _check_number(band_fraction, "band_fraction", positive=True)
    if band >= 1:
        raise InputError(
            "band must be a fraction below 1",
            field="band_fraction",
            value=band_fraction,
            fix="e.g. 0.2 for ±20%",
        )
    result = composition(fluid)
    in_vitro = result.osmolarity_mosm_per_l / plasma
    effective = result.effective_osmolarity_mosm_per_l / plasma
    return Tonicity(
        fluid_id=fluid.fluid_id,
        plasma_osmolality_mosm_per_kg=plasma,
        band_fraction=band,
        in_vitro_ratio=in_vitro,
        effective_ratio=effective,
        in_vitro_class=_tonicity_class(in_vitro, band),
        effective_class=_tonicity_class(effective, band),
    )


def _check_tonicity(value: object) -> Tonicity:
    if not isinstance(value, Tonicity):
        raise InputError(
            "expected a fluid's tonicity",
            field="tonicity",
            value=value,
            fix="classify the fluid with fluids.tonicity(fluid, plasma_osmolality_mosm_per_kg=…)",
        )
    return value


def _burnt_away(tone: Tonicity) -> bool:
    """Whether part of the fluid stops counting once given (glucose taken up and burnt)."""
    return not math.isclose(tone.in_vitro_ratio, tone.effective_ratio, rel_tol=1e-9)


def tonicity_words(tone: Tonicity) -> str:
    """The one wording of a fluid's tonicity, for the totals, the CLI, the sheet and notes.

    A fluid that stays as given reads as its class ("isotonic"); one that loses solute
    once given says both, in the bag by osmolality and in the body by tonicity
    ("iso-osmotic in the bag, hypotonic in the body once its glucose is used").
    """
    tone = _check_tonicity(tone)
    if not _burnt_away(tone):
        return tone.effective_class
    return (
        f"{_IN_THE_BAG_WORDS[tone.in_vitro_class]} in the bag, "
        f"{tone.effective_class} in the body once its glucose is used"
    )


def tonicity_band_text(tone: Tonicity) -> str:
    """What the tonicity words mean for this patient, short enough to show on hover."""
    tone = _check_tonicity(tone)
    plasma = tone.plasma_osmolality_mosm_per_kg
    low = format_number(plasma * (1 - tone.band_fraction))
    high = format_number(plasma * (1 + tone.band_fraction))
    text = (
        f"Isotonic here means within ±{tone.band_fraction * 100:g} % of this patient's plasma "
        f"osmolality ({format_quantity(plasma, 'mOsm/kg')}): {low}–{high} mOsm/L calculated "
        "(every particle counted, fully dissociated); below is hypotonic, above hypertonic. "
        "The band is common practice, no source."
    )
    if _burnt_away(tone):
        text += (
            " In the bag every particle counts; in the body glucose does not: cells take it up "
            "and burn it, leaving free water."
        )
    return text


# --- loading species_data/solutes.csv and fluids.csv ---------------------------------


def _csv_file(folder: Path | None, name: str) -> Path:
    if folder is None:
        return paths.resource_file("species_data", name)
    path = Path(folder) / name
    if not path.is_file():
        raise SpeciesDataError(
            f"file missing from {folder}", location=name, fix=f"add {name} to the folder"
        )
    return path


def _read_rows(path: Path, columns: tuple[str, ...]) -> list[tuple[str, dict[str, str]]]:
    rows = read_rows(path, columns)
    if not rows:
        raise SpeciesDataError("no rows", location=f"{path.name}:1", fix="add at least one row")
    return rows


def _parse_ions(text: str) -> tuple[tuple[str, int], ...]:
    ions = []
    for part in filter(None, (piece.strip() for piece in text.split(";"))):
        token, _, count = part.partition(":")
        token = token.strip()
        if token not in _ION_TOKENS:
            raise InputError(
                f"unknown ion {token!r}",
                field="ions",
                value=token,
                fix=f"use: {', '.join(_ION_TOKENS)}",
            )
        if not count.strip().isdigit():
            raise InputError(
                f"ion count {count.strip()!r} is not a whole number",
                field="ions",
                value=part,
                fix="write e.g. Ca2+:1;Cl-:2",
            )
        ions.append((_ION_TOKENS[token][0], int(count)))
    return tuple(ions)


def _located(error: InputError, location: str) -> SpeciesDataError:
    """An error from a value object, placed at the CSV line that caused it."""
    detail = f"{error.field}: {error.message}" if error.field else error.message
    return SpeciesDataError(detail, location=location, fix=error.fix)


def _load_solutes(path: Path) -> Mapping[str, Solute]:
    solutes: dict[str, Solute] = {}
    for location, row in unique_rows(path, SOLUTE_COLUMNS, key="solute_id", what="solute"):
        solute_id = row["solute_id"]
        try:
            solutes[solute_id] = Solute(
                solute_id=solute_id,
                name=row["name"],
                formula=row["formula"],
                molar_mass_g_per_mol=parse_molar_mass(
                    row["molar_mass_g_per_mol"], location=location
                ),
                ions=_parse_ions(row["ions"]),
                metabolised=row["metabolised"],
                note=row["note"],
            )
        except InputError as exc:
            raise _located(exc, location) from exc
    return MappingProxyType(solutes)


def _parse_g_per_l(text: str, location: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or value <= 0:
        raise SpeciesDataError(
            f"g_per_l {text!r} is not a number above zero",
            location=location,
            fix="write grams per litre as a plain number, e.g. 9 or 0.3",
        )
    return value


def _known_sources(folder: Path | None) -> frozenset[str] | None:
    """Source ids in sources.csv beside the fluids, or None when there is no such file."""
    directory = paths.resource_dir("species_data") if folder is None else Path(folder)
    path = directory / "sources.csv"
    if not path.is_file():
        return None
    return frozenset(row["source_id"] for _, row in _read_rows(path, ("source_id",)))


_FLUID_LEVEL = ("name", "kind", "source_id", "basis")


def _load_colloids(path: Path, sources: frozenset[str] | None) -> dict[str, Colloid]:
    colloids: dict[str, Colloid] = {}
    for location, row in _read_rows(path, COLLOID_COLUMNS):
        if row["fluid_id"] in colloids:
            raise SpeciesDataError(f"{row['fluid_id']} is listed twice", location=location)
        if sources is not None and row["source_id"] and row["source_id"] not in sources:
            raise SpeciesDataError(f"unknown source_id {row['source_id']!r}", location=location)
        try:
            colloids[row["fluid_id"]] = Colloid(
                name=row["colloid"],
                g_per_l=_parse_g_per_l(row["g_per_l"], location),
                volume_half_life_h=parse_number(
                    row["volume_half_life_h"], location=location, column="volume_half_life_h"
                ),
                basis=row["basis"],
                source_id=row["source_id"],
                note=row["note"],
            )
        except InputError as exc:
            raise _located(exc, location) from exc
    return colloids


def _load_fluids(
    path: Path,
    solutes: Mapping[str, Solute],
    sources: frozenset[str] | None,
    colloids: Mapping[str, Colloid],
) -> Mapping[str, Fluid]:
    groups: dict[str, list[tuple[str, dict[str, str]]]] = {}
    seen: dict[tuple[str, str], str] = {}
    for location, row in _read_rows(path, FLUID_COLUMNS):
        fluid_id, solute_id = row["fluid_id"], row["solute_id"]
        try:
            _check_id(fluid_id, "fluid_id")
        except InputError as exc:
            raise _located(exc, location) from exc
        if solute_id not in solutes:
            raise SpeciesDataError(
                f"unknown solute {solute_id!r}",
                location=location,
                fix=f"use one of {', '.join(solutes)} or add it to solutes.csv",
            )
        if (fluid_id, solute_id) in seen:
            raise SpeciesDataError(
                f"{fluid_id} lists {solute_id} again (first at {seen[fluid_id, solute_id]})",
                location=location,
                fix="give each solute once per fluid, with its total g/L",
            )
        seen[fluid_id, solute_id] = location
        if sources is not None and row["source_id"] and row["source_id"] not in sources:
            raise SpeciesDataError(
                f"unknown source_id {row['source_id']!r}",
                location=location,
                fix="add it to sources.csv or correct the id",
            )
        first = groups.setdefault(fluid_id, [(location, row)])[0][1]
        for column in _FLUID_LEVEL:
            if row[column] != first[column]:
                raise SpeciesDataError(
                    f"{column} {row[column]!r} differs from {first[column]!r} "
                    f"given earlier for {fluid_id}",
                    location=location,
                    fix=f"every row of one fluid must have the same {column}",
                )
        if row is not first:
            groups[fluid_id].append((location, row))

    fluids: dict[str, Fluid] = {}
    for fluid_id, rows in groups.items():
        location, first = rows[0]
        notes = [row["note"] for _, row in rows if row["note"]]
        try:
            amounts = tuple(
                SoluteAmount(
                    solute=solutes[row["solute_id"]],
                    g_per_l=_parse_g_per_l(row["g_per_l"], where),
                )
                for where, row in rows
            )
            fluids[fluid_id] = Fluid(
                fluid_id=fluid_id,
                name=first["name"],
                kind=first["kind"],
                solutes=amounts,
                basis=first["basis"],
                source_id=first["source_id"],
                note="; ".join(dict.fromkeys(notes)),
                colloid=colloids.get(fluid_id),
            )
        except InputError as exc:
            raise _located(exc, location) from exc
    unused = sorted(set(colloids) - set(fluids))
    if unused:
        raise SpeciesDataError(
            f"colloids.csv names fluids that fluids.csv lacks: {', '.join(unused)}",
            location=str(path),
            fix="add the fluid (its carrier solutes) to fluids.csv",
        )
    return MappingProxyType(fluids)


@cache
def _load(folder: Path | None) -> tuple[Mapping[str, Solute], Mapping[str, Fluid]]:
    solutes = _load_solutes(_csv_file(folder, "solutes.csv"))
    sources = _known_sources(folder)
    # colloids.csv is optional, so a folder of crystalloids alone (tests) still loads
    directory = paths.resource_dir("species_data") if folder is None else Path(folder)
    colloid_file = directory / "colloids.csv"
    colloids = _load_colloids(colloid_file, sources) if colloid_file.is_file() else {}
    fluids = _load_fluids(_csv_file(folder, "fluids.csv"), solutes, sources, colloids)
    return solutes, fluids


def _folder_key(folder: Path | str | None) -> Path | None:
    return None if folder is None else Path(folder).resolve()


def load_solutes(folder: Path | str | None = None) -> Mapping[str, Solute]:
    """The solutes by id from ``solutes.csv`` (shipped species_data/, or ``folder``). Cached."""
    return _load(_folder_key(folder))[0]


def load_fluids(folder: Path | str | None = None) -> Mapping[str, Fluid]:
    """The fluid library by id from ``fluids.csv`` and ``solutes.csv``. Cached, read-only.

    ``folder`` replaces the shipped ``species_data/`` (tests pass ``tmp_path``). Bad
    rows raise :class:`SpeciesDataError` naming ``file:line`` and the fix.
    """
    return _load(_folder_key(folder))[1]


def _find(fluid_id: str, folder: Path | str | None) -> Fluid:
    library = load_fluids(folder)
    if fluid_id not in library:
        raise InputError(
            f"unknown fluid {fluid_id!r}",
            field="fluid",
            value=fluid_id,
            # the ids are what one types (CLI, plan files); each beside the name on its bag
            fix="fluid ids you can type: "
            + ", ".join(f"{i} ({library[i].name})" for i in sorted(library)),
        )
    return library[fluid_id]


def fluid(fluid_id: str, *, folder: Path | str | None = None) -> Fluid:
    """One fluid by id; an unknown id raises :class:`InputError` listing the known ones."""
    return _find(fluid_id, folder)


# --- mixing: additives in a bag --------------------------------------------------------


@dataclass(frozen=True, kw_only=True)
class Mixture:
    """A bag after an additive: the mixed solution as a :class:`Fluid` and its volume."""

    fluid: Fluid
    volume_ml: float
    bag_volume_ml: float
    additive_ml: float

    @property
    def composition(self) -> Composition:
        """Composition of the mixed solution."""
        return composition(self.fluid)


def with_additive(
    fluid: Fluid, *, bag_volume_ml: float, additive: Fluid, additive_ml: float
) -> Mixture:
    """The solution made by adding ``additive_ml`` of ``additive`` to a bag of ``fluid``.

    Method: mass balance per solute, g/L = (g/L bag × V bag + g/L additive × V added)
    ÷ (V bag + V added), taking volumes as additive (the usual bedside assumption).
    The result's basis is ``memory`` if either input is memory, else ``derived``.
    """
    _check_fluid(fluid, "fluid")
    _check_fluid(additive, "additive")
    bag_ml = _check_number(bag_volume_ml, "bag_volume_ml", positive=True)
    added_ml = _check_number(additive_ml, "additive_ml", positive=False)
    total_ml = bag_ml + added_ml
    solutes: dict[str, Solute] = {}
    grams: dict[str, float] = {}
    for source, volume_ml in ((fluid, bag_ml), (additive, added_ml)):
        for amount in source.solutes:
            solute_id = amount.solute.solute_id
            if solutes.setdefault(solute_id, amount.solute) != amount.solute:
                raise InputError(
                    f"the two fluids define solute {solute_id!r} differently",
                    field="additive",
                    value=additive.fluid_id,
                    fix="take both fluids from the same library",
                )
            grams[solute_id] = grams.get(solute_id, 0.0) + amount.g_per_l * volume_ml / 1000
    basis = "memory" if "memory" in (fluid.basis, additive.basis) else "derived"
    bag_text = format_quantity(bag_ml, "mL")
    added_text = format_quantity(added_ml, "mL")
    mixed = Fluid(
        fluid_id=f"{fluid.fluid_id}+{additive.fluid_id}",
        name=f"{fluid.name} {bag_text} + {additive.name} {added_text}",
        kind=fluid.kind,
        solutes=tuple(
            SoluteAmount(solute=solutes[key], g_per_l=grams[key] * 1000 / total_ml) for key in grams
        ),
        basis=basis,
        note=(
            f"{bag_text} {fluid.fluid_id} ({fluid.basis}) + {added_text} "
            f"{additive.fluid_id} ({additive.basis}); volumes taken as additive"
        ),
        colloid=None
        if fluid.colloid is None
        else replace(fluid.colloid, g_per_l=fluid.colloid.g_per_l * bag_ml / total_ml),
    )
    return Mixture(fluid=mixed, volume_ml=total_ml, bag_volume_ml=bag_ml, additive_ml=added_ml)


@dataclass(frozen=True, kw_only=True)
class PotassiumAddition:
    """How much KCl concentrate to add to a bag, and the bag that results."""

    concentrate_ml: float
    potassium_mmol: float
    mixture: Mixture

    @property
    def final_k_mmol_per_l(self) -> float:
        """K in the mixed bag, mmol/L (equals the target)."""
        return self.mixture.composition.k_mmol_per_l


def add_kcl_to_bag(
    fluid: Fluid,
    *,
    bag_volume_ml: float,
    target_k_mmol_per_l: float,
    concentrate: Fluid | None = None,
) -> PotassiumAddition:
    """mL of KCl concentrate that bring a bag to ``target_k_mmol_per_l``.

    Method: exact mass balance, counting the K already in the bag and the volume
    the concentrate adds: (k_bag·V + c·x) ÷ (V + x) = target, so
    x = V·(target − k_bag) ÷ (c − target). ``concentrate`` defaults to the
    library's 2 mEq/mL KCl, whose K (c) is computed from its 149 g/L formula.
    """
    bag_ml = _check_number(bag_volume_ml, "bag_volume_ml", positive=True)
    target = _check_number(target_k_mmol_per_l, "target_k_mmol_per_l", positive=False)
    if concentrate is None:
        concentrate = _find(KCL_CONCENTRATE_ID, None)
    _check_fluid(fluid, "fluid")
    _check_fluid(concentrate, "concentrate")
    in_bag = composition(fluid).k_mmol_per_l
    in_concentrate = composition(concentrate).k_mmol_per_l
    if target < in_bag:
        raise InputError(
            f"the bag already holds {format_quantity(in_bag, 'mmol/L')} K, above the target",
            field="target_k_mmol_per_l",
            value=target_k_mmol_per_l,
            fix="adding KCl cannot lower K: choose a target at or above the bag's K, "
            "or a fluid with less K",
        )
    if target >= in_concentrate:
        raise InputError(
            f"the concentrate holds {format_quantity(in_concentrate, 'mmol/L')} K",
            field="target_k_mmol_per_l",
            value=target_k_mmol_per_l,
            fix="choose a target below the concentrate's K",
        )
    concentrate_ml = bag_ml * (target - in_bag) / (in_concentrate - target)
    mixture = with_additive(
        fluid, bag_volume_ml=bag_ml, additive=concentrate, additive_ml=concentrate_ml
    )
    return PotassiumAddition(
        concentrate_ml=concentrate_ml,
        potassium_mmol=in_concentrate * concentrate_ml / 1000,
        mixture=mixture,
    )
