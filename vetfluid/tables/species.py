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

Every number parameter has a plausible range (``min``/``max`` in
``parameter_definitions.csv``, reasons in ``species_data/README.md``) and a few values
must agree with each other (:data:`RULES`: plasma < ECF < total body water, …). A
shipped value that breaks either stops loading (a test keeps the data clean); a clinic
override that breaks either, or any other row of the override files that cannot be used,
is left out and reported in :attr:`SpeciesTable.notices` with its ``file:line`` and the
value that applies instead, never fatal: a clinic's typing slip must not stop planning.

The loader uses the ``csv`` module, not pandas: the CLI must start fast.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field, replace
from functools import lru_cache
from pathlib import Path

from vetfluid.common.csvfiles import parse_number, quoted, read_rows, require_choice
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.paths import resource_dir, user_data_dir

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
    # plausible range of a number (value, low and high alike); None for text and flags
    minimum: float | None = None
    maximum: float | None = None

    def plausible(self, number: float) -> bool:
        """Whether a number lies within the parameter's plausible range (inclusive)."""
        return (self.minimum is None or number >= self.minimum) and (
            self.maximum is None or number <= self.maximum
        )

    @property
    def range_words(self) -> str:
        """The plausible range as people read it: "1–240 min"."""
        return f"{self.minimum:g}–{self.maximum:g} {self.unit}"


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
    """One value of the species table with everything needed to trust it: the one row
    type the loader stores, the override file reads and writes, and exports show.

    The first nine fields are the columns of ``parameters.csv`` (:data:`PARAMETER_COLUMNS`);
    the rest say where the value comes from:

    * ``origin``: ``shipped`` (a row of ``species_data/parameters.csv`` that the species
      holds itself), ``inherited`` (a shipped row of a group the species belongs to) or
      ``override`` (a row of the clinic's override file). A row as stored in a file is
      ``shipped`` or ``override``; only a value resolved for a species is ``inherited``.
    * ``defined_on``: the row (species or group) the file gives the value for; it is
      ``species_id`` except for an inherited value, whose ``species_id`` is the species
      asked about.
    * ``location``: ``file:line`` of that row (``overrides/parameters.csv:3`` for a
      clinic override).
    * ``label``: the parameter's name people read (``parameter_definitions.csv``).
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
    label: str  # from parameter_definitions.csv; the parameter id is shown when empty

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
class OverrideNotice:
    """A row of the clinic override files (or the whole file) that was left out.

    ``location`` is ``file:line`` (``overrides/parameters.csv:3``; no line when the
    whole file could not be read); ``applies`` says what is used instead.
    """

    location: str
    problem: str  # what is wrong, in words, with the fix
    applies: str
    species_id: str | None = None
    parameter: str | None = None

    def one_line(self) -> str:
        """The notice for stderr, a status line or a banner: one line."""
        return f"{self.location}: {self.problem} — ignored; {self.applies}"

    @property
    def key(self) -> tuple[str, str | None, str | None, str]:
        """The notice without its line number (rows move when the file is rewritten)."""
        return (self.location.split(":")[0], self.species_id, self.parameter, self.problem)


@dataclass(frozen=True, kw_only=True)
class Rule:
    """Two parameters of one species that must agree: ``smaller`` × ``scale`` lies
    below ``larger`` (or at most equals it when not ``strict``)."""

    smaller: str
    larger: str
    why: str
    scale: float = 1.0  # converts the smaller's unit into the larger's
    strict: bool = True

    def holds(self, smaller: float, larger: float) -> bool:
        scaled = smaller * self.scale
        return scaled < larger if self.strict else scaled <= larger


# Physical and definitional relations, no source needed: a compartment is part of the
# one that holds it; a single bolus lies within the shock dose that caps all boluses.
RULES = (
    Rule(smaller="plasma_fraction", larger="ecf_fraction",
         why="plasma is part of the extracellular fluid"),
    Rule(smaller="ecf_fraction", larger="total_body_water_fraction",
         why="the extracellular fluid is part of the body's water"),
    Rule(smaller="ecf_fraction", larger="neonate_total_body_water_fraction",
         why="the extracellular fluid is part of the body's water"),
    Rule(smaller="plasma_fraction", larger="blood_volume_ml_per_kg", scale=1000.0,
         why="plasma is part of the blood (1 L/kg is 1000 mL/kg)"),
    Rule(smaller="bolus_ml_per_kg", larger="shock_dose_ml_per_kg", strict=False,
         why="one bolus cannot be more than the shock dose that caps all boluses"),
)  # fmt: skip


@dataclass(frozen=True)
class SpeciesTable:
    """The loaded, validated table. Build it with :func:`load_table`."""

    species_by_id: Mapping[str, Species]
    definitions: Mapping[str, ParameterDefinition]
    sources: Mapping[str, Source]
    # The rows as the files give them (origin shipped or override): (holder, parameter) → row.
    _rows: Mapping[tuple[str, str], SpeciesValue] = field(repr=False)
    #: clinic override rows (or files) left out, in file and line order
    notices: tuple[OverrideNotice, ...] = ()
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

    def taxon_class(self, species_id: str) -> str:
        """ "bird", "reptile" or "mammal": the class a species belongs to by its groups
        (how it is examined, charted and dosed differs by class)."""
        lineage = self.lineage(species_id)
        return next((t for t in ("bird", "reptile") if f"group_{t}" in lineage), "mammal")

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
                if depth == 0:
                    return row
                # a group's row seen from one of its species; a clinic's stays an override
                origin = "override" if row.origin == "override" else "inherited"
                return replace(row, species_id=species_id, origin=origin)
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
                f"the species table has no “{self.definitions[parameter].label}” for "
                f"{self.species(species_id).common_name}",
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
def _load_sources(
    path: Path,
    *,
    taken: Mapping[str, Source] | None = None,
    problems: list[SpeciesDataError] | None = None,
) -> dict[str, Source]:
    """The sources of one file. For the clinic's file, ``taken`` holds the shipped ones
    (an id may not repeat them) and bad rows go into ``problems``, left out."""
    sources: dict[str, Source] = {}
    rows = read_rows(path, ("source_id", "citation", "year", "kind"), problems=problems)
    for location, row in rows:
        try:
            source = _parse_source(location, row, seen=sources, taken=taken or {})
        except SpeciesDataError as exc:
            if problems is None:
                raise
            problems.append(exc)
            continue
        sources[source.source_id] = source
    return sources


def _parse_source(
    location: str, row: dict[str, str], *, seen: Mapping[str, Source], taken: Mapping[str, Source]
) -> Source:
    sid = row["source_id"]
    if not sid:
        raise SpeciesDataError("empty source_id", location=location)
    if sid in seen:
        raise SpeciesDataError(f"duplicate source_id {quoted(sid)}", location=location)
    if sid in taken:
        raise SpeciesDataError(
            f"source {quoted(sid)} repeats a shipped source id",
            location=location,
            fix="pick a new id",
        )
    if not row["citation"]:
        raise SpeciesDataError(
            f"source {quoted(sid)} has no citation", location=location, fix="authors, title, year"
        )
    year = parse_number(row["year"], location=location, column="year")
    if year is not None and not 0 < year < 10_000:
        raise SpeciesDataError(f"year {year:g} is no year", location=location)
    return Source(
        source_id=sid,
        citation=row["citation"],
        year=int(year) if year is not None else None,
        kind=row["kind"],
    )


def _load_definitions(path: Path) -> dict[str, ParameterDefinition]:
    definitions: dict[str, ParameterDefinition] = {}
    columns = ("parameter", "label", "unit", "type", "required", "description", "min", "max")
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
        minimum = parse_number(row["min"], location=location, column="min")
        maximum = parse_number(row["max"], location=location, column="max")
        if row["type"] == "number":
            if minimum is None or maximum is None or not minimum < maximum:
                raise SpeciesDataError(
                    f"{name} needs a plausible range with min below max",
                    location=location,
                    fix="give min and max; say why in species_data/README.md",
                )
        elif minimum is not None or maximum is not None:
            raise SpeciesDataError(
                f"{name} is not a number: leave min and max empty", location=location
            )
        definitions[name] = ParameterDefinition(
            name=name,
            label=row["label"].strip(),
            unit=row["unit"],
            type=row["type"],
            required=row["required"],
            description=row["description"],
            minimum=minimum,
            maximum=maximum,
        )
    return definitions


def parameter_definitions(data_dir: Path | None = None) -> dict[str, ParameterDefinition]:
    """The shipped parameter definitions (unit, type, plausible range), by name."""
    return dict(_definitions_cached(data_dir or resource_dir("species_data")))


@lru_cache(maxsize=2)
def _definitions_cached(directory: Path) -> dict[str, ParameterDefinition]:
    return _load_definitions(directory / "parameter_definitions.csv")


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
) -> SpeciesValue:
    """One row of a parameters file, checked; ``override`` marks the clinic's file."""
    sid, name = row["species_id"], row["parameter"]
    if sid not in species:
        close = difflib.get_close_matches(sid, list(species), n=3)
        raise SpeciesDataError(
            f"unknown species id {quoted(sid)}",
            location=location,
            fix=f"did you mean {', '.join(close)}?" if close else "add it to species.csv first",
        )
    if name not in definitions:
        close = difflib.get_close_matches(name, list(definitions), n=3)
        raise SpeciesDataError(
            f"unknown parameter {quoted(name)}",
            location=location,
            fix=f"did you mean {', '.join(close)}?"
            if close
            else "define it in parameter_definitions.csv",
        )
    definition = definitions[name]
    if row["unit"] != definition.unit:
        raise SpeciesDataError(
            f"unit {quoted(row['unit'])} for {name} should be {definition.unit!r}",
            location=location,
        )
    basis = require_choice(row["basis"], BASES, column="basis", location=location)
    source_id = row["source_id"] or None
    if source_id is not None and source_id not in sources:
        raise SpeciesDataError(
            f"unknown source_id {quoted(source_id)}",
            location=location,
            fix="add it to sources.csv",
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
        for column, figure in (("", number), ("low ", low), ("high ", high)):
            if figure is not None and not definition.plausible(figure):
                raise SpeciesDataError(
                    f"{definition.label}: {column}{figure:g} {definition.unit} lies outside "
                    f"the plausible range {definition.range_words}",
                    location=location,
                    fix="check the number and its unit",
                )
        if (low is not None and number < low) or (high is not None and number > high):
            raise SpeciesDataError(
                f"value {number:g} lies outside low–high ({_g(low)}–{_g(high)})",
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
                f"maintenance_method {quoted(value)} unknown",
                location=location,
                fix=", ".join(MAINTENANCE_METHODS),
            )
    return SpeciesValue(
        species_id=sid,
        parameter=name,
        value=value,
        low=low,
        high=high,
        unit=row["unit"],
        source_id=source_id,
        basis=basis,
        note=row["note"],
        origin="override" if override else "shipped",
        defined_on=sid,
        location=location,
        label=definition.label,
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


def _g(number: float | None) -> str:
    return "" if number is None else f"{number:g}"


@dataclass(frozen=True, kw_only=True)
class _Fault:
    """What a table breaks as a whole (a gap, a rule), with the rows that hold the values."""

    message: str
    location: str
    rows: tuple[SpeciesValue, ...]  # as stored (see SpeciesTable._rows)


def _faults(table: SpeciesTable) -> list[_Fault]:
    """Every species has every parameter it needs after inheritance (the required ones
    and its maintenance method's), and its values keep :data:`RULES`."""
    faults = []
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
            faults.append(
                _Fault(
                    message=f"species {sid!r} lacks {', '.join(sorted(set(missing)))} after "
                    f"inheritance (maintenance method {method.value if method else 'none'})",
                    location=method.location if method is not None else "parameters.csv",
                    rows=(table._rows[(method.defined_on, method.parameter)],) if method else (),
                )
            )
        for rule in RULES:
            small, large = table.get(sid, rule.smaller), table.get(sid, rule.larger)
            if small is None or large is None or rule.holds(small.number, large.number):
                continue
            relation = "below" if rule.strict else "at most"
            own = small if small.defined_on == sid else large
            faults.append(
                _Fault(
                    message=f"{small.label} {small.number:g} {small.unit} must be {relation} "
                    f"{large.label} {large.number:g} {large.unit} for {sp.common_name}: "
                    f"{rule.why}",
                    location=own.location,
                    rows=tuple(table._rows[(v.defined_on, v.parameter)] for v in (small, large)),
                )
            )
    return faults


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


def _present(path: Path) -> bool:
    """Whether something is at ``path`` (a dangling link or an unreadable entry counts,
    so that reading it reports the problem rather than skipping the file unseen)."""
    try:
        return path.exists() or path.is_symlink()
    except OSError:
        return True


def _stamp(override_dir: Path) -> tuple[tuple[int, int], ...]:
    """Change stamps (mtime in ns, size) of the override files, so a saved override reloads."""
    stamps = []
    for name in ("parameters.csv", "sources.csv"):
        try:
            stat = (override_dir / name).stat()
            stamps.append((stat.st_mtime_ns, stat.st_size))
        except OSError:
            stamps.append((0, 0))
    return tuple(stamps)


@lru_cache(maxsize=8)  # bounded: each saved override makes a new stamp
def _load_cached(directory: Path, override_dir: Path, _stamp: tuple) -> SpeciesTable:
    sources = _load_sources(directory / "sources.csv")
    definitions = _load_definitions(directory / "parameter_definitions.csv")
    species = _load_species(directory / "species.csv")
    rows: dict[tuple[str, str], SpeciesValue] = {}
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
    shipped = SpeciesTable(species, definitions, sources, rows)
    for fault in _faults(shipped):
        raise SpeciesDataError(
            fault.message, location=fault.location, fix="correct the shipped rows"
        )
    if not (_present(override_dir / "parameters.csv") or _present(override_dir / "sources.csv")):
        return shipped
    return _with_overrides(shipped, override_dir)


_OVERRIDE_FILES = ("sources.csv", "parameters.csv")  # read in this order, reported in it
# A clinic's file holds at most one row per (species or group, parameter); this many rows
# that cannot be used mean some other file, and naming each would take seconds.
MOST_BAD_OVERRIDE_ROWS = 100


@dataclass(frozen=True, kw_only=True)
class _Problem:
    location: str  # file:line inside the overrides folder
    problem: str
    species_id: str | None = None
    parameter: str | None = None
    whole_file: bool = False  # the file could not be read: none of it is used


def _problem(
    error: SpeciesDataError, row: Mapping[str, str] | None = None, *, whole_file: bool = False
) -> _Problem:
    location = error.location.removeprefix("overrides/")
    text = error.message.removeprefix(f"{error.location}: ")
    return _Problem(
        location=location,
        problem=text + (f" ({error.fix})" if error.fix else ""),
        species_id=row.get("species_id") if row else None,
        parameter=row.get("parameter") if row else None,
        whole_file=whole_file,
    )


def _with_overrides(shipped: SpeciesTable, override_dir: Path) -> SpeciesTable:
    """The shipped table with the clinic's rows on top; every row that cannot be used is
    left out and becomes a notice (see the module docstring)."""
    problems: list[_Problem] = []
    sources = dict(shipped.sources)
    source_file = override_dir / "sources.csv"
    if _present(source_file):
        found: list[SpeciesDataError] = []
        try:
            clinic_sources = _load_sources(source_file, taken=shipped.sources, problems=found)
            source_problems = [_problem(e) for e in found]
        except SpeciesDataError as exc:
            clinic_sources, source_problems = {}, [_problem(exc, whole_file=True)]
        if len(source_problems) <= MOST_BAD_OVERRIDE_ROWS:
            sources |= clinic_sources
        problems += _capped("sources.csv", source_problems)
    rows = dict(shipped._rows)
    active: list[SpeciesValue] = []
    parameter_file = override_dir / "parameters.csv"
    if _present(parameter_file):
        found = []
        try:
            raw_rows = read_rows(parameter_file, PARAMETER_COLUMNS, problems=found)
            row_problems = [_problem(e) for e in found]
        except SpeciesDataError as exc:
            raw_rows, row_problems = [], [_problem(exc, whole_file=True)]
        seen: dict[tuple[str, str], str] = {}
        for location, raw in raw_rows:
            if len(row_problems) > MOST_BAD_OVERRIDE_ROWS:
                break
            try:
                parsed = _parse_row(
                    f"overrides/{location}",
                    raw,
                    species=shipped.species_by_id,
                    definitions=shipped.definitions,
                    sources=sources,
                    override=True,
                )
                key = (parsed.species_id, parsed.parameter)
                if key in seen:
                    raise SpeciesDataError(
                        f"a second override for {key[0]} / {key[1]} (the first is at {seen[key]})",
                        location=parsed.location,
                        fix="keep one row per species and parameter",
                    )
            except SpeciesDataError as exc:
                row_problems.append(_problem(exc, raw))
                continue
            seen[key] = parsed.location
            active.append(parsed)
        problems += _capped("parameters.csv", row_problems)
        if len(row_problems) > MOST_BAD_OVERRIDE_ROWS:
            active = []
    while True:  # leave out the rows that break the table as a whole, until none does
        merged = rows | {(r.species_id, r.parameter): r for r in active}
        table = SpeciesTable(shipped.species_by_id, shipped.definitions, sources, merged)
        left_out = False
        for fault in _faults(table):
            for row in fault.rows:
                if row.origin == "override" and row in active:
                    active.remove(row)
                    left_out = True
                    problems.append(
                        _Problem(
                            location=row.location.removeprefix("overrides/"),
                            problem=fault.message,
                            species_id=row.species_id,
                            parameter=row.parameter,
                        )
                    )
        if not left_out:
            break
    notices = tuple(
        OverrideNotice(
            location=f"overrides/{p.location}",
            problem=p.problem,
            applies=_what_applies(table, p),
            species_id=p.species_id,
            parameter=p.parameter,
        )
        for p in sorted(problems, key=_file_order)
    )
    return SpeciesTable(shipped.species_by_id, shipped.definitions, sources, merged, notices)


def _capped(name: str, problems: list[_Problem]) -> list[_Problem]:
    """The problems of one override file, or one for the whole file when there are too many."""
    if len(problems) <= MOST_BAD_OVERRIDE_ROWS:
        return problems
    return [
        _Problem(
            location=name,
            problem=f"more than {MOST_BAD_OVERRIDE_ROWS} rows cannot be used "
            "(is it a clinic override file?)",
            whole_file=True,
        )
    ]


def _file_order(problem: _Problem) -> tuple[int, int]:
    name, _, line = problem.location.partition(":")
    return (_OVERRIDE_FILES.index(name) if name in _OVERRIDE_FILES else 0, int(line or 0))


def _what_applies(table: SpeciesTable, problem: _Problem) -> str:
    """What is used instead of a left-out override, in words."""
    if problem.location.startswith("sources.csv"):
        if problem.whole_file:
            return "none of its sources is used; an override citing one is left out too"
        return "an override citing it is left out too"
    if problem.whole_file:
        return "no clinic override is used: every value is the one vetfluid ships"
    sid, name = problem.species_id, problem.parameter
    if sid not in table.species_by_id or name not in table.definitions:
        return "the shipped values apply"
    value = table.get(sid, name)
    if value is None:
        return f"vetfluid ships no {table.definitions[name].label} for it, so none applies"
    if isinstance(value.value, bool):
        shown = "yes" if value.value else "no"
    elif isinstance(value.value, float):
        shown = f"{value.value:g} {value.unit}"
    else:
        shown = value.value
    if value.origin == "override":
        return f"the override at {value.location}, {shown}, applies"
    if value.origin == "inherited":
        group = table.species_by_id[value.defined_on].common_name
        return f"the value inherited from {group}, {shown}, applies"
    return f"the shipped value {shown} applies"
