"""Electrolytes: potassium supplementation and predicted sodium change.

* Potassium scale: KCl to add per litre by serum K band, with the fastest rate
  for each band — Côté E (ed.), Clinical Veterinary Advisor: Dogs and Cats, 4th
  ed., 2020 (after Greene 1975), shipped as ``species_data/potassium_scale.csv``.
  Ceiling 0.5 mmol/kg/h (Côté 2020) — mEq and mmol are equal for K⁺.
* Sodium: Adrogué HJ, Madias NE. Hypernatremia. N Engl J Med 2000;342:1493–1499:
  change in serum Na after one litre of infusate =
  (infusate Na + infusate K − serum Na) / (TBW + 1), TBW in litres. Exact only for
  one litre; rates are derived by scaling that change per litre.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from pathlib import Path

from vetfluid.checks import require_number, require_patient_weight
from vetfluid.csvfiles import parse_number, read_rows
from vetfluid.errors import SpeciesDataError
from vetfluid.paths import resource_dir


@dataclass(frozen=True, kw_only=True)
class PotassiumBand:
    serum_k_max: float
    kcl_mmol_per_l: float
    max_rate_ml_per_kg_h: float
    source_id: str
    basis: str
    note: str


@cache
def load_potassium_scale(data_dir: Path | None = None) -> tuple[PotassiumBand, ...]:
    """The scale, bands in ascending order of serum K."""
    path = (data_dir or resource_dir("species_data")) / "potassium_scale.csv"
    columns = ("serum_k_max_mmol_per_l", "kcl_mmol_per_l", "max_rate_ml_per_kg_h", "source_id")
    bands = []
    for location, row in read_rows(path, (*columns, "basis", "note")):
        numbers = [parse_number(row[c], location=location, column=c) for c in columns[:3]]
        if any(n is None or n <= 0 for n in numbers):
            raise SpeciesDataError("scale values must be positive numbers", location=location)
        k_max, kcl, rate = (float(n) for n in numbers if n is not None)
        if bands and k_max <= bands[-1].serum_k_max:
            raise SpeciesDataError("bands must ascend in serum K", location=location)
        bands.append(
            PotassiumBand(
                serum_k_max=k_max,
                kcl_mmol_per_l=kcl,
                max_rate_ml_per_kg_h=rate,
                source_id=row["source_id"],
                basis=row["basis"],
                note=row["note"],
            )
        )
    return tuple(bands)


def _finite(name: str, value: float, low: float, high: float, unit: str) -> float:
    return require_number(value, name, low=low, high=high, unit=unit)


def potassium_band(serum_k: float) -> PotassiumBand | None:
    """The band for a serum K (mmol/L); None above the scale (no supplementation)."""
    _finite("serum_k", serum_k, 0.5, 12, "mmol/L")
    for band in load_potassium_scale():
        if serum_k <= band.serum_k_max:
            return band
    return None


def potassium_mmol_per_kg_h(
    *, k_mmol_per_l: float, rate_ml_per_h: float, weight_kg: float
) -> float:
    """Potassium delivered (mmol/kg/h) = K concentration × rate ÷ 1000 ÷ BW."""
    require_patient_weight(weight_kg)
    return k_mmol_per_l * rate_ml_per_h / 1000.0 / weight_kg


def max_rate_for_potassium(
    *, k_mmol_per_l: float, weight_kg: float, ceiling: float
) -> float | None:
    """Fastest rate (mL/h) that keeps K at or under ``ceiling`` mmol/kg/h; None if K is 0."""
    if k_mmol_per_l <= 0:
        return None
    return ceiling * weight_kg * 1000.0 / k_mmol_per_l


def sodium_change_per_litre(
    *, serum_na: float, infusate_na: float, infusate_k: float, tbw_l: float
) -> float:
    """Adrogué–Madias: ΔNa (mmol/L) after 1 L = (Na_inf + K_inf − Na_serum) / (TBW + 1)."""
    _finite("serum_na", serum_na, 80, 230, "mmol/L")
    _finite("infusate_na", infusate_na, 0, 2000, "mmol/L")
    _finite("infusate_k", infusate_k, 0, 2000, "mmol/L")
    _finite("tbw_l", tbw_l, 1e-4, 2000, "L")
    return (infusate_na + infusate_k - serum_na) / (tbw_l + 1.0)


def max_rate_for_sodium(*, change_per_litre: float, max_change_per_h: float) -> float | None:
    """Fastest rate (mL/h) that keeps the predicted Na change within ``max_change_per_h``.

    Rate (L/h) = limit (mmol/L/h) ÷ |ΔNa per litre|; None when the fluid does not
    move sodium (no limit from this rule).
    """
    _finite("max_change_per_h", max_change_per_h, 0.01, 5, "mmol/L/h")
    if abs(change_per_litre) < 1e-9:
        return None
    return max_change_per_h / abs(change_per_litre) * 1000.0


@dataclass(frozen=True, kw_only=True)
class PotassiumSummary:
    """Potassium in a plan: what was added, what it delivers, and the limits."""

    serum_k: float | None
    kcl_mmol_per_l: float
    added_by: str  # serum-K scale | entered by hand
    bag_k_mmol_per_l: float
    mmol_per_kg_per_h: float  # at the first rate after resuscitation
    peak_rate_ml_per_h: float  # the fastest rate that carries potassium
    peak_mmol_per_kg_per_h: float  # potassium at that rate
    ceiling_mmol_per_kg_per_h: float
    max_rate_ml_per_h: float | None
    band_max_rate_ml_per_kg_h: float | None
    source_id: str | None


@dataclass(frozen=True, kw_only=True)
class SodiumSummary:
    """Predicted serum Na change for the plan's fluid (Adrogué–Madias 2000)."""

    serum_na: float
    tbw_l: float
    delta_na_per_l: float
    predicted_change_per_h: float
    max_change_per_h: float
    max_rate_ml_per_h: float | None
    source_id: str = "adrogue2000"


def sodium_summary(
    *,
    serum_na: float,
    infusate_na: float,
    infusate_k: float,
    tbw_l: float,
    rate_ml_per_h: float,
    max_change_per_h: float,
) -> SodiumSummary:
    """ΔNa per litre, the change per hour at ``rate_ml_per_h`` and the fastest safe rate."""
    change = sodium_change_per_litre(
        serum_na=serum_na, infusate_na=infusate_na, infusate_k=infusate_k, tbw_l=tbw_l
    )
    return SodiumSummary(
        serum_na=serum_na,
        tbw_l=tbw_l,
        delta_na_per_l=change,
        predicted_change_per_h=change * rate_ml_per_h / 1000.0,
        max_change_per_h=max_change_per_h,
        max_rate_ml_per_h=max_rate_for_sodium(
            change_per_litre=change, max_change_per_h=max_change_per_h
        ),
    )
