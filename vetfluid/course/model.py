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
  form of Hahn's volume kinetics). A colloid holds its volume in the plasma and
  lets it go with its own half-life (``colloids.csv``).
* **Renal elimination.** With healthy kidneys, ECF above its euhydrated size is
  excreted from the plasma with ``crystalloid_elimination_half_life_min``; left out
  with renal disease, under anaesthesia, or where the species has no value.
* **Serum Na (Adrogué–Madias, step by step).** Na × TBW is the exchangeable
  Na + K; each step adds the infusate's Na + K and water. For one litre and no
  losses this equals the closed form (Na_inf + K_inf − Na) / (TBW + 1).
* **Losses.** The plan's outflow (maintenance and ongoing losses, or the measured
  outputs in ins-and-outs mode) leaves the ECF as fluid isotonic at the patient's
  starting osmolality and Na, so it changes volumes, not Na. It stops with the plan:
  after its last phase the patient's own intake is taken to match its losses.
* **Weight** = entered weight + net fluid balance (1 mL ≈ 1 g; Davis 2013).

The starting compartments are the species' fractions of the entered (dehydrated)
weight.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from vetfluid.common.checks import require_number
from vetfluid.common.errors import InputError
from vetfluid.common.findings import Finding
from vetfluid.course.observations import Observation, alerts
from vetfluid.physiology.hydration import body_water_fraction
from vetfluid.planning.plan import Plan
from vetfluid.planning.safety import LINE_ROUTES
from vetfluid.planning.schedule import Phase
from vetfluid.tables import fluid_roles, fluids
from vetfluid.tables.limits import limit
from vetfluid.tables.species import SpeciesTable, SpeciesValue, load_table

MAX_HORIZON_H = 14 * 24.0
# The step the window and the CLI both model a course at: the renal elimination is worked
# out step by step, so one step size keeps every figure the same wherever it is shown.
SHOWN_STEP_MINUTES = 5.0
PREDICTED_OBSERVABLES = ("weight_kg", "serum_na", "pcv_percent", "total_solids_g_per_dl")


@dataclass(frozen=True, kw_only=True)
class Course:
    """Arrays on one grid (``hours``); volumes in mL, weight in kg, Na in mmol/L."""

    hours: np.ndarray
    given_ml: np.ndarray
    given_by_fluid_ml: dict[str, np.ndarray]  # fluid name → volume given of it
    consumed_ml: np.ndarray
    eliminated_ml: np.ndarray  # excreted by the kidneys above the plan's losses
    plasma_ml: np.ndarray
    interstitial_ml: np.ndarray
    intracellular_ml: np.ndarray
    osmolality_mosm_per_kg: np.ndarray
    serum_na: np.ndarray | None
    pcv_percent: np.ndarray | None  # by dilution of the starting PCV, when one was entered
    total_solids_g_per_dl: np.ndarray | None  # likewise for total solids
    na_max_change_per_h: float  # the correction limit the band is drawn with
    weight_kg: np.ndarray
    remaining_deficit_ml: np.ndarray
    provenance: tuple[SpeciesValue, ...]
    elimination_left_out: str | None  # why renal elimination is not modelled, or None

    def predicted(self, field: str, hour: float) -> float | None:
        """The model's value of an observable (weight_kg, serum_na, pcv_percent,
        total_solids_g_per_dl) at ``hour``, to set beside what was measured."""
        if field not in PREDICTED_OBSERVABLES:
            return None
        value = self.at(hour)[field]
        return None if value is None else float(value)

    def na_band(self) -> tuple[np.ndarray, np.ndarray] | None:
        """Where serum Na may be by each hour without changing faster than the limit:
        starting Na ∓ limit × hours (Adrogué & Madias 2000; limit in safety_limits.csv)."""
        if self.serum_na is None:
            return None
        reach = self.na_max_change_per_h * self.hours
        return self.serum_na[0] - reach, self.serum_na[0] + reach

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
            "given_by_fluid_ml": {name: float(v[i]) for name, v in self.given_by_fluid_ml.items()},
            "eliminated_ml": float(self.eliminated_ml[i]),
            "serum_na": None if self.serum_na is None else float(self.serum_na[i]),
            "pcv_percent": None if self.pcv_percent is None else float(self.pcv_percent[i]),
            "total_solids_g_per_dl": None
            if self.total_solids_g_per_dl is None
            else float(self.total_solids_g_per_dl[i]),
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
    colloid_half_life_h: float | None = None  # a colloid holds its volume in the plasma
    fluid_name: str = ""


