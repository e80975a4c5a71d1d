"""Safety checks: each limit in ``species_data/safety_limits.csv`` becomes a finding.

Every check adds to a :class:`~vetfluid.planning.ledger.Ledger`: ``info`` informs, ``soft``
must be acknowledged with a reason, ``hard`` blocks marking the plan ready.
Messages name the value, the limit and what to do; codes are stable.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from vetfluid.common.arrays import distinct_sorted
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.formatting import hour_text, weeks_text
from vetfluid.physiology import delivery, hydration
from vetfluid.physiology.delivery import DIVIDED_INTERVALS_H
from vetfluid.physiology.electrolytes import (
    SCALE_REFERENCE_LOW_MMOL_PER_L,
    PotassiumSummary,
    SodiumCourse,
    SpeciesPotassiumBand,
)
from vetfluid.physiology.hydration import overload_weight_kg
from vetfluid.physiology.maintenance import Maintenance, WaterBudget
from vetfluid.physiology.resuscitation import RESUSCITATION_ROUTES, Resuscitation
from vetfluid.planning.ledger import Ledger
from vetfluid.planning.schedule import Phase, route_text
from vetfluid.tables import fluid_roles, fluids
from vetfluid.tables.limits import limit
from vetfluid.tables.species import SpeciesValue

LINE_ROUTES = RESUSCITATION_ROUTES  # a continuous line: IV or IO
NEAR_PLASMA_FACTOR = 1.2  # urine within 20% of plasma counts as "close to plasma" for the note


def check_losses(ledger: Ledger, losses_ml_per_day: float, weight_kg: float) -> None:
    """Hard when the ongoing losses entered exceed ``losses_max_ml_per_kg_day`` (the patient's
    own weight a day, common practice): a unit slip, said before any plan is made of it."""
    most = limit("losses_max_ml_per_kg_day")
    if losses_ml_per_day > most.value * weight_kg:
        ledger.add(
            most.severity,
            "LOSSES_ABOVE_BODY_WEIGHT",
            f"Ongoing losses of {q(losses_ml_per_day, 'mL')} a day are "
            f"{q(losses_ml_per_day / weight_kg, 'mL/kg')} a day: more than this "
            f"{q(weight_kg, 'kg')} patient weighs (above {most.value:g} mL/kg a day).",
            "Check the losses' unit (mL a day, not per hour; mL, not µL) and the weight.",
            most.source_id,
        )


def check_weight(ledger: Ledger, weight_kg: float, *, neonate: bool = False) -> None:
    """Soft outside the species' usual range, hard far outside it (the g/kg slip). The
    range is the adults': a neonate far below it is only soft (a newborn may weigh a
    tenth of an adult or less), far above it still hard."""
    weight = ledger.value("body_weight_kg")
    low = weight.low if weight.low is not None else weight.number
    high = weight.high if weight.high is not None else weight.number
    factor = limit("weight_far_outside_factor")
    usual = f"{q(low, 'kg')}–{q(high, 'kg')}"
    if neonate and weight_kg >= low:
        ledger.add(
            "soft",
            "NEONATE_AT_ADULT_WEIGHT",
            f"A neonate is ticked, but {q(weight_kg, 'kg')} is within or above the adult "
            f"{usual} for this species; the plan keeps adult body water.",
            "Untick neonate unless this really is a newborn; check the weight.",
        )
    if neonate and weight_kg < low:
        ledger.add(
            "soft",
            "WEIGHT_OUTSIDE_RANGE",
            f"{q(weight_kg, 'kg')} is below the usual adult {usual} for this species, as a "
            "neonate's weight may be.",
            "Confirm the weight and unit (g or kg); acknowledge with a reason if it is right.",
        )
    elif weight_kg > high * factor.value or weight_kg < low / factor.value:
        ledger.add(
            "hard",
            "WEIGHT_UNIT_SLIP",
            f"{q(weight_kg, 'kg')} is far outside the usual {usual} for this species "
            f"(more than {factor.value:g}× beyond the range).",
            "Check the unit (g or kg) and re-weigh before planning.",
        )
    elif not low <= weight_kg <= high:
        ledger.add(
            "soft",
            "WEIGHT_OUTSIDE_RANGE",
            f"{q(weight_kg, 'kg')} is outside the usual {usual} for this species.",
            "Confirm the weight and unit; acknowledge with a reason if it is right.",
        )


def check_bicarbonate(ledger: Ledger, serum_hco3: float | None) -> None:
    """A severely low serum HCO3 is confirmed before the course follows it (soft): a K of
    4.2 or a pH of 7.35 typed into the bicarbonate field reads as exactly that. The
    threshold is ``hco3_confirm_below_mmol_per_l`` (safety_limits.csv; common practice)."""
    below = limit("hco3_confirm_below_mmol_per_l")
    if serum_hco3 is None or serum_hco3 >= below.value:
        return
    ledger.add(
        below.severity,
        "SERUM_HCO3_SEVERELY_LOW",
        f"Serum bicarbonate {q(serum_hco3, 'mmol/L')} is a severe metabolic acidosis "
        f"(below {q(below.value, 'mmol/L')}).",
        "Confirm the value on the analyser's report: a potassium, a pH or a base excess "
        "typed into the bicarbonate field reads this way. Treat the cause and reassess.",
        below.source_id,
    )


def check_temperature(ledger: Ledger, body_temp_c: float | None, maint: Maintenance) -> None:
    """Ectotherms: a temperature outside the preferred range makes maintenance unreliable."""
    if not ledger.species.is_ectotherm:
        return
    preferred = ledger.value("preferred_temp_c")
    low = preferred.low if preferred.low is not None else preferred.number
    high = preferred.high if preferred.high is not None else preferred.number
    if body_temp_c is None:
        ledger.add(
            "info",
            "ECTOTHERM_TEMP_NOT_ENTERED",
            f"No body temperature entered; maintenance assumes the preferred "
            f"{q(preferred.number, '°C')}.",
            "Measure the body temperature and enter it.",
        )
    elif not low <= body_temp_c <= high:
        ledger.add(
            "soft",
            "ECTOTHERM_OUTSIDE_PREFERRED_TEMP",
            f"Body temperature {q(body_temp_c, '°C')} is outside the preferred "
            f"{q(low, '°C')}–{q(high, '°C')}; maintenance is scaled "
            f"×{maint.temperature_factor:.2f} by Q10 and the estimate is less reliable.",
            "Warm the animal into its preferred range, then re-plan.",
        )


def check_fluid_for_route(
    ledger: Ledger,
    *,
    route: str,
    fluid_name: str,
    tonicity: fluids.Tonicity,
    dextrose_g_per_l: float,
    colloid: bool = False,
) -> None:
    """No hypertonic, colloid or dextrose-containing fluid outside a vein
    (Vet Clin North Am 2017); intraperitoneally only isotonic crystalloids ("Only warm
    isotonic crystalloids … should be used SC or IP", Clinician's Brief, pediatric critical
    care; applied to small rodents). By mouth the same rule holds, as a restriction with no
    source for other fluids by that route."""
    if route in LINE_ROUTES:
        return
    not_isotonic = route == "ip" and tonicity.in_vitro_class != "isotonic"
    if tonicity.in_vitro_class == "hypertonic" or dextrose_g_per_l > 0 or colloid or not_isotonic:
        why = {
            "ip": "only isotonic crystalloids without dextrose go into the peritoneum",
            "oral": "by mouth or tube the plan takes only crystalloids without dextrose or "
            "colloid (restricted: no source on record for other fluids by this route)",
        }.get(route, "no hypertonic, colloid or dextrose-containing fluids outside a vein")
        ledger.add(
            "hard",
            "FLUID_NOT_FOR_SC",
            f"{fluid_name} is not suitable {route_text(route)}: {why}.",
            f"Choose an isotonic crystalloid without additives for {route_text(route)} use.",
            "cb_pediatric_cc" if route == "ip" else "vcna2017_sc",
        )


_ROUTE_WORDS = {
    "iv": "into a peripheral vein",
    "cvc": "through a central line",
    "io": "intraosseously",
    "sc": "under the skin",
    "icoel": "into the coelom",
    "epicoel": "into the epicoelomic space",
    "ip": "into the peritoneum",
    "oral": "by mouth or tube",
}


def check_carrier(ledger: Ledger, fluid: fluids.Fluid, roles: fluid_roles.FluidRoles) -> None:
    """The plan's bag must be a fluid with the carrier role (fluid_roles.csv): a
    concentrate is an additive only, hypertonic saline a single small bolus (hard)."""
    if roles.carrier:
        return
    what = (
        "is a concentrate, an additive only: it is diluted into a bag, never given as one"
        if roles.additive_only
        else "is a small resuscitation dose only, never replacement or maintenance"
    )
    ledger.add(
        "hard",
        "FLUID_NOT_A_CARRIER",
        f"{fluid.name} {what}.",
        "Choose a replacement or maintenance crystalloid as the plan's fluid"
        + ("; add the concentrate to it as an additive." if roles.additive_only else "."),
        roles.source_id,
    )


def check_bolus_fluid(
    ledger: Ledger,
    fluid: fluids.Fluid,
    roles: fluid_roles.FluidRoles,
    res: Resuscitation,
    boluses: int,
) -> None:
    """A resuscitation bolus must be a fluid with that role (hard): one that stays in
    the extracellular fluid; a fluid with its own dose (hypertonic saline) once only."""
    if not roles.resuscitation:
        ledger.add(
            "hard",
            "FLUID_NOT_FOR_RESUSCITATION",
            f"{fluid.name} is not a resuscitation fluid: "
            + (
                "a concentrate is an additive only."
                if roles.additive_only
                else "it does not stay in the circulation (it spreads into the cells as free "
                "water), so it does not restore perfusion."
            ),
            "Give resuscitation boluses of an isotonic replacement crystalloid (lactated "
            "Ringer's, 0.9% sodium chloride).",
            roles.source_id,
        )
        return
    if roles.bolus_max_ml_per_kg is not None and boluses * res.bolus_ml_per_kg > (
        roles.bolus_max_ml_per_kg * (1 + 1e-9)
    ):
        ledger.add(
            "hard",
            "FLUID_DOSE_ABOVE_MAX",
            f"{boluses} boluses of {fluid.name} give "
            f"{q(boluses * res.bolus_ml_per_kg, 'mL/kg')}, above its single dose of "
            f"{q(roles.bolus_max_ml_per_kg, 'mL/kg')}.",
            "Give it once, then continue with an isotonic crystalloid.",
            roles.source_id,
        )


def check_hypertonic_in_hypernatraemia(
    ledger: Ledger, *, bolus_fluid: fluids.Fluid, serum_na: float | None, normal: SpeciesValue
) -> None:
    """Hypertonic saline (a resuscitation fluid with a dose of its own) for a patient whose
    measured Na is already above its species' reference interval: hard — it raises Na by
    several mmol/L within minutes in a patient who needs it lowered (common practice, no
    source)."""
    roles = fluid_roles.roles(bolus_fluid.fluid_id)
    high = normal.high if normal.high is not None else normal.number
    salt = fluids.composition(bolus_fluid).na_mmol_per_l
    if roles.bolus_max_ml_per_kg is None or serum_na is None or serum_na <= high or salt <= high:
        return
    ledger.add(
        "hard",
        "HYPERTONIC_SALINE_IN_HYPERNATRAEMIA",
        f"{bolus_fluid.name} is planned for a patient whose serum Na "
        f"{q(serum_na, 'mmol/L')} is already above this species' {q(high, 'mmol/L')}.",
        "Resuscitate with an isotonic crystalloid; lower Na slowly once perfusion is restored.",
        roles.source_id,
    )


def check_route_limits(
    ledger: Ledger,
    *,
    route: str,
    bag: fluids.Fluid,
    composition: fluids.Composition,
    plasma_mosm_per_kg: float,
) -> None:
    """What the bag may hold for its route (route_limits.csv): osmolarity for a peripheral
    vein or the marrow, potassium and dextrose under the skin or into the coelom. The
    first limit passed of each kind is reported (hard ones are checked first)."""
    measured = {
        "max_osmolarity_mosm_per_l": (composition.osmolarity_mosm_per_l, "mOsm/L", "osmolarity"),
        "max_osmolarity_ratio_to_plasma": (
            composition.osmolarity_mosm_per_l / plasma_mosm_per_kg,
            "× plasma",
            "osmolarity",
        ),
        "max_k_mmol_per_l": (composition.k_mmol_per_l, "mmol/L", "potassium"),
        "max_dextrose_g_per_l": (composition.dextrose_hydrous_g_per_l, "g/L", "dextrose"),
    }
    reported: set[str] = set()
    for rule in fluid_roles.route_limits(route):
        value, unit, what = measured[rule.limit]
        if rule.limit in reported or value <= rule.value + 1e-9:
            continue
        reported.add(rule.limit)
        unverified = " (recalled — unverified)" if rule.basis == "memory" else ""
        fix = {
            "max_osmolarity_mosm_per_l": "Use a central line, or a less concentrated bag.",
            "max_k_mmol_per_l": "Add less potassium, or give it IV where the rate can be set.",
            "max_dextrose_g_per_l": "Give dextrose IV or IO only; use a crystalloid without "
            "dextrose here.",
            "max_osmolarity_ratio_to_plasma": "Add less to the bag, or give it IV or IO.",
        }[rule.limit]
        if unit == "× plasma":
            held = (
                f"{q(composition.osmolarity_mosm_per_l, 'mOsm/L')} ({value:.2f} × this "
                "species' plasma osmolality)"
            )
            most = f"{rule.value:g} × plasma"
        else:
            held, most = f"{q(value, unit)} {what}", q(rule.value, unit)
        ledger.add(
            rule.severity,
            f"ROUTE_{what.upper()}_LIMIT",
            f"The bag ({bag.name}) holds {held}, above the {most} a fluid given "
            f"{_ROUTE_WORDS.get(route, route)} may hold{unverified}.",
            fix,
            rule.source_id,
        )


def note_ins_and_outs(ledger: Ledger, *, measured_periods: int) -> None:
    """Ins and outs (Côté 2020): say what the next period's rate rests on."""
    basis = (
        "nothing is measured yet, so the first period gives insensible loss and the ongoing "
        "losses entered, and no urine"
        if measured_periods == 0
        else f"{measured_periods} period(s) measured; the last period planned gives "
        "insensible loss + the urine and other losses measured over the period before it"
    )
    ledger.add(
        "info",
        "INS_AND_OUTS",
        f"Ins-and-outs plan: {basis}.",
        "Measure urine output (and other losses) over each period and record it; the plan "
        "is recalculated from it. Weigh at least every 6–12 h.",
        "cote2020",
    )


