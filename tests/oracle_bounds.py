"""An independent safety oracle: physiological bounds checked on a built plan.

The oracle never asks the plan builder's checks (``vetfluid/planning/safety.py``) what is
dangerous. From the plan's phases (what runs when, at what rate or dose), the library
fluid the request names, the additives the phases carry and the species table's values,
it works out with its own arithmetic what reaches the patient, and lists every bound the
plan passes (:func:`breaches`). The tests then ask whether the plan carries one of the
findings that bound names (:data:`RULES`), at least as severe as the bound needs
(:func:`answered`): a hard finding blocks the plan, a soft one must be acknowledged with a
written reason. A finding about something else does not answer a bound, however severe.

What is read from the core, and why that keeps the oracle independent:

* ``fluids.composition`` of a *library* fluid: the chemistry (g/L ÷ molar mass), not a
  judgement. The oracle mixes the additives into the bag itself (:func:`bag_composition`).
* the species table's values (``SpeciesTable.value``): data with their sources.
* ``Plan.phases``: what the plan tells the nurse to give. Nothing else of the plan is
  trusted, except its findings, which are what is being checked.

Each bound names its source; a bound that is a rule of thumb says "common practice, no
source"; a figure chosen by us for the oracle says so and why.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from vetfluid.planning.plan import Plan, PlanRequest
from vetfluid.planning.schedule import Phase
from vetfluid.tables import fluids
from vetfluid.tables.species import SpeciesTable

# ---- bounds ----------------------------------------------------------------------------------
# Potassium infusion ceiling, 0.5 mmol (mEq)/kg/h (Côté E (ed.), Clinical Veterinary Advisor:
# Dogs and Cats, 4th ed. 2020; AAHA 2013 fluid therapy toolkit, Davis H et al. 2013).
POTASSIUM_MAX_MMOL_PER_KG_H = 0.5
# Serum Na may move at most 0.5 mmol/L/h unless the request sets its own limit
# (Adrogué HJ, Madias NE. Hypernatremia. N Engl J Med 2000;342:1493–1499; some sources
# allow 0.5–1).
SODIUM_MAX_CHANGE_MMOL_PER_L_H = 0.5
# SC fluid holds at most 30–35 mEq/L K (DiBartola SP (ed.), Fluid, Electrolyte, and
# Acid-Base Disorders in Small Animal Practice, 4th ed. 2012, p. 342); the upper end.
SC_MAX_K_MMOL_PER_L = 35.0
# SC fluid is absorbed over 6–8 h (Vet Clin North Am Small Anim Pract 2017;47:505–519); the
# short end is the fastest a divided dose reaches the circulation. No figure for the
# coelom is on record: taken as the same (an assumption of the oracle, no source).
EXTRAVASCULAR_ABSORPTION_H = 6.0
# Outside a vein only roughly isotonic fluid, no dextrose, no colloid (Vet Clin North Am
# Small Anim Pract 2017;47:505–519). "Roughly isotonic" is set by us at 1.3 × the species'
# plasma osmolality: DiBartola's 35 mEq/L K in 0.9 % NaCl (308 + 70 = 378 mOsm/L, 1.26 ×
# 300) is SC fluid that source recommends, so the bound sits just above it.
EXTRAVASCULAR_MAX_OSMOLARITY_RATIO = 1.3
# Above about 600 mOsm/L a peripheral vein is damaged (thrombophlebitis); such fluid needs
# a central line. Common practice, no source. The request has no "central line" input, so
# every IV plan is taken as peripheral.
PERIPHERAL_MAX_OSMOLARITY_MOSM_PER_L = 600.0
# A weight more than 5× beyond the species' usual range is a unit slip (g for kg is
# ×1000). Common practice, no source.
WEIGHT_SLIP_FACTOR = 5.0
# A carrier bag (replacement, maintenance, ins and outs) must not be hypertonic saline:
# set by us at an effective osmolarity above 1.5 × plasma (0.9 % NaCl is 1.03 × 300 mOsm/kg,
# 3 % NaCl 3.4 ×, 7.2 % NaCl 8.2 ×); hypertonic saline is a small resuscitation dose only
# (veterinary fluid therapy chapter; Ajito T et al. J Vet Med Sci 1999).
CARRIER_MAX_EFFECTIVE_RATIO = 1.5
# A resuscitation bolus must stay in the extracellular fluid. Set by us: an effective
# osmolarity below 0.75 × plasma (a quarter or more of it free water once glucose is
# metabolised) does not; lactated Ringer's against a parrot's 327 mOsm/kg is 0.83 ×,
# 0.45 % NaCl 0.51 ×, 5 % dextrose 0. Isotonic crystalloids for shock: Pardo M et al.,
# 2024 AAHA Fluid Therapy Guidelines for Dogs and Cats.
BOLUS_MIN_EFFECTIVE_RATIO = 0.75
# Hypertonic saline: 4 mL/kg of 7.2–7.5 % NaCl IV (dog 4–7, cat 2–4) over at least 5 min,
# then isotonic crystalloid (veterinary fluid therapy chapter; Ajito T et al. J Vet Med Sci
# 1999). The upper end per species; 4 mL/kg for species without a figure. Counted as Na
# given, so any strength compares with 7.2 %.
HYPERTONIC_DOSE_ML_PER_KG = {"dog": 7.0, "cat": 4.0}
HYPERTONIC_DOSE_DEFAULT_ML_PER_KG = 4.0
HYPERTONIC_REFERENCE_FLUID = "nacl_7_2"
HYPERTONIC_MIN_MINUTES = 5.0
# Hydroxyethyl starch: about 20 mL/kg a day in dogs, 10–20 in cats (Davis H et al. 2013
# AAHA/AAFP Fluid Therapy Guidelines for Dogs and Cats); the upper end.
COLLOID_MAX_ML_PER_KG_DAY = 20.0
# Under anaesthesia below 10 mL/kg/h (Davis 2013).
ANAESTHESIA_MAX_ML_PER_KG_H = 10.0
# More than 10 injection sites in one handling is absurd. Common practice, no source.
MAX_SITES_PER_DOSE = 10
# Routes into the circulation; "iv" is a peripheral vein, "cvc" a central venous catheter.
# Every other route (SC, intracoelomic, intraperitoneal, any new one) is taken as outside a
# vein, the safe side for the route bounds.
LINE_ROUTES = ("iv", "cvc", "io")
KCL_CONCENTRATE = "kcl_2_meq_per_ml"
DEXTROSE_CONCENTRATE = "dextrose_50"
# Floating-point slack only: a figure equal to its bound is not past it.
SLACK = 1e-9
# The oracle steps Na from turning point to turning point with what the plan says leaves
# (maintenance and losses) taken out of what is given, in the fluid's own proportion, so
# only the surplus moves Na; the core follows the kidney every 5 minutes. A plan within 2 %
# of the limit is the models' resolution, not a hazard either could see.
SODIUM_MODEL_SLACK = 0.02
RANGE_SLACK_MMOL_PER_L = 0.2
OVERLAP_RESOLUTION_H = 1.0 / 3600.0  # likewise for where Na ends up against its reference interval
DOSE_SETTING_SLACK = 0.05
# The findings about divided doses and their sites: the site limit below the syringe's
# smallest mark, more sites than a dose fits or than can be used at all, and the coelom,
# one space, given more than one injection holds.
SITE_CODES = (
    "SITE_BELOW_SMALLEST_MARK",
    "DIVIDED_TOO_MANY_SITES",
    "DIVIDED_SITES_IMPOSSIBLE",
    "ICOEL_DOSE_TOO_LARGE",
    "ICOEL_MORE_THAN_ONE_INJECTION",
)


@dataclass(frozen=True)
class Bound:
    """What answers one bound: the least severity, and the finding codes that say it."""

    needs: str  # "hard" or "soft"
    codes: tuple[str, ...]


# Each bound and the findings of the plan builder that answer it. Only the codes and what
# each means are taken from vetfluid/planning/safety.py and vetfluid/planning/plan.py;
# whether a plan passes a bound is the oracle's own arithmetic below. A refused request
# (InputError, LimitExceeded) answers every bound: no plan exists.
# Beside the rate rule, a fall is answered by the plan's rule for a kidney held from diluting
# (SODIUM_FALL_IF_ADH_HELD) and for free water itself (FREE_WATER_WITHOUT_HIGH_SODIUM). A
# plan blocked because its fluid may not go under the skin at all (FLUID_NOT_FOR_SC, always
# hard) or may not be the bag (FLUID_NOT_A_CARRIER, always hard) is answered too: its fix is
# another fluid, and the Na it would give is no plan to judge (the oracle's model keeps no
# kidney, so it may see an hour past the limit the plan's kidney does not).
SODIUM_ANSWERS = (
    "SODIUM_CHANGE_TOO_FAST",
    "FLUID_NOT_FOR_RESUSCITATION",
    "FLUID_DOSE_ABOVE_MAX",
    "SODIUM_FALL_IF_ADH_HELD",
    "FREE_WATER_WITHOUT_HIGH_SODIUM",
    "FLUID_NOT_FOR_SC",
    "FLUID_NOT_A_CARRIER",
)
RULES: dict[str, Bound] = {
    "weight_unit_slip": Bound("hard", ("WEIGHT_UNIT_SLIP",)),
    "weight_outside_range": Bound("soft", ("WEIGHT_OUTSIDE_RANGE",)),
    # the carrier check, or the vein's hard osmolarity ceiling, whose fix (a less
    # concentrated bag) puts the same thing right
    "concentrate_as_bag": Bound("hard", ("FLUID_NOT_A_CARRIER", "ROUTE_OSMOLARITY_LIMIT")),
    "hypertonic_as_bag": Bound("hard", ("FLUID_NOT_A_CARRIER", "ROUTE_OSMOLARITY_LIMIT")),
    "concentrate_as_bolus": Bound("hard", ("FLUID_NOT_FOR_RESUSCITATION",)),
    "bolus_leaves_ecf": Bound("hard", ("FLUID_NOT_FOR_RESUSCITATION",)),
    "hypertonic_bolus_dose": Bound("hard", ("FLUID_DOSE_ABOVE_MAX",)),
    # no finding says it: the builder runs each bolus over at least the fluid's shortest
    # time (resuscitation.resuscitation), so a faster one is a fault nothing answers
    "hypertonic_bolus_fast": Bound("hard", ()),
    "potassium_rate": Bound("hard", ("POTASSIUM_ABOVE_CEILING",)),
    "sc_potassium": Bound("hard", ("ROUTE_POTASSIUM_LIMIT",)),
    "kcl_with_high_serum_k": Bound("hard", ("KCL_WITH_HIGH_SERUM_K",)),
    # a measured Na, in an hour from the end of the boluses on: the carrier's finding. A
    # concentrate given as a bolus (FLUID_NOT_FOR_RESUSCITATION, hard), or hypertonic saline
    # beyond its single dose (FLUID_DOSE_ABOVE_MAX, hard), answers too: the Na those leave
    # behind is no state to plan from, and the plan is blocked until the boluses are put right.
    "sodium_change": Bound("soft", SODIUM_ANSWERS),
    # a measured Na, in an hour that starts while the boluses run: the boluses' finding
    # (shock first; soft, a reason written)
    "sodium_change_during_boluses": Bound(
        "soft", ("SODIUM_BOLUS_CHANGE", "FLUID_NOT_FOR_RESUSCITATION", "FLUID_DOSE_ABOVE_MAX")
    ),
    # no Na measured: boluses are left out (see _sodium), so the carrier's finding
    "sodium_change_assumed_normal": Bound("soft", SODIUM_ANSWERS),
    "hourly_volume": Bound("hard", ("RATE_ABOVE_SHOCK_DOSE", "VOLUME_PER_HOUR_ABOVE_CEILING")),
    # the library fluid (FLUID_NOT_FOR_SC), its dextrose, or the bag made too strong by its
    # additives (the route's osmolarity limit)
    "not_for_extravascular": Bound(
        "hard", ("FLUID_NOT_FOR_SC", "ROUTE_DEXTROSE_LIMIT", "ROUTE_OSMOLARITY_LIMIT")
    ),
    # the bag (the core's route limits judge the bag as mixed)
    "peripheral_osmolarity": Bound(
        "soft", ("ROUTE_OSMOLARITY_LIMIT", "KCL_PERIPHERAL_CONCENTRATION")
    ),
    # a resuscitation bolus, given with nothing added: the fluid may not be a bolus at all,
    # and its fix (an isotonic crystalloid, about 300 mOsm/L) puts the osmolarity right
    "peripheral_osmolarity_bolus": Bound("soft", ("FLUID_NOT_FOR_RESUSCITATION",)),
    "site_volume": Bound("soft", SITE_CODES),
    "dose_volume": Bound("soft", SITE_CODES),
    "absurd_sites": Bound("hard", ("DIVIDED_SITES_IMPOSSIBLE",)),
    # no finding says it: the builder refuses divided doses for a species without a site
    # limit (InputError from the species table), so a built plan without one is a fault
    "site_limit_unknown": Bound("soft", ()),
    "colloid_daily": Bound("hard", ("COLLOID_DAILY_LIMIT",)),
    "anaesthesia_rate": Bound("soft", ("ANAESTHESIA_RATE",)),
}
# Blocks that answer every bound. Keep this short: each must make every other figure of the
# plan meaningless, so that the plan is built again, and checked again, once put right.
ANSWERS_EVERY_RULE = (
    # the g/kg slip (hard): every per-kg figure (K, Na, volumes, sites) rests on a weight
    # far off (a thousandfold for g typed as kg); the plan is blocked until the patient is
    # re-weighed, and the plan built for the true weight is checked afresh
    "WEIGHT_UNIT_SLIP",
    # more water or salt taken out than the body holds (hard): past that hour the body's
    # figures, Na among them, are no numbers to check; the plan is blocked until the
    # losses, outputs or doses are put right
    "PLAN_BEYOND_THE_BODY",
    # a site's volume below the smallest syringe mark (hard): no divided dose of this plan
    # can be drawn up at all; the fix is a line (IO/IV) at a set rate, a different plan
    # whose every figure is checked afresh
    "SITE_BELOW_SMALLEST_MARK",
)


@dataclass(frozen=True, kw_only=True)
class Breach:
    """One bound a plan passes: which (a key of :data:`RULES`) and the figures."""

    rule: str
    detail: str

    def __post_init__(self) -> None:
        if self.rule not in RULES:
            raise KeyError(f"the bound {self.rule!r} is not in RULES: name what answers it")

    @property
    def needs(self) -> str:
        return RULES[self.rule].needs

    @property
    def codes(self) -> tuple[str, ...]:
        """The findings that answer this bound, the blocks that answer every bound included."""
        return (*RULES[self.rule].codes, *ANSWERS_EVERY_RULE)


@dataclass(frozen=True, kw_only=True)
class Mix:
    """What one litre of the fluid a phase gives holds (the oracle's own mixing)."""

    na_mmol_per_l: float
    k_mmol_per_l: float
    osmolarity_mosm_per_l: float  # every particle, as in the bag
    effective_mosm_per_l: float  # once glucose is metabolised
    dextrose_g_per_l: float
    colloid: bool


@dataclass(frozen=True, kw_only=True)
class Piece:
    """Fluid reaching the circulation at a constant rate from start_h to end_h."""

    start_h: float
    end_h: float
    ml_per_h: float
    mix: Mix
    kind: str  # the phase's: resuscitation, replacement, maintenance, ins and outs

    def ml_between(self, a: float, b: float) -> float:
        return self.ml_per_h * max(0.0, min(b, self.end_h) - max(a, self.start_h))


def _composition(fluid_id: str) -> fluids.Composition:
    return fluids.composition(fluids.load_fluids()[fluid_id])


def bag_composition(fluid_id: str, *, kcl_mmol_per_l: float, dextrose_percent: float) -> Mix:
    """The bag as made at the bedside: to each litre of the library fluid, KCl concentrate
    holding ``kcl_mmol_per_l`` mmol K, and 50 % dextrose until the whole is
    ``dextrose_percent`` % (w/v, hydrous, as labels state it). Method: mass balance per
    solute with volumes taken as additive (the usual bedside assumption)."""
    base = fluids.load_fluids()[fluid_id]
    parts = [(_composition(fluid_id), 1.0)]  # (composition, litres)
    if kcl_mmol_per_l > 0:
        kcl = _composition(KCL_CONCENTRATE)
        parts.append((kcl, kcl_mmol_per_l / kcl.k_mmol_per_l))
    if dextrose_percent > 0:
        dextrose = _composition(DEXTROSE_CONCENTRATE)
        strength = dextrose.dextrose_hydrous_g_per_l / 10.0  # % w/v
        # x L of concentrate into what is in the bag so far (V L): strength·x/(V + x) = wanted
        so_far = sum(volume for _, volume in parts)
        parts.append((dextrose, dextrose_percent * so_far / (strength - dextrose_percent)))
    litres = sum(volume for _, volume in parts)

    def per_litre(attribute: str) -> float:
        return sum(getattr(c, attribute) * volume for c, volume in parts) / litres

    return Mix(
        na_mmol_per_l=per_litre("na_mmol_per_l"),
        k_mmol_per_l=per_litre("k_mmol_per_l"),
        osmolarity_mosm_per_l=per_litre("osmolarity_mosm_per_l"),
        effective_mosm_per_l=per_litre("effective_osmolarity_mosm_per_l"),
        dextrose_g_per_l=per_litre("dextrose_g_per_l"),
        colloid=base.colloid is not None,
    )


def bolus_fluid_id(request: PlanRequest) -> str:
    """The fluid resuscitation boluses are given as: the request's bolus fluid where it
    names one, else the plan's fluid."""
    return getattr(request, "bolus_fluid_id", None) or request.fluid_id


def phase_mix(request: PlanRequest, phase: Phase) -> Mix:
    """A resuscitation bolus is its fluid with nothing added; every other phase the bag
    with what the phase says is added (its KCl) and the request's dextrose."""
    if phase.kind == "resuscitation":
        return bag_composition(bolus_fluid_id(request), kcl_mmol_per_l=0.0, dextrose_percent=0.0)
    return bag_composition(
        request.fluid_id,
        kcl_mmol_per_l=phase.kcl_mmol_per_l,
        dextrose_percent=request.dextrose_percent,
    )


def dose_times(phase: Phase) -> list[float]:
    """When each divided dose of a phase is given."""
    if phase.mode != "intermittent":
        return []
    return [phase.start_h + i * (phase.interval_h or 0.0) for i in range(phase.doses or 0)]


def dose_ml(phase: Phase) -> float:
    """A divided dose as the nurse gives it: the larger of the dose and its sites' volumes
    added up (they should agree)."""
    return max(phase.dose_ml or 0.0, (phase.ml_per_site or 0.0) * (phase.sites_per_dose or 0))


def pieces(request: PlanRequest, plan: Plan) -> list[Piece]:
    """What reaches the circulation and when: a continuous phase at its rate; a divided
    SC or intracoelomic dose spread over its absorption time (a dose through a line,
    should one appear, as a one-minute push)."""
    out = []
    for phase in plan.phases:
        mix = phase_mix(request, phase)
        if phase.mode == "continuous":
            out.append(
                Piece(
                    start_h=phase.start_h,
                    end_h=phase.end_h,
                    ml_per_h=phase.rate_ml_per_h or 0.0,
                    mix=mix,
                    kind=phase.kind,
                )
            )
            continue
        spread = 1 / 60 if phase.route in LINE_ROUTES else EXTRAVASCULAR_ABSORPTION_H
        for hour in dose_times(phase):
            out.append(
                Piece(
                    start_h=hour,
                    end_h=hour + spread,
                    ml_per_h=dose_ml(phase) / spread,
                    mix=mix,
                    kind=phase.kind,
                )
            )
    return out


def peak_rate(flows: list[Piece], per_ml: Callable[[Piece], float]) -> tuple[float, float]:
    """The highest running total of ``ml_per_h × per_ml(piece)`` over pieces running at once,
    and when it starts (totals change only where a piece starts). Pieces that overlap by
    less than a second (a dose interval of 5.9999999999999964 h, 12 h / 2 in floating point)
    are not running together: no rate is sustained over no time."""
    peak, at = 0.0, 0.0
    for moment in sorted({f.start_h for f in flows}):
        running = sum(
            f.ml_per_h * per_ml(f)
            for f in flows
            if f.start_h <= moment < f.end_h - OVERLAP_RESOLUTION_H
        )
        if running > peak:
            peak, at = running, moment
    return peak, at


def answered(plan: Plan, breach: Breach) -> bool:
    """Whether the plan carries one of the findings that answer ``breach``, at least as
    severe as it needs."""
    allowed = ("hard",) if breach.needs == "hard" else ("soft", "hard")
    return any(f.code in breach.codes and f.severity in allowed for f in plan.findings)


def _range(table: SpeciesTable, species_id: str, parameter: str) -> tuple[float, float]:
    value = table.value(species_id, parameter)
    low = value.low if value.low is not None else value.number
    high = value.high if value.high is not None else value.number
    return low, high


def hourly_ceiling_ml_per_kg(table: SpeciesTable, species_id: str) -> tuple[float, str]:
    """The most any hour may give: the species' shock dose per hour (Davis 2013: the
    whole shock dose is given in 25 % steps with reassessment, so one shock dose in an
    hour is already the fastest a guideline goes), else one blood volume per hour (set by
    us as a conservative bound: more than the patient's whole blood volume in an hour)."""
    shock = table.get(species_id, "shock_dose_ml_per_kg")
    if shock is not None:
        return shock.number, "shock dose"
    return table.value(species_id, "blood_volume_ml_per_kg").number, "blood volume"


def _q(number: float) -> str:
    return f"{number:.4g}"


# ---- the bounds --------------------------------------------------------------------------------
def breaches(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Every bound the plan passes, from first principles."""
    found: list[Breach] = []
    for check in (
        _weight,
        _carrier_fluid,
        _bolus_fluid,
        _potassium,
        _sodium,
        _hourly_volume,
        _osmolarity_for_route,
        _sites,
        _colloid,
        _anaesthesia,
    ):
        found.extend(check(request, plan, table))
    return found


def unanswered(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Every bound the plan passes that none of its findings answers."""
    return [b for b in breaches(request, plan, table) if not answered(plan, b)]


def _weight(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Beyond the usual adult range: soft; more than 5× beyond it: hard (the g/kg slip),
    except a neonate below it (a newborn weighs a fraction of an adult), which stays soft.
    The table defines body_weight_kg's low and high that way (parameter_definitions.csv)."""
    low, high = _range(table, request.species_id, "body_weight_kg")
    w = request.weight_kg
    text = f"{_q(w)} kg against the usual {_q(low)}–{_q(high)} kg"
    if request.neonate and w < low:
        return [Breach(rule="weight_outside_range", detail=text + " (neonate)")]
    if w > high * WEIGHT_SLIP_FACTOR or w < low / WEIGHT_SLIP_FACTOR:
        return [Breach(rule="weight_unit_slip", detail=text)]
    if not low <= w <= high:
        return [Breach(rule="weight_outside_range", detail=text)]
    return []


def _plasma(table: SpeciesTable, species_id: str) -> float:
    return table.value(species_id, "plasma_osmolality_mosm_per_kg").number


def _carrier_fluid(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """A concentrate or hypertonic saline is never the bag of a carrier infusion."""
    carriers = [p for p in plan.phases if p.kind != "resuscitation" and p.volume_ml > 0]
    if not carriers:
        return []
    base = fluids.load_fluids()[request.fluid_id]
    found = []
    if base.kind == "additive_concentrate":
        found.append(
            Breach(
                rule="concentrate_as_bag",
                detail=f"{request.fluid_id} runs as the {carriers[0].kind} bag",
            )
        )
    ratio = _composition(request.fluid_id).effective_osmolarity_mosm_per_l / _plasma(
        table, request.species_id
    )
    if base.kind != "additive_concentrate" and ratio > CARRIER_MAX_EFFECTIVE_RATIO:
        found.append(
            Breach(
                rule="hypertonic_as_bag",
                detail=f"{request.fluid_id} at {_q(ratio)} × plasma runs as the "
                f"{carriers[0].kind} bag",
            )
        )
    return found


def _bolus_fluid(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """A resuscitation bolus stays in the extracellular fluid and is never a concentrate;
    hypertonic saline only as its small dose, over at least 5 minutes."""
    boluses = [p for p in plan.phases if p.kind == "resuscitation" and p.volume_ml > 0]
    if not boluses:
        return []
    fluid_id = bolus_fluid_id(request)
    base = fluids.load_fluids()[fluid_id]
    comp = _composition(fluid_id)
    ratio = comp.effective_osmolarity_mosm_per_l / _plasma(table, request.species_id)
    found = []
    if base.kind == "additive_concentrate":
        found.append(
            Breach(
                rule="concentrate_as_bolus",
                detail=f"{fluid_id} given as a resuscitation bolus",
            )
        )
    elif ratio < BOLUS_MIN_EFFECTIVE_RATIO:
        found.append(
            Breach(
                rule="bolus_leaves_ecf",
                detail=f"{fluid_id} (effective {_q(ratio)} × plasma) as a resuscitation bolus",
            )
        )
    elif ratio > CARRIER_MAX_EFFECTIVE_RATIO:
        w = request.weight_kg
        na_given = sum(p.volume_ml for p in boluses) / 1000 * comp.na_mmol_per_l / w
        dose = HYPERTONIC_DOSE_ML_PER_KG.get(request.species_id, HYPERTONIC_DOSE_DEFAULT_ML_PER_KG)
        most = dose * _composition(HYPERTONIC_REFERENCE_FLUID).na_mmol_per_l / 1000
        # a drip is set to the figures it is shown with, up to 5 % off below 1 mL/h
        # (vetfluid.physiology.delivery.drip_ml_per_h): the dose "about 4 mL/kg" is held to that
        if na_given > most * (1 + DOSE_SETTING_SLACK):
            found.append(
                Breach(
                    rule="hypertonic_bolus_dose",
                    detail=f"{_q(na_given)} mmol/kg Na as {fluid_id}, above "
                    f"{_q(most)} ({_q(dose)} mL/kg of 7.2 %)",
                )
            )
        fastest = min(p.hours for p in boluses) * 60
        if fastest < HYPERTONIC_MIN_MINUTES * (1 - SLACK):
            found.append(
                Breach(
                    rule="hypertonic_bolus_fast",
                    detail=f"{fluid_id} bolus over {_q(fastest)} min",
                )
            )
    return found


def _potassium(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """K reaching the circulation per kg and hour, at every moment; SC K; KCl into a
    patient already above the species' K range (Côté 2020: do not add potassium)."""
    found = []
    w = request.weight_kg
    peak, at = peak_rate(pieces(request, plan), lambda f: f.mix.k_mmol_per_l / 1000 / w)
    if peak > POTASSIUM_MAX_MMOL_PER_KG_H * (1 + SLACK):
        found.append(
            Breach(
                rule="potassium_rate",
                detail=f"{_q(peak)} mmol/kg/h of K from hour {_q(at)}",
            )
        )
    for phase in plan.phases:
        k = phase_mix(request, phase).k_mmol_per_l
        if phase.route == "sc" and phase.volume_ml > 0 and k > SC_MAX_K_MMOL_PER_L * (1 + SLACK):
            found.append(
                Breach(
                    rule="sc_potassium",
                    detail=f"{_q(k)} mmol/L K given SC ({phase.kind})",
                )
            )
            break
    _, k_high = _range(table, request.species_id, "serum_k_mmol_per_l")
    added = any(p.kcl_mmol_per_l > 0 and p.volume_ml > 0 for p in plan.phases)
    if added and request.serum_k is not None and request.serum_k > k_high:
        found.append(
            Breach(
                rule="kcl_with_high_serum_k",
                detail=f"KCl added at serum K {_q(request.serum_k)}, above the "
                f"species' {_q(k_high)}",
            )
        )
    return found


def sodium_change(
    *, serum_na: float, litres: float, infusate_na_plus_k: float, tbw_l: float
) -> float:
    """Change of serum Na (mmol/L) from ``litres`` of infusate: the general form of the
    Adrogué–Madias formula, ΔNa = V·(Na_inf + K_inf − Na)/(TBW + V) (Adrogué & Madias,
    N Engl J Med 2000; Chen et al., Kidney360 2021); with V = 1 L it is their one-litre
    formula."""
    return litres * (infusate_na_plus_k - serum_na) / (tbw_l + litres)


def _is_hypertonic_saline(request: PlanRequest) -> bool:
    """Whether the boluses are the hypertonic saline of the library (7.2 % NaCl)."""
    return (request.bolus_fluid_id or request.fluid_id) == HYPERTONIC_REFERENCE_FLUID


def body_water_fraction(table: SpeciesTable, request: PlanRequest) -> float:
    """Total body water as a fraction of weight, from the table: a neonate's where the
    table has one for the species or its group (neonates hold more water, up to 0.8 of
    body weight: Odunayo A. Fluid therapy. Clinician's Brief 2018), else the adults'."""
    young = table.get(request.species_id, "neonate_total_body_water_fraction")
    if request.neonate and young is not None:
        return young.number
    return table.value(request.species_id, "total_body_water_fraction").number


def _sodium(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Serum Na change in every hour-long window of the plan (windows start at every
    turning point of the inflow, on the hour, and an hour before each turning point, so
    the worst hour is among them). The patient's Na is followed window by window with the
    same formula; without a measured Na the species' normal Na is assumed (a separate rule,
    so a plan for a patient whose Na was never measured is seen apart). Hours that start
    while the resuscitation boluses run are a rule of their own: a finding about the
    boluses does not answer the fluids that follow them, nor the other way round."""
    measured = request.serum_na is not None
    na = (
        request.serum_na
        if measured
        else table.value(request.species_id, "serum_na_mmol_per_l").number
    )
    limit = request.max_na_change_per_h or SODIUM_MAX_CHANGE_MMOL_PER_L_H
    tbw = body_water_fraction(table, request) * request.weight_kg
    flows = pieces(request, plan)
    if not flows:
        return []
    end = max(f.end_h for f in flows)
    turns = {f.start_h for f in flows} | {f.end_h for f in flows}
    starts = sorted(
        {t for t in turns if t < end}
        | {t - 1 for t in turns if t >= 1}
        | {float(h) for h in range(math.ceil(end))}
    )

    # What leaves: the plan's outflow (from hour, mL/h), each rate until the next. The
    # surplus given over it is what dilutes or concentrates the body water (the general
    # form's V); what leaves is taken to match the fluid it replaces, so a maintenance
    # fluid at the maintenance rate holds Na (a kidney's working range: the plan's own
    # model answers the slow drift of a fluid's composition).
    outflow = list(getattr(plan, "outflow", ((0.0, 0.0),)))

    def left(a: float, b: float) -> float:  # litres out between hours a and b
        total = 0.0
        for i, (hour, rate) in enumerate(outflow):
            until = outflow[i + 1][0] if i + 1 < len(outflow) else math.inf
            total += rate * max(min(b, until) - max(a, hour), 0.0)
        return total / 1000

    def given(a: float, b: float) -> tuple[float, float]:  # litres, mmol of Na + K
        litres = sum(f.ml_between(a, b) for f in flows) / 1000
        cations = sum(
            f.ml_between(a, b) / 1000 * (f.mix.na_mmol_per_l + f.mix.k_mmol_per_l) for f in flows
        )
        if litres <= 0:
            return litres, cations
        surplus = max(litres - left(a, b), 0.0)
        return surplus, cations * surplus / litres

    # Without a measured Na, shock boluses are left out of this rule: a patient in shock is
    # resuscitated first and reassessed (Davis 2013), Na measured before the fluids that
    # follow; the replacement and maintenance that follow are held to the limit.
    first_carrier = min(
        (p.start_h for p in plan.phases if p.kind != "resuscitation"), default=math.inf
    )
    # the patient's Na at each window start, stepped through the boluses; the worst hour that
    # starts while the boluses run and the worst that starts after them, apart (each has its
    # own finding)
    worst = {True: (0.0, 0.0), False: (0.0, 0.0)}  # during boluses? → (change, start)
    # The correction limit guards a brain adapted to an abnormal Na (Adrogué & Madias 2000):
    # an hour that starts and ends inside the species' reference interval corrects nothing,
    # so only an hour that starts or ends outside it (by more than the two models'
    # resolution) is held to the limit. The oracle keeps no kidney, so where Na drifts to
    # over many hours is not its to judge; the plan's own model follows that.
    normal = table.value(request.species_id, "serum_na_mmol_per_l")
    low = (normal.low if normal.low is not None else normal.number) - RANGE_SLACK_MMOL_PER_L
    high = (normal.high if normal.high is not None else normal.number) + RANGE_SLACK_MMOL_PER_L
    now = 0.0
    for start in starts:
        during_boluses = start < first_carrier - 1e-9
        if not measured and during_boluses:
            continue
        # Na is stepped through the boluses; after them each hour is judged from where the
        # boluses left it (no drift: the oracle keeps no kidney to hold Na over many hours)
        litres, cations = given(now, min(start, first_carrier))
        if litres > 0 and now < first_carrier:
            na += sodium_change(
                serum_na=na, litres=litres, infusate_na_plus_k=cations / litres, tbw_l=tbw
            )
            tbw += litres  # the water given is body water now (the general form's TBW + V)
        now = start
        litres, cations = given(start, start + 1.0)
        if litres <= 0:
            continue
        change = sodium_change(
            serum_na=na, litres=litres, infusate_na_plus_k=cations / litres, tbw_l=tbw
        )
        if low <= na <= high and low <= na + change <= high:
            continue
        if abs(change) > abs(worst[during_boluses][0]):
            worst[during_boluses] = (change, start)
    found = []
    for during_boluses, (change, start) in worst.items():
        if abs(change) <= limit * (1 + SODIUM_MODEL_SLACK):
            continue
        if during_boluses:
            rule = "sodium_change_during_boluses"
        else:
            rule = "sodium_change" if measured else "sodium_change_assumed_normal"
        found.append(
            Breach(
                rule=rule,
                detail=f"serum Na {_q(change)} mmol/L in the hour from hour {_q(start)} "
                f"(limit {_q(limit)}; TBW {_q(tbw)} L)",
            )
        )
    return found


def _hourly_volume(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """mL/kg in any hour above the species' hourly ceiling: a continuous phase's rate; for
    divided doses, the doses given within any hour (as given, not as absorbed)."""
    ceiling, what = hourly_ceiling_ml_per_kg(table, request.species_id)
    w = request.weight_kg
    worst, where = 0.0, ""
    for phase in plan.phases:
        if phase.mode == "continuous" and phase.volume_ml > 0:
            per_kg = (phase.rate_ml_per_h or 0.0) / w
            if per_kg > worst:
                worst, where = per_kg, f"{phase.kind} rate"
    doses = sorted((t, dose_ml(p), p.kind) for p in plan.phases for t in dose_times(p))
    for t, _, kind in doses:
        per_kg = sum(ml for u, ml, _ in doses if t <= u < t + 1.0) / w
        if per_kg > worst:
            worst, where = per_kg, f"{kind} doses in the hour from hour {_q(t)}"
    if worst > ceiling * (1 + SLACK):
        return [
            Breach(
                rule="hourly_volume",
                detail=f"{_q(worst)} mL/kg/h ({where}) above one {what} "
                f"({_q(ceiling)} mL/kg) per hour",
            )
        ]
    return []


def _osmolarity_for_route(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Outside a vein: roughly isotonic, no dextrose, no colloid (hard). A peripheral vein:
    at most about 600 mOsm/L (soft at least)."""
    plasma = _plasma(table, request.species_id)
    found: dict[str, Breach] = {}
    for phase in plan.phases:
        if phase.volume_ml <= 0:
            continue
        mix = phase_mix(request, phase)
        if phase.route not in LINE_ROUTES:
            too_strong = mix.osmolarity_mosm_per_l > EXTRAVASCULAR_MAX_OSMOLARITY_RATIO * plasma
            if too_strong or mix.dextrose_g_per_l > 0 or mix.colloid:
                found.setdefault(
                    "not_for_extravascular",
                    Breach(
                        rule="not_for_extravascular",
                        detail=f"{phase.route.upper()} {phase.kind}: "
                        f"{_q(mix.osmolarity_mosm_per_l)} mOsm/L (plasma {_q(plasma)}), "
                        f"dextrose {_q(mix.dextrose_g_per_l)} g/L, "
                        f"colloid {mix.colloid}",
                    ),
                )
        elif (
            phase.route == "iv"
            and mix.osmolarity_mosm_per_l > PERIPHERAL_MAX_OSMOLARITY_MOSM_PER_L * (1 + SLACK)
            # hypertonic saline's single small dose is given into a peripheral vein
            # (veterinary fluid-therapy texts; its dose and time are bounds of their own)
            and not (phase.kind == "resuscitation" and _is_hypertonic_saline(request))
        ):
            rule = (
                "peripheral_osmolarity_bolus"
                if phase.kind == "resuscitation"
                else "peripheral_osmolarity"
            )
            found.setdefault(
                rule,
                Breach(
                    rule=rule,
                    detail=f"IV {phase.kind}: {_q(mix.osmolarity_mosm_per_l)} mOsm/L",
                ),
            )
    return list(found.values())


def _sites(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Divided doses: each site within the species' limit, each dose within its sites'
    limits (the coelom is one space: a dose within one injection's limit), and no absurd
    number of sites."""
    found: dict[str, Breach] = {}
    w = request.weight_kg
    for phase in plan.phases:
        if phase.mode != "intermittent" or not phase.doses:
            continue
        parameter = f"max_site_volume_{phase.route}_ml_per_kg"
        value = table.get(request.species_id, parameter)
        sites = phase.sites_per_dose or 0
        if sites > MAX_SITES_PER_DOSE:
            found.setdefault(
                "absurd_sites",
                Breach(rule="absurd_sites", detail=f"{sites} sites per {phase.kind} dose"),
            )
        if value is None:
            found.setdefault(
                "site_limit_unknown",
                Breach(
                    rule="site_limit_unknown",
                    detail=f"no {parameter} for {request.species_id}",
                ),
            )
            continue
        site_ml = value.number * w
        dose = dose_ml(phase)
        if (phase.ml_per_site or 0.0) > site_ml * (1 + SLACK) + SLACK:
            found.setdefault(
                "site_volume",
                Breach(
                    rule="site_volume",
                    detail=f"{_q(phase.ml_per_site or 0.0)} mL per site, limit {_q(site_ml)} mL",
                ),
            )
        allowed = site_ml if phase.route == "icoel" else site_ml * max(sites, 1)
        if dose > allowed * (1 + SLACK) + SLACK:
            found.setdefault(
                "dose_volume",
                Breach(
                    rule="dose_volume",
                    detail=f"{phase.route.upper()} {phase.kind} dose {_q(dose)} mL in "
                    f"{sites} site(s) of at most {_q(site_ml)} mL",
                ),
            )
    return list(found.values())


def _colloid(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Colloid in any 24 h (windows start at each turning point and 24 h before it)."""
    flows = [f for f in pieces(request, plan) if f.mix.colloid]
    if not flows:
        return []
    turns = {f.start_h for f in flows} | {f.end_h for f in flows}
    starts = {max(0.0, t) for t in turns} | {max(0.0, t - 24.0) for t in turns}
    most = max(sum(f.ml_between(a, a + 24.0) for f in flows) for a in starts)
    per_kg = most / request.weight_kg
    if per_kg > COLLOID_MAX_ML_PER_KG_DAY * (1 + SLACK):
        return [Breach(rule="colloid_daily", detail=f"{_q(per_kg)} mL/kg of colloid in 24 h")]
    return []


def _anaesthesia(request: PlanRequest, plan: Plan, table: SpeciesTable) -> list[Breach]:
    """Under anaesthesia a carrier infusion stays below 10 mL/kg/h (Davis 2013);
    resuscitation boluses for hypotension are outside this bound."""
    if not request.anaesthesia:
        return []
    carriers = [f for f in pieces(request, plan) if f.kind != "resuscitation"]
    fastest, at = peak_rate(carriers, lambda f: 1 / request.weight_kg)
    if fastest > ANAESTHESIA_MAX_ML_PER_KG_H * (1 + SLACK):
        return [
            Breach(
                rule="anaesthesia_rate",
                detail=f"{_q(fastest)} mL/kg/h under anaesthesia from hour {_q(at)}",
            )
        ]
    return []
