"""The body's water and solute through a plan's phases: the one balance the plan's sodium
check and the course both follow, so the two never tell different stories.

A regimen's phases become inputs (a rate over a span, or a dose absorbed over
``delivery.SC_ABSORPTION_H`` when given under the skin or into the coelom); the diuretics
become each class's intensity on the grid (mannitol: the infusion it is given as); the
patient's kidney is set from the species' band, the entered urine data and renal disease
(:func:`kidney_settings`); and :func:`vetfluid.physiology.kidney.follow_balance` steps body
water, exchangeable Na + K and the compartments' osmoles on a regular grid. The equations
and their sources are in docs/model.md ("Water and solute", "The kidney", "Diuretics").
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, fields, replace
from typing import TYPE_CHECKING

import numpy as np

from vetfluid.common.errors import InputError
from vetfluid.physiology import delivery, electrolytes, kidney, maintenance
from vetfluid.physiology.hydration import body_water_fraction
from vetfluid.physiology.maintenance import Maintenance
from vetfluid.planning.diuretic_checks import effect_modelled as diuretic_effect_modelled
from vetfluid.planning.safety import LINE_ROUTES
from vetfluid.planning.schedule import DiureticDose, Phase
from vetfluid.tables import diuretics, fluids
from vetfluid.tables.species import SpeciesTable, SpeciesValue

if TYPE_CHECKING:  # the request's module builds on this one
    from vetfluid.planning.plan import PlanRequest

# The step the plan's sodium check, the window and the CLI all follow the body at: the
# kidney is worked out step by step, so one step size keeps every figure the same wherever
# it is shown (an hour is a whole number of steps).
STEP_MINUTES = 5.0


@dataclass(frozen=True, kw_only=True)
class Regimen:
    """What the body is given and loses under a plan: everything the balance reads.

    A :class:`vetfluid.planning.plan.Plan` gives its own (``Plan.regimen``); the plan's
    builder makes one before the plan exists, for its sodium check."""

    request: PlanRequest
    phases: tuple[Phase, ...]
    bag: fluids.Fluid
    bolus_fluid: fluids.Fluid
    diuretics: tuple[DiureticDose, ...]
    maintenance: Maintenance
    deficit_ml: float
    consumed_ml: Callable  # hours (float or array) → mL that left by then, as the plan assumes

    @property
    def end_h(self) -> float:
        return max(p.end_h for p in self.phases)


@dataclass(frozen=True)
class BodyInput:
    """One way fluid goes in: a rate over a span, or a dose at an instant."""

    start_h: float
    end_h: float  # equals start_h for a dose
    ml: float
    effective_mosm_per_l: float
    na_mmol_per_l: float
    k_mmol_per_l: float
    into_plasma: bool
    colloid_half_life_h: float | None = None  # a colloid holds its volume in the plasma
    fluid_name: str = ""
    absorbed_over_h: float = 0.0  # an SC or intracoelomic dose reaches the body over this
    base_mmol_per_l: float = 0.0  # bicarbonate and what is metabolised to it

    def absorbed(self) -> BodyInput:
        """The input as it reaches the body water: a dose under the skin or into the
        coelom evenly over its absorption time (delivery.SC_ABSORPTION_H)."""
        if self.absorbed_over_h <= 0 or self.end_h > self.start_h:
            return self
        return replace(self, end_h=self.start_h + self.absorbed_over_h, absorbed_over_h=0.0)


def base_mmol_per_l(comp: fluids.Composition) -> float:
    """Buffer base a fluid brings per litre: its lactate, acetate and gluconate, each
    metabolised to one bicarbonate (vetfluid/tables/fluids.py). No library fluid carries
    bicarbonate itself (solutes.csv has no HCO3 ion)."""
    return comp.lactate_mmol_per_l + comp.acetate_mmol_per_l + comp.gluconate_mmol_per_l


def fluid_terms(fluid: fluids.Fluid, *, into_plasma: bool) -> dict:
    comp = fluids.composition(fluid)
    return {
        "base_mmol_per_l": base_mmol_per_l(comp),
        "fluid_name": fluid.name,
        "effective_mosm_per_l": comp.effective_osmolarity_mosm_per_l,
        "na_mmol_per_l": comp.na_mmol_per_l,
        "k_mmol_per_l": comp.k_mmol_per_l,
        "into_plasma": into_plasma,
        "colloid_half_life_h": fluid.colloid.volume_half_life_h if fluid.colloid else None,
    }


def _inputs(regimen: Regimen, extra: list[BodyInput]) -> list[BodyInput]:
    result = list(extra)
    for phase in regimen.phases:
        fluid = regimen.bolus_fluid if phase.kind == "resuscitation" else regimen.bag
        common = fluid_terms(fluid, into_plasma=phase.route in LINE_ROUTES)
        result.extend(_phase_inputs(phase, common))
    return result


def _phase_inputs(phase: Phase, common: dict) -> list[BodyInput]:
    if phase.mode == "continuous":
        return [BodyInput(phase.start_h, phase.end_h, phase.volume_ml, **common)]
    # a dose under the skin or into the coelom is absorbed over hours (6–8 h in dogs and
    # cats, the shorter end: delivery.SC_ABSORPTION_H); a dose into a line is there at once
    absorb = 0.0 if common["into_plasma"] else delivery.SC_ABSORPTION_H
    return [
        BodyInput(h, h, phase.dose_ml or 0.0, **common, absorbed_over_h=absorb)
        for h in phase.dose_hours()
    ]


def add_cumulative(total: np.ndarray, hours: np.ndarray, item: BodyInput, scale: float) -> None:
    """Add ``scale`` × the volume of one input delivered by each grid time (a ramp, or a
    step for a dose) to ``total``, touching the ramp only where it changes."""
    first = int(np.searchsorted(hours, item.start_h - 1e-9))
    last = int(np.searchsorted(hours, item.end_h - 1e-9))
    if last > first:
        span = item.end_h - item.start_h
        total[first:last] += scale * item.ml * (hours[first:last] - item.start_h) / span
    total[max(first, last) :] += scale * item.ml


MANNITOL_FLUID_NAME = "mannitol 20 %"


def _profile_steps(row: diuretics.DiureticRow, step_h: float) -> np.ndarray:
    """One dose's effect profile sampled on the grid's step (kidney.effect_profile)."""
    count = math.ceil((row.duration_h or 0.0) / step_h) + 1
    return np.asarray(
        kidney.effect_profile(
            onset_h=row.onset_h,
            peak_h=row.peak_h or 0.0,
            duration_h=row.duration_h or 0.0,
            hours=[k * step_h for k in range(count)],
        )  # fmt: skip
    )


def _diuretic_action(
    regimen: Regimen, table: SpeciesTable, hours: np.ndarray, step_h: float
) -> tuple[dict[str, np.ndarray], list[BodyInput], tuple[str, ...]]:
    """Each class's intensity at each grid point, mannitol as the infusions it is given as,
    and the doses whose effect is left out (no onset and duration on record).

    A dose's exposure is its dose ÷ the reference dose (the low end of the range on record
    for the route; an infusion's, an IV dose's) along its effect profile; an infusion is a
    stream of IV doses, one per step. The exposures of a class add up, and the class acts
    at :func:`kidney.intensity` of the sum (docs/model.md, "Diuretics")."""
    sid, n = regimen.request.species_id, len(hours)
    impulses: dict[tuple, np.ndarray] = {}
    rows_of: dict[tuple, diuretics.DiureticRow] = {}
    mannitol: list[BodyInput] = []
    left_out: list[str] = []
    for dose in regimen.diuretics:
        if not diuretic_effect_modelled(table, sid, dose):
            left_out.append(_dose_name(dose))
            continue
        if dose.drug_class == "osmotic":
            mannitol.append(_mannitol_input(dose))
            continue
        route = "iv" if dose.infusion else dose.route
        row = diuretics.timing(table, sid, dose.drug_id, route)
        reference = min(r.dose_low for r in diuretics.rows_for(table, sid, dose.drug_id, route))
        key = (dose.drug_class, row.onset_h, row.peak_h, row.duration_h)
        rows_of[key] = row
        impulse = impulses.setdefault(key, np.zeros(n))
        first = int(np.searchsorted(hours, dose.start_h - 1e-9))
        if dose.infusion:  # a stream of IV doses, one per step
            last = int(np.searchsorted(hours, dose.end_h - 1e-9))
            impulse[first:last] += dose.dose * step_h / reference
        elif first < n:
            impulse[first] += dose.dose / reference
    exposure: dict[str, np.ndarray] = {}
    for key, impulse in impulses.items():
        acting = np.convolve(impulse, _profile_steps(rows_of[key], step_h))[:n]
        exposure[key[0]] = exposure.get(key[0], np.zeros(n)) + acting
    intensities = {name: kidney.intensity(e) for name, e in exposure.items()}
    return intensities, mannitol, tuple(left_out)


def _dose_name(dose: DiureticDose) -> str:
    return f"{dose.name} {dose.dose:g} {dose.unit} at hour {dose.start_h:g}"


def _mannitol_input(dose: DiureticDose) -> BodyInput:
    """Mannitol as given: 20 % into the plasma over 20 min (kidney.MANNITOL_G_PER_L,
    kidney.MANNITOL_MINUTES); its osmoles are effective in the ECF (it stays outside cells)."""
    molar_mass = diuretics.drug(dose.drug_id).molar_mass_g_per_mol or math.nan
    return BodyInput(
        dose.start_h, dose.start_h + kidney.MANNITOL_MINUTES / 60.0,
        dose.amount / kidney.MANNITOL_G_PER_L * 1000.0,  # the amount is in g
        effective_mosm_per_l=kidney.MANNITOL_G_PER_L / molar_mass * 1000.0,
        na_mmol_per_l=0.0, k_mmol_per_l=0.0, into_plasma=True, fluid_name=MANNITOL_FLUID_NAME,
    )  # fmt: skip


def kidney_settings(
    regimen: Regimen, table: SpeciesTable, *, na0: float, renal_output: str | None
) -> tuple[kidney.KidneySettings | None, str | None, list[SpeciesValue]]:
    """The patient's kidney for the course, why the volume-driven natriuresis is left out
    (or None), and the species values used. No kidney in ins-and-outs mode: the urine is
    measured and leaves as the plan's outflow.

    ADH answers tonicity measured from the starting Na held inside the species' interval. A
    patient below the interval is hyponatraemic because its ADH is held on (hypovolaemia,
    nausea, pain, drugs) or its kidney cannot dilute: its urine is kept from diluting below
    where it rests (``lowest_position``), so the model neither starts a water diuresis at
    the kidney's limit in the first hour — which comes in life only once the cause resolves
    (recalled from Adrogué & Madias, "Hyponatremia", N Engl J Med 2000: memory) — nor pulls
    Na back down to where it started while Na-rich fluid runs."""
    request, sid, w = regimen.request, regimen.request.species_id, regimen.request.weight_kg
    if request.ins_and_outs_period_h is not None:
        return None, "ins and outs (urine is measured)", []
    entered = request.urine_osmolality
    if entered is None and request.usg is not None and table.value(sid, "usg_interpretable").value:
        entered = maintenance.usg_to_osmolality(request.usg)
    try:
        band = kidney.urine_band(table, sid, renal_disease=request.renal_disease,
                                 entered_mosm_per_kg=entered)  # fmt: skip
    except InputError:
        return None, "no concentrating ceiling for the species", []
    names = ("adh_response_span_mosm_per_kg", "adh_volume_deficit_fraction",
             "urine_k_min_mmol_per_kg_day", "urine_k_adaptation_h", "serum_na_mmol_per_l",
             "urine_solute_mosm_per_kcal", "water_ml_per_kcal")  # fmt: skip
    v = {name: table.value(sid, name) for name in names}
    used = [*band.provenance, *v.values()]
    elimination = table.get(sid, "crystalloid_elimination_half_life_min")
    left_out = None
    if elimination is None:
        left_out = "no value for the species"
    elif request.renal_disease and renal_output == "oliguric":
        # an oliguric kidney passes little of anything; a diseased kidney that still makes
        # urine keeps the body's Na in balance (isosthenuric urine carries Na: without it
        # the model's urine would take water and no salt, and Na would climb for no reason)
        left_out = "oliguric renal disease"
    natriuresis = 0.0
    if left_out is None and elimination is not None:
        used.append(elimination)
        natriuresis = math.log(2) / (elimination.number / 60.0)
        if request.anaesthesia:
            natriuresis *= kidney.ANAESTHESIA_EXCRETION_FRACTION
    normal = v["serum_na_mmol_per_l"]
    low = normal.low if normal.low is not None else normal.number
    high = normal.high if normal.high is not None else normal.number
    energy = maintenance.maintenance(table, sid, w, method="energy",
                                     body_temp_c=request.body_temp_c)  # fmt: skip
    kcal = energy.ml_per_day / v["water_ml_per_kcal"].number
    load = kidney.solute_load_mosm_per_day(kcal, v["urine_solute_mosm_per_kcal"].number)
    other = load * kidney.NON_ELECTROLYTE_SHARE  # the model excretes Na and K itself
    maintenance_k = electrolytes.load_potassium_scale()[-1].kcl_mmol_per_l  # Côté 2020
    cap = None
    if request.renal_disease and renal_output == "oliguric":
        threshold = table.value(sid, "urine_output_ml_per_kg_h")
        used.append(threshold)
        cap = (threshold.low if threshold.low is not None else threshold.number) * w
    k_start = maintenance_k * regimen.maintenance.ml_per_h / 1000.0
    outside = [table.get(sid, n) for n in ("insensible_loss_ml_per_kg_day",
                                           "faecal_water_ml_per_kg_day")]  # fmt: skip
    not_urine = sum(v.number for v in outside if v is not None) * w / 24.0
    rest = kidney.rest_position(
        solute_mosm_per_h=other / 24.0 + 2.0 * k_start,  # what the loop excretes at rest
        urine_ml_per_h=regimen.maintenance.ml_per_h - not_urine,
        floor=band.floor_mosm_per_kg, ceiling=band.ceiling_mosm_per_kg,
    )  # fmt: skip
    settings = kidney.KidneySettings(
        floor_mosm_per_kg=band.floor_mosm_per_kg, ceiling_mosm_per_kg=band.ceiling_mosm_per_kg,
        span_mosm_per_kg=v["adh_response_span_mosm_per_kg"].number,
        volume_deficit_for_full=v["adh_volume_deficit_fraction"].number,
        set_na_mmol_per_l=min(max(na0, low), high),
        natriuresis_per_h=natriuresis, other_solute_mosm_per_h=other / 24.0,
        k_start_mmol_per_h=k_start, rest_position=rest,
        lowest_position=rest if na0 < low else 0.0,
        na_follows_intake=bool(request.renal_disease) and renal_output != "oliguric",
        k_min_mmol_per_h=v["urine_k_min_mmol_per_kg_day"].number * w / 24.0,
        k_time_constant_h=v["urine_k_adaptation_h"].number, urine_cap_ml_per_h=cap,
    )  # fmt: skip
    return settings, left_out, used


def increments(cumulative: np.ndarray) -> list[float]:
    return np.diff(cumulative, prepend=0.0).tolist()


def _drugs(
    intensities: dict[str, np.ndarray], mannitol_in: np.ndarray | None, steps: int, step_h: float
) -> kidney.DiureticAction | None:
    """The diuretics' action for the kidney's step loop, or None when none acts."""
    if not intensities and mannitol_in is None:
        return None
    return kidney.DiureticAction.from_intensities(
        intensities, steps=steps,
        step_h=step_h, mannitol_in_mosm=None if mannitol_in is None else increments(mannitol_in),
    )  # fmt: skip


@dataclass(frozen=True, kw_only=True)
class BodyCourse:
    """The balance on one grid: what went in, what left, and what the body holds.

    Volumes in mL (cumulative where they are amounts given or lost), Na in mmol/L."""

    hours: np.ndarray
    step_h: float
    inputs: tuple[BodyInput, ...]  # as given (a dose still at its instant)
    given_ml: np.ndarray
    given_by_fluid_ml: dict[str, np.ndarray]
    base_in_mmol: np.ndarray | None  # buffer base reaching the body (when HCO3 was entered)
    free_water_out_ml: np.ndarray  # insensible, solute-free
    lost_ml: np.ndarray  # ongoing and faecal losses (or the measured outputs)
    losses: electrolytes.LossComposition
    settings: kidney.KidneySettings | None  # None: no urine modelled (ins and outs)
    excess_excretion_left_out: str | None
    balance: kidney.Balance
    tbw_ml: np.ndarray
    ecf_ml: np.ndarray
    osmolality_mosm_per_kg: np.ndarray
    na_path: np.ndarray  # serum Na, followed from the species' normal when none was entered
    # the Na that sets tonicity, (Na + K)ₑ / TBW: with mannitol in the ECF the measured Na
    # (na_path) is diluted by the water it draws from the cells while the osmolality rises,
    # a translocation no brain must adapt to; the correction limit reads this one
    tonicity_na: np.ndarray
    tbw0_ml: float
    ecf0_ml: float
    diuretics_not_modelled: tuple[str, ...]
    provenance: tuple[SpeciesValue, ...]
    start_weight_kg: float  # the entered weight
    table: SpeciesTable = field(repr=False, compare=False)  # the one it was followed with
    # what the kidney's step loop was given (:func:`with_adh_held` steps it on)
    loop_inputs: dict = field(repr=False, compare=False, default_factory=dict)

    @property
    def urine_ml(self) -> np.ndarray:
        return np.asarray(self.balance.urine_ml)

    @property
    def weight_kg(self) -> np.ndarray:
        """Entered weight + what was given − what left (insensible, losses, urine), 1 mL ≈ 1 g
        (Davis 2013): the one weight prediction the Course and the Timeline both show."""
        out = self.free_water_out_ml + self.lost_ml + self.urine_ml
        return self.start_weight_kg + (self.given_ml - out) / 1000.0

    def weight_at(self, hour: float) -> float:
        """:attr:`weight_kg` at ``hour``, held at its last value past the grid's end (the
        patient's own intake then matches its losses)."""
        return float(np.interp(hour, self.hours, self.weight_kg))

    def until(self, horizon_h: float) -> BodyCourse | None:
        """The same course up to ``horizon_h`` (a prefix of this grid: the balance is causal,
        so nothing before a point depends on what comes after it), or None past its end."""
        if horizon_h > self.hours[-1] + 1e-9:
            return None
        n = int(np.searchsorted(self.hours, horizon_h + 1e-9))

        def cut(value):  # noqa: ANN001, ANN202
            return value[:n] if isinstance(value, (list, np.ndarray)) else value

        balance = replace(self.balance, **{
            f.name: cut(getattr(self.balance, f.name)) for f in fields(self.balance)
        })  # fmt: skip
        changed = {
            f.name: cut(getattr(self, f.name))
            for f in fields(self)
            if f.name not in ("inputs", "balance", "table", "start_weight_kg", "loop_inputs")
        }
        changed["given_by_fluid_ml"] = {k: v[:n] for k, v in self.given_by_fluid_ml.items()}
        return replace(self, **changed, balance=balance)

    @property
    def beyond_h(self) -> float | None:
        """The first hour at which body water, the ECF or serum Na is no longer a positive
        number (more lost or given than the body holds), or None."""
        broken = ~np.isfinite(self.na_path) | ~(self.tbw_ml > 0) | ~(self.ecf_ml > 0)
        broken |= ~(self.na_path > 0)
        return float(self.hours[int(np.argmax(broken))]) if broken.any() else None