def _fluid_terms(fluid: fluids.Fluid, *, into_plasma: bool) -> dict:
    comp = fluids.composition(fluid)
    return {
        "fluid_name": fluid.name,
        "effective_mosm_per_l": comp.effective_osmolarity_mosm_per_l,
        "na_k_mmol_per_l": comp.na_mmol_per_l + comp.k_mmol_per_l,
        "into_plasma": into_plasma,
        "colloid_half_life_h": fluid.colloid.volume_half_life_h if fluid.colloid else None,
    }


def _inputs(plan: Plan, extra: list[_Input]) -> list[_Input]:
    result = list(extra)
    for phase in plan.phases:
        fluid = plan.bolus_fluid if phase.kind == "resuscitation" else plan.bag
        common = _fluid_terms(fluid, into_plasma=phase.route in LINE_ROUTES)
        result.extend(_phase_inputs(phase, common))
    return result


def _phase_inputs(phase: Phase, common: dict) -> list[_Input]:
    if phase.mode == "continuous":
        return [_Input(phase.start_h, phase.end_h, phase.volume_ml, **common)]
    return [_Input(h, h, phase.dose_ml or 0.0, **common) for h in phase.dose_hours()]


def infused_input(
    *, fluid_id: str, ml_per_kg: float, weight_kg: float, minutes: float, start_h: float = 0.0
) -> _Input:
    """Any library fluid run into the plasma over ``minutes``, with no judgement of whether
    it should be (the model's physics: how 5% dextrose spreads, how 0.45% NaCl moves Na).
    What a user asks for goes through :func:`bolus_input`."""
    require_number(ml_per_kg, "bolus_ml_per_kg", positive=True, high=100, unit="mL/kg")
    require_number(minutes, "bolus_minutes", positive=True, high=24 * 60, unit="min")
    return _Input(
        start_h,
        start_h + minutes / 60.0,
        ml_per_kg * weight_kg,
        **_fluid_terms(fluids.fluid(fluid_id), into_plasma=True),
    )


def bolus_input(
    *, fluid_id: str, ml_per_kg: float, weight_kg: float, minutes: float, start_h: float = 0.0
) -> _Input:
    """An extra IV bolus of a resuscitation fluid (e.g. 4 mL/kg of 7.2% NaCl over 5 min):
    a fluid without the resuscitation role (fluid_roles.csv: a concentrate, free water) is
    refused, and one with a dose of its own is held to it and to its shortest time."""
    fluid = fluids.fluid(fluid_id)
    roles = fluid_roles.roles(fluid_id)
    if not roles.resuscitation:
        raise InputError(
            f"{fluid.name} is not given as a bolus", field="bolus_fluid", value=fluid_id,
            fix="choose a resuscitation fluid: " + ", ".join(
                f"{f} ({fluids.fluid(f).name})" for f in fluid_roles.resuscitation_fluids()
            ),
        )  # fmt: skip
    if roles.bolus_max_ml_per_kg is not None and ml_per_kg > roles.bolus_max_ml_per_kg:
        raise InputError(
            f"{fluid.name} is given at most {roles.bolus_max_ml_per_kg:g} mL/kg",
            field="bolus_ml_per_kg", value=ml_per_kg, fix="give it once, at its own dose",
        )  # fmt: skip
    if roles.bolus_min_minutes is not None and minutes < roles.bolus_min_minutes:
        raise InputError(
            f"{fluid.name} runs over at least {roles.bolus_min_minutes:g} min",
            field="bolus_minutes", value=minutes, fix="give it more slowly",
        )  # fmt: skip
    return infused_input(
        fluid_id=fluid_id, ml_per_kg=ml_per_kg, weight_kg=weight_kg, minutes=minutes,
        start_h=start_h,
    )  # fmt: skip


