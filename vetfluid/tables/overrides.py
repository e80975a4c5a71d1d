"""Clinic overrides: a clinic's own values, written next to (never into) the shipped table.

The file is ``overrides_dir()/parameters.csv`` in the long format of
``species_data/parameters.csv`` (``species_id, parameter, value, low, high, unit,
source_id, basis, note``). :func:`vetfluid.tables.species.load_table` merges it on top of
the shipped rows and marks each such value ``origin="override"``. A row read from the
file is a :class:`~vetfluid.tables.species.SpeciesValue` like any loaded value (origin
``override``, ``location`` its ``file:line``), and :func:`write_override` writes one back.

Writing is safe by construction:

* a value, low or high outside the parameter's plausible range
  (``parameter_definitions.csv``) is refused with an :class:`InputError`;
* the candidate file is validated first by building the whole table from it
  (:func:`load_table` on a staging folder): a row the loader would leave out that it
  does not leave out now (a rule across parameters, an unknown source) raises
  :class:`SpeciesDataError` and the file on disk is untouched. A row typed by hand that
  the loader already leaves out blocks no other edit; it stays as typed, still reported;
* the new file replaces the old one atomically (staging file in the same folder,
  flushed to disk, then ``os.replace``), and the previous file is kept as
  ``parameters.csv.bak``;
* numbers are written in Python's shortest round-trip form, so a value written
  reads back exactly;
* the unit always comes from the parameter definition, never from the caller.

The loader caches tables by the override file's (mtime_ns, size); each write
makes the new mtime strictly later than the previous one, so two quick edits
of equal length can never be mistaken for each other.
"""

from __future__ import annotations

import csv
import difflib
import math
import os
import shutil
import tempfile
from pathlib import Path

from vetfluid.common.csvcells import safe_cell
from vetfluid.common.csvfiles import parse_number, read_rows
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.paths import resource_dir
from vetfluid.tables.species import (
    BASES,
    MAINTENANCE_METHODS,
    PARAMETER_COLUMNS,
    ParameterDefinition,
    SpeciesTable,
    SpeciesValue,
    Value,
    load_table,
    overrides_dir,
    parameter_definitions,
)

OVERRIDE_FILE = "parameters.csv"
BACKUP_SUFFIX = ".bak"
FLAG_WORDS = ("yes", "no")
EXPORT_COLUMNS = (
    "species_id",
    "parameter",
    "value",
    "low",
    "high",
    "unit",
    "basis",
    "origin",
    "defined_on",
    "source_id",
    "note",
)
# A path inside a regular file can never exist: load_table() with it sees no overrides.
_NO_OVERRIDES = Path(__file__).resolve() / "no-overrides"


# ---- paths ------------------------------------------------------------------------
def overrides_file() -> Path:
    """The clinic override file (it may not exist yet)."""
    return overrides_dir() / OVERRIDE_FILE


def backup_file() -> Path:
    """The previous override file, kept on every write."""
    return overrides_dir() / (OVERRIDE_FILE + BACKUP_SUFFIX)


# ---- text forms -------------------------------------------------------------------
def stored_text(value: Value | None) -> str:
    """How a value is written to CSV: shortest exact form for numbers, yes/no for flags.

    ``stored_text(12.0) == "12"``, ``stored_text(0.1) == "0.1"``, ``stored_text(True) == "yes"``;
    ``float(stored_text(x)) == x`` for every finite float.
    """
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        text = repr(float(value))
        return text[:-2] if text.endswith(".0") else text
    return str(value)


def _stored_cells(row: SpeciesValue) -> dict[str, str]:
    """The row as ``parameters.csv`` holds it (:data:`PARAMETER_COLUMNS`), numbers in
    their exact stored form."""
    return {
        "species_id": row.species_id,
        "parameter": row.parameter,
        "value": stored_text(row.value),
        "low": stored_text(row.low),
        "high": stored_text(row.high),
        "unit": row.unit,
        "source_id": row.source_id or "",
        "basis": row.basis,
        "note": row.note,
    }