def check_colloid(
    ledger: Ledger,
    *,
    bag: fluids.Fluid,
    bolus_fluid: fluids.Fluid,
    phases: tuple[Phase, ...],
    weight_kg: float,
) -> None:
    """A colloid restores plasma volume, not an interstitial deficit (said when it is the
    plan's fluid), and its dose over any 24 h is limited (safety_limits.csv), counting
    every phase given as a colloid — boluses of a colloid bolus fluid included. Each
    recalled value says so, read from its basis."""
    given_as = [
        (p, bolus_fluid if p.kind == "resuscitation" else bag)
        for p in phases
        if (bolus_fluid if p.kind == "resuscitation" else bag).colloid is not None
    ]
    if not given_as:
        return
    if bag.colloid is not None:
        _note_colloid_chosen(ledger, bag.name, bag.colloid)
    colloid_phases = tuple(p for p, _ in given_as)
    names = " and ".join(dict.fromkeys(f.name for _, f in given_as))
    most = limit("colloid_max_ml_per_kg_day")
    worst_ml, worst_start = _largest_24_h(colloid_phases)
    if worst_ml / weight_kg > most.value:
        basis = " (recalled — unverified)" if most.basis == "memory" else ""
        ledger.add(
            most.severity,
            "COLLOID_DAILY_LIMIT",
            f"The plan gives {q(worst_ml / weight_kg, 'mL/kg')} of {names} in the 24 h "
            f"from hour {worst_start:g}, above {q(most.value, 'mL/kg/day')}{basis}.",
            "Give the deficit and maintenance as a crystalloid; keep the colloid to small "
            "boluses within the daily limit your protocol sets.",
            most.source_id,
        )


def _note_colloid_chosen(ledger: Ledger, name: str, colloid: fluids.Colloid) -> None:
    half_life = "recalled (memory — unverified)" if colloid.basis == "memory" else "on record"
    ledger.add(
        "soft",
        "COLLOID_CHOSEN",
        f"{name} holds its volume in the plasma: it does not rehydrate the interstitium "
        "and adds no maintenance water. Starches have been restricted in critically ill "
        "people for kidney injury and bleeding (recalled — unverified); its volume half-life "
        f"of {colloid.volume_half_life_h:g} h is {half_life}.",
        "Use a crystalloid for rehydration and maintenance; give a colloid only as your "
        "practice protocol allows, and record why.",
    )


def _turning_points(phases: tuple[Phase, ...]) -> set[float]:
    """Where volume given stops being linear in time: phase boundaries and dose hours."""
    moments = {p.start_h for p in phases} | {p.end_h for p in phases}
    return moments | {h for p in phases for h in p.dose_hours()}


def _largest_24_h(phases: tuple[Phase, ...]) -> tuple[float, float]:
    """The most given in any 24 h and where that window starts."""
    return largest_in_window(phases, 24.0)


def largest_in_window(phases: tuple[Phase, ...], window_h: float) -> tuple[float, float]:
    """The most given in any ``window_h`` hours, whatever the delivery, and where that
    window starts. Volume given is piecewise linear in time (a dose is a step), so the
    largest window starts or ends at a phase boundary or a dose. Read from the running
    total at every candidate start and end, so the work grows as n log n in the phases."""
    moments = np.fromiter(_turning_points(phases), dtype=float)
    starts = distinct_sorted(np.maximum(0.0, np.concatenate([moments, moments - window_h])))
    # volume in [a - 1e-9, a + window_h - 1e-9): doses at the window's end are outside it
    within = _given_before(phases, starts + window_h - 1e-9) - _given_before(phases, starts - 1e-9)
    # the largest volume, the earliest window among equals (to rounding)
    best = _first_largest(within)
    return float(within[best]), float(starts[best])


def _first_largest(values: np.ndarray) -> int:
    """Where the largest value first comes. Sums read from running totals differ from
    phase-by-phase sums in the last digits, so values within 1e-12 of the largest (relative)
    are equal, and the earliest is named."""
    top = float(values.max())
    return int(np.flatnonzero(values >= top - 1e-12 * abs(top))[0])


def ramps_total(knots: np.ndarray, slopes: np.ndarray, hours: np.ndarray) -> np.ndarray:
    """Σ slopes·max(0, hour − knot) at each hour, from running sums over the sorted knots
    (n log n, never knots × hours)."""
    order = np.argsort(knots, kind="stable")
    k, w = knots[order], slopes[order]
    slope_sum = np.concatenate([[0.0], np.cumsum(w)])
    intercept = np.concatenate([[0.0], np.cumsum(w * k)])
    i = np.searchsorted(k, hours, side="left")
    return hours * slope_sum[i] - intercept[i]


def _steps(edges: np.ndarray, heights: np.ndarray, hours: np.ndarray, *, side: str) -> np.ndarray:
    """Σ heights over the edges before each hour (``side="left"``: edge < hour; ``"right"``:
    edge ≤ hour), from a running sum over the sorted edges."""
    order = np.argsort(edges, kind="stable")
    total = np.concatenate([[0.0], np.cumsum(heights[order])])
    return total[np.searchsorted(edges[order], hours, side=side)]


def _lines(phases: tuple[Phase, ...]) -> list[Phase]:
    return [p for p in phases if p.mode == "continuous"]


def _doses(phases: tuple[Phase, ...], weight: Callable[[Phase], float]) -> tuple[np.ndarray, ...]:
    """Every divided dose's hour and ``weight(phase)`` (its mL, or what it carries)."""
    hours = [h for p in phases for h in p.dose_hours()]
    heights = [weight(p) for p in phases for _ in p.dose_hours()]
    return np.asarray(hours, dtype=float), np.asarray(heights, dtype=float)


def _given_before(phases: tuple[Phase, ...], hours: np.ndarray) -> np.ndarray:
    """Volume all phases have given before each hour (a dose at that very hour not yet),
    as :meth:`Phase.volume_between` from hour 0 adds it up, for every hour at once."""
    lines = _lines(phases)
    knots = np.array([p.start_h for p in lines] + [p.end_h for p in lines], dtype=float)
    rates = np.array([p.rate_ml_per_h or 0.0 for p in lines], dtype=float)
    dose_h, dose_ml = _doses(phases, lambda p: p.dose_ml or 0.0)
    ramps = ramps_total(knots, np.concatenate([rates, -rates]), hours)
    return ramps + _steps(dose_h, dose_ml, hours, side="left")


