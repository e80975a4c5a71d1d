"""The species table: one row per (species, parameter), every value with its basis.

Files (long format, see ``species_data/README.md``):

* ``species.csv`` — identity rows; ``rank`` is ``group`` or ``species`` and
  ``parent`` names the group whose values a row inherits (chains are allowed:
  rodent → placental mammal → mammal).
* ``parameters.csv`` — ``species_id, parameter, value, low, high, unit,
  source_id, basis, note``; ``basis`` is ``published``, ``memory`` or ``derived``.
* ``parameter_definitions.csv`` — the unit, type and requirement of each parameter.
* ``sources.csv`` — ``source_id, citation, year, kind``.

Clinic overrides live in the user data folder (``overrides/parameters.csv`` and an
optional ``overrides/sources.csv``, same columns) and are merged on top; every
effective value says where it came from (shipped, inherited, clinic override).

The loader uses the ``csv`` module, not pandas: the CLI must start fast.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

from vetfluid.csvfiles import parse_number, read_rows, require_choice
from vetfluid.errors import InputError, SpeciesDataError
from vetfluid.paths import resource_dir, user_data_dir

BASES = ("published", "memory", "derived")
ORIGINS = ("shipped", "inherited", "override")
RANKS = ("group", "species")
MAINTENANCE_METHODS = ("linear", "allometric", "energy")
# What each maintenance method needs, checked after inheritance.
METHOD_PARAMETERS = {
    "linear": ("maintenance_ml_per_kg_day",),
    "allometric": ("maintenance_allometric_a", "maintenance_allometric_b"),
    "energy": ("energy_k_kcal_per_day", "energy_exponent", "water_ml_per_kcal"),
}
_FLAGS = {"yes": True, "no": False}

Value = float | str | bool


@dataclass(frozen=True, kw_only=True)
class Source:
    """A publication (or other reference) a value rests on."""

    source_id: str
    citation: str
    year: int | None
    kind: str


@dataclass(frozen=True, kw_only=True)
class ParameterDefinition:
    """What a parameter means, its unit and type, and who must have it."""

    name: str
    label: str  # the name people read ("Body weight")
    unit: str
    type: str  # number | text | flag
    required: str  # all | ectotherm | none
    description: str


@dataclass(frozen=True, kw_only=True)
class Species:
    """Identity of a species or taxon-group row."""

    id: str
    rank: str
    common_name: str
    scientific_name: str
    taxon_group: str
    thermoregulation: str
    nitrogen_excretion: str
    parent: str | None

    @property
    def is_ectotherm(self) -> bool:
        return self.thermoregulation == "ectotherm"


@dataclass(frozen=True, kw_only=True)
class SpeciesValue:
    """One effective value for one species, with everything needed to trust it.

    ``defined_on`` is the row (species or group) that holds the value; ``origin``
    is ``shipped`` (on the species itself), ``inherited`` (from a group row) or
    ``override`` (a clinic override). ``location`` is ``file:line``.
    """

    species_id: str
    parameter: str
    value: Value
    low: float | None
    high: float | None
    unit: str
    source_id: str | None
    basis: str
    note: str
    origin: str
    defined_on: str
    location: str
    label: str = ""  # from parameter_definitions.csv; the parameter id when empty

    @property
    def unverified(self) -> bool:
        """True when the value was recalled rather than checked against a source."""
        return self.basis == "memory"

    @property
    def number(self) -> float:
        if not isinstance(self.value, float):
            raise InputError(
                f"{self.parameter} is not a number", field=self.parameter, value=self.value
            )
        return self.value

    def provenance(self) -> dict[str, object]:
        """The traceability record every plan and CLI output carries."""
        return {
            "parameter": self.parameter,
            "label": self.label or self.parameter,
            "value": self.value,
            "low": self.low,
            "high": self.high,
            "unit": self.unit,
            "source_id": self.source_id,
            "basis": self.basis,
            "origin": self.origin,
            "defined_on": self.defined_on,
            "note": self.note,
        }


@dataclass(frozen=True, kw_only=True)
class _Row:
    species_id: str
    parameter: str
    value: Value
    low: float | None
    high: float | None
    unit: str
    source_id: str | None
    basis: str
    note: str
    location: str
    override: bool


@dataclass(frozen=True)
class SpeciesTable:
    """The loaded, validated table. Build it with :func:`load_table`."""

    species_by_id: Mapping[str, Species]
    definitions: Mapping[str, ParameterDefinition]
    sources: Mapping[str, Source]
    _rows: Mapping[tuple[str, str], _Row] = field(repr=False)
    # Effective values, resolved once on load: species id → parameter → value.
    _resolved: dict[str, dict[str, SpeciesValue]] = field(default_factory=dict, repr=False)

    def __post_init__(self) -> None:
        for sid in self.species_by_id:
            self._resolved[sid] = {
                name: found
                for name in self.definitions
                if (found := self._resolve(sid, name)) is not None
            }

    # ---- identity -------------------------------------------------------------
    def species(self, species_id: str) -> Species:
        """A species or group row; an unknown id lists the closest known ones."""
        try:
            return self.species_by_id[species_id]
        except KeyError:
            close = difflib.get_close_matches(species_id, list(self.species_by_id), n=5)
            hint = f"did you mean: {', '.join(close)}?" if close else "run `vetfluid-cli species`"
            raise InputError(
                f"unknown species {species_id!r}", field="species", value=species_id, fix=hint
            ) from None

    def species_ids(self) -> list[str]:
        """Ids of the species rows (not groups), in file order."""
        return [s.id for s in self.species_by_id.values() if s.rank == "species"]

    def lineage(self, species_id: str) -> list[str]:
        """The row itself, then its parent group, grandparent group …"""
        chain = []
        current: str | None = species_id
        while current is not None:
            chain.append(current)
            current = self.species_by_id[current].parent
        return chain

    def group_names(self, species_id: str) -> list[str]:
        """The common names of the groups a species belongs to, nearest first, in lower
        case ("lizards and snakes", "reptiles"); a name already within a nearer one is
        left out ("passerine birds" holds "birds")."""
        names: list[str] = []
        for group in self.lineage(species_id)[1:]:
            name = self.species_by_id[group].common_name.lower()
            if not any(name in nearer for nearer in names):
                names.append(name)
        return names

    def choice_label(self, species_id: str) -> str:
        """How a species is offered for choosing: common name, scientific name and its
        groups in words a clinician searches by ("Red-eared slider — Trachemys scripta
        elegans · turtles and tortoises, reptiles")."""
        sp = self.species(species_id)
        return f"{sp.common_name} — {sp.scientific_name} · {', '.join(self.group_names(sp.id))}"

    # ---- values ---------------------------------------------------------------
    def get(self, species_id: str, parameter: str) -> SpeciesValue | None:
        """The effective value, or None when neither the species nor a group has it."""
        resolved = self._resolved.get(species_id)
        if resolved is None:
            self.species(species_id)  # raises the helpful unknown-species error
        return resolved.get(parameter) if resolved is not None else None

    def _resolve(self, species_id: str, parameter: str) -> SpeciesValue | None:
        """Walk species → parent group → … for the first row that holds the parameter."""
        for depth, holder in enumerate(self.lineage(species_id)):
            row = self._rows.get((holder, parameter))
            if row is not None:
                if row.override:
                    origin = "override"
                else:
                    origin = "shipped" if depth == 0 else "inherited"
                return SpeciesValue(
                    species_id=species_id,
                    parameter=parameter,
                    value=row.value,
                    low=row.low,
                    high=row.high,
                    unit=row.unit,
                    source_id=row.source_id,
                    basis=row.basis,
                    note=row.note,
                    origin=origin,
                    defined_on=holder,
                    location=row.location,
                    label=self.definitions[parameter].label,
                )
        return None

    def value(self, species_id: str, parameter: str) -> SpeciesValue:
        """The effective value; missing values raise an InputError naming the gap."""
        found = self.get(species_id, parameter)
        if found is None:
            if parameter not in self.definitions:
                raise InputError(
                    f"unknown parameter {parameter!r}",
                    field="parameter",
                    value=parameter,
                    fix="see species_data/parameter_definitions.csv",
                )
            raise InputError(
                f"the species table has no {parameter} for {species_id}",
                field=parameter,
                value=None,
                fix="add a row to species_data/parameters.csv or a clinic override",
            )
        return found

    def effective(self, species_id: str) -> dict[str, SpeciesValue]:
        """Every parameter the species has after inheritance and overrides."""
        self.species(species_id)
        return dict(self._resolved[species_id])

    def citations(self, values: Iterable[SpeciesValue]) -> dict[str, str]:
        """Source id → citation for the sources the given values rest on, in first-use order."""
        return {
            v.source_id: self.sources[v.source_id].citation
            for v in values
            if v.source_id and v.source_id in self.sources
        }

    def __iter__(self) -> Iterator[SpeciesValue]:
        for species_id in self.species_ids():
            yield from self.effective(species_id).values()

    def search(self, text: str) -> list[Species]:
        """Species whose id, common or scientific name, taxon group or the name of a group
        it belongs to (:meth:`choice_label`) contains ``text``."""
        needle = text.strip().lower()
        return [
            s
            for s in self.species_by_id.values()
            if s.rank == "species"
            and any(needle in hay.lower() for hay in (s.id, s.taxon_group, self.choice_label(s.id)))
        ]


# ---- loading ------------------------------------------------------------------
def _load_sources(path: Path) -> dict[str, Source]:
    sources: dict[str, Source] = {}
    for location, row in read_rows(path, ("source_id", "citation", "year", "kind")):
        sid = row["source_id"]
        if not sid:
            raise SpeciesDataError("empty source_id", location=location)
        if sid in sources:
            raise SpeciesDataError(f"duplicate source_id {sid!r}", location=location)
        if not row["citation"]:
            raise SpeciesDataError(
                f"source {sid!r} has no citation", location=location, fix="authors, title, year"
            )
        year = parse_number(row["year"], location=location, column="year")
        sources[sid] = Source(
            source_id=sid,
            citation=row["citation"],
            year=int(year) if year is not None else None,
            kind=row["kind"],
        )
    return sources


def _load_definitions(path: Path) -> dict[str, ParameterDefinition]:
    definitions: dict[str, ParameterDefinition] = {}
    columns = ("parameter", "label", "unit", "type", "required", "description")
    for location, row in read_rows(path, columns):
        name = row["parameter"]
        if name in definitions:
            raise SpeciesDataError(f"duplicate parameter {name!r}", location=location)
        if not row["label"].strip():
            raise SpeciesDataError(
                f"{name} has no label", location=location, fix="give the name people read"
            )
        require_choice(row["type"], ("number", "text", "flag"), column="type", location=location)
        require_choice(
            row["required"], ("all", "ectotherm", "none"), column="required", location=location
        )
        definitions[name] = ParameterDefinition(
            name=name,
            label=row["label"].strip(),
            unit=row["unit"],
            type=row["type"],
            required=row["required"],
            description=row["description"],
        )
    return definitions


def _load_species(path: Path) -> dict[str, Species]:
    columns = (
        "id",
        "rank",
        "common_name",
        "scientific_name",
        "taxon_group",
        "thermoregulation",
        "nitrogen_excretion",
        "parent",
    )
    species: dict[str, Species] = {}
    locations: dict[str, str] = {}
    for location, row in read_rows(path, columns):
        sid = row["id"]
        if not sid:
            raise SpeciesDataError("empty id", location=location)
        if sid in species:
            raise SpeciesDataError(f"duplicate species id {sid!r}", location=location)
        require_choice(row["rank"], RANKS, column="rank", location=location)
        require_choice(
            row["thermoregulation"],
            ("endotherm", "ectotherm"),
            column="thermoregulation",
            location=location,
        )
        species[sid] = Species(
            id=sid,
            rank=row["rank"],
            common_name=row["common_name"],
            scientific_name=row["scientific_name"],
            taxon_group=row["taxon_group"],
            thermoregulation=row["thermoregulation"],
            nitrogen_excretion=row["nitrogen_excretion"],
            parent=row["parent"] or None,
        )
        locations[sid] = location
    for sid, sp in species.items():
        if sp.parent is None:
            continue
        if sp.parent not in species:
            raise SpeciesDataError(
                f"parent {sp.parent!r} is not a known id", location=locations[sid]
            )
        if species[sp.parent].rank != "group":
            raise SpeciesDataError(
                f"parent {sp.parent!r} is a species, not a group", location=locations[sid]
            )
        seen = {sid}
        current = sp.parent
        while current is not None:
            if current in seen:
                raise SpeciesDataError(f"parent chain of {sid!r} loops", location=locations[sid])
            seen.add(current)
            current = species[current].parent
    return species


def _parse_row(
    location: str,
    row: dict[str, str],
    *,
    species: Mapping[str, Species],
    definitions: Mapping[str, ParameterDefinition],
    sources: Mapping[str, Source],
    override: bool,
) -> _Row:
    sid, name = row["species_id"], row["parameter"]
    if sid not in species:
        close = difflib.get_close_matches(sid, list(species), n=3)
        raise SpeciesDataError(
            f"unknown species id {sid!r}",
            location=location,
            fix=f"did you mean {', '.join(close)}?" if close else "add it to species.csv first",
        )
    if name not in definitions:
        close = difflib.get_close_matches(name, list(definitions), n=3)
        raise SpeciesDataError(
            f"unknown parameter {name!r}",
            location=location,
            fix=f"did you mean {', '.join(close)}?"
            if close
            else "define it in parameter_definitions.csv",
        )
    definition = definitions[name]
    if row["unit"] != definition.unit:
        raise SpeciesDataError(
            f"unit {row['unit']!r} for {name} should be {definition.unit!r}", location=location
        )
    basis = require_choice(row["basis"], BASES, column="basis", location=location)
    source_id = row["source_id"] or None
    if source_id is not None and source_id not in sources:
        raise SpeciesDataError(
            f"unknown source_id {source_id!r}", location=location, fix="add it to sources.csv"
        )
    if basis == "published" and source_id is None:
        raise SpeciesDataError(
            "a published value needs a source_id",
            location=location,
            fix="cite it or mark it memory",
        )
    if basis == "derived" and not row["note"]:
        raise SpeciesDataError(
            "a derived value needs a note saying how it was derived", location=location
        )
    low = parse_number(row["low"], location=location, column="low")
    high = parse_number(row["high"], location=location, column="high")
    value: Value
    if definition.type == "number":
        number = parse_number(row["value"], location=location, column="value")
        if number is None:
            raise SpeciesDataError(f"{name} has no value", location=location)
        if (low is not None and number < low) or (high is not None and number > high):
            raise SpeciesDataError(
                f"value {number:g} lies outside low–high ({row['low']}–{row['high']})",
                location=location,
                fix="low ≤ value ≤ high",
            )
        if number < 0:
            raise SpeciesDataError(f"{name} cannot be negative", location=location)
        value = number
    elif definition.type == "flag":
        if row["value"] not in _FLAGS:
            raise SpeciesDataError(f"{name} must be yes or no", location=location)
        value = _FLAGS[row["value"]]
    else:
        value = row["value"]
        if name == "maintenance_method" and value not in MAINTENANCE_METHODS:
            raise SpeciesDataError(
                f"maintenance_method {value!r} unknown",
                location=location,
                fix=", ".join(MAINTENANCE_METHODS),
            )
    return _Row(
        species_id=sid,
        parameter=name,
        value=value,
        low=low,
        high=high,
        unit=row["unit"],
        source_id=source_id,
        basis=basis,
        note=row["note"],
        location=location,
        override=override,
    )


PARAMETER_COLUMNS = (
    "species_id",
    "parameter",
    "value",
    "low",
    "high",
    "unit",
    "source_id",
    "basis",
    "note",
)


def _check_complete(table: SpeciesTable) -> None:
    """Every species has every required parameter after inheritance."""
    for sid in table.species_ids():
        sp = table.species_by_id[sid]
        missing = [
            d.name
            for d in table.definitions.values()
            if (d.required == "all" or (d.required == "ectotherm" and sp.is_ectotherm))
            and table.get(sid, d.name) is None
        ]
        method = table.get(sid, "maintenance_method")
        if method is not None:
            missing += [
                p for p in METHOD_PARAMETERS[str(method.value)] if table.get(sid, p) is None
            ]
        if missing:
            raise SpeciesDataError(
                f"species {sid!r} lacks {', '.join(sorted(set(missing)))} after inheritance",
                location="parameters.csv",
                fix="add the rows to the species or to its group",
            )


def overrides_dir() -> Path:
    """Where clinic overrides live (inside the user data folder)."""
    return user_data_dir() / "overrides"


def load_table(data_dir: Path | None = None, *, overrides: Path | None = None) -> SpeciesTable:
    """Load and validate the species table, merging clinic overrides on top.

    ``data_dir`` defaults to the shipped ``species_data/``; ``overrides`` to
    :func:`overrides_dir`. Pass a folder to test broken files.
    """
    directory = data_dir or resource_dir("species_data")
    override_dir = overrides if overrides is not None else overrides_dir()
    return _load_cached(directory, override_dir, _stamp(override_dir))


def _stamp(override_dir: Path) -> tuple[tuple[int, int], ...]:
    """Change stamps (mtime in ns, size) of the override files, so a saved override reloads."""
    stamps = []
    for name in ("parameters.csv", "sources.csv"):
        path = override_dir / name
        stat = path.stat() if path.exists() else None
        stamps.append((stat.st_mtime_ns, stat.st_size) if stat else (0, 0))
    return tuple(stamps)


@lru_cache(maxsize=8)  # bounded: each saved override makes a new stamp
def _load_cached(directory: Path, override_dir: Path, _stamp: tuple) -> SpeciesTable:
    sources = _load_sources(directory / "sources.csv")
    override_sources = override_dir / "sources.csv"
    if override_sources.exists():
        for sid, src in _load_sources(override_sources).items():
            if sid in sources:
                raise SpeciesDataError(
                    f"override source {sid!r} repeats a shipped source id",
                    location=f"{override_sources.name}",
                    fix="pick a new id",
                )
            sources[sid] = src
    definitions = _load_definitions(directory / "parameter_definitions.csv")
    species = _load_species(directory / "species.csv")
    rows: dict[tuple[str, str], _Row] = {}
    for location, raw in read_rows(directory / "parameters.csv", PARAMETER_COLUMNS):
        parsed = _parse_row(
            location, raw, species=species, definitions=definitions, sources=sources, override=False
        )
        key = (parsed.species_id, parsed.parameter)
        if key in rows:
            raise SpeciesDataError(
                f"duplicate row for {key[0]} / {key[1]} (first at {rows[key].location})",
                location=location,
            )
        rows[key] = parsed
    override_file = override_dir / "parameters.csv"
    if override_file.exists():
        seen: set[tuple[str, str]] = set()
        for location, raw in read_rows(override_file, PARAMETER_COLUMNS):
            parsed = _parse_row(
                f"overrides/{location}",
                raw,
                species=species,
                definitions=definitions,
                sources=sources,
                override=True,
            )
            key = (parsed.species_id, parsed.parameter)
            if key in seen:
                raise SpeciesDataError(
                    f"duplicate override for {key[0]} / {key[1]}", location=f"overrides/{location}"
                )
            seen.add(key)
            rows[key] = parsed
    table = SpeciesTable(species, definitions, sources, rows)
    _check_complete(table)
    return table
