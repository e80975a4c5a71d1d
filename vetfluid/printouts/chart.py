"""Weight-band chart: a quick reference across a species' weight range.

For each band: maintenance (mL/day and mL/h, the species' default method, at the
preferred temperature for ectotherms), the deficit per 5 % dehydration (BW × 0.05 L;
Davis 2013), the resuscitation bolus where a line is practical (see
:mod:`vetfluid.physiology.resuscitation`), and drops/min of the maintenance rate for a drop
factor, by the rule the schedule uses for a gravity drip (:mod:`vetfluid.physiology.delivery`):
the rate to the figures shown, drops/min = that rate × drops/mL ÷ 60, and above
120 drops/min (too fast to count by eye) timed by the bag's volume marks instead.
Computed on numpy arrays: one call per species.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vetfluid.common.checks import require_number
from vetfluid.common.formatting import format_quantity
from vetfluid.physiology import delivery
from vetfluid.physiology.resuscitation import resuscitation
from vetfluid.planning.schedule import by_the_marks
from vetfluid.tables.species import SpeciesTable, SpeciesValue, load_table

DEFAULT_BANDS = 10


@dataclass(frozen=True, kw_only=True)
class Chart:
    species_id: str
    species_name: str
    method: str
    weight_kg: np.ndarray
    maintenance_ml_per_day: np.ndarray
    maintenance_ml_per_h: np.ndarray
    deficit_ml_per_5_percent: np.ndarray
    bolus_ml: np.ndarray  # NaN where a continuous line is not practical
    drops_per_min: np.ndarray  # of the rate as shown (delivery.drip_ml_per_h)
    drops_countable: np.ndarray  # bool: False above delivery.COUNTABLE_DROPS_PER_MIN
    drop_factor: float
    provenance: tuple[SpeciesValue, ...]  # every species value the chart used
    citations: dict[str, str]  # source id → citation for those values

    COLUMNS = (
        "weight_kg", "maintenance_ml_per_day", "maintenance_ml_per_h",
        "deficit_ml_per_5_percent", "bolus_ml", "drops_per_min", "drops_countable",
    )  # fmt: skip

    def rows(self) -> list[list[float | bool | None]]:
        """One row per band in :attr:`COLUMNS` order: numbers (None where there is no
        bolus), and whether the drip's drops can be counted."""
        columns = [getattr(self, name) for name in self.COLUMNS]
        return [
            [bool(v) if isinstance(v, np.bool_) else None if np.isnan(v) else float(v)
             for v in values]
            for values in zip(*columns, strict=True)
        ]  # fmt: skip

    def drip_texts(self) -> list[str]:
        """How to set each band's maintenance rate on a gravity drip, worded as the
        schedule words it: ``19.9 drops/min``, or for a drip too fast to count, ``too fast
        to count drops: set the clamp by the bag's volume marks, 33.3 mL every 15 min``."""
        texts = []
        for rate, drops, countable in zip(
            self.maintenance_ml_per_h, self.drops_per_min, self.drops_countable, strict=True
        ):
            if countable:
                texts.append(format_quantity(float(drops), "drops/min"))
                continue
            texts.append(by_the_marks(delivery.drip_ml_per_h(float(rate))))
        return texts


def maintenance_ml_per_day(
    table: SpeciesTable, species_id: str, weights: np.ndarray
) -> tuple[np.ndarray, str, list[SpeciesValue]]:
    """The species' default maintenance for many weights at once (same methods and constants
    as :func:`vetfluid.physiology.maintenance.maintenance`; ectotherms at their preferred
    temperature).
    Returns mL/day, the method and the species values used."""
    used: list[SpeciesValue] = []

    def value(parameter: str) -> SpeciesValue:
        used.append(table.value(species_id, parameter))
        return used[-1]

    method = str(value("maintenance_method").value)
    if method == "linear":
        result = value("maintenance_ml_per_kg_day").number * weights
    elif method == "allometric":
        result = (
            value("maintenance_allometric_a").number
            * weights ** value("maintenance_allometric_b").number
        )
    else:
        k = value("energy_k_kcal_per_day").number
        b = value("energy_exponent").number
        multiple = value("maintenance_energy_multiple").number  # maintenance, not basal
        result = multiple * k * weights**b * value("water_ml_per_kcal").number
        if table.species(species_id).is_ectotherm:
            q10 = value("q10").number
            reference = value("energy_reference_temp_c").number
            preferred = value("preferred_temp_c").number
            result = result * q10 ** ((preferred - reference) / 10.0)
    return result, method, used


def weight_bands(low_kg: float, high_kg: float, bands: int) -> np.ndarray:
    """Evenly spaced bands, or log-spaced when the range spans more than tenfold."""
    if high_kg / low_kg > 10:
        return np.geomspace(low_kg, high_kg, bands)
    return np.linspace(low_kg, high_kg, bands)


def chart(
    species_id: str,
    *,
    drop_factor: float = 20,
    bands: int = DEFAULT_BANDS,
    table: SpeciesTable | None = None,
) -> Chart:
    table = table or load_table()
    delivery.check_drop_factor(drop_factor)
    require_number(bands, "bands", low=2, high=100)
    weight = table.value(species_id, "body_weight_kg")
    low = weight.low if weight.low is not None else weight.number
    high = weight.high if weight.high is not None else weight.number
    weights = weight_bands(low, high, int(bands)) if high > low else np.array([weight.number])
    ml_day, method, used = maintenance_ml_per_day(table, species_id, weights)
    bolus = resuscitation(table, species_id, 1.0)  # linear in weight
    bolus_per_kg = bolus.bolus_ml_per_kg
    line = table.value(species_id, "continuous_line_min_kg")
    line_min = line.number
    bolus_ml = np.where(weights >= line_min, bolus_per_kg * weights, np.nan)
    ml_h = ml_day / 24.0
    # a gravity drip runs its rate to the figures shown; its drops are that rate's
    drops = np.array(
        [delivery.drops_per_min(delivery.drip_ml_per_h(float(r)), drop_factor) for r in ml_h]
    )
    used_values = tuple({v.parameter: v for v in (weight, *used, *bolus.provenance, line)}.values())
    return Chart(
        species_id=species_id,
        species_name=table.species(species_id).common_name,
        method=method,
        weight_kg=weights,
        maintenance_ml_per_day=ml_day,
        maintenance_ml_per_h=ml_h,
        deficit_ml_per_5_percent=weights * 0.05 * 1000.0,
        bolus_ml=bolus_ml,
        drops_per_min=drops,
        drops_countable=np.array([delivery.countable(float(d)) for d in drops]),
        drop_factor=float(drop_factor),
        provenance=used_values,
        citations=table.citations(used_values),
    )