def check_reptile_dextrose(ledger: Ledger, dextrose_percent: float) -> None:
    """Parkinson & Mans 2020: dextrose fluids caused severe hyperglycaemia in bearded dragons."""
    if ledger.species.is_ectotherm and dextrose_percent > 0:
        ledger.add(
            "soft",
            "REPTILE_DEXTROSE",
            "Dextrose-containing fluids caused severe hyperglycaemia in dehydrated bearded "
            "dragons.",
            "Prefer an isotonic crystalloid without dextrose; check blood glucose if you add it.",
            "parkinson2020",
        )


def check_boluses(ledger: Ledger, res: Resuscitation, boluses: int) -> None:
    """Cumulative boluses beyond the shock dose (or one blood volume) are a soft finding;
    beyond one blood volume, whatever the shock dose, hard (more crystalloid than the
    animal has blood, before reassessment has shown it is needed)."""
    given = res.bolus_ml_per_kg * boluses
    blood = ledger.value("blood_volume_ml_per_kg")
    if given > blood.number * (1 + 1e-9) and given > res.cap_ml_per_kg * (1 + 1e-9):
        ledger.add(
            "hard",
            "BOLUSES_ABOVE_BLOOD_VOLUME",
            f"{boluses} boluses give {q(given, 'mL/kg')}, more than the patient's blood "
            f"volume of {q(blood.number, 'mL/kg')}.",
            "Plan fewer boluses, reassess after each, and look for other causes of poor "
            "perfusion (bleeding, sepsis, heart failure).",
            blood.source_id,
        )
    elif given > res.cap_ml_per_kg * (1 + 1e-9):
        cap = ledger.get("shock_dose_ml_per_kg") or blood
        ledger.add(
            "soft",
            "BOLUSES_ABOVE_SHOCK_DOSE",
            f"{boluses} boluses give {q(given, 'mL/kg')}, above the {res.cap_from} of "
            f"{q(res.cap_ml_per_kg, 'mL/kg')}.",
            "Reassess after each bolus; look for other causes of poor perfusion.",
            cap.source_id,
        )


def check_rates_against_shock_dose(
    ledger: Ledger, phases: tuple[Phase, ...], weight_kg: float
) -> None:
    """Any hourly rate above one shock dose (or blood volume) per hour is hard."""
    cap = ledger.get("shock_dose_ml_per_kg") or ledger.value("blood_volume_ml_per_kg")
    per_hour = cap.number * weight_kg
    what = "shock dose" if cap.parameter == "shock_dose_ml_per_kg" else "blood volume"
    for phase in phases:
        if phase.mode == "continuous" and (phase.rate_ml_per_h or 0.0) > per_hour * (1 + 1e-9):
            ledger.add(
                "hard",
                "RATE_ABOVE_SHOCK_DOSE",
                f"The {phase.kind} rate {q(phase.rate_ml_per_h or 0.0, 'mL/h')} exceeds one "
                f"{what} per hour ({q(per_hour, 'mL/h')}).",
                "Check the weight, deficit and replacement period.",
                cap.source_id,
            )
            return


def check_volume_per_hour(ledger: Ledger, phases: tuple[Phase, ...], weight_kg: float) -> None:
    """The most given in any one hour, by any delivery (pump, drip, syringe or divided
    doses), against one shock dose (or blood volume) per hour: hard. A divided dose is
    given within minutes, so a dose larger than the hourly ceiling is caught here even
    though no rate is set."""
    cap = ledger.get("shock_dose_ml_per_kg") or ledger.value("blood_volume_ml_per_kg")
    per_hour = cap.number * weight_kg
    most, start = largest_in_window(phases, 1.0)
    # a pump may run a whole shock dose in an hour; a divided dose gives it in minutes, so
    # reaching the ceiling is already past it (a pigeon's whole blood volume under the skin)
    divided = any(p.mode == "intermittent" for p in phases)
    if most < per_hour * (1 - 1e-9) or (not divided and most <= per_hour * (1 + 1e-9)):
        return
    if any(
        p.mode == "continuous" and (p.rate_ml_per_h or 0.0) > per_hour * (1 + 1e-9) for p in phases
    ):
        return  # RATE_ABOVE_SHOCK_DOSE already says so, with the rate
    what = "shock dose" if cap.parameter == "shock_dose_ml_per_kg" else "blood volume"
    ledger.add(
        "hard",
        "VOLUME_PER_HOUR_ABOVE_CEILING",
        f"The plan gives {q(most, 'mL')} ({q(most / weight_kg, 'mL/kg')}) within the hour "
        f"from hour {start:g}, {'at least' if divided else 'more than'} one {what} per hour "
        f"({q(per_hour, 'mL')}).",
        "Check the weight, deficit and ongoing losses; replace the deficit over a longer "
        "period, or place a line and give it at a set rate.",
        cap.source_id,
    )


def check_set_rates(
    ledger: Ledger, needed_ml_per_h: list[float], phases: tuple[Phase, ...], *, device: str
) -> None:
    """A rate the device cannot be set to: a need that rounds to 0 mL/h on the pump or
    drip (the patient would get nothing: hard), or one that rounds more than 10 % away
    from the need (common practice, no source: soft)."""
    for need, phase in zip(needed_ml_per_h, phases, strict=True):
        if phase.mode != "continuous" or need <= 0:
            continue
        set_rate = phase.rate_ml_per_h or 0.0
        how = {"syringe": "a syringe pump", "gravity": "a gravity drip"}.get(device, "the pump")
        if set_rate <= 0:
            ledger.add(
                "hard",
                "RATE_TOO_SMALL_TO_SET",
                f"The {phase.kind} needs {q(need, 'mL/h', decimals=3)}, which {how} cannot be "
                "set: it would run at 0 mL/h and give nothing.",
                "Give it as divided doses, or by a pump set in finer steps; check the weight.",
            )
            return
        if abs(set_rate - need) > 0.1 * need:
            ledger.add(
                "soft",
                "RATE_ROUNDED_FAR",
                f"The {phase.kind} needs {q(need, 'mL/h', decimals=3)}; {how} is set to "
                f"{q(set_rate, 'mL/h')}, {abs(set_rate - need) / need:.0%} "
                f"{'more' if set_rate > need else 'less'} (common practice, no source: "
                "within 10 %).",
                "Use a pump set in finer steps, or divided doses, and weigh often.",
            )
            return


def check_dose_spacing(ledger: Ledger, phases: tuple[Phase, ...]) -> None:
    """SC doses closer than the 6–8 h it takes them to be absorbed (Vet Clin North Am 2017)."""
    shortest = min(DIVIDED_INTERVALS_H)
    for phase in phases:
        if phase.mode == "intermittent" and (phase.interval_h or 0.0) < shortest - 1e-9:
            ledger.add(
                "soft",
                "DOSES_CLOSER_THAN_ABSORPTION",
                f"{phase.kind.capitalize()} doses are {q(phase.interval_h or 0.0, 'h')} apart, "
                f"closer than the {q(shortest, 'h')} SC fluid takes to be absorbed.",
                f"Choose a replacement period that is a multiple of {q(shortest, 'h')}, or check "
                "that the last dose has been absorbed before the next.",
                "vcna2017_sc",
            )
            return


def check_predicted_gain(
    ledger: Ledger,
    phases: tuple[Phase, ...],
    *,
    consumed: Callable[[np.ndarray], np.ndarray],
    weight_kg: float,
    deficit_ml: float,
) -> None:
    """What the plan gives beyond maintenance and losses, as weight if kept (1 mL ≈ 1 g),
    above the overload line (Pardo 2024: ≥ 10 % gain). Deliberately not the course's
    weight: a kidney passing the excess later does not undo a circulation overloaded now,
    and heart disease keeps salt; the course's weight is shown in the Course and Timeline.

    The line is 10 % over the euhydrated weight (:func:`hydration.overload_weight_kg`).
    Given minus consumed (``consumed(hours)``, mL by each hour) is piecewise linear, with
    its peaks at phase boundaries and just after doses; those are the only points checked,
    all at once from running totals (n log n in the phases).
    """
    gain = limit("overload_weight_gain_fraction")
    line = overload_weight_kg(weight_kg=weight_kg, deficit_ml=deficit_ml, gain_fraction=gain.value)
    moments = np.array(sorted(_turning_points(phases)), dtype=float)
    net = _given_before(phases, moments + 1e-9) - np.asarray(consumed(moments), dtype=float)
    peak_ml, peak_h = 0.0, 0.0
    if net.size and net.max() > 0.0:
        first = _first_largest(net)
        peak_ml, peak_h = float(net[first]), float(moments[first])
    peak_kg = weight_kg + peak_ml / 1000.0
    if peak_kg > line:
        ledger.add(
            "soft",
            "PREDICTED_OVERLOAD",
            f"By {hour_text(peak_h)} the plan gives {q(peak_ml, 'mL')} more than maintenance and "
            f"losses take away: kept, it brings the weight to {q(peak_kg, 'kg')}, above the "
            f"overload line of {q(line, 'kg')} ({gain.value:.0%} over the euhydrated "
            f"{q(weight_kg + deficit_ml / 1000.0, 'kg')}), whatever the kidney passes later.",
            "Give smaller, more frequent doses or replace the deficit more slowly; weigh before "
            "each dose.",
            gain.source_id,
        )


