"""Resuscitation: bolus size per species and route, reassessment, cumulative cap.

* Bolus: the species' isotonic crystalloid bolus (dog 15–20, cat 5–10 mL/kg as
  recalled from Pardo M et al., 2024 AAHA Fluid Therapy Guidelines) given over
  ``bolus_minutes`` (15–30 min, Pardo 2024), then reassess.
* Cap: the shock dose (dog 80–90, cat 50–55 mL/kg; Davis H et al. 2013), given
  in 25% steps with reassessment (Davis 2013). Where the table has no shock dose
  the cap is one blood volume, and where it has no bolus the step is a quarter
  of the cap — both shown as derived.
* Routes: IV (peripheral or central) or IO only; never SC or intracoelomic for
  shock, and no KCl in resuscitation boluses (Côté 2020).
* A fluid with a dose of its own (hypertonic saline, about 4 mL/kg over at least
  5 min, ``species_data/fluid_roles.csv``) is given once at that dose: its dose is
  both the bolus and the cap.
"""

from __future__ import annotations

from dataclasses import dataclass

from vetfluid.common.checks import require_number
from vetfluid.common.errors import InputError
from vetfluid.tables.species import SpeciesTable, SpeciesValue

RESUSCITATION_ROUTES = ("iv", "cvc", "io")
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
    cap_from: str  # shock dose | blood volume | the fluid's own dose
    bolus_from: str  # species bolus | quarter of cap | the fluid's own dose
    max_boluses: int
    reassess: str
    provenance: tuple[SpeciesValue, ...]


def resuscitation(
    table: SpeciesTable,
    species_id: str,
    weight_kg: float,
    *,
    route: str = "iv",
    fluid_dose_ml_per_kg: float | None = None,
    fluid_min_minutes: float | None = None,
) -> Resuscitation:
    """The bolus plan for one patient (see module docstring for the method).

    ``fluid_dose_ml_per_kg`` and ``fluid_min_minutes`` are the bolus fluid's own dose and
    shortest time, where it has them (fluid_roles.csv): one bolus of that dose, run over
    the species' bolus time or the fluid's shortest, whichever is longer."""
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
    run_minutes = minutes.number
    if fluid_dose_ml_per_kg is not None:
        bolus_per_kg = cap_per_kg = fluid_dose_ml_per_kg
        bolus_from = cap_from = "the fluid's own dose"
        cap_values = []
        run_minutes = max(run_minutes, fluid_min_minutes or 0.0)
    bolus_ml = bolus_per_kg * weight_kg
    return Resuscitation(
        route=route,
        bolus_ml_per_kg=bolus_per_kg,
        bolus_ml=bolus_ml,
        minutes=run_minutes,
        rate_ml_per_h=bolus_ml / (run_minutes / 60.0),
        cap_ml_per_kg=cap_per_kg,
        cap_ml=cap_per_kg * weight_kg,
        cap_from=cap_from,
        bolus_from=bolus_from,
        max_boluses=int(cap_per_kg // bolus_per_kg),
        reassess=REASSESS,
        provenance=(*cap_values, minutes),
    )
