"""Reading the shipped CSV tables: rows with their ``file:line``, numbers checked.

Plain ``csv`` rather than pandas so the CLI starts fast; every error names the
file and line and what to fix.
"""

from __future__ import annotations

import csv
from collections.abc import Iterator
from pathlib import Path

from vetfluid.errors import SpeciesDataError


def read_rows(path: Path, required_columns: tuple[str, ...]) -> list[tuple[str, dict[str, str]]]:
    """Rows of a CSV with their ``file:line``; blank rows skipped.

    Missing columns, rows with too many or too few fields and text that is not
    UTF-8 are errors (a byte-order mark, as spreadsheets write, is accepted).
    """
    try:
        with path.open(newline="", encoding="utf-8-sig") as handle:
            reader = csv.DictReader(handle)
            header = reader.fieldnames or []
            missing = [c for c in required_columns if c not in header]
            if missing:
                raise SpeciesDataError(
                    f"missing column(s) {', '.join(missing)}",
                    location=f"{path.name}:1",
                    fix=f"the header must include: {', '.join(required_columns)}",
                )
            rows = []
            for row in reader:
                location = f"{path.name}:{reader.line_num}"
                if None in row or any(v is None for v in row.values()):
                    if not any((v or "").strip() for v in row.values() if isinstance(v, str)):
                        continue
                    raise SpeciesDataError(
                        "wrong number of fields",
                        location=location,
                        fix=f"give {len(header)} fields; quote a note that holds a comma",
                    )
                cleaned = {k: v.strip() for k, v in row.items()}
                if any(cleaned.values()):
                    rows.append((location, cleaned))
            return rows
    except UnicodeDecodeError as exc:
        raise SpeciesDataError(
            "file is not UTF-8 text", location=f"{path.name}:1", fix="save the file as UTF-8"
        ) from exc


def unique_rows(
    path: Path, required_columns: tuple[str, ...], *, key: str, what: str
) -> Iterator[tuple[str, dict[str, str]]]:
    """The rows of :func:`read_rows`, each ``key`` (a formula, an id) listed once: a second
    row with the same one is an error naming both lines, and so is a file with no rows."""
    first_line: dict[str, str] = {}
    for location, row in read_rows(path, required_columns):
        name = row[key]
        if name in first_line:
            raise SpeciesDataError(
                f"{what} {name!r} already listed at {first_line[name]}",
                location=location,
                fix=f"keep one row per {what}",
            )
        first_line[name] = location
        yield location, row
    if not first_line:
        raise SpeciesDataError("no rows", location=f"{path.name}:1", fix="add at least one row")


def parse_number(text: str, *, location: str, column: str) -> float | None:
    if text == "":
        return None
    try:
        number = float(text)
    except ValueError:
        raise SpeciesDataError(
            f"{column} {text!r} is not a number", location=location, fix="write a plain number"
        ) from None
    if number != number or number in (float("inf"), float("-inf")):
        raise SpeciesDataError(f"{column} must be finite", location=location)
    return number


def require_choice(value: str, allowed: tuple[str, ...], *, column: str, location: str) -> str:
    """A cell that must be one of a few words; the error lists them."""
    if value not in allowed:
        raise SpeciesDataError(
            f"{column} {value!r} unknown", location=location, fix=f"use {', '.join(allowed)}"
        )
    return value