def check_divided_sites(
    ledger: Ledger,
    phases: tuple[Phase, ...],
    *,
    site_limit_ml: float | None = None,
    one_site_limit: SpeciesValue | None = None,
) -> None:
    """Doses that need more injection sites than is practical. Into the coelom, which is
    one space, a dose above the per-injection volume is more than one puncture: said
    on its own (the per-injection volume is the species' value). A site limit below the
    smallest syringe mark cannot be kept by hand at all (hard). Into the peritoneum, the
    epicoelomic space or by mouth (``one_site_limit``, the route's species value): a dose
    above the top of its range (the value itself without one) is refused (hard), between
    the value and the top it is more than one injection or tube (soft)."""
    _check_one_site_doses(ledger, phases, one_site_limit)
    smallest = delivery.SMALL_SYRINGE_STEP_ML
    if site_limit_ml is not None and site_limit_ml < smallest - 1e-9:
        ledger.add(
            "hard",
            "SITE_BELOW_SMALLEST_MARK",
            f"At this weight a site holds at most {q(site_limit_ml, 'mL', decimals=4)}, less "
            f"than the smallest syringe mark ({q(smallest, 'mL')}); every site as planned "
            "is more than it holds.",
            "Check the weight and its unit; a patient this small cannot be dosed by syringe.",
        )
    icoel = ledger.get("max_site_volume_icoel_ml_per_kg")
    # The coelom is one space: punctures do not divide what it holds. A dose above the top
    # of the species' intracoelomic range (or twice its value, without a range) is blocked.
    most_icoel = None if icoel is None else (icoel.high or 2 * icoel.number)
    for phase in phases:
        dose_per_kg = (phase.dose_ml or 0.0) / ledger.weight_kg
        if (
            phase.mode == "intermittent"
            and phase.route == "icoel"
            and most_icoel is not None
            and dose_per_kg > most_icoel * (1 + 1e-9)
        ):
            ledger.add(
                "hard",
                "ICOEL_DOSE_TOO_LARGE",
                f"Each intracoelomic {phase.kind} dose is {q(dose_per_kg, 'mL/kg')} "
                f"({q(phase.dose_ml or 0.0, 'mL')}) into one body cavity, above the "
                f"{q(most_icoel, 'mL/kg')} it holds (recalled — unverified).",
                "Replace the deficit over a longer period, or place an IO or IV line.",
                icoel.source_id if icoel else None,
            )
            break
    for phase in phases:
        if phase.mode == "intermittent" and phase.route == "icoel" and phase.sites_per_dose > 1:
            ledger.add(
                "soft",
                "ICOEL_MORE_THAN_ONE_INJECTION",
                f"Each intracoelomic {phase.kind} dose of {q(phase.dose_ml or 0.0, 'mL')} is more "
                f"than one injection holds; it is planned as {phase.sites_per_dose} punctures "
                f"of {q(phase.ml_per_site or 0.0, 'mL')}.",
                "Give smaller doses more often (replace the deficit over a longer period), or "
                "place an IO/IV line.",
            )
            break
    most_sites = limit("divided_sites_max_per_dose")
    for phase in phases:
        if phase.mode == "intermittent" and (phase.sites_per_dose or 0) > most_sites.value:
            ledger.add(
                most_sites.severity,
                "DIVIDED_SITES_IMPOSSIBLE",
                f"Each {route_text(phase.route)} {phase.kind} dose would need "
                f"{phase.sites_per_dose:,} injection sites, more than "
                f"{most_sites.value:g} (common practice, no source).",
                "Check the weight, deficit and losses; this volume needs a line (IV or IO) "
                "or far longer replacement.",
                most_sites.source_id,
            )
            return
    for phase in phases:
        if phase.mode == "intermittent" and not phase.fits_sites:
            # the figures the schedule gives: as drawn up, so the two never disagree
            drawn = delivery.drawn_up_dose(
                ml_per_site=phase.ml_per_site or 0.0, sites=phase.sites_per_dose
            )
            ledger.add(
                "soft",
                "DIVIDED_TOO_MANY_SITES",
                f"Each {route_text(phase.route)} {phase.kind} dose of "
                f"{q(drawn.dose_ml, 'mL', decimals=2)} needs {drawn.sites} sites at "
                f"{q(drawn.ml_per_site, 'mL', decimals=2)} per site.",
                "Replace the deficit over a longer period, or place an IO/IV line.",
            )
            return


def _check_one_site_doses(
    ledger: Ledger, phases: tuple[Phase, ...], limit_value: SpeciesValue | None
) -> None:
    """One injection or tube a dose (delivery.ONE_SITE_ROUTES): hard above the most the
    space holds (the range's top, else the value: IP 10 mL/kg in rodents, recalled from lab
    tables for healthy animals; 20 mL/kg in the mouse, University of Wyoming table), soft
    above the usual value."""
    if limit_value is None:
        return
    most = limit_value.high or limit_value.number
    unverified = " (recalled — unverified)" if limit_value.unverified else ""
    for phase in phases:
        if phase.mode != "intermittent" or phase.route == "icoel":
            continue
        dose = phase.dose_ml or 0.0
        per_kg = dose / ledger.weight_kg
        where = _ROUTE_WORDS.get(phase.route, phase.route)
        if per_kg > most * (1 + 1e-9):
            ledger.add(
                "hard", "ONE_SITE_DOSE_TOO_LARGE",
                f"Each {route_text(phase.route)} {phase.kind} dose is {q(dose, 'mL')} "
                f"({q(per_kg, 'mL/kg')}), above the {q(most * ledger.weight_kg, 'mL')} "
                f"({q(most, 'mL/kg')}) one dose given {where} may hold{unverified}.",
                "Choose the dosing interval so each dose stays within the limit (the plan then "
                "says how long replacement takes), or use another route or a line.",
                limit_value.source_id,
            )  # fmt: skip
            return
        if per_kg > limit_value.number * (1 + 1e-9):
            ledger.add(
                "soft", "ONE_SITE_DOSE_ABOVE_USUAL",
                f"Each {route_text(phase.route)} {phase.kind} dose is {q(dose, 'mL')} "
                f"({q(per_kg, 'mL/kg')}), above the usual {q(limit_value.number, 'mL/kg')} "
                f"given {where} at one time{unverified}.",
                "Choose the dosing interval so each dose stays within the usual volume, or "
                "give it in two goes some minutes apart and watch for regurgitation or "
                "distress.",
                limit_value.source_id,
            )  # fmt: skip
            return


def check_potassium(
    ledger: Ledger, k: PotassiumSummary, *, weight_kg: float, route: str, device: str
) -> None:
    """KCl into a patient whose K is already high (hard), the 0.5 mmol/kg/h ceiling (hard),
    the scale's rate for the serum K (soft), concentration for a peripheral vein (soft),
    KCl on a gravity drip (soft)."""
    normal_k = ledger.value("serum_k_mmol_per_l")
    k_high = normal_k.high if normal_k.high is not None else normal_k.number
    if k.kcl_mmol_per_l > 0 and k.serum_k is not None and k.serum_k > k_high:
        ledger.add(
            "hard",
            "KCL_WITH_HIGH_SERUM_K",
            f"KCl is added although serum K {q(k.serum_k, 'mmol/L')} is above the "
            f"{q(k_high, 'mmol/L')} reference.",
            "Do not add potassium; recheck serum K and look for the cause.",
            "cote2020",
        )
    if k.peak_mmol_per_kg_per_h > k.ceiling_mmol_per_kg_per_h:
        safe = [r for r in (k.max_rate_ml_per_h,) if r is not None]
        if k.band_max_rate_ml_per_kg_h is not None:
            safe.append(k.band_max_rate_ml_per_kg_h * weight_kg)
        ledger.add(
            "hard",
            "POTASSIUM_ABOVE_CEILING",
            f"Potassium would run at {q(k.peak_mmol_per_kg_per_h, 'mmol/kg/h')}, above the "
            f"{q(k.ceiling_mmol_per_kg_per_h, 'mmol/kg/h')} ceiling.",
            f"Lower the rate to at most {q(min(safe, default=0.0), 'mL/h')} or add less KCl.",
            k.source_id,
        )
    elif (
        k.band_max_rate_ml_per_kg_h is not None
        and k.kcl_mmol_per_l > 0
        and k.peak_rate_ml_per_h > k.band_max_rate_ml_per_kg_h * weight_kg
    ):
        ledger.add(
            "soft",
            "POTASSIUM_RATE_ABOVE_BAND",
            f"{q(k.peak_rate_ml_per_h, 'mL/h')} is faster than the scale's "
            f"{q(k.band_max_rate_ml_per_kg_h, 'mL/kg/h')} for this serum K "
            f"({q(k.band_max_rate_ml_per_kg_h * weight_kg, 'mL/h')}).",
            "Slow the rate or run potassium in a separate line.",
            "cote2020",
        )
    if device == "gravity" and k.kcl_mmol_per_l > 0:
        # A drip's rate drifts unseen (a clamp slips, the patient moves); the ceiling
        # above holds only at the planned rate. Common practice, no source.
        ledger.add(
            "soft",
            "KCL_ON_GRAVITY_DRIP",
            f"The bag holds {q(k.bag_k_mmol_per_l, 'mmol/L')} K ({q(k.kcl_mmol_per_l, 'mmol/L')} "
            "KCl added) and runs on a gravity drip, whose rate can change unnoticed.",
            "Run fluid with added potassium on an infusion or syringe pump; without one, "
            "check the drip rate and the bag's level often.",
        )
    peripheral = limit("kcl_peripheral_max_mmol_per_l")
    if route == "iv" and k.bag_k_mmol_per_l > peripheral.value:
        ledger.add(
            "soft",
            "KCL_PERIPHERAL_CONCENTRATION",
            f"The bag holds {q(k.bag_k_mmol_per_l, 'mmol/L')} K, above "
            f"{q(peripheral.value, 'mmol/L')} for a peripheral vein.",
            "Use a central line or a lower concentration.",
            peripheral.source_id,
        )


def note_potassium_band(
    ledger: Ledger,
    band: SpeciesPotassiumBand | None,
    *,
    by_hand: bool,
    kcl_by_hand: float | None = None,
    fluid_k_mmol_per_l: float = 0.0,
) -> None:
    """Serum K above the species' reference interval (soft: no KCl is added by the scale,
    look for the cause); a bag whose K (the fluid's own and the KCl entered by hand) is below
    what the scale gives a serum K under the species' interval (soft: the K already low
    falls on); and the scale's origin when the patient is not a dog or cat."""
    if band is None:
        return
    scale = band.band
    below = band.compared_at_mmol_per_l < SCALE_REFERENCE_LOW_MMOL_PER_L
    # the bag's own K counts with what was typed: lactated Ringer's 4 + 27 is 31, above 28
    bag_k = (kcl_by_hand or 0.0) + fluid_k_mmol_per_l
    if kcl_by_hand is not None and scale is not None and below and bag_k < scale.kcl_mmol_per_l:
        ledger.add(
            "soft",
            "KCL_BELOW_SCALE_FOR_LOW_K",
            f"Serum K is below this species' interval, and the bag holds {q(bag_k, 'mmol/L')} "
            f"K ({q(kcl_by_hand, 'mmol/L')} KCl entered by hand); the serum-K scale gives "
            f"{q(scale.kcl_mmol_per_l, 'mmol/L')} at this K (Côté 2020).",
            "Add the scale's KCl (leave the box empty to let the scale choose), or give a "
            "reason; recheck serum K in 4–6 h.",
            scale.source_id,
        )
    if band.above_range:
        ledger.add(
            "soft",
            "HYPERKALAEMIA",
            f"Serum K is above this species' reference high of {q(band.species_high, 'mmol/L')}"
            " (hyperkalaemia): the serum-K scale adds no KCl.",
            "Recheck serum K, look for the cause (urinary obstruction, kidney injury, "
            "hypoadrenocorticism) and treat it; monitor the ECG; add no potassium.",
            "cote2020",
        )
    if not band.scale_written_for_species and not by_hand:
        ledger.add(
            "info",
            "POTASSIUM_SCALE_FROM_DOGS_AND_CATS",
            "The serum-K scale was written for dogs and cats (Côté 2020); for this species "
            f"serum K is read against its own reference interval "
            f"({q(band.species_low, 'mmol/L')}–{q(band.species_high, 'mmol/L')}), as if at "
            f"{q(band.compared_at_mmol_per_l, 'mmol/L')} on the scale (derived, no source).",
            "Confirm the KCl against your species references and recheck serum K in 4–6 h.",
            "cote2020",
        )


