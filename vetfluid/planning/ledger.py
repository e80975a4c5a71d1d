"""What a plan used and what it found, gathered while it is built.

The ledger records each species value once (its provenance travels with the
plan) and every finding in the order it was raised.
"""

from __future__ import annotations

from vetfluid.common.findings import Finding
from vetfluid.tables.species import SpeciesTable, SpeciesValue


class Ledger:
    def __init__(self, table: SpeciesTable, species_id: str, *, weight_kg: float) -> None:
        self.table = table
        self.species_id = species_id
        self.weight_kg = weight_kg
        self.species = table.species(species_id)
        self.values: dict[str, SpeciesValue] = {}
        self.findings: list[Finding] = []

    def use(self, *values: SpeciesValue) -> None:
        """Record species values that a calculation used (first use wins)."""
        for value in values:
            self.values.setdefault(value.parameter, value)

    def value(self, parameter: str) -> SpeciesValue:
        """The species' effective value (raises when missing), recorded as used."""
        found = self.table.value(self.species_id, parameter)
        self.use(found)
        return found

    def get(self, parameter: str) -> SpeciesValue | None:
        """The value or None, recorded as used when present."""
        found = self.table.get(self.species_id, parameter)
        if found is not None:
            self.use(found)
        return found

    def add(
        self,
        severity: str,
        code: str,
        message: str,
        action: str = "",
        source_id: str | None = None,
    ) -> None:
        self.findings.append(
            Finding(
                severity=severity, code=code, message=message, action=action, source_id=source_id
            )
        )
