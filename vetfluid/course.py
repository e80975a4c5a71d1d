"""The course of a plan: body-water compartments, weight and serum Na over time.

Pure numpy on a regular grid (1-minute steps by default, up to 14 days). The
equations, their sources and their simplifications are written out in
``docs/model.md``; in short:

* **Water and osmoles (Darrow–Yannet reasoning).** ECF and ICF are in osmotic
  equilibrium. ICF osmoles are fixed; infused fluid adds its water and its
  *effective* osmoles (Na, K, Cl, lactate, … but not glucose, which is
  metabolised) to the ECF. With π = (O_ecf + O_icf) / TBW, ECF = O_ecf / π and
  ICF = O_icf / π. So an isotonic crystalloid stays extracellular, free water
  (5% dextrose) spreads over total body water, and hypertonic saline draws water
  out of the cells.
* **Plasma and interstitium (two-compartment volume kinetics).** Fluid given IV
  or IO enters the plasma, fluid given SC or intracoelomically the interstitium.
  The excess of plasma over its equilibrium share of the ECF (plasma/ECF) decays
  with the species' ``crystalloid_distribution_half_life_min`` (a first-order
  form of Hahn's volume kinetics).
* **Serum Na (Adrogué–Madias, step by step).** Na × TBW is the exchangeable
  Na + K; each step adds the infusate's Na + K and water. For one litre and no
  losses this equals the closed form (Na_inf + K_inf − Na) / (TBW + 1).
* **Losses.** Maintenance and ongoing losses leave the ECF as fluid isotonic at
  the patient's starting osmolality and Na, so they change volumes, not Na.
* **Weight** = entered weight + net fluid balance (1 mL ≈ 1 g; Davis 2013).

The starting compartments are the species' fractions of the entered (dehydrated)
weight.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from vetfluid import fluids
from vetfluid.checks import require_number
from vetfluid.errors import InputError
from vetfluid.plan import Plan
from vetfluid.safety import LINE_ROUTES
from vetfluid.schedule import Phase
from vetfluid.species import SpeciesTable, SpeciesValue, load_table

MAX_HORIZON_H = 14 * 24.0


@dataclass(frozen=True, kw_only=True)
class Course:
    """Arrays on one grid (``hours``); volumes in mL, weight in kg, Na in mmol/L."""

    hours: np.ndarray
    given_ml: np.ndarray
    consumed_ml: np.ndarray
    plasma_ml: np.ndarray
    interstitial_ml: np.ndarray
    intracellular_ml: np.ndarray
    osmolality_mosm_per_kg: np.ndarray
    serum_na: np.ndarray | None
    weight_kg: np.ndarray
    remaining_deficit_ml: np.ndarray
    provenance: tuple[SpeciesValue, ...]

    def change_from_start(self) -> dict[str, np.ndarray]:
        """Each compartment's gain (mL) since hour 0, for plotting what the fluids did."""
        return {
            name: getattr(self, f"{name}_ml") - getattr(self, f"{name}_ml")[0]
            for name in ("plasma", "interstitial", "intracellular")
        }

    def at(self, hour: float) -> dict[str, float | None]:
        """Values at the grid point nearest ``hour``."""
        i = int(np.clip(np.searchsorted(self.hours, hour), 0, len(self.hours) - 1))
        if i > 0 and abs(self.hours[i - 1] - hour) < abs(self.hours[i] - hour):
            i -= 1
        return {
            "hour": float(self.hours[i]),
            "plasma_ml": float(self.plasma_ml[i]),
            "interstitial_ml": float(self.interstitial_ml[i]),
            "intracellular_ml": float(self.intracellular_ml[i]),
            "weight_kg": float(self.weight_kg[i]),
            "remaining_deficit_ml": float(self.remaining_deficit_ml[i]),
            "given_ml": float(self.given_ml[i]),
            "serum_na": None if self.serum_na is None else float(self.serum_na[i]),
        }


@dataclass(frozen=True)
class _Input:
    """One way fluid goes in: a rate over a span, or a dose at an instant."""

    start_h: float
    end_h: float  # equals start_h for a dose
    ml: float
    effective_mosm_per_l: float
    na_k_mmol_per_l: float
    into_plasma: bool


def _inputs(plan: Plan, extra: list[_Input]) -> list[_Input]:
    result = list(extra)
    for phase in plan.phases:
        fluid = plan.bolus_fluid if phase.kind == "resuscitation" else plan.bag
        comp = fluids.composition(fluid)
        common = {
            "effective_mosm_per_l": comp.effective_osmolarity_mosm_per_l,
            "na_k_mmol_per_l": comp.na_mmol_per_l + comp.k_mmol_per_l,
            "into_plasma": phase.route in LINE_ROUTES,
        }
        result.extend(_phase_inputs(phase, common))
    return result


def _phase_inputs(phase: Phase, common: dict) -> list[_Input]:
    if phase.mode == "continuous":
        return [_Input(phase.start_h, phase.end_h, phase.volume_ml, **common)]
    return [_Input(h, h, phase.dose_ml or 0.0, **common) for h in phase.dose_hours()]


def bolus_input(
    *, fluid_id: str, ml_per_kg: float, weight_kg: float, minutes: float, start_h: float = 0.0
) -> _Input:
    """An extra IV bolus of any library fluid (e.g. 4 mL/kg of 7.2% NaCl over 5 min)."""
    require_number(ml_per_kg, "bolus_ml_per_kg", positive=True, high=100, unit="mL/kg")
    require_number(minutes, "bolus_minutes", positive=True, high=24 * 60, unit="min")
    comp = fluids.composition(fluids.fluid(fluid_id))
    return _Input(
        start_h,
        start_h + minutes / 60.0,
        ml_per_kg * weight_kg,
        comp.effective_osmolarity_mosm_per_l,
        comp.na_mmol_per_l + comp.k_mmol_per_l,
        True,
    )