def check_potassium_delivery(
    ledger: Ledger, phases: tuple[Phase, ...], *, weight_kg: float, bag_k: float, bolus_k: float
) -> None:
    """Potassium delivered by every continuous phase, boluses included, whatever put it in
    the bag, against the 0.5 mmol/kg/h ceiling (Côté 2020): hard. Runs for every plan, so
    a bag that is mostly potassium is caught though no KCl was 'added'."""
    ceiling = limit("potassium_max_mmol_per_kg_h")
    if any(f.code == "POTASSIUM_ABOVE_CEILING" for f in ledger.findings):
        return  # the potassium summary said so already, with its safe rate
    mmol_per_h, start = peak_uptake_rate(
        phases, per_ml=lambda p: (bolus_k if p.kind == "resuscitation" else bag_k) / 1000.0
    )
    per_kg_h = mmol_per_h / weight_kg
    if per_kg_h > ceiling.value * (1 + 1e-9):
        k = max(bag_k, bolus_k)
        ledger.add(
            "hard",
            "POTASSIUM_ABOVE_CEILING",
            f"The plan would give potassium at {q(per_kg_h, 'mmol/kg/h')} from hour "
            f"{start:g}, above the {q(ceiling.value, 'mmol/kg/h')} ceiling"
            + (
                " (divided doses still being absorbed overlap)."
                if any(p.mode == "intermittent" for p in phases)
                else "."
            ),
            f"Keep what reaches the patient to at most "
            f"{q(ceiling.value * weight_kg * 1000.0 / k, 'mL/h')} of this bag, or use a fluid "
            "with less potassium.",
            ceiling.source_id,
        )


def peak_uptake_rate(
    phases: tuple[Phase, ...], *, per_ml: Callable[[Phase], float]
) -> tuple[float, float]:
    """The fastest rate at which something (``per_ml`` of it in each mL of a phase's
    fluid) reaches the circulation, per hour, and when: a line's fluid at its rate, a
    divided dose taken up evenly over the SC absorption time (Vet Clin North Am 2017), so
    doses that overlap add up. The rate is constant between the moments where a phase or
    an absorption starts or ends, so it is read once between each pair of them."""
    moments = set(_turning_points(phases))
    moments |= {h + delivery.SC_ABSORPTION_H for p in phases for h in p.dose_hours()}
    edges = np.array(sorted(moments), dtype=float)
    keep = np.flatnonzero(np.diff(edges) >= 1e-9)
    if not keep.size:
        return 0.0, 0.0
    starts, mids = edges[keep], (edges[keep] + edges[keep + 1]) / 2.0
    # a line adds its rate from its start to its end; a dose its share per hour over the
    # absorption time: a step up and a step down, summed in order over all of them
    lines = _lines(phases)
    line_rate = np.array([per_ml(p) * (p.rate_ml_per_h or 0.0) for p in lines], dtype=float)
    dose_h, dose_rate = _doses(
        phases, lambda p: per_ml(p) * (p.dose_ml or 0.0) / delivery.SC_ABSORPTION_H
    )
    edges_up_down = np.concatenate([
        [p.start_h for p in lines], [p.end_h for p in lines],
        dose_h, dose_h + delivery.SC_ABSORPTION_H,
    ])  # fmt: skip
    heights = np.concatenate([line_rate, -line_rate, dose_rate, -dose_rate])
    rate = _steps(edges_up_down, heights, mids, side="right")
    if rate.max() <= 1e-12 * np.abs(heights).max(initial=0.0):
        return 0.0, 0.0  # nothing (only rounding left by the running sum) reaches the plasma
    first = _first_largest(rate)
    return float(rate[first]), float(starts[first])


# the ECF this far below where it started is said (soft), and past the second share the plan
# is blocked (common practice, no source: losing a fifth of the extracellular fluid is
# clinically significant hypovolaemia, as the course says of the plasma; losing 30–40 % of
# the circulating volume brings hypotension in the human haemorrhage classes, recalled, so
# past 40 % is shock)
ECF_CONTRACTION_SAID, ECF_CONTRACTION_BLOCKED = 0.2, 0.4
LEAVES_RANGE_MARGIN_MMOL_PER_L = 3.0  # past the interval by more than this: said


def check_ecf_contraction(
    ledger: Ledger, hours: np.ndarray, ecf_ml: np.ndarray, ecf0_ml: float
) -> None:
    """The extracellular fluid the plan's own body balance follows, falling more than
    :data:`ECF_CONTRACTION_SAID` below its start (soft) or more than
    :data:`ECF_CONTRACTION_BLOCKED` (hard): more water and salt leaving than given (a
    diuretic, losses, a kidney that cannot hold them)."""
    finite = np.isfinite(ecf_ml)
    if not finite.any() or ecf0_ml <= 0:
        return
    lowest = int(np.argmin(np.where(finite, ecf_ml, np.inf)))
    fall = 1.0 - float(ecf_ml[lowest]) / ecf0_ml
    if fall <= ECF_CONTRACTION_SAID:
        return
    hard = fall > ECF_CONTRACTION_BLOCKED
    ledger.add(
        "hard" if hard else "soft",
        "ECF_CONTRACTION",
        f"By {hour_text(float(hours[lowest]))} the plan leaves the extracellular fluid "
        f"{fall:.0%} below where it started (more water and salt leaving than given: a "
        "diuretic, losses, or a kidney that cannot hold them)"
        + (f", more than {ECF_CONTRACTION_BLOCKED:.0%}: shock." if hard else "."),
        "Give the losses and the urine back (plan by ins and outs), reduce the diuretic, and "
        "reassess perfusion and weight within hours.",
    )


