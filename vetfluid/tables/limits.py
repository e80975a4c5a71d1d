"""Safety limits are data (``species_data/safety_limits.csv``), each with its basis."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from pathlib import Path

from vetfluid.common.csvfiles import parse_number, read_rows, require_choice
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.findings import SEVERITIES
from vetfluid.common.paths import resource_dir
from vetfluid.tables.species import BASES


@dataclass(frozen=True, kw_only=True)
class Limit:
    limit_id: str
    value: float
    unit: str
    severity: str
    source_id: str | None
    basis: str
    note: str


@cache
def load_limits(data_dir: Path | None = None) -> dict[str, Limit]:
    """Read and validate the safety limits."""
    path = (data_dir or resource_dir("species_data")) / "safety_limits.csv"
    limits: dict[str, Limit] = {}
    columns = ("limit_id", "value", "unit", "severity", "source_id", "basis", "note")
    for location, row in read_rows(path, columns):
        if row["limit_id"] in limits:
            raise SpeciesDataError(f"duplicate limit {row['limit_id']!r}", location=location)
        require_choice(row["severity"], SEVERITIES, column="severity", location=location)
        require_choice(row["basis"], BASES, column="basis", location=location)
        value = parse_number(row["value"], location=location, column="value")
        if value is None:
            raise SpeciesDataError("limit has no value", location=location)
        limits[row["limit_id"]] = Limit(
            limit_id=row["limit_id"],
            value=value,
            unit=row["unit"],
            severity=row["severity"],
            source_id=row["source_id"] or None,
            basis=row["basis"],
            note=row["note"],
        )
    return limits


def limit(limit_id: str) -> Limit:
    """One limit by id; an unknown id lists the known ones."""
    limits = load_limits()
    if limit_id not in limits:
        raise InputError(
            f"unknown limit {limit_id!r}", field="limit", value=limit_id, fix=", ".join(limits)
        )
    return limits[limit_id]
