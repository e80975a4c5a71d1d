"""The course of a plan: body-water compartments, weight, urine, serum Na and K over time.

On a regular grid (1-minute steps by default, 5 in the window and the CLI; up to 14 days).
The equations, their sources and their simplifications are written out in
``docs/model.md``; in short:

* **Water and solute (Edelman; electrolyte-free water balance).** Exchangeable Na + K and
  body water are stepped by :func:`vetfluid.physiology.kidney.follow_balance`: each input
  and output moves them by its own water and Na + K. ECF and ICF share the water in
  osmotic equilibrium (Darrow–Yannet reasoning); K and its anion sit in the cells.
* **What leaves.** Insensible water (solute-free), ongoing losses by type
  (:data:`vetfluid.physiology.electrolytes.LOSS_TYPES`, isotonic when unknown) and urine
  from the kidney: its osmolality asked for by tonicity and volume (ADH) within the
  species' band, its Na from the ECF above its euhydrated size (the calibrated
  ``crystalloid_elimination_half_life_min``), its K following intake. Outputs stop with
  the plan (the patient's own intake then matches them); only an excess is still excreted.
  In ins-and-outs mode the measured outputs leave instead and no kidney is modelled.
* **Plasma and interstitium (two-compartment volume kinetics).** Fluid given IV or IO
  enters the plasma, fluid given SC or intracoelomically the interstitium (a dose as it is
  absorbed over ``delivery.SC_ABSORPTION_H``). The excess of plasma over its equilibrium
  share of the ECF decays with ``crystalloid_distribution_half_life_min`` (Hahn); a colloid
  holds its volume with its own half-life; what the kidney takes comes from the plasma.
* **Weight** = entered weight + fluid given − what left (1 mL ≈ 1 g; Davis 2013).
* **Bicarbonate** (only when a serum HCO3 was entered;
  :func:`vetfluid.planning.bicarbonate.follow_bicarbonate`, the plan's own check's too): the
  body's bicarbonate over its apparent space (the ECF and the other buffers,
  ``bicarbonate_space_fraction``), raised by the fluids' lactate, acetate and gluconate as
  they are metabolised (half-life ``bicarbonate.BASE_PRECURSOR_HALF_LIFE_MIN``), diluted as the ECF
  grows, moved by each loss type's HCO3 and H+, lowered by acetazolamide's bicarbonaturia and
  brought back by a healthy kidney with ``hco3_renal_return_h`` (not while acetazolamide acts).

The starting compartments are the species' fractions of the entered (dehydrated) weight.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from vetfluid.common.arrays import decaying_sum
from vetfluid.common.checks import require_number
from vetfluid.common.errors import InputError
from vetfluid.common.findings import Finding
from vetfluid.common.formatting import format_number, format_quantity
from vetfluid.course.observations import Observation, alerts
from vetfluid.planning import body
from vetfluid.planning.bicarbonate import SERUM_HCO3_RANGE_MMOL_PER_L, drift, follow_bicarbonate
from vetfluid.planning.body import BodyInput
from vetfluid.planning.plan import RENAL_OUTPUTS, Plan
from vetfluid.planning.safety import ECF_CONTRACTION_BLOCKED
from vetfluid.tables import fluid_roles, fluids
from vetfluid.tables.limits import limit
from vetfluid.tables.species import SpeciesTable, SpeciesValue, load_table

MAX_HORIZON_H = 14 * 24.0
# The step the window and the CLI both model a course at: the plan's own sodium check's
SHOWN_STEP_MINUTES = body.STEP_MINUTES
# a plasma volume this far below its start is said (common practice, no source: losing a
# fifth of the circulating volume is clinically significant hypovolaemia); past the plan's
# own ECF_CONTRACTION_BLOCKED share (40 %: shock, common practice, no source) it is blocked,
# as the plan's own ECF check is
PLASMA_CONTRACTION_SAID = 0.2
# an observation's field → the course's value set beside it (Course.at)
PREDICTED_OBSERVABLES = {
    "weight_kg": "weight_kg", "serum_na": "serum_na", "serum_k": "serum_k",
    "pcv_percent": "pcv_percent", "total_solids_g_per_dl": "total_solids_g_per_dl",
    "urine_osmolality": "urine_osm_mosm_per_kg",
}  # fmt: skip


@dataclass(frozen=True, kw_only=True)
class Course:
    """Arrays on one grid (``hours``); volumes in mL, weight in kg, Na in mmol/L."""

    hours: np.ndarray
    given_ml: np.ndarray
    given_by_fluid_ml: dict[str, np.ndarray]  # fluid name → volume given of it
    consumed_ml: np.ndarray  # insensible water and ongoing losses (or measured outputs)
    urine_ml: np.ndarray  # urine, cumulative (none modelled in ins-and-outs mode)
    urine_osm_mosm_per_kg: np.ndarray | None  # the urine osmolality of each step
    urine_band_mosm_per_kg: tuple[float, float] | None  # diluting floor, concentrating ceiling
    plasma_ml: np.ndarray
    interstitial_ml: np.ndarray
    intracellular_ml: np.ndarray
    osmolality_mosm_per_kg: np.ndarray
    serum_na: np.ndarray | None
    serum_k: np.ndarray | None  # when a serum K was entered
    pcv_percent: np.ndarray | None  # by dilution of the starting PCV, when one was entered
    total_solids_g_per_dl: np.ndarray | None  # likewise for total solids
    na_max_change_per_h: float  # the correction limit the band is drawn with
    weight_kg: np.ndarray
    remaining_deficit_ml: np.ndarray
    provenance: tuple[SpeciesValue, ...]
    excess_excretion_left_out: str | None  # why excreting an ECF excess is left out, or None
    # after the plan's last phase the patient's own intake is taken to match its losses, so
    # urine flow and osmolality are predicted only up to this hour
    outputs_end_h: float
    # what the course predicts that the plan's checks, which leave the kidney out, cannot
    # see (serum Na out of its interval faster than the limit, K below its interval)
    findings: tuple[Finding, ...] = ()
    na_excreted_mmol: np.ndarray | None = None  # urine Na, cumulative (None: no kidney)
    k_excreted_mmol: np.ndarray | None = None  # urine K, cumulative
    serum_hco3: np.ndarray | None = None  # mmol/L, when a serum bicarbonate was entered
    diuretics_not_modelled: tuple[str, ...] = ()  # doses whose effect the course leaves out

    def predicted(self, field: str, hour: float) -> float | None:
        """The model's value of an observable (:data:`PREDICTED_OBSERVABLES`) at ``hour``,
        to set beside what was measured; None for anything else (a USG is measured, an
        osmolality predicted)."""
        if field not in PREDICTED_OBSERVABLES:
            return None
        value = self.at(hour)[PREDICTED_OBSERVABLES[field]]
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

    def _urine_rate_ml_per_h(self, i: int) -> float:
        """Urine flow over the step that ends at grid point ``i`` (the first step's at 0)."""
        j = max(i, 1)
        if len(self.hours) < 2:
            return 0.0
        flow = (self.urine_ml[j] - self.urine_ml[j - 1]) / (self.hours[j] - self.hours[j - 1])
        return float(flow)

    def at(self, hour: float) -> dict[str, float | None]:
        """Values at the grid point nearest ``hour``."""
        i = int(np.clip(np.searchsorted(self.hours, hour), 0, len(self.hours) - 1))
        if i > 0 and abs(self.hours[i - 1] - hour) < abs(self.hours[i] - hour):
            i -= 1
        # no kidney in ins-and-outs mode (urine is measured there): no urine figure, not 0
        kidney = self.urine_osm_mosm_per_kg is not None
        predicted = kidney and self.hours[i] <= self.outputs_end_h + 1e-9
        return {
            "hour": float(self.hours[i]),
            "plasma_ml": float(self.plasma_ml[i]),
            "interstitial_ml": float(self.interstitial_ml[i]),
            "intracellular_ml": float(self.intracellular_ml[i]),
            "weight_kg": float(self.weight_kg[i]),
            "remaining_deficit_ml": float(self.remaining_deficit_ml[i]),
            "given_ml": float(self.given_ml[i]),
            "given_by_fluid_ml": {name: float(v[i]) for name, v in self.given_by_fluid_ml.items()},
            "urine_ml": float(self.urine_ml[i]) if kidney else None,
            "urine_ml_per_h": self._urine_rate_ml_per_h(i) if predicted else None,
            # at hour 0, the first step's urine (as the flow), not the state it starts from
            "urine_osm_mosm_per_kg": float(self.urine_osm_mosm_per_kg[max(i, 1)])
            if predicted and len(self.hours) > 1
            else None,
            "serum_na": None if self.serum_na is None else float(self.serum_na[i]),
            "serum_k": None if self.serum_k is None else float(self.serum_k[i]),
            "serum_hco3": None if self.serum_hco3 is None else float(self.serum_hco3[i]),
            "pcv_percent": None if self.pcv_percent is None else float(self.pcv_percent[i]),
            "total_solids_g_per_dl": None
            if self.total_solids_g_per_dl is None
            else float(self.total_solids_g_per_dl[i]),
        }


def infused_input(
    *, fluid_id: str, ml_per_kg: float, weight_kg: float, minutes: float, start_h: float = 0.0
) -> BodyInput:
    """Any library fluid run into the plasma over ``minutes``, with no judgement of whether
    it should be (the model's physics: how 5% dextrose spreads, how 0.45% NaCl moves Na).
    What a user asks for goes through :func:`bolus_input`."""
    require_number(ml_per_kg, "bolus_ml_per_kg", positive=True, high=100, unit="mL/kg")
    require_number(minutes, "bolus_minutes", positive=True, high=24 * 60, unit="min")
    return BodyInput(
        start_h,
        start_h + minutes / 60.0,
        ml_per_kg * weight_kg,
        **body.fluid_terms(fluids.fluid(fluid_id), into_plasma=True),
    )


def bolus_input(
    *, fluid_id: str, ml_per_kg: float, weight_kg: float, minutes: float, start_h: float = 0.0
) -> BodyInput:
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


def _response_terms(item: BodyInput, share: float, k: float) -> list[tuple[float, float]]:
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


def _excess_plasma(hours: np.ndarray, inputs: list[BodyInput], share: float, k_per_h: float):
    """X(t) = plasma − share × ECF: fed by what enters plasma (or interstitium), decaying.

    Each input is solved in closed form and the solutions are added (the equations are
    linear): for a term c·e^(−λt), a constant inflow u over [a, b] gives
    c·(u/λ)(1 − e^(−λ(t−a))) during it and decays after it; a dose gives a decaying step.
    Each term is evaluated only from its start until it has decayed to nothing, so the
    cost follows the plan, not the horizon.
    """
    excess = np.zeros_like(hours)
    for item in (entry.absorbed() for entry in inputs):
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


def course(
    plan: Plan,
    *,
    step_minutes: float = 1.0,
    horizon_h: float | None = None,
    extra_boluses: tuple[BodyInput, ...] = (),
    table: SpeciesTable | None = None,
    loss_type: str | None = None,
    renal_output: str | None = None,
) -> Course:
    """Simulate a plan (plus optional extra boluses) on a regular grid; see module docstring.

    ``loss_type`` gives the plan's ongoing losses their typical composition
    (:data:`vetfluid.physiology.electrolytes.LOSS_TYPES`; isotonic when unknown).
    ``renal_output`` says how a diseased kidney behaves: "oliguric" (urine held under the
    species' oliguria threshold), "polyuric" (it still excretes an excess), or None (the
    excretion of an excess is left out, erring towards overload). Both are the request's
    (``PlanRequest.loss_type``, ``PlanRequest.renal_output``) unless given here. The
    request's diuretics act on the kidney (docs/model.md, "Diuretics")."""
    table = table or load_table()
    require_number(step_minutes, "step_minutes", positive=True, high=60, unit="min")
    loss_type = plan.request.loss_type if loss_type is None else loss_type
    renal_output = plan.request.renal_output if renal_output is None else renal_output
    if renal_output is not None and renal_output not in RENAL_OUTPUTS:
        raise InputError(f"unknown renal output {renal_output!r}", field="renal_output",
                         value=renal_output, fix=", ".join(RENAL_OUTPUTS))  # fmt: skip
    end = plan.end_h
    horizon = end if horizon_h is None else require_number(
        horizon_h, "horizon_h", positive=True, high=MAX_HORIZON_H, unit="h"
    )  # fmt: skip
    request = plan.request
    sid, w = request.species_id, request.weight_kg
    values = {
        name: table.value(sid, name)
        for name in (
            "plasma_fraction",
            "crystalloid_distribution_half_life_min",
            "serum_na_mmol_per_l",
            "serum_k_mmol_per_l",
        )
    }
    step_h = step_minutes / 60.0
    hours = body.grid(horizon, step_h)
    followed = _followed(plan, table, hours=hours, step_h=step_h, extra=tuple(extra_boluses),
                         loss_type=loss_type, renal_output=renal_output)  # fmt: skip
    plasma0 = values["plasma_fraction"].number * w * 1000.0
    if not 0 < plasma0 < followed.ecf0_ml < followed.tbw0_ml:
        raise InputError("species fractions must satisfy plasma < ECF < TBW", field="species")
    share = plasma0 / followed.ecf0_ml
    k_per_h = math.log(2) / (values["crystalloid_distribution_half_life_min"].number / 60.0)
    balance, settings = followed.balance, followed.settings
    tbw, ecf = followed.tbw_ml, followed.ecf_ml
    given, lost = followed.given_ml, followed.lost_ml
    kidney_values = list(followed.provenance)
    # what the kidney took left the plasma; the interstitium refills it at the distribution rate
    undistributed = decaying_sum(balance.urine_ecf_ml, math.exp(-k_per_h * step_h))
    plasma = (
        share * ecf
        + _excess_plasma(hours, list(followed.inputs), share, k_per_h)
        - (1.0 - share) * (undistributed)
    )
    urine = followed.urine_ml
    consumed = followed.free_water_out_ml + lost
    # followed from the species' normal when no Na was entered: said, not drawn
    na_path = followed.na_path
    serum_na = na_path if request.serum_na is not None else None
    serum_k = None
    if request.serum_k is not None:
        k_pool = np.asarray(balance.k_mmol)
        serum_k = request.serum_k * k_pool / k_pool[0]
    pcv, solids = _dilution(plasma, request.pcv_percent, request.total_solids_g_per_dl)
    serum_hco3 = None
    if followed.base_in_mmol is not None and request.serum_hco3 is not None:
        serum_hco3, hco3_values = follow_bicarbonate(
            table, request, hco3_0=request.serum_hco3, ecf_ml=ecf, step_h=step_h,
            base_in_mmol=followed.base_in_mmol, lost_ml=lost,
            losses=followed.losses if settings is not None else None,
            drug_hco3_mmol=balance.hco3_excreted_mmol, kidney_acts=settings is not None,
        )  # fmt: skip
        kidney_values += hco3_values

    weight = followed.weight_kg  # the one weight prediction (given − what left)
    net = (weight - w) * 1000.0
    na_limit = request.max_na_change_per_h or limit("sodium_max_correction_mmol_per_l_h").value
    beyond = _beyond_the_model(hours, plasma, ecf - plasma, tbw - ecf, na_path, serum_k,
                               weight, serum_hco3=serum_hco3)  # fmt: skip
    if beyond:  # the figures stop being a prediction: nothing more is read from them
        predicted = beyond
    else:
        predicted = (_predicted_findings(
            hours, na_path, na_entered=request.serum_na is not None, na_limit=na_limit,
            na_normal=values["serum_na_mmol_per_l"], serum_k=serum_k,
            k_normal=values["serum_k_mmol_per_l"], step_h=step_h,
            renal_disease=request.renal_disease, plasma_ml=plasma,
            na_checked_until_h=body.checked_until_h(plan.regimen, table), plan_end_h=end,
        ) if settings is not None else ()) + _bicarbonate_findings(
            hours, serum_hco3, table.get(sid, "serum_hco3_mmol_per_l")
        )  # fmt: skip
    provenance = tuple(dict.fromkeys([*kidney_values, *values.values()]))
    band = None if settings is None else (settings.floor_mosm_per_kg, settings.ceiling_mosm_per_kg)
    return Course(
        hours=hours,
        given_ml=given,
        given_by_fluid_ml=followed.given_by_fluid_ml,
        consumed_ml=consumed,
        urine_ml=urine,
        urine_osm_mosm_per_kg=None
        if settings is None
        else np.asarray(balance.urine_osm_mosm_per_kg),
        urine_band_mosm_per_kg=band,
        plasma_ml=plasma,
        interstitial_ml=ecf - plasma,
        intracellular_ml=tbw - ecf,
        osmolality_mosm_per_kg=followed.osmolality_mosm_per_kg,
        serum_na=serum_na,
        serum_k=serum_k,
        pcv_percent=pcv,
        total_solids_g_per_dl=solids,
        na_max_change_per_h=na_limit,
        findings=predicted,
        weight_kg=weight,
        remaining_deficit_ml=np.maximum(plan.deficit_ml - net, 0.0),
        provenance=provenance,
        excess_excretion_left_out=followed.excess_excretion_left_out,
        outputs_end_h=end,
        na_excreted_mmol=None if settings is None else np.asarray(balance.na_excreted_mmol),
        k_excreted_mmol=None if settings is None else np.asarray(balance.k_excreted_mmol),
        diuretics_not_modelled=followed.diuretics_not_modelled,
        serum_hco3=serum_hco3,
    )


def _followed(
    plan: Plan,
    table: SpeciesTable,
    *,
    hours: np.ndarray,
    step_h: float,
    extra: tuple[BodyInput, ...],
    loss_type: str,
    renal_output: str | None,
) -> body.BodyCourse:
    """The body through the plan: the plan's own (``Plan.body``, what its sodium check
    followed) when this course asks for nothing else — the same step, no extra bolus, the
    request's loss type and renal output, a horizon inside it — else followed afresh."""
    request, own = plan.request, plan.body
    same = (own is not None and not extra and math.isclose(step_h, own.step_h)
            and loss_type == request.loss_type and renal_output == request.renal_output
            and own.table is table)  # fmt: skip
    kept = own.until(float(hours[-1])) if same else None
    if kept is not None and len(kept.hours) == len(hours):
        return kept
    return body.follow_body(
        plan.regimen, table, hours=hours, step_h=step_h, extra_inputs=extra,
        loss_type=loss_type, renal_output=renal_output,
    )  # fmt: skip


def _predicted_findings(
    hours: np.ndarray,
    na_path: np.ndarray,
    *,
    na_entered: bool,
    na_limit: float,
    na_normal: SpeciesValue,
    serum_k: np.ndarray | None,
    k_normal: SpeciesValue,
    step_h: float,
    renal_disease: bool,
    plasma_ml: np.ndarray,
    na_checked_until_h: float,
    plan_end_h: float,
) -> tuple[Finding, ...]:
    """Findings on what this course predicts (only where the kidney is modelled):

    * serum Na changing faster than the correction limit over some hour that starts after
      ``na_checked_until_h`` (the plan's own check follows this same body up to there; past
      it, the course runs on for observations) while it is, or goes, outside the species'
      reference interval after that hour (Adrogué & Madias 2000); a patient already outside
      the interval is no exemption. The words name that hour, which way Na moves in it and
      the plan's end (``plan_end_h``), so nothing from inside the plan is said to come after
      it (soft);
    * serum K (when entered) falling below, or climbing above, the species' interval
      (loop and thiazide diuretics, K-free fluids; oliguria retaining K; soft);
    * the plasma more than :data:`PLASMA_CONTRACTION_SAID` below its start (soft), more
      than the plan's own ``ECF_CONTRACTION_BLOCKED`` (hard).
    """
    found = []
    low, high = _interval(na_normal)
    per_hour = max(int(round(1.0 / step_h)), 1)
    fastest, fastest_i = 0.0, 0
    later = hours[:-per_hour] > na_checked_until_h + 1e-9 if len(na_path) > per_hour else []
    if np.any(later):
        changes = np.where(later, na_path[per_hour:] - na_path[:-per_hour], 0.0)
        fastest_i = int(np.argmax(np.abs(changes)))
        fastest = abs(float(changes[fastest_i]))
    # only what follows the plan's own check is read here (inside it, the plan speaks)
    first = int(np.argmax(later)) if fastest > na_limit else len(na_path) - 1
    tail = na_path[first:]
    peak_i = first + int(np.argmax(np.maximum(tail - high, low - tail)))
    peak = float(na_path[peak_i])
    if fastest > na_limit and not low <= peak <= high:
        rising = bool(na_path[fastest_i + per_hour] > na_path[fastest_i])
        start = "" if na_entered else " (no Na entered: followed from the species' normal)"
        why = ("free water leaving faster than it is given (a diuretic, hypotonic losses, a "
               "kidney that cannot dilute)" if rising else
               "free water given faster than it leaves (hypotonic fluid, mannitol drawing "
               "water from the cells)")  # fmt: skip
        caveat = (" With renal disease the model leaves out the diseased kidney's sodium "
                  "losses, so a predicted rise may be overstated." if renal_disease and rising
                  else "")  # fmt: skip
        found.append(Finding(
            severity="soft", code="PREDICTED_NA_OUTSIDE_RANGE",
            message=f"The course predicts serum Na to {'rise' if rising else 'fall'} "
                    f"{format_quantity(fastest, 'mmol/L')} in the hour from hour "
                    f"{format_number(float(hours[fastest_i]), decimals=1)}, after the plan "
                    f"ends at hour {format_number(plan_end_h, decimals=1)}, faster than "
                    f"{format_quantity(na_limit, 'mmol/L/h')}, and to be "
                    f"{format_quantity(peak, 'mmol/L')} at hour "
                    f"{format_number(float(hours[peak_i]), decimals=1)}, outside the "
                    f"{format_quantity(low, 'mmol/L')}–{format_quantity(high, 'mmol/L')} "
                    f"interval{start}: {why}.{caveat}",
            action="Measure serum Na within a few hours of starting and re-plan with the "
                   "measured value before changing the fluid.",
            source_id=na_normal.source_id,
        ))  # fmt: skip
    if serum_k is not None:
        k_low, k_high = _interval(k_normal)
        lowest_i, highest_i = int(np.argmin(serum_k)), int(np.argmax(serum_k))
        if serum_k[lowest_i] < k_low and serum_k[lowest_i] < serum_k[0] - 0.05:
            found.append(Finding(
                severity="soft", code="PREDICTED_K_BELOW_RANGE",
                message=f"The course predicts serum K "
                        f"{format_quantity(float(serum_k[lowest_i]), 'mmol/L')} by hour "
                        f"{format_number(float(hours[lowest_i]), decimals=1)}, below the "
                        f"{format_quantity(k_low, 'mmol/L')} low end of the interval.",
                action="Add potassium to the fluid (the serum-K scale) and measure K again "
                       "within 12–24 h.",
                source_id=k_normal.source_id,
            ))  # fmt: skip
        if serum_k[highest_i] > k_high and serum_k[highest_i] > serum_k[0] + 0.05:
            found.append(Finding(
                severity="soft", code="PREDICTED_K_ABOVE_RANGE",
                message=f"The course predicts serum K "
                        f"{format_quantity(float(serum_k[highest_i]), 'mmol/L')} by hour "
                        f"{format_number(float(hours[highest_i]), decimals=1)}, above the "
                        f"{format_quantity(k_high, 'mmol/L')} high end of the interval (the "
                        "model understates how far K climbs when it is retained).",
                action="Give no potassium until K is measured again; measure K and urine "
                       "output within a few hours.",
                source_id=k_normal.source_id,
            ))  # fmt: skip
    lowest_plasma = int(np.argmin(plasma_ml))
    if plasma_ml[lowest_plasma] < (1.0 - PLASMA_CONTRACTION_SAID) * plasma_ml[0]:
        fall = 1.0 - plasma_ml[lowest_plasma] / plasma_ml[0]
        shock = fall > ECF_CONTRACTION_BLOCKED  # the plan's own ECF check blocks past it
        found.append(Finding(
            severity="hard" if shock else "soft", code="PREDICTED_PLASMA_CONTRACTION",
            message=f"The course predicts the plasma volume "
                    f"{format_number(100 * fall, decimals=0)} % below where it started by hour "
                    f"{format_number(float(hours[lowest_plasma]), decimals=1)} (more water and "
                    "salt leaving than given: a diuretic, losses, or a kidney that cannot hold "
                    "them)" + (f", more than {ECF_CONTRACTION_BLOCKED:.0%}: shock."
                               if shock else "."),
            action=("Do not follow the plan as entered: give the losses and the urine back "
                    "(plan by ins and outs) or reduce the diuretic, and reassess perfusion and "
                    "weight within hours." if shock else
                    "Reassess perfusion and weight within hours; give the losses back or "
                    "reduce the diuretic before the patient becomes hypovolaemic."),
        ))  # fmt: skip
    return tuple(found)


def _bicarbonate_findings(
    hours: np.ndarray, serum_hco3: np.ndarray | None, normal: SpeciesValue | None
) -> tuple[Finding, ...]:
    """A soft finding when an entered HCO3 is predicted far past the species' interval
    (:func:`vetfluid.planning.bicarbonate.drift`, as the plan's own check reads it): losses
    by type, base in the fluids, acetazolamide."""
    moved = None if serum_hco3 is None else drift(serum_hco3, normal)
    if moved is None:
        return ()
    worst, bound = moved
    value = float(serum_hco3[worst])
    side = "above" if value > bound else "below"
    return (Finding(
        severity="soft", code="PREDICTED_HCO3_OUTSIDE_RANGE",
        message=f"The course predicts serum bicarbonate {format_quantity(value, 'mmol/L')} by "
                f"hour {format_number(float(hours[worst]), decimals=1)}, {side} "
                f"{format_quantity(bound, 'mmol/L')}.",
        action="Measure the acid–base status again within 12–24 h; consider what the losses "
               "and the fluid's buffer are doing.",
        source_id=None if normal is None else normal.source_id,
    ),)  # fmt: skip


def _interval(normal: SpeciesValue) -> tuple[float, float]:
    low = normal.low if normal.low is not None else normal.number
    high = normal.high if normal.high is not None else normal.number
    return low, high


def _beyond_the_model(
    hours: np.ndarray, *series: np.ndarray | None, serum_hco3: np.ndarray | None = None
) -> tuple[Finding, ...]:
    """A hard finding when a volume or a concentration the course follows reaches zero or
    below, or stops being a number: more was lost or given than the body holds, and the
    figures from that hour on are no prediction. A predicted serum bicarbonate outside
    :data:`vetfluid.planning.bicarbonate.SERUM_HCO3_RANGE_MMOL_PER_L` is the same: a value that
    would be refused as impossible if entered is no prediction either (plausibility bounds,
    our choice, no source)."""
    broken = np.zeros(len(hours), dtype=bool)
    for values in series:
        if values is not None:
            broken |= ~np.isfinite(values) | (values <= 0)
    hco3_low, hco3_high = SERUM_HCO3_RANGE_MMOL_PER_L
    implausible = np.zeros(len(hours), dtype=bool)
    if serum_hco3 is not None:
        broken |= ~np.isfinite(serum_hco3)
        implausible = (serum_hco3 < hco3_low) | (serum_hco3 > hco3_high)
    if not (broken | implausible).any():
        return ()
    i = int(np.argmax(broken | implausible))
    what = ("the course would need more water or solute than the body holds (a volume or "
            "concentration at zero or below)")  # fmt: skip
    if not broken[i]:
        value = format_quantity(float(serum_hco3[i]), "mmol/L")
        what = (f"the course predicts a serum bicarbonate of {value}, outside the "
                f"{format_number(hco3_low)}–{format_quantity(hco3_high, 'mmol/L')} a "
                "patient's can be entered as")  # fmt: skip
    return (Finding(
        severity="hard", code="COURSE_BEYOND_THE_MODEL",
        message=f"From hour {format_number(float(hours[i]), decimals=1)} {what}: its figures "
                "from then on are not a prediction.",
        action="Check the losses, doses and volumes entered and their units; this plan "
               "cannot be followed as entered.",
    ),)  # fmt: skip


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
    return result, [*result.findings, *found]