def check_sodium(
    ledger: Ledger,
    course: SodiumCourse,
    *,
    held: SodiumCourse | None = None,
    bag_na_k: float | None = None,
    bag_name: str = "",
    diuretic_names: tuple[str, ...] = (),
    normal: SpeciesValue,
    max_change_per_h: float,
    carrier_phase: str,
    fastest_carrier_ml_per_h: float | None,
    bolus_mixing: tuple[float, float] = (0.0, 0.0),
) -> None:
    """Serum Na through the plan (``course``: the body as the Course tab follows it, kidney
    and diuretics included; ``held``: the same with ADH held, the urine never diluting below
    its resting osmolality), held to the correction limit (Adrogué & Madias 2000) by its
    rules, each its own finding so none hides another:

    ========================  ==============================================  ==========
    finding                   when                                            severity
    ========================  ==============================================  ==========
    SODIUM_CHANGE_TOO_FAST    replacement/maintenance moves Na > limit in an  soft; hard
                              hour (from a normal Na when none was measured)  at 2× the
                              and Na leaves the species' reference interval   shipped
                              (within it a change is not a correction)        limit
    SODIUM_FALL_IF_ADH_HELD   not that, but with ADH held (pain, nausea,      soft; hard
                              hypovolaemia, drugs) Na would fall > limit in   likewise
                              an hour and leave the interval
    SODIUM_BOLUS_CHANGE       a resuscitation bolus moves a measured Na >     soft
                              limit in an hour and Na leaves the interval
                              (shock first; reason written)
    SODIUM_AWAY_FROM_NORMAL   a measured Na outside the species' range moves  soft
                              further out over the plan (either path)
    SODIUM_LIMIT_RAISED       the plan's limit is above the shipped one       soft
    SODIUM_LEAVES_RANGE       a Na inside the interval leaves it by more      soft
                              than 3 mmol/L over the plan, however slowly
    LOW_SODIUM_WATER_DIURESIS a measured Na below the interval: once the      info
                              cause resolves a water diuresis can raise Na
                              faster than the plan shows
    FREE_WATER_WITHOUT_HIGH_  the bag is free water (Na + K under a quarter   soft
    SODIUM                    of the patient's Na) and no Na above the
                              interval was measured
    ========================  ==============================================  ==========
    """
    sourced = limit("sodium_max_correction_mmol_per_l_h")
    hard_factor = limit("sodium_hard_factor").value
    subject = (
        f"Serum Na {q(course.start_na, 'mmol/L')} would"
        if course.measured
        else f"No serum Na was entered; from a normal {q(normal.number, 'mmol/L')} it would"
    )
    low = normal.low if normal.low is not None else normal.number
    high = normal.high if normal.high is not None else normal.number
    # The correction limit is about a brain adapted to an abnormal Na; a plan that keeps Na
    # inside the species' reference interval throughout corrects nothing.
    leaves_range = course.lowest < low - 1e-9 or course.highest > high + 1e-9
    # Hard at twice the shipped limit (or the typed one, if stricter): typing a higher limit
    # may soften a warning, never lift a block.
    hard_at = hard_factor * min(max_change_per_h, sourced.value)
    carrier = abs(course.carrier_change_per_h)
    if leaves_range and (carrier > max_change_per_h * (1 + 1e-9) or carrier >= hard_at):
        hard = carrier >= hard_at
        fix = (
            f"keep the {carrier_phase} rate at or below {q(fastest_carrier_ml_per_h, 'mL/h')}"
            if fastest_carrier_ml_per_h is not None
            else "slow the rate"
        )
        rises = course.carrier_change_per_h > 0
        if diuretic_names and rises:
            # the rise comes from the urine a diuretic makes, not from the bag
            fix = (f"give back the urine {' and '.join(diuretic_names)} makes (measure it and "
                   "plan by ins and outs), or lower the dose")  # fmt: skip
        elif rises and bag_na_k is not None and bag_na_k <= course.start_na:
            # a bag no saltier than the patient cannot raise Na: water is leaving faster than
            # it is given (urine the kidney cannot concentrate, insensible loss)
            fix = ("give more water, not less: raise the rate to cover the urine (measure it "
                   "and plan by ins and outs)")  # fmt: skip
        ledger.add(
            "hard" if hard else "soft",
            "SODIUM_CHANGE_TOO_FAST",
            f"{subject} {_direction(course.carrier_change_per_h)} "
            f"{q(carrier, 'mmol/L')} in the hour from {hour_text(course.carrier_hour)} "
            f"({carrier_phase}), faster than "
            + (
                q(max_change_per_h, "mmol/L/h")
                if carrier > max_change_per_h
                else f"twice the usual {q(sourced.value, 'mmol/L/h')}"
            )
            + (f" (at {q(hard_at, 'mmol/L/h')} or more the plan is blocked)." if hard else "."),
            ("Measure serum Na and enter it; " if not course.measured else "")
            + f"{fix[0].upper() if course.measured else fix[0]}{fix[1:]}"
            + (
                ""
                if rises
                and (diuretic_names or (bag_na_k is not None and bag_na_k <= course.start_na))
                else ", or choose a fluid closer to the patient's Na"
            )
            + "; recheck Na every 4–6 h.",
            sourced.source_id,
        )
    fell = held is not None and held.carrier_change_per_h < 0 and held.lowest < low - 1e-9
    fall = abs(held.carrier_change_per_h) if held is not None else 0.0
    too_fast = leaves_range and (carrier > max_change_per_h * (1 + 1e-9) or carrier >= hard_at)
    if fell and not too_fast and fall > max_change_per_h * (1 + 1e-9):
        ledger.add(
            "hard" if fall >= hard_at else "soft",
            "SODIUM_FALL_IF_ADH_HELD",
            f"{subject} change at most {q(carrier, 'mmol/L')} in an hour with a kidney free to "
            f"dilute its urine; if ADH stays up (pain, nausea, hypovolaemia, drugs: common in "
            f"sick animals) the water is kept and Na would fall {q(fall, 'mmol/L')} in the hour "
            f"from {hour_text(held.carrier_hour)}, faster than "
            f"{q(max_change_per_h, 'mmol/L/h')}"
            + (f" (at {q(hard_at, 'mmol/L/h')} or more the plan is blocked)." if fall >= hard_at
               else "."),
            ("Measure serum Na and enter it; " if not course.measured else "Recheck Na within "
             "4–6 h; ") + "give free water (5 % dextrose, 0.45 % NaCl) only for a measured "
            "free-water deficit, or choose a fluid closer to the patient's Na.",
            sourced.source_id,
        )  # fmt: skip
    # during shock boluses the kidney cannot be counted on (hypovolaemia lowers filtration and
    # keeps ADH up): the boluses mixed into the body water with nothing excreted
    # (``bolus_mixing``) are read beside the followed body
    change, hour = bolus_mixing
    if abs(course.bolus_change_per_h) > abs(change):
        change, hour = course.bolus_change_per_h, course.bolus_hour
    bolus = abs(change)
    starts_outside = not low - 1e-9 <= course.start_na <= high + 1e-9
    starts_outside |= not low - 1e-9 <= course.start_na + change <= high + 1e-9
    # an unmeasured Na is not judged during shock boluses: perfusion first, Na measured after
    if (
        course.measured
        and (leaves_range or starts_outside)
        and bolus > max_change_per_h * (1 + 1e-9)
    ):
        ledger.add(
            "soft",
            "SODIUM_BOLUS_CHANGE",
            f"{subject} {_direction(change)} {q(bolus, 'mmol/L')} in the hour from "
            f"{hour_text(hour)}, while the resuscitation boluses run (nothing excreted, as in "
            f"shock): faster than {q(max_change_per_h, 'mmol/L/h')}.",
            "Give the boluses only while perfusion needs them, reassess after each and "
            "measure Na before the fluids that follow.",
            sourced.source_id,
        )
    below, above = course.start_na < low, course.start_na > high
    # how far the plan takes Na the wrong way, at its furthest along either path
    paths = (course,) if held is None else (course, held)
    moved = (min(c.lowest for c in paths) if below else max(c.highest for c in paths)) - (
        course.start_na
    )
    if course.measured and ((below and moved < -0.5) or (above and moved > 0.5)):
        ledger.add(
            "soft",
            "SODIUM_AWAY_FROM_NORMAL",
            f"Serum Na {q(course.start_na, 'mmol/L')} is {'below' if below else 'above'} this "
            f"species' {q(low, 'mmol/L')}–{q(high, 'mmol/L')}, and the plan moves it further "
            f"{'down' if below else 'up'}, by {q(abs(moved), 'mmol/L')} at its furthest.",
            "Choose a fluid whose Na + K is "
            + ("above" if below else "below")
            + " the patient's Na, and recheck Na every 4–6 h.",
            sourced.source_id,
        )
    # a Na inside the interval that the plan takes out of it, however slowly (a drift over
    # days is no correction, but a patient made hypo- or hypernatraemic all the same); a few
    # mmol/L is within what two analysers differ by (common practice, no source)
    inside = not (below or above)
    out = max(low - course.lowest, course.highest - high)
    if inside and not too_fast and out > LEAVES_RANGE_MARGIN_MMOL_PER_L:
        falls = low - course.lowest >= course.highest - high
        reached = course.lowest if falls else course.highest
        ledger.add(
            "soft",
            "SODIUM_LEAVES_RANGE",
            f"{subject} {'fall' if falls else 'rise'} out of this species' "
            f"{q(low, 'mmol/L')}–{q(high, 'mmol/L')}, to {q(reached, 'mmol/L')}, over the plan "
            "(slowly: no hour past the correction limit).",
            ("Measure serum Na and enter it; " if not course.measured else "Recheck Na every "
             "12–24 h; ") + ("give a fluid closer to the patient's Na, or less free water."
                             if falls else "give more water (the urine and insensible loss), "
                             "or a fluid with less Na."),
            sourced.source_id,
        )  # fmt: skip
    # free water is for a measured free-water deficit (Adrogué & Madias 2000, hypernatraemia);
    # "under a quarter of the patient's Na" marks it (our threshold, no source: 5 % dextrose
    # has none, 0.45 % NaCl half)
    if bag_na_k is not None and bag_na_k < 0.25 * course.start_na and not above:
        fall = (
            ""
            if held is None
            else (
                f"; with ADH held (common in sick animals) Na would move "
                f"{q(held.plan_change, 'mmol/L')} by the plan's end"
            )
        )
        ledger.add(
            "soft",
            "FREE_WATER_WITHOUT_HIGH_SODIUM",
            f"{bag_name or 'The fluid'} is free water (Na + K {q(bag_na_k, 'mmol/L')}), for a "
            "measured free-water deficit; "
            + ("no serum Na was entered" if not course.measured else
               f"serum Na {q(course.start_na, 'mmol/L')} is not above the interval")
            + f"{fall}.",
            ("Measure serum Na; unless it is high, " if not course.measured else "")
            + "choose a maintenance fluid with Na and K, or give free water only with a "
            "replacement fluid alongside.",
            "adrogue2000",
        )  # fmt: skip
    if course.measured and below:
        ledger.add(
            "info",
            "LOW_SODIUM_WATER_DIURESIS",
            f"Serum Na {q(course.start_na, 'mmol/L')} is below this species' "
            f"{q(low, 'mmol/L')}–{q(high, 'mmol/L')}: the plan follows it with the patient's "
            "ADH held where it is now. Once the cause resolves (volume restored, nausea or pain "
            "controlled) the kidney can pass dilute urine fast and Na can rise much faster than "
            "the plan shows.",
            "Measure Na every 2–4 h in the first day and measure urine output; a sudden "
            "rise in dilute urine means Na is about to climb.",
            sourced.source_id,
        )
    if max_change_per_h > sourced.value * (1 + 1e-9):
        ledger.add(
            "soft",
            "SODIUM_LIMIT_RAISED",
            f"The plan allows serum Na to change {q(max_change_per_h, 'mmol/L/h')}, above the "
            f"usual {q(sourced.value, 'mmol/L/h')}"
            + (" (recalled — unverified)" if sourced.basis == "memory" else "")
            + "; faster correction is for acute changes (under about 12 h) only.",
            "Keep the usual limit unless the change is known to be acute; recheck Na every 2–4 h.",
            sourced.source_id,
        )


def _direction(change: float) -> str:
    return "fall" if change < 0 else "rise"


def note_free_water(
    ledger: Ledger,
    *,
    serum_na: float,
    reference_high: float,
    free_water_ml: float,
    max_change: float,
) -> None:
    ledger.add(
        "info",
        "FREE_WATER_DEFICIT",
        f"Serum Na {q(serum_na, 'mmol/L')} is above the {q(reference_high, 'mmol/L')} "
        f"reference; free-water deficit ≈ {q(free_water_ml, 'mL')}.",
        f"Correct no faster than {q(max_change, 'mmol/L/h')}.",
    )


def check_urine(
    ledger: Ledger,
    *,
    usg: float | None,
    budget: WaterBudget | None,
    overload_risk: bool = False,
) -> None:
    """USG where the taxon cannot use it; an entered urine more concentrated than the species
    can make (a mis-entry or contaminated sample: the budget keeps the species' ceiling);
    urine close to plasma in a species that normally concentrates (low ceiling). Urine near
    plasma is no finding where that is the species' own ceiling (reptiles: Holz; Braun 1985).
    With heart or kidney disease the advice to expect more urine says the overload caution
    comes first."""
    usg_ok = ledger.value("usg_interpretable")
    if usg is not None and not usg_ok.value:
        ledger.add(
            "info",
            "USG_NOT_INTERPRETABLE",
            f"USG does not judge hydration in this taxon ({ledger.species.taxon_group}): "
            f"{usg_ok.note}.",
            "Judge hydration by weight, examination, PCV/TS and uric acid or urea.",
            usg_ok.source_id,
        )
    if budget is not None and budget.entered_above_species:
        note_urine_above_species(ledger, usg=usg, budget=budget)
    near_plasma = NEAR_PLASMA_FACTOR * (budget.plasma_mosm_per_kg if budget else 0.0)
    if (
        budget is not None
        and budget.ceiling_from in ("USG", "urine osmolality")
        and budget.ceiling_mosm_per_kg <= near_plasma
        # urine at plasma is normal where plasma is the species' own ceiling
        and (budget.species_ceiling_mosm_per_kg or float("inf")) > near_plasma
    ):
        ledger.add(
            "info",
            "LOW_CONCENTRATING_CEILING",
            f"Urine at {q(budget.ceiling_mosm_per_kg, 'mOsm/kg')} is close to plasma: the kidney "
            f"needs {q(budget.obligatory_urine_ml, 'mL/day')} of urine for its solute load.",
            overload_comes_first()
            if overload_risk
            else "Expect higher urine losses; measure urine output and add it as ongoing losses.",
        )