def of_plan(plan: object, table: SpeciesTable) -> BodyCourse:
    """The body a plan's sodium check followed (``Plan.body``), or, for a plan made without
    one, the same body followed on the same grid."""
    own = getattr(plan, "body", None)
    if own is not None:
        return own
    regimen = plan.regimen
    step_h = STEP_MINUTES / 60.0
    return follow_body(
        regimen, table, hours=grid(checked_until_h(regimen, table) + 1.0, step_h), step_h=step_h
    )


def checked_until_h(regimen: Regimen, table: SpeciesTable) -> float:
    """The last hour at which the plan's own sodium check starts an hour: the plan's end, or
    later while a dose under the skin or into the coelom is still being absorbed or a
    diuretic given during the plan still acts (its duration on record for the species and
    route; an infusion counted to the plan's end). What runs past that is said, not followed."""
    under_skin = any(p.mode == "intermittent" for p in regimen.phases)
    until = regimen.end_h + (delivery.SC_ABSORPTION_H if under_skin else 0.0)
    sid = regimen.request.species_id
    end = regimen.end_h
    for dose in regimen.diuretics:
        if dose.start_h >= end - 1e-9:
            continue  # after the plan's fluids: not followed (DIURETIC_AFTER_PLAN_END says so)
        row = diuretics.timing(table, sid, dose.drug_id, "iv" if dose.infusion else dose.route)
        acts = row.duration_h or 0.0 if row is not None else 0.0
        until = max(until, min(dose.end_h, end) + acts)  # an infusion, to the plan's end
    return until


