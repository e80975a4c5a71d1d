"""What each fluid may be used for, and what each route tolerates — both as data.

* ``species_data/fluid_roles.csv``: every fluid in the library has a row saying whether
  it may be the **carrier** (the bag that runs for replacement and maintenance) and
  whether it may be a **resuscitation** bolus, with a fluid-specific most per kg and
  shortest time where the fluid has one (hypertonic saline: a single small dose). A
  fluid with neither role is an **additive** only (KCl and dextrose concentrates): it
  is diluted into a bag, never given as one. A fluid that does not stay in the
  extracellular fluid (5 % dextrose, 0.45 % saline) is never a resuscitation bolus
  (Davis H et al. 2013 AAHA/AAFP Fluid Therapy Guidelines; DiBartola 2012).
* ``species_data/route_limits.csv``: for each route, the most osmolarity, potassium and
  dextrose a carrier bag may hold, each limit with its severity and source (SC
  potassium 30–35 mEq/L, DiBartola 2012; no dextrose under the skin, Vet Clin North
  Am 2017; peripheral-vein osmolarity, recalled).

Every check that uses these rows lives in :mod:`vetfluid.planning.safety`, so the window, the
CLI, plan files and print refuse the same plans.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from types import MappingProxyType

from vetfluid.common.csvfiles import parse_number, read_rows, require_choice
from vetfluid.common.errors import SpeciesDataError
from vetfluid.common.findings import SEVERITIES
from vetfluid.common.paths import resource_dir
from vetfluid.tables.species import BASES

ROLE_COLUMNS = (
    "fluid_id", "carrier", "resuscitation", "bolus_max_ml_per_kg", "bolus_min_minutes",
    "source_id", "basis", "note",
)  # fmt: skip
ROUTE_LIMIT_COLUMNS = ("route", "limit", "value", "unit", "severity", "source_id", "basis", "note")
ROUTE_LIMIT_KINDS = (
    "max_osmolarity_mosm_per_l",  # in mOsm/L
    "max_osmolarity_ratio_to_plasma",  # × the patient's species' plasma osmolality
    "max_k_mmol_per_l",
    "max_dextrose_g_per_l",
)
_YES_NO = {"yes": True, "no": False}


@dataclass(frozen=True, kw_only=True)
class FluidRoles:
    """The roles one fluid may take in a plan."""

    fluid_id: str
    carrier: bool
    resuscitation: bool
    bolus_max_ml_per_kg: float | None  # a fluid-specific cap on all its boluses together
    bolus_min_minutes: float | None  # the shortest time one bolus of it may run
    source_id: str | None
    basis: str
    note: str

    @property
    def additive_only(self) -> bool:
        return not (self.carrier or self.resuscitation)


@dataclass(frozen=True, kw_only=True)
class RouteLimit:
    """One limit on what a carrier bag given by one route may hold."""

    route: str
    limit: str  # one of ROUTE_LIMIT_KINDS
    value: float
    unit: str
    severity: str
    source_id: str | None
    basis: str
    note: str


def _flag(text: str, *, column: str, location: str) -> bool:
    require_choice(text, tuple(_YES_NO), column=column, location=location)
    return _YES_NO[text]


def _optional_positive(text: str, *, column: str, location: str) -> float | None:
    value = parse_number(text, location=location, column=column)
    if value is not None and value <= 0:
        raise SpeciesDataError(f"{column} must be positive", location=location)
    return value


@cache
def load_fluid_roles(data_dir: Path | None = None) -> Mapping[str, FluidRoles]:
    """Read and validate ``fluid_roles.csv`` (one row per fluid)."""
    path = (data_dir or resource_dir("species_data")) / "fluid_roles.csv"
    roles: dict[str, FluidRoles] = {}
    for location, row in read_rows(path, ROLE_COLUMNS):
        fluid_id = row["fluid_id"]
        if fluid_id in roles:
            raise SpeciesDataError(f"duplicate fluid {fluid_id!r}", location=location)
        require_choice(row["basis"], BASES, column="basis", location=location)
        entry = FluidRoles(
            fluid_id=fluid_id,
            carrier=_flag(row["carrier"], column="carrier", location=location),
            resuscitation=_flag(row["resuscitation"], column="resuscitation", location=location),
            bolus_max_ml_per_kg=_optional_positive(
                row["bolus_max_ml_per_kg"], column="bolus_max_ml_per_kg", location=location
            ),
            bolus_min_minutes=_optional_positive(
                row["bolus_min_minutes"], column="bolus_min_minutes", location=location
            ),
            source_id=row["source_id"] or None,
            basis=row["basis"],
            note=row["note"],
        )
        if not entry.resuscitation and entry.bolus_max_ml_per_kg is not None:
            raise SpeciesDataError("a bolus dose for a fluid without that role", location=location)
        roles[fluid_id] = entry
    return MappingProxyType(roles)


def roles(fluid_id: str) -> FluidRoles:
    """The roles of one library fluid. Every fluid must have a row: a fluid without one
    is a data error, never a fluid that may be given any way."""
    table = load_fluid_roles()
    if fluid_id not in table:
        raise SpeciesDataError(
            f"fluid {fluid_id!r} has no row in fluid_roles.csv; its roles are unknown",
            location="fluid_roles.csv",
        )
    return table[fluid_id]


def carriers() -> tuple[str, ...]:
    """Fluid ids that may be a plan's bag, in the table's order (what the window offers)."""
    return tuple(f for f, r in load_fluid_roles().items() if r.carrier)


def resuscitation_fluids() -> tuple[str, ...]:
    """Fluid ids that may be a resuscitation bolus, in the table's order."""
    return tuple(f for f, r in load_fluid_roles().items() if r.resuscitation)


@cache
def load_route_limits(data_dir: Path | None = None) -> tuple[RouteLimit, ...]:
    """Read and validate ``route_limits.csv``."""
    path = (data_dir or resource_dir("species_data")) / "route_limits.csv"
    rows = []
    for location, row in read_rows(path, ROUTE_LIMIT_COLUMNS):
        require_choice(row["limit"], ROUTE_LIMIT_KINDS, column="limit", location=location)
        require_choice(row["severity"], SEVERITIES, column="severity", location=location)
        require_choice(row["basis"], BASES, column="basis", location=location)
        value = parse_number(row["value"], location=location, column="value")
        if value is None or value < 0:
            raise SpeciesDataError("a route limit needs a value of 0 or more", location=location)
        rows.append(
            RouteLimit(
                route=row["route"],
                limit=row["limit"],
                value=value,
                unit=row["unit"],
                severity=row["severity"],
                source_id=row["source_id"] or None,
                basis=row["basis"],
                note=row["note"],
            )  # fmt: skip
        )
    return tuple(rows)


def route_limits(route: str) -> tuple[RouteLimit, ...]:
    """The limits on a carrier bag for one route, hard ones first."""
    found = [r for r in load_route_limits() if r.route == route]
    return tuple(sorted(found, key=lambda r: (r.severity != "hard", r.limit)))