def check_budget_against_maintenance(
    ledger: Ledger,
    *,
    budget: WaterBudget | None,
    maintenance_ml_per_day: float,
    overload_risk: bool = False,
) -> None:
    """Say so when the species' maintenance rate is below the water the budget says is needed.

    This happens when the kidney's ceiling has fallen (isosthenuria: the same solute
    load needs more urine) or when a per-kg maintenance rate does not fit a very
    small, fast-metabolising mammal. Never for a bird or reptile at its own species
    ceiling: a weak ceiling is normal for urate excretors, whose nitrogen leaves as a
    precipitate and whose cloaca takes water back (budgerigar and zebra finch live on
    dry seed without drinking: Skadhauge 1976). With heart or kidney disease the advice
    says the overload caution comes first.
    """
    if budget is None or budget.minimum_ml <= maintenance_ml_per_day:
        return
    if budget.nitrogen_as_urate and budget.at_species_ceiling:
        return
    ledger.add(
        "info",
        "MAINTENANCE_BELOW_WATER_BUDGET",
        f"Maintenance {q(maintenance_ml_per_day, 'mL/day')} is below the estimated minimum "
        f"water need of {q(budget.minimum_ml, 'mL/day')} (urine water at "
        f"{q(budget.ceiling_mosm_per_kg, 'mOsm/kg')}: {q(budget.obligatory_urine_ml, 'mL/day')}).",
        overload_comes_first()
        if overload_risk
        else "Measure urine output and add it as ongoing losses; weigh often.",
    )


def suggest_syringe_pump(ledger: Ledger, *, device: str, phases: tuple[Phase, ...]) -> None:
    """A line run slower than ``syringe_pump_below_ml_per_h`` by a volumetric pump or a drip:
    suggest a syringe pump (common practice, no source)."""
    below = limit("syringe_pump_below_ml_per_h")
    rates = [p.rate_ml_per_h for p in phases if p.mode == "continuous" and p.rate_ml_per_h]
    if device not in ("pump", "gravity") or not rates or min(rates) >= below.value:
        return
    how = "an infusion pump" if device == "pump" else "a gravity drip"
    # a drip this slow cannot be counted, and a bag far larger than the patient can free-flow
    # unseen (common practice, no source): a warning, not a note
    ledger.add(
        "soft" if device == "gravity" else below.severity,
        "SYRINGE_PUMP_SUGGESTED",
        f"The plan runs as slowly as {q(min(rates), 'mL/h')} by {how}; below "
        f"{q(below.value, 'mL/h')} a syringe pump is usually used (common practice, no "
        "source).",
        "Use a syringe pump (device: syringe pump) if one is available.",
        below.source_id,
    )


def check_dehydration_entry(ledger: Ledger, *, percent: float) -> None:
    """A dehydration under 1 % is almost always a fraction typed for a percentage (0.08
    for 8 %): clinical dehydration is not detectable below 5 % (DiBartola 2012)."""
    if 0 < percent < 1:
        ledger.add(
            "soft",
            "DEHYDRATION_UNDER_ONE_PERCENT",
            f"Dehydration is entered as {percent:g} %: less than 1 %, which examination cannot "
            f"detect. Was {percent * 100:g} % meant (a fraction typed for a percentage)?",
            "Enter the dehydration as a percentage (8 for 8 %).",
            "dibartola2012",
        )


def check_shock_range(ledger: Ledger, percent: float, *, boluses: int, taxon: str) -> None:
    """A dehydration in the band where the taxon's table expects shock (mammals: 12–15 %,
    weak pulses and cold limbs, DiBartola 2012 Table 14-4) with no resuscitation bolus
    planned: soft. Shock is treated with boluses first; the deficit is replaced after."""
    shock = next(
        (f for f in hydration.findings_for(taxon).values()
         if f.finding_id.endswith("shock_signs") and f.percent_low is not None),
        None,
    )  # fmt: skip
    if shock is None or percent < shock.percent_low or boluses > 0:
        return
    ledger.add(
        "soft",
        "DEHYDRATION_IN_SHOCK_RANGE",
        f"{percent:g} % dehydration is in the {shock.percent_low:g}–{shock.percent_high:g} % "
        f"band where shock is expected ({shock.label.lower()}), and no resuscitation bolus "
        "is planned.",
        "Assess perfusion now; give resuscitation boluses first if it is poor, then replace "
        "the deficit.",
        shock.source_id,
    )


def check_replacement_speed(ledger: Ledger, *, deficit_ml: float, replace_hours: float) -> None:
    """A deficit replaced faster than the guidelines go: Davis 2013 replaces it over 6–8 h
    once shock is stabilised at the fastest; Pardo 2024 rehydrates over 12–24 h. Shock is
    treated with boluses (the resuscitation phase), not by replacing the deficit faster."""
    floor = limit("deficit_min_replace_hours")
    if deficit_ml <= 0 or replace_hours >= floor.value:
        return
    ledger.add(
        floor.severity,
        "DEFICIT_REPLACED_FAST",
        f"The deficit of {q(deficit_ml, 'mL')} is replaced over {replace_hours:g} h: faster "
        f"than the guidelines, which take {floor.value:g} h at the fastest once shock is "
        "stabilised (Davis 2013) and usually 12–24 h (Pardo 2024).",
        "Treat shock with boluses and reassess; replace the deficit over 12–24 h.",
        floor.source_id,
    )


def check_overload(
    ledger: Ledger,
    *,
    cardiac: bool,
    renal: bool,
    weight_kg: float,
    deficit_ml: float,
    replace_hours: float,
    background_ml_per_h: float,
) -> None:
    """Cardiac or renal disease (Pardo 2024: they raise the risk of overload).

    A deficit replaced faster than a fixed slower target (``heart_kidney_replace_hours``)
    is a soft caution whose fix names that target; a plan at or beyond it, or with no
    deficit, gets only an information reminder to weigh. The target is fixed, so
    following the advice clears it (it used to double whatever period was entered)."""
    if not (cardiac or renal):
        return
    which = " and ".join(n for n, on in (("cardiac", cardiac), ("renal", renal)) if on)
    gain = limit("overload_weight_gain_fraction")
    line = overload_weight_kg(weight_kg=weight_kg, deficit_ml=deficit_ml, gain_fraction=gain.value)
    weigh = (
        f"Weigh every 6–12 h; stop and reassess at {q(line, 'kg')} ({gain.value:.0%} over "
        f"the euhydrated {q(weight_kg + deficit_ml / 1000.0, 'kg')})."
    )
    target_h = heart_kidney_replace_hours()
    if deficit_ml > 0 and replace_hours < target_h:
        factor = limit("heart_kidney_slowdown_factor")
        suggested = deficit_ml / target_h + background_ml_per_h
        ledger.add(
            "soft",
            "OVERLOAD_RISK",
            f"With {which} disease fluid overload is more likely, and the deficit of "
            f"{q(deficit_ml, 'mL')} is replaced over {replace_hours:g} h. Over {target_h:g} h "
            f"({factor.value:g} × the usual 24 h, a recalled convention) the rate would be "
            f"{q(suggested, 'mL/h')}.",
            f"Replace the deficit over {target_h:g} h. {weigh}",
            gain.source_id,
        )
        return
    ledger.add(
        "info",
        "OVERLOAD_WEIGH",
        f"With {which} disease fluid overload is more likely; "
        + (
            f"the deficit is replaced over {replace_hours:g} h, as slowly as advised."
            if deficit_ml > 0
            else "this plan gives no deficit, only maintenance and losses."
        ),
        weigh,
        gain.source_id,
    )


def check_anaesthesia(ledger: Ledger, phases: tuple[Phase, ...], weight_kg: float) -> None:
    """Under anaesthesia: below 10 mL/kg/h (Davis 2013) in every phase after the boluses —
    an ins-and-outs period later in the plan as much as the first."""
    ceiling = limit("anaesthesia_max_ml_per_kg_h")
    start = ledger.get("anaesthesia_rate_ml_per_kg_h")
    # what reaches the circulation: divided doses as absorbed, overlapping ones added
    most, hour = peak_uptake_rate(
        phases, per_ml=lambda p: 0.0 if p.kind == "resuscitation" else 1.0
    )
    if most > ceiling.value * weight_kg * (1 + 1e-9):
        begin = q(start.number, "mL/kg/h") if start else "a lower rate"
        ledger.add(
            "soft",
            "ANAESTHESIA_RATE",
            f"{q(most, 'mL/h')} from hour {hour:g} is above "
            f"{q(ceiling.value, 'mL/kg/h')} ({q(ceiling.value * weight_kg, 'mL/h')}) for an "
            "anaesthetised patient.",
            f"Start at {begin} and reduce by 25% per hour as tolerated.",
            ceiling.source_id,
        )


def check_measured_urine(
    ledger: Ledger,
    measured: tuple[tuple[float, float], ...],
    *,
    period_h: float,
    weight_kg: float,
) -> None:
    """Urine recorded in an ins-and-outs period far above what a kidney makes: the next
    period gives it all back, so a slip (mL typed for a total, a second patient's jug) is
    planned as fluid. Above 10× the species' normal output is soft (common practice, no
    source; normal 1–2 mL/kg/h, Foster 2018)."""
    normal = ledger.value("urine_output_ml_per_kg_h")
    high = normal.high if normal.high is not None else normal.number
    for number, (urine, _) in enumerate(measured, start=1):
        per_kg_h = urine / period_h / weight_kg
        if per_kg_h > 10 * high:
            ledger.add(
                "soft",
                "MEASURED_URINE_IMPLAUSIBLE",
                f"Period {number} records {q(urine, 'mL')} of urine, "
                f"{q(per_kg_h, 'mL/kg/h')}: more than ten times the normal "
                f"{q(high, 'mL/kg/h')}, and the next period gives it all back.",
                "Check the measurement and its unit (a total, or another patient's?); "
                "correct it before the next period runs.",
                normal.source_id,
            )
            return


# Macintire 2008: a puppy or kitten is a neonate for its first two weeks
NEONATE_WEEKS = 2.0


def note_neonate(
    ledger: Ledger,
    *,
    neonatal_water: SpeciesValue | None,
    used_water: SpeciesValue,
    age_weeks: float | None,
) -> None:
    """Neonates: more body water (dogs and cats up to 80 %, Odunayo 2018), poor tolerance
    of fasting. The note says the body water the plan used (``used_water``): the neonates'
    value, or the adults' when the weight or age entered is not a newborn's, or where none
    is on record. An age past the neonatal two weeks with the flag ticked is a warning."""
    aged = age_weeks is not None and ledger.species_id in hydration.AGED_BY_WEEKS
    if aged and age_weeks >= NEONATE_WEEKS:
        ledger.add(
            "soft",
            "NEONATE_AGE_DISAGREES",
            f"Neonate is ticked, but the age entered is {weeks_text(age_weeks)}: a puppy or "
            f"kitten is a neonate for its first {NEONATE_WEEKS:g} weeks (Macintire 2008).",
            "Untick neonate, or correct the age; the plan uses the age.",
            "macintire2008",
        )
    if used_water.parameter == "neonate_total_body_water_fraction":
        water = f"the plan takes their body water as {used_water.number:.0%} of body weight"
    elif neonatal_water is not None:
        water = (
            f"the plan keeps the adults' {used_water.number:.0%}: the weight or age entered "
            "is not a newborn's"
        )
    else:
        water = (
            "no neonatal body-water value is on record for this species, so the adult "
            "value is used and sodium changes may be overstated"
        )
    ledger.add(
        "info",
        "NEONATE",
        f"Neonates hold more body water than adults and tolerate fasting poorly; {water}.",
        "Check blood glucose and consider dextrose; weigh on a gram scale; reassess often.",
        "odunayo2018",
    )