def _add_cumulative(total: np.ndarray, hours: np.ndarray, item: _Input, scale: float) -> None:
    """Add ``scale`` × the volume of one input delivered by each grid time (a ramp, or a
    step for a dose) to ``total``, touching the ramp only where it changes."""
    first = int(np.searchsorted(hours, item.start_h - 1e-9))
    last = int(np.searchsorted(hours, item.end_h - 1e-9))
    if last > first:
        span = item.end_h - item.start_h
        total[first:last] += scale * item.ml * (hours[first:last] - item.start_h) / span
    total[max(first, last) :] += scale * item.ml


def _response_terms(item: _Input, share: float, k: float) -> list[tuple[float, float]]:
    """The excess X after 1 mL of this input at t = 0, as Σ c·e^(−λt): pairs (c, λ) per hour.

    A crystalloid into the plasma adds (1 − share) that decays at k; into the interstitium
    it takes share away. A colloid holds its volume in the plasma and lets it go at
    k_c = ln 2 / t½; what it lets go then distributes at k (two first-order steps in a row):
    X = (1 − share)·[k/(k − k_c)·e^(−k_c t) − k_c/(k − k_c)·e^(−k t)].
    """
    if not item.into_plasma:
        return [(-share, k)]
    if item.colloid_half_life_h is None:
        return [(1.0 - share, k)]
    kc = math.log(2) / item.colloid_half_life_h
    if math.isclose(kc, k, rel_tol=1e-6):
        kc *= 1.0 + 1e-6  # the limit k_c → k is smooth; stay off the removable singularity
    return [((1.0 - share) * k / (k - kc), kc), (-(1.0 - share) * kc / (k - kc), k)]


NEGLIGIBLE_DECAY = 40.0  # e^(−40) ≈ 4e−18: past this many time constants a term is zero


def _excess_plasma(hours: np.ndarray, inputs: list[_Input], share: float, k_per_h: float):
    """X(t) = plasma − share × ECF: fed by what enters plasma (or interstitium), decaying.

    Each input is solved in closed form and the solutions are added (the equations are
    linear): for a term c·e^(−λt), a constant inflow u over [a, b] gives
    c·(u/λ)(1 − e^(−λ(t−a))) during it and decays after it; a dose gives a decaying step.
    Each term is evaluated only from its start until it has decayed to nothing, so the
    cost follows the plan, not the horizon.
    """
    excess = np.zeros_like(hours)
    for item in inputs:
        span = item.end_h - item.start_h
        first = int(np.searchsorted(hours, item.start_h - 1e-9))
        for c, rate in _response_terms(item, share, k_per_h):
            last = int(np.searchsorted(hours, item.end_h + NEGLIGIBLE_DECAY / rate))
            t = hours[first:last] - item.start_h
            if span <= 0:
                excess[first:last] += c * item.ml * np.exp(-rate * t)
                continue
            u = c * item.ml / span
            level = (u / rate) * -np.expm1(-rate * np.minimum(t, span))
            excess[first:last] += level * np.exp(-rate * np.maximum(t - span, 0.0))
    return excess


def _renal_elimination(
    ecf_excess: np.ndarray, *, k_e_per_step: float, k_per_step: float, steady_from: int
) -> tuple[np.ndarray, np.ndarray]:
    """Cumulative volume the kidneys remove, E, and its undistributed part in the plasma, F.

    e = k_e · max(ECF − ECF_ref, 0), taken from the plasma; F follows e and decays at the
    distribution rate k (the interstitium refills the plasma). Stepped exactly for the
    first-order removal over each step, over the span where the ECF is above its
    reference (elimination can only lower it). From ``steady_from`` on nothing goes in or
    out, so the surplus S decays geometrically and the steps have a closed form:
    E_n = E_0 + S_0(1 − r^n), F_n = F_0·q^n + S_0·take·(q^n − r^n)/(q − r), with
    r = 1 − take and q the distribution decay per step.
    """
    size = len(ecf_excess)
    eliminated = np.zeros(size)
    in_plasma = np.zeros(size)
    above = np.flatnonzero(ecf_excess > 0)
    if above.size == 0:
        return eliminated, in_plasma
    first = int(above[0])
    stop = max(first, min(int(above[-1]) + 1, steady_from))
    take = -math.expm1(-k_e_per_step)  # the fraction of the surplus removed in one step
    keep = math.exp(-k_per_step)
    total = removed = 0.0
    totals, undistributed = [], []
    for excess in ecf_excess[first:stop].tolist():
        surplus = excess - total
        step = surplus * take if surplus > 0 else 0.0
        total += step
        removed = removed * keep + step
        totals.append(total)
        undistributed.append(removed)
    eliminated[first:stop] = totals
    in_plasma[first:stop] = undistributed
    n = np.arange(1, size - stop + 1, dtype=float)
    kept = np.exp(n * -k_per_step)  # q^n
    surplus = float(ecf_excess[stop]) - total if stop < size else 0.0
    if stop < steady_from or surplus <= 0:  # nothing above the reference any more
        eliminated[stop:] = total
        in_plasma[stop:] = removed * kept
        return eliminated, in_plasma
    rest = 1.0 - take
    left = np.exp(n * -k_e_per_step)  # r^n, since r = e^(−k_e·Δt)
    eliminated[stop:] = total + surplus * (1.0 - left)
    if math.isclose(keep, rest):
        tail = surplus * take * n * kept / keep  # the limit q → r
    else:
        tail = surplus * take * (kept - left) / (keep - rest)
    in_plasma[stop:] = removed * kept + tail
    return eliminated, in_plasma


