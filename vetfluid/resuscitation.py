"""Resuscitation: bolus size per species and route, reassessment, cumulative cap.

* Bolus: the species' isotonic crystalloid bolus (dog 15–20, cat 5–10 mL/kg as
  recalled from Pardo M et al., 2024 AAHA Fluid Therapy Guidelines) given over
  ``bolus_minutes`` (15–30 min, Pardo 2024), then reassess.
* Cap: the shock dose (dog 80–90, cat 50–55 mL/kg; Davis H et al. 2013), given
  in 25% steps with reassessment (Davis 2013). Where the table has no shock dose
  the cap is one blood volume, and where it has no bolus the step is a quarter
  of the cap — both shown as derived.
* Routes: IV or IO only; never SC or intracoelomic for shock, and no KCl in
  resuscitation boluses (Côté 2020).
"""

from __future__ import annotations

from dataclasses import dataclass

from vetfluid.checks import require_number
from vetfluid.errors import InputError
from vetfluid.species import SpeciesTable, SpeciesValue

RESUSCITATION_ROUTES = ("iv", "io")
STEP_FRACTION_OF_CAP = 0.25  # Davis 2013: give the shock dose in 25% steps and reassess
REASSESS = (
    "Reassess after each bolus: heart rate, pulse quality, mucous membranes and CRT, "
    "mentation, blood pressure, lactate. Stop when perfusion is restored."
)


@dataclass(frozen=True, kw_only=True)
class Resuscitation:
    """One planned bolus and the cap on all boluses together."""

    route: str
    bolus_ml_per_kg: float
    bolus_ml: float
    minutes: float
    rate_ml_per_h: float
    cap_ml_per_kg: float
    cap_ml: float
    cap_from: str  # shock dose | blood volume
    bolus_from: str  # species bolus | quarter of cap
    max_boluses: int
    reassess: str
    provenance: tuple[SpeciesValue, ...]


def resuscitation(
    table: SpeciesTable, species_id: str, weight_kg: float, *, route: str = "iv"
) -> Resuscitation:
    """The bolus plan for one patient (see module docstring for the method)."""
    if route not in RESUSCITATION_ROUTES:
        raise InputError(
            f"resuscitation boluses are not given by route {route!r}",
            field="route",
            value=route,
            fix="use an IV or IO line for shock",
        )
    require_number(weight_kg, "weight_kg", positive=True, unit="kg")
    shock = table.get(species_id, "shock_dose_ml_per_kg")
    if shock is not None:
        cap_values = [shock]
        cap_per_kg, cap_from = shock.number, "shock dose"
    else:
        blood = table.value(species_id, "blood_volume_ml_per_kg")
        cap_values = [blood]
        cap_per_kg, cap_from = blood.number, "blood volume"
    bolus = table.get(species_id, "bolus_ml_per_kg")
    if bolus is not None:
        bolus_per_kg, bolus_from = bolus.number, "species bolus"
        cap_values.append(bolus)
    else:
        bolus_per_kg, bolus_from = STEP_FRACTION_OF_CAP * cap_per_kg, "quarter of cap"
    minutes = table.value(species_id, "bolus_minutes")
    bolus_ml = bolus_per_kg * weight_kg
    return Resuscitation(
        route=route,
        bolus_ml_per_kg=bolus_per_kg,
        bolus_ml=bolus_ml,
        minutes=minutes.number,
        rate_ml_per_h=bolus_ml / (minutes.number / 60.0),
        cap_ml_per_kg=cap_per_kg,
        cap_ml=cap_per_kg * weight_kg,
        cap_from=cap_from,
        bolus_from=bolus_from,
        max_boluses=int(cap_per_kg // bolus_per_kg),
        reassess=REASSESS,
        provenance=(*cap_values, minutes),
    )