# Puppies and kittens (Macintire 2008): neonate to 2 weeks, infant to 6, juvenile to 12
PAEDIATRIC_WEEKS = 12.0
DEXTROSE_BEFORE_WEEKS = 6.0  # the infant stage's end: glycogen stores are small before it
# maintenance of neonates, 120–180 mL/kg/day (Rybachuk, citing Macintire 2008; secondary)
PAEDIATRIC_MAINTENANCE_ML_PER_KG_DAY = (120.0, 180.0)


def check_paediatric(
    ledger: Ledger,
    *,
    species_id: str,
    age_weeks: float | None,
    weight_kg: float,
    maintenance_ml_per_day: float,
    dextrose_g_per_l: float,
    line: bool,
) -> None:
    """A puppy or kitten whose age is given (under :data:`PAEDIATRIC_WEEKS`): maintenance
    below the neonates' 120 mL/kg/day (soft), and under :data:`DEXTROSE_BEFORE_WEEKS` a fluid
    without dextrose into a line (soft: consider it), or the note that dextrose is not given
    under the skin or into the peritoneum (Clinician's Brief, pediatric critical care)."""
    if age_weeks is not None and species_id not in hydration.AGED_BY_WEEKS:
        ledger.add(
            "info",
            "AGE_NOT_USED",
            f"An age ({weeks_text(age_weeks)}) is used for puppies and kittens only; for this "
            "species no body water or maintenance by age is on record, so the adults' values "
            "are used.",
            "For a newborn, tick Neonate; weigh on a gram scale and reassess often.",
        )
        return
    if age_weeks is None or age_weeks >= PAEDIATRIC_WEEKS:
        return
    adult = ledger.value("body_weight_kg")
    adult_low = adult.low if adult.low is not None else adult.number
    if age_weeks < NEONATE_WEEKS and weight_kg >= adult_low:
        # a neonate (Macintire 2008: the first two weeks) at an adult's weight: one of the
        # two is a slip (weeks typed for years?), and the neonates' body water would make
        # every sodium change look smaller
        ledger.add(
            "soft",
            "AGE_AND_WEIGHT_DISAGREE",
            f"An age of {weeks_text(age_weeks)} is a neonate's, but {q(weight_kg, 'kg')} is "
            f"within the adults' range ({q(adult_low, 'kg')} and up); the plan uses the "
            "neonates' body water.",
            "Check the age (in weeks, not years) and the weight.",
            "macintire2008",
        )
    low, high = PAEDIATRIC_MAINTENANCE_ML_PER_KG_DAY
    given = maintenance_ml_per_day / weight_kg
    if given < low - 1e-9:
        short = (low - given) * weight_kg
        ledger.add(
            "soft",
            "PAEDIATRIC_MAINTENANCE_LOW",
            f"At {weeks_text(age_weeks)} a {'puppy' if species_id == 'dog' else 'kitten'} needs "
            f"about {low:g}–{high:g} mL/kg/day for maintenance; this plan's maintenance is "
            f"{q(given, 'mL/kg/day')}.",
            f"Add about {q(short, 'mL/day')} as ongoing losses, and weigh twice a day on a "
            "gram scale.",
            "rybachuk_orphan",
        )
    if age_weeks >= DEXTROSE_BEFORE_WEEKS:
        return
    if line and dextrose_g_per_l <= 0:
        ledger.add(
            "soft",
            "NEONATE_WITHOUT_DEXTROSE",
            f"At {weeks_text(age_weeks)} glycogen stores are small and fasting brings "
            "hypoglycaemia quickly; this fluid carries no dextrose.",
            "Measure blood glucose; consider 2.5–5 % dextrose in the maintenance fluid (a "
            "hypoglycaemic neonate: 0.5–1 g/kg of 5–10 % dextrose IV slowly).",
            "macintire2008",
        )
    elif not line:
        ledger.add(
            "info",
            "NEONATE_DEXTROSE_NOT_UNDER_SKIN",
            "Fluids under the skin or into the peritoneum carry no dextrose, and before 6 "
            "weeks the lactate in lactated Ringer's may not be turned into bicarbonate.",
            "Measure blood glucose; give dextrose IV or IO if it is low; prefer a "
            "warm lactate-free isotonic crystalloid.",
            "cb_pediatric_cc",
        )


def check_isotonic_maintenance(
    ledger: Ledger,
    *,
    fluid_name: str,
    fluid_na: float,
    running_h: float,
    maintenance_h: float,
    tonicity: fluids.Tonicity | None = None,
) -> None:
    """A sodium-rich replacement fluid kept on for long maintenance (Pardo 2024).

    A replacement fluid is recognised by its sodium (130–154 mmol/L), not by its
    tonicity class, which shifts with each species' plasma osmolality. Its tonicity is
    worded only by the one rule (:func:`fluids.tonicity_words`, as in the Totals) and
    only when the plan's classification is given.
    """
    replacement = fluid_na >= limit("replacement_fluid_min_na_mmol_per_l").value
    if replacement and running_h >= limit("isotonic_maintenance_hours").value:
        tone = (
            f", {fluids.tonicity_words(tonicity)} against this patient's plasma"
            if tonicity is not None
            else ""
        )
        ledger.add(
            "info",
            "ISOTONIC_FOR_MAINTENANCE",
            f"{fluid_name} is a replacement fluid{tone} (Na "
            f"{q(fluid_na, 'mmol/L')}); this plan runs it for {running_h:g} h, "
            + (
                "all of it as maintenance."
                if maintenance_h >= running_h
                else f"the last {maintenance_h:g} h as maintenance."
            ),
            "For maintenance beyond a day consider a hypotonic maintenance fluid with potassium.",
            "pardo2024",
        )


def note_unverified(ledger: Ledger) -> None:
    """Say how many species values the plan rests on were recalled from memory."""
    unverified = [v.label or v.parameter for v in ledger.values.values() if v.unverified]
    if unverified:
        ledger.add(
            "info",
            "UNVERIFIED_VALUES",
            f"{len(unverified)} species value(s) used here were recalled from memory, not "
            f"checked against a publication: {', '.join(unverified)}.",
            "Check them against your references before relying on them.",
        )


# ---- advice that can be followed (issue 16, items 6–8) -------------------------------------------
def heart_kidney_replace_hours() -> float:
    """The period over which a heart or kidney patient's deficit is replaced: the slowdown
    factor (``heart_kidney_slowdown_factor``: twice, a recalled convention) × the longest
    usual rehydration period, 24 h (Pardo 2024: 12–24 h). Fixed, so it can be reached."""
    return limit("heart_kidney_slowdown_factor").value * 24.0


def overload_comes_first() -> str:
    """What a water-need finding says when an overload caution stands beside it: which
    advice wins, and why."""
    return (
        "With heart or kidney disease the overload caution comes first: keep the slower plan "
        "and do not raise the rate on this estimate, which may be wrong, while overload harms "
        "at once. Measure urine output and replace what is measured (ins and outs); weigh "
        "every 6–12 h."
    )


def note_urine_above_species(ledger: Ledger, *, usg: float | None, budget: WaterBudget) -> None:
    """An entered urine more concentrated than the species can make (beyond its ceiling and
    the tolerance in ``maintenance.ENTERED_CEILING_TOLERANCE``): most likely a mis-entry or a
    contaminated sample. The budget has kept the species' ceiling."""
    entered = budget.entered_mosm_per_kg or 0.0
    species_top = budget.species_ceiling_mosm_per_kg or budget.ceiling_mosm_per_kg
    what = (
        f"urine osmolality of {q(entered, 'mOsm/kg')}"
        if budget.entered_from == "urine osmolality"
        else f"USG of {usg:.3f} (≈ {q(entered, 'mOsm/kg')})"
    )
    why = (
        "its urine is never more concentrated than plasma"
        if species_top <= NEAR_PLASMA_FACTOR * budget.plasma_mosm_per_kg
        else f"its kidney makes at most about {q(species_top, 'mOsm/kg')}"
    )
    ledger.add(
        "soft",
        "URINE_ABOVE_SPECIES_CEILING",
        f"The {what} entered is more than a {ledger.species.common_name} can make ({why}): "
        "most likely a mis-entry, or a sample contaminated with faeces, urates or another "
        f"solute. The water budget uses {q(budget.ceiling_mosm_per_kg, 'mOsm/kg')} instead.",
        "Check the entry; re-measure on a clean, fresh sample, or leave it blank.",
    )


def check_maintenance_covers_insensible(
    ledger: Ledger, *, maintenance_ml_per_day: float, given_ml_per_day: float
) -> None:
    """Soft when what the plan gives beyond the deficit (maintenance and losses) is below the
    patient's insensible loss alone (Côté 2020: 20 mL/kg/day in dogs and cats): the
    patient would dry out even passing no urine. The fix names the volume to add."""
    insensible = ledger.get("insensible_loss_ml_per_kg_day")
    if insensible is None:
        return
    floor = insensible.number * ledger.weight_kg
    if given_ml_per_day >= floor:
        return
    add_ml = int(-((given_ml_per_day - floor) // 1))  # whole mL, rounded up: the fix clears it
    ledger.add(
        "soft",
        "MAINTENANCE_BELOW_INSENSIBLE_LOSS",
        f"Maintenance {q(maintenance_ml_per_day, 'mL/day')}"
        + (
            f" (with the losses entered, {q(given_ml_per_day, 'mL/day')})"
            if given_ml_per_day > maintenance_ml_per_day
            else ""
        )
        + " is below this patient's insensible loss alone, "
        f"{q(floor, 'mL/day')} ({insensible.number:g} mL/kg/day): it would dry out even "
        "passing no urine.",
        f"Choose another maintenance method, or add {add_ml} mL/day as ongoing losses; "
        "then measure urine output and add that too.",
        insensible.source_id,
    )