def _number(value: object, *, field: str, what: str, unit: str, fix: str) -> float:
    """A finite number from a float, an int or the text a person typed."""
    if isinstance(value, bool):
        raise InputError(f"{what} must be a number in {unit}", field=field, value=value, fix=fix)
    if isinstance(value, int | float):
        number = float(value)
    elif isinstance(value, str):
        text = value.strip()
        if not text:
            raise InputError(f"{what} is empty", field=field, value=value, fix=fix)
        if "," in text:
            raise InputError(
                f"{what} {text!r} holds a comma",
                field=field,
                value=value,
                fix="use a point as the decimal separator and no thousands separator",
            )
        try:
            number = float(text)
        except ValueError:
            raise InputError(
                f"{what} {text!r} is not a number", field=field, value=value, fix=fix
            ) from None
    else:
        raise InputError(f"{what} must be a number in {unit}", field=field, value=value, fix=fix)
    if not math.isfinite(number):
        raise InputError(f"{what} must be a finite number", field=field, value=value, fix=fix)
    return number


def _optional_number(value: object, *, name: str, unit: str) -> float | None:
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    return _number(
        value,
        field=name,
        what=name,
        unit=unit,
        fix=f"type a plain number in {unit} or leave it empty",
    )


# ---- shipped definitions (independent of the override file) --------------------------
def _definitions() -> dict[str, ParameterDefinition]:
    """The shipped definitions: unit, type and plausible range of each parameter."""
    return parameter_definitions()


def _species_ids() -> list[str]:
    path = resource_dir("species_data") / "species.csv"
    return [row["id"] for _, row in read_rows(path, ("id",))]


def _unknown(kind: str, name: str, known: list[str]) -> InputError:
    close = difflib.get_close_matches(name, known, n=3)
    fix = f"did you mean {', '.join(close)}?" if close else f"see species_data/{kind}"
    field = "species_id" if kind == "species.csv" else "parameter"
    return InputError(f"unknown {field} {name!r}", field=field, value=name, fix=fix)


def _typed(text: str, kind: str, *, location: str, column: str) -> Value:
    if kind == "number":
        number = parse_number(text, location=location, column=column)
        if number is None:
            raise SpeciesDataError(f"{column} is empty", location=location)
        return number
    if kind == "flag":
        if text not in FLAG_WORDS:
            raise SpeciesDataError(f"{column} must be yes or no", location=location)
        return text == "yes"
    return text


# ---- reading ----------------------------------------------------------------------
def _raw() -> tuple[list[str], list[dict[str, str]]]:
    """The override file's header and rows as text (empty when there is no file)."""
    path = overrides_file()
    if not path.exists():
        return list(PARAMETER_COLUMNS), []
    rows = [row for _, row in read_rows(path, PARAMETER_COLUMNS)]  # names a bad file first
    with path.open(newline="", encoding="utf-8-sig") as handle:
        header = next(csv.reader(handle), [])
    extras = [name.strip() for name in header if name.strip() not in PARAMETER_COLUMNS]
    return list(PARAMETER_COLUMNS) + extras, rows


def read_overrides() -> list[SpeciesValue]:
    """Every clinic override in file order; no file means no overrides.

    A row the loader would reject still reads here if its cells parse, so a
    broken file can be inspected; a row whose parameter is unknown or whose cells do not
    parse is left out (:attr:`vetfluid.tables.species.SpeciesTable.notices` names it, and
    :func:`set_override` / :func:`remove_override` still replace or remove it).
    """
    path = overrides_file()
    if not path.exists():
        return []
    definitions = _definitions()
    rows = []
    for location, raw in read_rows(path, PARAMETER_COLUMNS, problems=[]):
        location = f"overrides/{location}"
        if raw["parameter"] not in definitions:
            continue
        kind = definitions[raw["parameter"]].type
        try:
            row = SpeciesValue(
                species_id=raw["species_id"],
                parameter=raw["parameter"],
                value=_typed(raw["value"], kind, location=location, column="value"),
                low=parse_number(raw["low"], location=location, column="low"),
                high=parse_number(raw["high"], location=location, column="high"),
                unit=raw["unit"],
                source_id=raw["source_id"] or None,
                basis=raw["basis"],
                note=raw["note"],
                origin="override",
                defined_on=raw["species_id"],
                location=location,
                label=definitions[raw["parameter"]].label,
            )
        except SpeciesDataError:
            continue
        rows.append(row)
    return rows