def grid(horizon_h: float, step_h: float) -> np.ndarray:
    """Hours 0, step, 2·step, … up to and including ``horizon_h``."""
    return np.arange(0.0, horizon_h + 1e-9, step_h)


def follow_body(
    regimen: Regimen,
    table: SpeciesTable,
    *,
    hours: np.ndarray,
    step_h: float,
    extra_inputs: tuple[BodyInput, ...] = (),
    loss_type: str | None = None,
    renal_output: str | None = None,
) -> BodyCourse:
    """Follow body water and solute through a regimen on ``hours`` (a regular grid of
    ``step_h``): inputs as they reach the body, insensible water, losses by type
    (the request's unless given; :data:`vetfluid.physiology.electrolytes.LOSS_TYPES`), and the
    kidney with the diuretics (:func:`vetfluid.physiology.kidney.follow_balance`). Outputs
    stop with the plan: after it the patient's own intake is taken to match them.

    The starting compartments are the species' fractions of the entered weight; with no
    serum Na or K entered they are followed from the species' normal values (ADH held:
    :func:`with_adh_held`)."""
    request = regimen.request
    sid, w = request.species_id, request.weight_kg
    values = [
        body_water_fraction(table, sid, neonate=request.neonate, weight_kg=w,
                            age_weeks=request.age_weeks),
        *(table.value(sid, name) for name in (
            "ecf_fraction", "plasma_osmolality_mosm_per_kg", "serum_na_mmol_per_l",
            "serum_k_mmol_per_l",
        )),
    ]  # fmt: skip
    tbw_fraction, ecf_fraction, osm, normal_na, normal_k = values
    tbw0 = tbw_fraction.number * w * 1000.0  # mL
    ecf0 = ecf_fraction.number * w * 1000.0
    osm0 = osm.number
    na0 = request.serum_na if request.serum_na is not None else normal_na.number
    k0 = request.serum_k if request.serum_k is not None else normal_k.number
    phi = osm0 / (2.0 * na0)
    end = regimen.end_h
    loss_type = request.loss_type if loss_type is None else loss_type
    renal_output = request.renal_output if renal_output is None else renal_output
    losses = electrolytes.loss_composition(loss_type)

    intensities, mannitol_inputs, left_out_doses = _diuretic_action(regimen, table, hours, step_h)
    if request.ins_and_outs_period_h is not None and regimen.diuretics:
        # no kidney is modelled (the urine is measured), so no diuretic acts
        left_out_doses = tuple(_dose_name(d) for d in regimen.diuretics)
        intensities, mannitol_inputs = {}, []
    inputs = _inputs(regimen, list(extra_inputs) + mannitol_inputs)
    given = np.zeros_like(hours)
    by_fluid: dict[str, np.ndarray] = {}
    water_in = np.zeros_like(hours)  # what has reached the body water (SC: as absorbed)
    ecf_osm_in = np.zeros_like(hours)  # effective mOsm entering the ECF (K's go to the ICF)
    na_in, k_in = np.zeros_like(hours), np.zeros_like(hours)
    base_in = np.zeros_like(hours) if request.serum_hco3 is not None else None
    for item in inputs:
        if item.fluid_name not in by_fluid:
            by_fluid[item.fluid_name] = np.zeros_like(hours)
        add_cumulative(by_fluid[item.fluid_name], hours, item, 1.0)
        body = item.absorbed()
        add_cumulative(water_in, hours, body, 1.0)
        add_cumulative(na_in, hours, body, item.na_mmol_per_l / 1000.0)
        add_cumulative(k_in, hours, body, item.k_mmol_per_l / 1000.0)
        if base_in is not None and item.base_mmol_per_l:
            add_cumulative(base_in, hours, body, item.base_mmol_per_l / 1000.0)
        ecf_share = item.effective_mosm_per_l - 2.0 * phi * item.k_mmol_per_l
        add_cumulative(ecf_osm_in, hours, body, ecf_share / 1000.0)
    for delivered in by_fluid.values():
        given += delivered
    mannitol_in = None
    if mannitol_inputs:
        mannitol_in = np.zeros_like(hours)
        for item in mannitol_inputs:
            add_cumulative(mannitol_in, hours, item.absorbed(), item.effective_mosm_per_l / 1000.0)

    settings, left_out, used = kidney_settings(regimen, table, na0=na0, renal_output=renal_output)
    t = np.minimum(hours, end)  # outputs stop with the plan: its own intake then matches them
    loss_na_k = loss_k = None
    if settings is None:
        free_water = np.zeros_like(hours)
        lost = np.asarray(regimen.consumed_ml(hours), dtype=float)  # measured: isotonic
    else:
        insensible = table.get(sid, "insensible_loss_ml_per_kg_day")
        faecal = table.get(sid, "faecal_water_ml_per_kg_day")
        used += [v for v in (insensible, faecal) if v is not None]
        per_day = (insensible.number if insensible else 0.0) * w
        free_water = per_day * regimen.maintenance.temperature_factor / 24.0 * t
        faecal_per_day = faecal.number * w if faecal else 0.0
        lost = (request.losses_ml_per_day + faecal_per_day) / 24.0 * t
        if losses.na_mmol_per_l is not None and losses.k_mmol_per_l is not None:
            loss_na_k = (losses.na_mmol_per_l + losses.k_mmol_per_l) / 1000.0
            loss_k = losses.k_mmol_per_l / 1000.0
    loop_inputs = dict(
        step_h=step_h, water_in_ml=increments(water_in), na_in_mmol=increments(na_in),
        k_in_mmol=increments(k_in), ecf_osm_in=increments(ecf_osm_in),
        free_water_out_ml=increments(free_water), loss_out_ml=increments(lost),
        loss_na_k_mmol_per_ml=loss_na_k, loss_k_mmol_per_ml=loss_k, tbw0_ml=tbw0,
        ecf0_ml=ecf0, ecf_ref_ml=ecf0 + regimen.deficit_ml, osmolality0=osm0, na0=na0, k0=k0,
        basal_steps=int(np.searchsorted(hours, end - 1e-9)),
        drugs=_drugs(intensities, mannitol_in, len(hours), step_h),
    )  # fmt: skip
    balance = kidney.follow_balance(**loop_inputs, kidney=settings)
    return BodyCourse(
        hours=hours, step_h=step_h, inputs=tuple(inputs), given_ml=given,
        given_by_fluid_ml=by_fluid, base_in_mmol=base_in, free_water_out_ml=free_water,
        lost_ml=lost, losses=losses, settings=settings, excess_excretion_left_out=left_out,
        balance=balance, **_body_figures(balance), tbw0_ml=tbw0, ecf0_ml=ecf0,
        diuretics_not_modelled=left_out_doses,
        provenance=tuple(dict.fromkeys([*values, *used])), table=table, start_weight_kg=w,
        loop_inputs=loop_inputs,
    )  # fmt: skip