def _dilution(
    plasma: np.ndarray, pcv0: float | None, solids0: float | None
) -> tuple[np.ndarray | None, np.ndarray | None]:
    """PCV and total solids as the plasma is diluted: red cells and plasma protein stay
    as they were (no bleeding, no transfusion, no protein given or lost), so
    PCV(t) = RBC / (RBC + P(t)) with RBC = P₀·PCV₀/(1 − PCV₀), and TS(t) = TS₀·P₀/P(t).
    The dilution arithmetic volume kinetics rests on (Hahn 2020 measures plasma dilution
    from haemoglobin); no veterinary validation of these predictions is on record."""
    pcv = solids = None
    if pcv0 is not None:
        red_cells = plasma[0] * pcv0 / (100.0 - pcv0)
        pcv = 100.0 * red_cells / (red_cells + plasma)
    if solids0 is not None:
        solids = solids0 * plasma[0] / plasma
    return pcv, solids


def elimination_applies(plan: Plan) -> str | None:
    """Why renal elimination of the excess is left out of this course, or None if it is in.

    Left out in ins-and-outs mode (what the kidneys make is measured and already leaves
    as the plan's outflow), with renal disease (the kidneys may not excrete it) and under
    anaesthesia (volume-kinetic studies find elimination much reduced; Hahn 2020): the
    prediction then errs towards overload, the safer side.
    """
    if plan.request.ins_and_outs_period_h is not None:
        return "ins and outs (urine is measured)"
    if plan.request.renal_disease:
        return "renal disease"
    if plan.request.anaesthesia:
        return "anaesthesia"
    return None


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
    end = plan.end_h
    horizon = end if horizon_h is None else require_number(
        horizon_h, "horizon_h", positive=True, high=MAX_HORIZON_H, unit="h"
    )  # fmt: skip
    sid, w = plan.request.species_id, plan.request.weight_kg
    values = {
        "total_body_water_fraction": body_water_fraction(
            table, sid, neonate=plan.request.neonate, weight_kg=w
        ),
    } | {
        name: table.value(sid, name)
        for name in (
            "ecf_fraction",
            "plasma_fraction",
            "plasma_osmolality_mosm_per_kg",
            "crystalloid_distribution_half_life_min",
        )
    }
    elimination = table.get(sid, "crystalloid_elimination_half_life_min")
    left_out = elimination_applies(plan) if elimination is not None else "no value for the species"
    if elimination is not None:
        values["crystalloid_elimination_half_life_min"] = elimination
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
    by_fluid: dict[str, np.ndarray] = {}
    osmoles_in = np.zeros_like(hours)  # effective mOsm added to the ECF
    na_k_in = np.zeros_like(hours)  # mmol of Na + K added
    for item in inputs:
        if item.fluid_name not in by_fluid:
            by_fluid[item.fluid_name] = np.zeros_like(hours)
        _add_cumulative(by_fluid[item.fluid_name], hours, item, 1.0)
        _add_cumulative(osmoles_in, hours, item, item.effective_mosm_per_l / 1000.0)
        _add_cumulative(na_k_in, hours, item, item.na_k_mmol_per_l / 1000.0)
    for delivered in by_fluid.values():
        given += delivered
    # maintenance and losses (or measured outputs), none after the plan's last phase:
    # the model does not drain an animal that is drinking and eating again
    consumed = plan.consumed_ml(hours)

    # Osmotic equilibrium between ECF and ICF (losses isotonic at the starting osmolality)
    icf_osmoles = osm0 * (tbw0 - ecf0) / 1000.0
    ecf_osmoles = osm0 * ecf0 / 1000.0 + osmoles_in - osm0 * consumed / 1000.0
    tbw = tbw0 + given - consumed
    osmolality = (ecf_osmoles + icf_osmoles) * 1000.0 / tbw
    ecf = ecf_osmoles * 1000.0 / osmolality
    excess = _excess_plasma(hours, inputs, share, k_per_h)
    na0 = plan.request.serum_na
    # exchangeable Na + K (mmol); losses leave at the starting Na
    sodium = None if na0 is None else na0 * tbw0 / 1000.0 + na_k_in - na0 * consumed / 1000.0

    eliminated = np.zeros_like(hours)
    if left_out is None:
        # The kidneys excrete the ECF above its euhydrated size (the deficit restored)
        # as fluid of the moment's osmolality and Na, taken from the plasma.
        step_h = step_minutes / 60.0
        k_e = math.log(2) / (elimination.number / 60.0)
        settled_h = max([plan.end_h, *(item.end_h for item in inputs)])
        eliminated, undistributed = _renal_elimination(
            ecf - (ecf0 + plan.deficit_ml), k_e_per_step=k_e * step_h, k_per_step=k_per_h * step_h,
            steady_from=int(np.searchsorted(hours, settled_h + 1e-9)),
        )  # fmt: skip
        removed = np.diff(eliminated, prepend=0.0)
        ecf_osmoles = ecf_osmoles - np.cumsum(removed * osmolality) / 1000.0
        if sodium is not None:
            sodium = sodium - np.cumsum(removed * sodium * 1000.0 / tbw) / 1000.0
        tbw = tbw - eliminated
        osmolality = (ecf_osmoles + icf_osmoles) * 1000.0 / tbw
        ecf = ecf_osmoles * 1000.0 / osmolality
        excess = excess - (1.0 - share) * undistributed
    icf = tbw - ecf
    plasma = share * ecf + excess
    serum_na = None if sodium is None else sodium * 1000.0 / tbw
    pcv, solids = _dilution(plasma, plan.request.pcv_percent, plan.request.total_solids_g_per_dl)

    net = given - consumed - eliminated
    provenance = tuple(values.values())
    return Course(
        hours=hours,
        given_ml=given,
        given_by_fluid_ml=by_fluid,
        consumed_ml=consumed,
        eliminated_ml=eliminated,
        plasma_ml=plasma,
        interstitial_ml=ecf - plasma,
        intracellular_ml=icf,
        osmolality_mosm_per_kg=osmolality,
        serum_na=serum_na,
        pcv_percent=pcv,
        total_solids_g_per_dl=solids,
        na_max_change_per_h=plan.request.max_na_change_per_h
        or limit("sodium_max_correction_mmol_per_l_h").value,
        weight_kg=w + net / 1000.0,
        remaining_deficit_ml=np.maximum(plan.deficit_ml - net, 0.0),
        provenance=provenance,
        elimination_left_out=left_out,
    )


def observed_course(
    plan: Plan,
    observations: list[Observation] | tuple[Observation, ...],
    *,
    oliguria_ml_per_kg_h: float | None = None,
    table: SpeciesTable | None = None,
) -> tuple[Course, list[Finding]]:
    """The course over the plan and every observation (up to :data:`MAX_HORIZON_H`), at
    :data:`SHOWN_STEP_MINUTES`, and the alerts the observations raise against it
    (:func:`vetfluid.course.observations.alerts`, with the weight this course predicts)."""
    horizon = min(max([plan.end_h] + [o.hour for o in observations]), MAX_HORIZON_H)
    result = course(plan, horizon_h=horizon, step_minutes=SHOWN_STEP_MINUTES, table=table)
    found = alerts(
        plan, observations, oliguria_ml_per_kg_h=oliguria_ml_per_kg_h, table=table,
        predicted_weight=lambda hour: result.predicted("weight_kg", hour),
    )  # fmt: skip
    return result, found