def get_override(*, species_id: str, parameter: str) -> SpeciesValue | None:
    """The clinic override for one (species, parameter), or None."""
    for row in read_overrides():
        if row.species_id == species_id and row.parameter == parameter:
            return row
    return None


def shipped_value(*, species_id: str, parameter: str) -> SpeciesValue | None:
    """The value vetfluid ships for a species (its own or inherited), ignoring clinic overrides."""
    return load_table(overrides=_NO_OVERRIDES).get(species_id, parameter)


# ---- writing ----------------------------------------------------------------------
def set_override(
    *,
    species_id: str,
    parameter: str,
    value: Value,
    low: float | str | None = None,
    high: float | str | None = None,
    note: str = "",
    basis: str = "memory",
    source_id: str | None = None,
) -> None:
    """Write (or replace) the clinic override for one (species, parameter).

    ``value`` may be typed (float, bool, str) or the text a person typed
    (``"12.5"``, ``"yes"``); ``low``/``high`` likewise. The unit is the
    parameter's own. ``basis`` defaults to ``memory``: a value typed in at the
    clinic is unverified until someone cites a publication for it. Raises
    :class:`InputError` (naming the field and the fix) or
    :class:`SpeciesDataError` (when the table as a whole would no longer load);
    either way nothing is written.
    """
    definitions = _definitions()
    if parameter not in definitions:
        raise _unknown("parameter_definitions.csv", parameter, list(definitions))
    species_ids = _species_ids()
    if species_id not in species_ids:
        raise _unknown("species.csv", species_id, species_ids)
    definition = definitions[parameter]
    unit, kind = definition.unit, definition.type
    text = _value_text(value, parameter=parameter, unit=unit, kind=kind)
    low_number = _optional_number(low, name="low", unit=unit)
    high_number = _optional_number(high, name="high", unit=unit)
    if kind == "number":
        for name, number in (("value", float(text)), ("low", low_number), ("high", high_number)):
            _check_plausible(number, name=name, definition=definition)
    if low_number is not None and high_number is not None and low_number > high_number:
        raise InputError(
            f"low {stored_text(low_number)} is above high {stored_text(high_number)} {unit}",
            field="low",
            value=low,
            fix="swap them: low ≤ value ≤ high",
        )
    if kind == "number":
        _check_range(float(text), parameter=parameter, unit=unit, low=low_number, high=high_number)
    if basis not in BASES:
        raise InputError(
            f"basis {basis!r} unknown", field="basis", value=basis, fix=f"use {', '.join(BASES)}"
        )
    source_id = (source_id or "").strip() or None
    if basis == "published" and source_id is None:
        raise InputError(
            "a published value needs a source_id",
            field="source_id",
            value=None,
            fix="cite the publication (sources.csv) or keep the basis memory",
        )
    note = note.strip()
    if basis == "derived" and not note:
        raise InputError(
            "a derived value needs a note saying how it was derived",
            field="note",
            value=note,
            fix="write the calculation in the note",
        )
    header, rows = _raw()
    new = {
        "species_id": species_id,
        "parameter": parameter,
        "value": text,
        "low": stored_text(low_number),
        "high": stored_text(high_number),
        "unit": unit,
        "source_id": source_id or "",
        "basis": basis,
        "note": note,
    }
    for position, row in enumerate(rows):
        if row["species_id"] == species_id and row["parameter"] == parameter:
            rows[position] = {**row, **new}
            break
    else:
        rows.append(new)
    _commit(header, rows)