def _body_figures(balance: kidney.Balance) -> dict[str, np.ndarray]:
    """Body water, the ECF, osmolality and serum Na (measured and tonicity) of a balance."""
    tbw = np.asarray(balance.tbw_ml)
    ecf_osm, icf_osm = np.asarray(balance.ecf_osm), np.asarray(balance.icf_osm)
    # more water or solute out than the body holds gives no numbers past that hour: they are
    # read as such (BodyCourse.beyond_h), not warned about
    with np.errstate(all="ignore"):
        tonicity_na = np.asarray(balance.na_k_mmol) * 1000.0 / tbw
        na_path = tonicity_na
        if balance.mannitol_mosm is not None:  # the ECF's osmoles that are not Na salts
            na_path = na_path * (ecf_osm - np.asarray(balance.mannitol_mosm)) / ecf_osm
        ecf = tbw * ecf_osm / (ecf_osm + icf_osm)
        osmolality = (ecf_osm + icf_osm) * 1000.0 / tbw
    return {"tbw_ml": tbw, "ecf_ml": ecf, "osmolality_mosm_per_kg": osmolality,
            "na_path": na_path, "tonicity_na": tonicity_na}  # fmt: skip


def with_adh_held(free: BodyCourse) -> BodyCourse:
    """The same body with ADH held at or above where it rests (the urine never dilutes
    below its resting osmolality): non-osmotic ADH release, common in sick animals
    (hypovolaemia, pain, nausea, drugs), the plan's cautious path for free water.

    Up to where the free kidney first asked for urine below its rest the two kidneys are
    one; the held one is stepped on from there
    (:attr:`vetfluid.physiology.kidney.Balance.fork`)."""
    if free.settings is None or free.balance.fork is None:
        return free  # no kidney, or one that never asked to dilute below its rest
    settings = replace(free.settings, lowest_position=free.settings.rest_position)
    balance = kidney.follow_balance(**free.loop_inputs, kidney=settings, resume=free.balance)
    return replace(free, settings=settings, balance=balance, **_body_figures(balance))
