"""Reading the shipped CSV tables: rows with their ``file:line``, numbers checked.

Plain ``csv`` rather than pandas so the CLI starts fast; every error names the
file and line and what to fix, and text from the file is quoted (:func:`quoted`) so a
message stays one line.
"""

from __future__ import annotations

import csv
import re
from collections.abc import Iterator
from pathlib import Path

from vetfluid.common.errors import SpeciesDataError

# Far above any table vetfluid ships (the largest is a few tens of kB): a bigger file is
# not one of ours, and reading it whole could exhaust the memory.
MAX_TABLE_BYTES = 8 * 1024 * 1024


def quoted(text: str, *, most: int = 60) -> str:
    """Text from a file, quoted for a message on one line: control characters escaped
    (``repr``) and long text cut, so a hostile cell cannot break or flood the line."""
    return repr(text if len(text) <= most else text[: most - 1] + "…")


def _open_table(path: Path) -> None:
    """Refuse, in words, a path that is no plain readable file of a sane size: a folder,
    a pipe or a device would raise or block in ``open``."""
    try:
        if path.is_dir():
            raise SpeciesDataError(
                "is a folder, not a file", location=path.name, fix=f"rename or remove {path}"
            )
        if not path.exists():
            raise SpeciesDataError("is missing", location=path.name, fix=f"restore {path}")
        if not path.is_file():
            raise SpeciesDataError(
                "is not a plain file", location=path.name, fix=f"replace {path} with a CSV file"
            )
        size = path.stat().st_size
    except OSError as exc:
        raise SpeciesDataError(
            f"cannot be read ({exc.strerror or exc})", location=path.name, fix=f"check {path}"
        ) from exc
    if size > MAX_TABLE_BYTES:
        raise SpeciesDataError(
            f"is {size / 2**20:.0f} MiB, more than any vetfluid table "
            f"({MAX_TABLE_BYTES // 2**20} MiB at most)",
            location=path.name,
            fix=f"check that {path} is the right file",
        )


def read_rows(
    path: Path,
    required_columns: tuple[str, ...],
    *,
    problems: list[SpeciesDataError] | None = None,
) -> list[tuple[str, dict[str, str]]]:
    """Rows of a CSV with their ``file:line``; blank rows skipped.

    Missing columns, rows with too many or too few fields, text that is not UTF-8, a
    field longer than the csv module's limit and a path that is no plain file are
    :class:`SpeciesDataError` naming the file and line. With ``problems`` given, a row
    with the wrong number of fields is added there and left out instead (the clinic
    overrides: one bad row must not cost the others); what spoils the whole file still
    raises. A byte-order mark, as spreadsheets write, is accepted.
    """
    _open_table(path)
    reader = None
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
                    error = SpeciesDataError(
                        "wrong number of fields",
                        location=location,
                        fix=f"give {len(header)} fields; quote a note that holds a comma",
                    )
                    if problems is None:
                        raise error
                    problems.append(error)
                    continue
                cleaned = {k: v.strip() for k, v in row.items()}
                if any(cleaned.values()):
                    rows.append((location, cleaned))
            return rows
    except UnicodeDecodeError as exc:
        raise SpeciesDataError(
            "file is not UTF-8 text", location=f"{path.name}:1", fix="save the file as UTF-8"
        ) from exc
    except csv.Error as exc:
        # the line being read (DictReader's own count moves only after a good row)
        line = reader.reader.line_num if reader is not None else 1
        limit = csv.field_size_limit()
        message = (
            f"a field is longer than {limit} characters"
            if "field limit" in str(exc)
            else f"the file is not readable CSV ({exc})"
        )
        raise SpeciesDataError(
            message, location=f"{path.name}:{line}", fix="check the quotes and the notes"
        ) from exc
    except OSError as exc:
        raise SpeciesDataError(
            f"cannot be read ({exc.strerror or exc})", location=path.name, fix=f"check {path}"
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


_PLAIN_NUMBER = re.compile(r"[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?|[+-]?(inf|nan)")


def parse_number(text: str, *, location: str, column: str) -> float | None:
    if text == "":
        return None
    try:
        # digits 0–9 only, as everywhere a number is read (float() would take ٢٥ or 2_5)
        if not _PLAIN_NUMBER.fullmatch(text.strip()):
            raise ValueError(text)
        number = float(text)
    except ValueError:
        raise SpeciesDataError(
            f"{column} {quoted(text)} is not a number",
            location=location,
            fix="write a plain number",
        ) from None
    if number != number or number in (float("inf"), float("-inf")):
        raise SpeciesDataError(f"{column} must be finite", location=location)
    return number


def require_choice(value: str, allowed: tuple[str, ...], *, column: str, location: str) -> str:
    """A cell that must be one of a few words; the error lists them."""
    if value not in allowed:
        raise SpeciesDataError(
            f"{column} {quoted(value)} unknown", location=location, fix=f"use {', '.join(allowed)}"
        )
    return value