def write_override(row: SpeciesValue) -> None:
    """Put ``row`` back into the override file as it was read (undo, redo): its stored
    columns verbatim, in place of the row for its (species, parameter), or added.

    A row the loader ignores (typed by hand in another unit, say) goes back as it was and
    is ignored again, reported among the table's notices as before the edit being undone;
    any other row the table would no longer load with is refused, and nothing is written.
    """
    header, rows = _raw()
    cells = _stored_cells(row)
    for position, stored in enumerate(rows):
        if (stored["species_id"], stored["parameter"]) == (row.species_id, row.parameter):
            rows[position] = {**stored, **cells}
            break
    else:
        rows.append(cells)
    _commit(header, rows, restoring=(row.species_id, row.parameter))


def remove_override(*, species_id: str, parameter: str) -> None:
    """Delete the clinic override for one (species, parameter); the shipped value applies again.

    Raises :class:`InputError` when there is no such override, and
    :class:`SpeciesDataError` when the table would no longer load without it
    (e.g. another override depends on it); nothing is written then.
    """
    header, rows = _raw()
    kept = [r for r in rows if (r["species_id"], r["parameter"]) != (species_id, parameter)]
    if len(kept) == len(rows):
        raise InputError(
            f"there is no clinic override for {species_id} / {parameter}",
            field="parameter",
            value=parameter,
            fix="nothing to reset: the shipped value is already in use",
        )
    _commit(header, kept)


def _value_text(value: Value, *, parameter: str, unit: str, kind: str) -> str:
    if kind == "number":
        number = _number(
            value,
            field=parameter,
            what="value",
            unit=unit,
            fix=f"type a plain number in {unit}, e.g. 12.5 (the unit is fixed)",
        )
        if number < 0:
            raise InputError(
                "value cannot be negative",
                field=parameter,
                value=value,
                fix=f"type a number of 0 {unit} or more",
            )
        return stored_text(number)
    if kind == "flag":
        if isinstance(value, bool):
            return stored_text(value)
        if isinstance(value, str) and value.strip().lower() in FLAG_WORDS:
            return value.strip().lower()
        raise InputError(
            "value must be yes or no", field=parameter, value=value, fix="type yes or no"
        )
    if not isinstance(value, str) or not value.strip():
        raise InputError("value must be text", field=parameter, value=value, fix="type a word")
    text = value.strip()
    if parameter == "maintenance_method" and text not in MAINTENANCE_METHODS:
        raise InputError(
            f"value {text!r} is not a maintenance method",
            field=parameter,
            value=value,
            fix=f"use {', '.join(MAINTENANCE_METHODS)}",
        )
    return text


def _check_plausible(number: float | None, *, name: str, definition: ParameterDefinition) -> None:
    """A number within the parameter's plausible range (species_data/README.md)."""
    if number is None or definition.plausible(number):
        return
    raise InputError(
        f"{name} {stored_text(number)} {definition.unit} lies outside the plausible range "
        f"{definition.range_words} for {definition.label}",
        field=definition.name,
        value=number,
        fix="check the number and its unit",
    )


def _check_range(
    number: float, *, parameter: str, unit: str, low: float | None, high: float | None
) -> None:
    if (low is not None and number < low) or (high is not None and number > high):
        bounds = f"{stored_text(low) if low is not None else '…'}–"
        bounds += f"{stored_text(high) if high is not None else '…'} {unit}"
        raise InputError(
            f"value {stored_text(number)} {unit} lies outside the range {bounds}",
            field=parameter,
            value=number,
            fix=(
                f"type a value within {bounds}; the range itself is the low and high columns "
                f"of the clinic override file ({overrides_file()})"
            ),
        )