def _cumulative(hours: np.ndarray, item: _Input) -> np.ndarray:
    """Volume of one input delivered by each grid time (a ramp, or a step for a dose)."""
    if item.end_h <= item.start_h:
        return np.where(hours >= item.start_h - 1e-9, item.ml, 0.0)
    fraction = np.clip((hours - item.start_h) / (item.end_h - item.start_h), 0.0, 1.0)
    return item.ml * fraction


def _excess_plasma(hours: np.ndarray, inputs: list[_Input], share: float, k_per_h: float):
    """X(t) = plasma − share × ECF: fed by what enters plasma (or interstitium), decaying at k.

    Each input is solved in closed form and the solutions are added (the equation is
    linear): a constant inflow u over [a, b] gives (u/k)(1 − e^(−k(t−a))) during it and
    decays after it; a dose gives a step that decays.
    """
    excess = np.zeros_like(hours)
    for item in inputs:
        gain = (1.0 - share) if item.into_plasma else -share
        t = hours - item.start_h
        after = t >= -1e-9
        if item.end_h <= item.start_h:
            excess += np.where(after, gain * item.ml * np.exp(-k_per_h * np.clip(t, 0, None)), 0.0)
            continue
        u = gain * item.ml / (item.end_h - item.start_h)
        span = item.end_h - item.start_h
        during = np.clip(t, 0.0, span)
        level = (u / k_per_h) * (1.0 - np.exp(-k_per_h * during))
        decay = np.exp(-k_per_h * np.clip(t - span, 0.0, None))
        excess += np.where(after, level * decay, 0.0)
    return excess


def course(
    plan: Plan,
    *,
    step_minutes: float = 1.0,
    horizon_h: float | None = None,
    extra_boluses: tuple[_Input, ...] = (),
    table: SpeciesTable | None = None,
) -> Course:
    """Simulate a plan (plus optional extra boluses) on a regular grid; see module docstring."""
    table = table or load_table()
    require_number(step_minutes, "step_minutes", positive=True, high=60, unit="min")
    end = max(p.end_h for p in plan.phases)
    horizon = end if horizon_h is None else require_number(
        horizon_h, "horizon_h", positive=True, high=MAX_HORIZON_H, unit="h"
    )  # fmt: skip
    sid, w = plan.request.species_id, plan.request.weight_kg
    values = {
        name: table.value(sid, name)
        for name in (
            "total_body_water_fraction",
            "ecf_fraction",
            "plasma_fraction",
            "plasma_osmolality_mosm_per_kg",
            "crystalloid_distribution_half_life_min",
        )
    }
    tbw0 = values["total_body_water_fraction"].number * w * 1000.0  # mL
    ecf0 = values["ecf_fraction"].number * w * 1000.0
    plasma0 = values["plasma_fraction"].number * w * 1000.0
    if not 0 < plasma0 < ecf0 < tbw0:
        raise InputError("species fractions must satisfy plasma < ECF < TBW", field="species")
    osm0 = values["plasma_osmolality_mosm_per_kg"].number
    share = plasma0 / ecf0
    k_per_h = math.log(2) / (values["crystalloid_distribution_half_life_min"].number / 60.0)

    hours = np.arange(0.0, horizon + 1e-9, step_minutes / 60.0)
    inputs = _inputs(plan, list(extra_boluses))
    given = np.zeros_like(hours)
    osmoles_in = np.zeros_like(hours)  # effective mOsm added to the ECF
    na_k_in = np.zeros_like(hours)  # mmol of Na + K added
    for item in inputs:
        delivered = _cumulative(hours, item)
        given += delivered
        osmoles_in += delivered * item.effective_mosm_per_l / 1000.0
        na_k_in += delivered * item.na_k_mmol_per_l / 1000.0
    consumption = plan.maintenance.ml_per_h + plan.request.losses_ml_per_day / 24.0
    consumed = consumption * hours

    # Osmotic equilibrium between ECF and ICF (losses isotonic at the starting osmolality)
    icf_osmoles = osm0 * (tbw0 - ecf0) / 1000.0
    ecf_osmoles = osm0 * ecf0 / 1000.0 + osmoles_in - osm0 * consumed / 1000.0
    tbw = tbw0 + given - consumed
    osmolality = (ecf_osmoles + icf_osmoles) * 1000.0 / tbw
    ecf = ecf_osmoles * 1000.0 / osmolality
    icf = tbw - ecf
    plasma = share * ecf + _excess_plasma(hours, inputs, share, k_per_h)

    serum_na = None
    if plan.request.serum_na is not None:
        na0 = plan.request.serum_na
        # exchangeable Na + K (mmol) over TBW (L); losses leave at the starting Na
        sodium = na0 * tbw0 / 1000.0 + na_k_in - na0 * consumed / 1000.0
        serum_na = sodium * 1000.0 / tbw

    net = given - consumed
    provenance = tuple(values.values())
    return Course(
        hours=hours,
        given_ml=given,
        consumed_ml=consumed,
        plasma_ml=plasma,
        interstitial_ml=ecf - plasma,
        intracellular_ml=icf,
        osmolality_mosm_per_kg=osmolality,
        serum_na=serum_na,
        weight_kg=w + net / 1000.0,
        remaining_deficit_ml=np.maximum(plan.deficit_ml - net, 0.0),
        provenance=provenance,
    )
