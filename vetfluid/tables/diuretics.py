"""The diuretics table (``species_data/diuretics.csv``): doses by drug, species and route,
and when each acts, every value with its source and basis.

One row per drug × species (or taxon group) × route; several rows for one such key give
the doses of different indications (furosemide by infusion: 0.66 mg/kg/h, Plumb; 1 mg/kg/h
in acute kidney injury, Kirk's). A species takes the rows of the nearest level of its
lineage that has any for the drug and route (the species itself, then its groups).

The dose is in the row's unit: mg/kg for a single dose, g/kg for mannitol, mg/kg/h for a
constant-rate infusion (route ``cri``). Onset, peak and duration (hours from the dose)
give the effect profile the course model uses (``docs/model.md``, "Diuretics"); a row
whose times are blank has a dose on record but no effect the course can model, and the
plan says so rather than guess.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from pathlib import Path

from vetfluid.common.csvfiles import parse_number, quoted, read_rows, require_choice
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.paths import resource_dir
from vetfluid.tables.species import SpeciesTable

CLASSES = ("loop", "thiazide", "potassium_sparing", "osmotic", "carbonic_anhydrase_inhibitor")
CLASS_WORDS = {
    "loop": "loop diuretic", "thiazide": "thiazide", "potassium_sparing": "potassium-sparing",
    "osmotic": "osmotic diuretic", "carbonic_anhydrase_inhibitor": "carbonic-anhydrase inhibitor",
}  # fmt: skip
ROUTES = ("iv", "im", "sc", "po", "cri")  # cri: a constant-rate infusion into a vein
ROUTE_WORDS = {"iv": "IV", "im": "IM", "sc": "SC", "po": "PO", "cri": "IV infusion"}
UNITS = ("mg/kg", "g/kg", "mg/kg/h")
BASES = ("published", "memory", "derived")
COLUMNS = ("drug_id", "drug", "class", "molar_mass_g_per_mol", "species_id", "route",
           "dose_low", "dose_high", "dose_unit", "dose_source_id", "dose_basis", "onset_h",
           "peak_h", "duration_h", "times_source_id", "times_basis", "note")  # fmt: skip


@dataclass(frozen=True, kw_only=True)
class DiureticRow:
    """One dose range on record, with when the drug acts by that route (hours from a dose;
    None where nothing is on record)."""

    drug_id: str
    drug_class: str
    species_id: str
    route: str
    dose_low: float
    dose_high: float
    dose_unit: str
    dose_source_id: str | None
    dose_basis: str
    onset_h: float | None
    peak_h: float | None
    duration_h: float | None
    times_source_id: str | None
    times_basis: str
    note: str
    location: str

    @property
    def has_times(self) -> bool:
        return self.peak_h is not None and self.duration_h is not None

    def range_text(self) -> str:
        """``2–6 mg/kg`` (or ``2 mg/kg`` for a single dose on record)."""
        low, high = f"{self.dose_low:g}", f"{self.dose_high:g}"
        return f"{low} {self.dose_unit}" if low == high else f"{low}–{high} {self.dose_unit}"


@dataclass(frozen=True, kw_only=True)
class Drug:
    drug_id: str
    name: str
    drug_class: str
    molar_mass_g_per_mol: float | None  # the osmotic drug's, for its osmoles
    rows: tuple[DiureticRow, ...]

    @property
    def routes(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(r.route for r in self.rows))

    def dose_unit(self, route: str) -> str:
        """The unit a dose by this route is given in (the table's)."""
        for row in self.rows:
            if row.route == route:
                return row.dose_unit
        raise InputError(
            f"{self.name} has no dose by the route {route!r} on record", field="diuretic route",
            value=route, fix=", ".join(self.routes),
        )  # fmt: skip


def _known(path: Path, column: str) -> frozenset[str]:
    return frozenset(row[column] for _, row in read_rows(path, (column,)))


def _number(row: dict[str, str], column: str, location: str) -> float | None:
    value = parse_number(row[column], location=location, column=column)
    if value is not None and value < 0:
        raise SpeciesDataError(f"{column} must not be negative", location=location)
    return value


def _row(row: dict[str, str], location: str, species: frozenset[str],
         sources: frozenset[str]) -> DiureticRow:  # fmt: skip
    drug_class = require_choice(row["class"], CLASSES, column="class", location=location)
    route = require_choice(row["route"], ROUTES, column="route", location=location)
    unit = require_choice(row["dose_unit"], UNITS, column="dose_unit", location=location)
    if (route == "cri") != (unit == "mg/kg/h"):
        raise SpeciesDataError(
            f"route {route} with dose_unit {unit}", location=location,
            fix="an infusion (cri) is dosed in mg/kg/h, every other route in mg/kg or g/kg",
        )  # fmt: skip
    if row["species_id"] not in species:
        raise SpeciesDataError(f"unknown species id {quoted(row['species_id'])}",
                               location=location, fix="use an id from species.csv")  # fmt: skip
    low, high = _number(row, "dose_low", location), _number(row, "dose_high", location)
    if low is None or high is None or low <= 0:
        raise SpeciesDataError("dose_low and dose_high must be numbers above 0",
                               location=location)  # fmt: skip
    if low > high:
        raise SpeciesDataError(f"dose_low {low:g} is above dose_high {high:g}", location=location)
    onset, peak, duration = (_number(row, c, location) for c in ("onset_h", "peak_h",
                                                                "duration_h"))  # fmt: skip
    if (peak is None) != (duration is None):
        raise SpeciesDataError("give peak_h and duration_h together, or neither",
                               location=location)  # fmt: skip
    if peak is not None and duration is not None and not (onset or 0.0) <= peak < duration:
        raise SpeciesDataError("times must run onset_h ≤ peak_h < duration_h", location=location)
    bases = {}
    for prefix in ("dose", "times"):
        basis = require_choice(row[f"{prefix}_basis"], BASES, column=f"{prefix}_basis",
                               location=location)  # fmt: skip
        source = row[f"{prefix}_source_id"] or None
        if source is not None and source not in sources:
            raise SpeciesDataError(f"unknown source_id {quoted(source)}", location=location,
                                   fix="add it to sources.csv")  # fmt: skip
        if basis == "published" and source is None:
            raise SpeciesDataError(f"a published {prefix} needs a {prefix}_source_id",
                                   location=location)  # fmt: skip
        if basis == "derived" and not row["note"]:
            raise SpeciesDataError("a derived value needs a note saying how", location=location)
        bases[prefix] = (basis, source)
    return DiureticRow(
        drug_id=row["drug_id"], drug_class=drug_class, species_id=row["species_id"],
        route=route, dose_low=low, dose_high=high, dose_unit=unit,
        dose_source_id=bases["dose"][1], dose_basis=bases["dose"][0], onset_h=onset,
        peak_h=peak, duration_h=duration, times_source_id=bases["times"][1],
        times_basis=bases["times"][0], note=row["note"], location=location,
    )  # fmt: skip


@cache
def load_diuretics(data_dir: Path | None = None) -> dict[str, Drug]:
    """Read and validate the table: every problem names ``diuretics.csv:line``."""
    folder = data_dir or resource_dir("species_data")
    species = _known(folder / "species.csv", "id")
    sources = _known(folder / "sources.csv", "source_id")
    drugs: dict[str, dict] = {}
    for location, row in read_rows(folder / "diuretics.csv", COLUMNS):
        entry = _row(row, location, species, sources)
        mass = parse_number(row["molar_mass_g_per_mol"], location=location,
                            column="molar_mass_g_per_mol")  # fmt: skip
        if entry.drug_class == "osmotic" and (mass is None or mass <= 0):
            raise SpeciesDataError("an osmotic diuretic needs its molar mass", location=location)
        drug = drugs.setdefault(
            entry.drug_id, {"name": row["drug"], "drug_class": entry.drug_class, "mass": mass,
                            "rows": []},
        )  # fmt: skip
        if (drug["name"], drug["drug_class"], drug["mass"]) != (row["drug"], entry.drug_class,
                                                                 mass):  # fmt: skip
            raise SpeciesDataError(
                f"{quoted(entry.drug_id)} has another name, class or molar mass on an earlier row",
                location=location, fix="give the drug the same name, class and mass on every row",
            )  # fmt: skip
        drug["rows"].append(entry)
    return {
        drug_id: Drug(drug_id=drug_id, name=d["name"], drug_class=d["drug_class"],
                      molar_mass_g_per_mol=d["mass"], rows=tuple(d["rows"]))
        for drug_id, d in drugs.items()
    }  # fmt: skip


def drug(drug_id: str) -> Drug:
    """One drug by id; an unknown id lists the known ones."""
    drugs = load_diuretics()
    if drug_id not in drugs:
        raise InputError(
            f"no diuretic drug {quoted(drug_id)} is on record", field="diuretic", value=None,
            fix="choose one of " + ", ".join(drugs),
        )  # fmt: skip
    return drugs[drug_id]


def rows_for(
    table: SpeciesTable, species_id: str, drug_id: str, route: str
) -> tuple[DiureticRow, ...]:
    """The rows for a species (the nearest level of its lineage that has any for this drug
    and route); empty when no dose is on record for it."""
    rows = drug(drug_id).rows
    for level in table.lineage(species_id):
        found = tuple(r for r in rows if r.species_id == level and r.route == route)
        if found:
            return found
    return ()


def timing(table: SpeciesTable, species_id: str, drug_id: str, route: str) -> DiureticRow | None:
    """The first of :func:`rows_for` with onset, peak and duration on record, or None."""
    return next((r for r in rows_for(table, species_id, drug_id, route) if r.has_times), None)