def _write_csv(path: Path, header: list[str], rows: list[dict[str, str]]) -> None:
    """Write the rows, flushed to disk; a new file is the owner's only (0600) from its
    first byte, like everything in the user data folder."""
    descriptor = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    with os.fdopen(descriptor, "w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=header, extrasaction="ignore", restval="")
        writer.writeheader()
        writer.writerows(rows)
        handle.flush()
        os.fsync(handle.fileno())


def _commit(
    header: list[str], rows: list[dict[str, str]], *, restoring: tuple[str, str] | None = None
) -> None:
    """Validate the candidate rows as a whole table, keep a backup, then replace atomically.
    ``restoring`` names the (species, parameter) whose row is put back as it was read: a
    notice about that row alone does not refuse the write."""
    folder = overrides_dir()
    folder.mkdir(mode=0o700, parents=True, exist_ok=True)
    target = folder / OVERRIDE_FILE
    sources = folder / "sources.csv"
    with tempfile.TemporaryDirectory(dir=folder, prefix=".candidate-") as staging_name:
        staging = Path(staging_name)
        candidate = staging / OVERRIDE_FILE
        _write_csv(candidate, header, rows)
        if sources.exists():
            shutil.copy2(sources, staging / "sources.csv")
        _refuse_new_problems(load_table(overrides=staging), restoring=restoring)
        previous = target.stat() if target.exists() else None
        if previous is not None:
            spare = staging / "previous.csv"
            _copy_private(target, spare)
            os.replace(spare, folder / (OVERRIDE_FILE + BACKUP_SUFFIX))
        os.replace(candidate, target)
    if previous is not None:
        written = target.stat()
        if written.st_mtime_ns <= previous.st_mtime_ns:
            os.utime(target, ns=(written.st_atime_ns, previous.st_mtime_ns + 1))
    _fsync_folder(folder)


def _copy_private(source: Path, copy: Path) -> None:
    """Copy a file into a new owner-only one (``shutil.copy2`` would copy its mode too,
    and an older vetfluid's file was readable to all), keeping its times."""
    descriptor = os.open(copy, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    with open(source, "rb") as original, os.fdopen(descriptor, "wb") as out:
        shutil.copyfileobj(original, out)
        out.flush()
        os.fsync(out.fileno())
    times = source.stat()
    os.utime(copy, ns=(times.st_atime_ns, times.st_mtime_ns))


def _refuse_new_problems(
    candidate: SpeciesTable, *, restoring: tuple[str, str] | None = None
) -> None:
    """Refuse a write after which a row would be ignored that is not ignored now (the row
    written, or one that depended on the row removed); a row already ignored (typed by
    hand) is no reason to refuse an edit elsewhere, and stays as typed, still reported."""
    before = {notice.key for notice in load_table().notices}
    for notice in candidate.notices:
        if notice.key not in before and (notice.species_id, notice.parameter) != restoring:
            raise SpeciesDataError(notice.problem, location=notice.location)


def _fsync_folder(folder: Path) -> None:
    """Make the rename itself durable where the platform allows it (not on Windows)."""
    if os.name != "posix":
        return
    descriptor = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(descriptor)
    finally:
        os.close(descriptor)


# ---- export -----------------------------------------------------------------------
def export_effective_table(path: Path, *, table: SpeciesTable | None = None) -> int:
    """Write every effective species value (after inheritance and overrides) as long CSV.

    Columns: :data:`EXPORT_COLUMNS`. One row per (species, parameter) in table
    order; numbers in their exact stored form. The file is replaced atomically.
    Returns the number of rows written.
    """
    table = table if table is not None else load_table()
    path = Path(path)
    rows = [
        {
            key: safe_cell(text)  # a clinic note starting with "=" must stay text
            for key, text in (
                _stored_cells(v) | {"origin": v.origin, "defined_on": v.defined_on}
            ).items()
        }
        for v in table
    ]
    try:
        handle = tempfile.NamedTemporaryFile(
            dir=path.parent, prefix=f".{path.name}.", suffix=".tmp", delete=False
        )
    except FileNotFoundError:
        raise InputError(
            f"the folder {path.parent} does not exist",
            field="path",
            value=str(path),
            fix="choose an existing folder",
        ) from None
    handle.close()
    staging = Path(handle.name)
    try:
        _write_csv(staging, list(EXPORT_COLUMNS), rows)
        os.replace(staging, path)
    finally:
        staging.unlink(missing_ok=True)
    return len(rows)
