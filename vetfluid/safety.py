"""Safety checks: each limit in ``species_data/safety_limits.csv`` becomes a finding.

Every check adds to a :class:`~vetfluid.ledger.Ledger`: ``info`` informs, ``soft``
must be acknowledged with a reason, ``hard`` blocks marking the plan ready.
Messages name the value, the limit and what to do; codes are stable.
"""

from __future__ import annotations

from collections.abc import Callable

from vetfluid import delivery, fluids
from vetfluid.delivery import DIVIDED_INTERVALS_H
from vetfluid.electrolytes import PotassiumSummary, SodiumSummary
from vetfluid.formatting import format_quantity as q
from vetfluid.hydration import overload_weight_kg
from vetfluid.ledger import Ledger
from vetfluid.limits import limit
from vetfluid.maintenance import Maintenance, WaterBudget
from vetfluid.resuscitation import RESUSCITATION_ROUTES, Resuscitation
from vetfluid.schedule import Phase

LINE_ROUTES = RESUSCITATION_ROUTES  # a continuous line: IV or IO
NEAR_PLASMA_FACTOR = 1.2  # urine within 20% of plasma counts as "close to plasma" for the note


def check_weight(ledger: Ledger, weight_kg: float, *, neonate: bool = False) -> None:
    """Soft outside the species' usual range, hard far outside it (the g/kg slip). The
    range is the adults': a neonate far below it is only soft (a newborn may weigh a
    tenth of an adult or less), far above it still hard."""
    weight = ledger.value("body_weight_kg")
    low = weight.low if weight.low is not None else weight.number
    high = weight.high if weight.high is not None else weight.number
    factor = limit("weight_far_outside_factor")
    usual = f"{q(low, 'kg')}–{q(high, 'kg')}"
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
    (Vet Clin North Am 2017)."""
    if route in LINE_ROUTES:
        return
    if tonicity.in_vitro_class == "hypertonic" or dextrose_g_per_l > 0 or colloid:
        ledger.add(
            "hard",
            "FLUID_NOT_FOR_SC",
            f"{fluid_name} is not suitable {route.upper()}: no hypertonic, colloid or "
            "dextrose-containing fluids outside a vein.",
            "Choose an isotonic crystalloid for SC or intracoelomic use.",
            "vcna2017_sc",
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
    ledger: Ledger, fluid: fluids.Fluid, phases: tuple[Phase, ...], weight_kg: float
) -> None:
    """A colloid as the plan's fluid: it restores plasma volume, not an interstitial
    deficit, and its dose over any 24 h is limited (safety_limits.csv). Each recalled
    value says so, read from its basis."""
    if fluid.colloid is None:
        return
    half_life = "recalled (memory — unverified)" if fluid.colloid.basis == "memory" else "on record"
    ledger.add(
        "soft",
        "COLLOID_CHOSEN",
        f"{fluid.name} holds its volume in the plasma: it does not rehydrate the interstitium "
        "and adds no maintenance water. Starches have been restricted in critically ill "
        "people for kidney injury and bleeding (recalled — unverified); its volume half-life "
        f"of {fluid.colloid.volume_half_life_h:g} h is {half_life}.",
        "Use a crystalloid for rehydration and maintenance; give a colloid only as your "
        "practice protocol allows, and record why.",
    )
    most = limit("colloid_max_ml_per_kg_day")
    worst_ml, worst_start = _largest_24_h(phases)
    if worst_ml / weight_kg > most.value:
        basis = " (recalled — unverified)" if most.basis == "memory" else ""
        ledger.add(
            most.severity,
            "COLLOID_DAILY_LIMIT",
            f"The plan gives {q(worst_ml / weight_kg, 'mL/kg')} of {fluid.name} in the 24 h "
            f"from hour {worst_start:g}, above {q(most.value, 'mL/kg/day')}{basis}.",
            "Give the deficit and maintenance as a crystalloid; keep the colloid to small "
            "boluses within the daily limit your protocol sets.",
            most.source_id,
        )


def _turning_points(phases: tuple[Phase, ...]) -> set[float]:
    """Where volume given stops being linear in time: phase boundaries and dose hours."""
    moments = {p.start_h for p in phases} | {p.end_h for p in phases}
    return moments | {h for p in phases for h in p.dose_hours()}


def _largest_24_h(phases: tuple[Phase, ...]) -> tuple[float, float]:
    """The most given in any 24 h and where that window starts. Volume given is piecewise
    linear in time, so the largest window starts or ends at a phase boundary or dose."""
    moments = _turning_points(phases)
    starts = {max(0.0, m) for m in moments} | {max(0.0, m - 24.0) for m in moments}
    return max((sum(p.volume_between(a, a + 24.0) for p in phases), a) for a in sorted(starts))


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
    """Cumulative boluses beyond the shock dose (or one blood volume) are a soft finding."""
    given = res.bolus_ml_per_kg * boluses
    if given > res.cap_ml_per_kg * (1 + 1e-9):
        cap = ledger.get("shock_dose_ml_per_kg") or ledger.value("blood_volume_ml_per_kg")
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
    consumed: Callable[[float], float],
    weight_kg: float,
    deficit_ml: float,
) -> None:
    """Predicted weight (1 mL ≈ 1 g) above the overload line (Pardo 2024: ≥ 10 % gain).

    The line is 10 % over the euhydrated weight (:func:`hydration.overload_weight_kg`).
    Given minus consumed (``consumed(hour)``, mL) is piecewise linear, with its peaks at
    phase boundaries and just after doses; those are the only points checked.
    """
    gain = limit("overload_weight_gain_fraction")
    line = overload_weight_kg(weight_kg=weight_kg, deficit_ml=deficit_ml, gain_fraction=gain.value)
    moments = sorted(_turning_points(phases))
    peak_ml, peak_h = 0.0, 0.0
    for hour in moments:
        given = sum(p.volume_between(0.0, hour + 1e-9) for p in phases)
        net = given - consumed(hour)
        if net > peak_ml:
            peak_ml, peak_h = net, hour
    peak_kg = weight_kg + peak_ml / 1000.0
    if peak_kg > line:
        ledger.add(
            "soft",
            "PREDICTED_OVERLOAD",
            f"Predicted weight peaks at {q(peak_kg, 'kg')} at hour {peak_h:g}, above the "
            f"overload line of {q(line, 'kg')} ({gain.value:.0%} over the euhydrated "
            f"{q(weight_kg + deficit_ml / 1000.0, 'kg')}).",
            "Give smaller, more frequent doses or replace the deficit more slowly; weigh before "
            "each dose.",
            gain.source_id,
        )


def check_divided_sites(
    ledger: Ledger, phases: tuple[Phase, ...], *, site_limit_ml: float | None = None
) -> None:
    """Doses that need more injection sites than is practical. Into the coelom, which is
    one space, a dose above the per-injection volume is more than one puncture: said
    on its own (the per-injection volume is the species' value). A site limit below the
    smallest syringe mark cannot be kept by hand at all (hard)."""
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
    for phase in phases:
        if phase.mode == "intermittent" and not phase.fits_sites:
            # the figures the schedule gives: as drawn up, so the two never disagree
            drawn = delivery.drawn_up_dose(
                ml_per_site=phase.ml_per_site or 0.0, sites=phase.sites_per_dose
            )
            ledger.add(
                "soft",
                "DIVIDED_TOO_MANY_SITES",
                f"Each {phase.route.upper()} {phase.kind} dose of "
                f"{q(drawn.dose_ml, 'mL', decimals=2)} needs {drawn.sites} sites at "
                f"{q(drawn.ml_per_site, 'mL', decimals=2)} per site.",
                "Replace the deficit over a longer period, or place an IO/IV line.",
            )
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


def check_sodium(ledger: Ledger, na: SodiumSummary, rate_ml_per_h: float) -> None:
    """Serum Na predicted to move faster than the correction limit (soft)."""
    if na.max_rate_ml_per_h is not None and rate_ml_per_h > na.max_rate_ml_per_h:
        direction = "fall" if na.delta_na_per_l < 0 else "rise"
        ledger.add(
            "soft",
            "SODIUM_CHANGE_TOO_FAST",
            f"At {q(rate_ml_per_h, 'mL/h')} serum Na is predicted to {direction} "
            f"{q(abs(na.predicted_change_per_h), 'mmol/L/h')}, faster than "
            f"{q(na.max_change_per_h, 'mmol/L/h')}.",
            f"Keep the rate at or below {q(na.max_rate_ml_per_h, 'mL/h')} or choose a fluid "
            "closer to the patient's Na; recheck Na every 4–6 h.",
            na.source_id,
        )


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


def check_urine(ledger: Ledger, *, usg: float | None, budget: WaterBudget | None) -> None:
    """USG where the taxon cannot use it; urine close to plasma (low concentrating ceiling)."""
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
    if (
        budget is not None
        and budget.ceiling_from in ("USG", "urine osmolality")
        and budget.ceiling_mosm_per_kg <= NEAR_PLASMA_FACTOR * budget.plasma_mosm_per_kg
    ):
        ledger.add(
            "info",
            "LOW_CONCENTRATING_CEILING",
            f"Urine at {q(budget.ceiling_mosm_per_kg, 'mOsm/kg')} is close to plasma: the kidney "
            f"needs {q(budget.obligatory_urine_ml, 'mL/day')} of urine for its solute load.",
            "Expect higher urine losses; measure urine output and add it as ongoing losses.",
        )


def check_budget_against_maintenance(
    ledger: Ledger, *, budget: WaterBudget | None, maintenance_ml_per_day: float
) -> None:
    """Say so when the species' maintenance rate is below the water the budget says is needed.

    This happens when the kidney's ceiling has fallen (isosthenuria: the same solute
    load needs more urine) or when a per-kg maintenance rate does not fit a very
    small, fast-metabolising patient.
    """
    if budget is None or budget.minimum_ml <= maintenance_ml_per_day:
        return
    ledger.add(
        "info",
        "MAINTENANCE_BELOW_WATER_BUDGET",
        f"Maintenance {q(maintenance_ml_per_day, 'mL/day')} is below the estimated minimum "
        f"water need of {q(budget.minimum_ml, 'mL/day')} (urine water at "
        f"{q(budget.ceiling_mosm_per_kg, 'mOsm/kg')}: {q(budget.obligatory_urine_ml, 'mL/day')}).",
        "Measure urine output and add it as ongoing losses; weigh often.",
    )


def suggest_syringe_pump(ledger: Ledger, *, device: str, phases: tuple[Phase, ...]) -> None:
    """A line run slower than ``syringe_pump_below_ml_per_h`` by a volumetric pump or a drip:
    suggest a syringe pump (common practice, no source)."""
    below = limit("syringe_pump_below_ml_per_h")
    rates = [p.rate_ml_per_h for p in phases if p.mode == "continuous" and p.rate_ml_per_h]
    if device not in ("pump", "gravity") or not rates or min(rates) >= below.value:
        return
    how = "an infusion pump" if device == "pump" else "a gravity drip"
    ledger.add(
        below.severity,
        "SYRINGE_PUMP_SUGGESTED",
        f"The plan runs as slowly as {q(min(rates), 'mL/h')} by {how}; below "
        f"{q(below.value, 'mL/h')} a syringe pump is usually used (common practice, no "
        "source).",
        "Use a syringe pump (device: syringe pump) if one is available.",
        below.source_id,
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
    """Cardiac or renal disease: a soft caution with a slower suggested rate."""
    if not (cardiac or renal):
        return
    factor = limit("heart_kidney_slowdown_factor")
    slower_h = max(24.0, replace_hours * factor.value)
    suggested = (deficit_ml / slower_h if deficit_ml else 0.0) + background_ml_per_h
    which = " and ".join(n for n, on in (("cardiac", cardiac), ("renal", renal)) if on)
    gain = limit("overload_weight_gain_fraction")
    line = overload_weight_kg(weight_kg=weight_kg, deficit_ml=deficit_ml, gain_fraction=gain.value)
    ledger.add(
        "soft",
        "OVERLOAD_RISK",
        f"With {which} disease fluid overload is more likely; suggested rate "
        f"{q(suggested, 'mL/h')} (deficit over {slower_h:g} h).",
        f"Weigh every 6–12 h; stop and reassess at {q(line, 'kg')} ({gain.value:.0%} over "
        f"the euhydrated {q(weight_kg + deficit_ml / 1000.0, 'kg')}).",
        gain.source_id,
    )


def check_anaesthesia(ledger: Ledger, main: Phase, weight_kg: float) -> None:
    """Under anaesthesia: below 10 mL/kg/h (Davis 2013)."""
    ceiling = limit("anaesthesia_max_ml_per_kg_h")
    start = ledger.get("anaesthesia_rate_ml_per_kg_h")
    if main.average_ml_per_h > ceiling.value * weight_kg:
        begin = q(start.number, "mL/kg/h") if start else "a lower rate"
        ledger.add(
            "soft",
            "ANAESTHESIA_RATE",
            f"{q(main.average_ml_per_h, 'mL/h')} is above {q(ceiling.value, 'mL/kg/h')} "
            f"({q(ceiling.value * weight_kg, 'mL/h')}) for an anaesthetised patient.",
            f"Start at {begin} and reduce by 25% per hour as tolerated.",
            ceiling.source_id,
        )


def note_neonate(ledger: Ledger) -> None:
    ledger.add(
        "info",
        "NEONATE",
        "Neonates hold more body water (up to 80% of body weight) and tolerate fasting poorly.",
        "Check glucose; weigh on a gram scale; reassess often.",
        "odunayo2018",
    )


def check_isotonic_maintenance(
    ledger: Ledger, *, fluid_name: str, fluid_na: float, running_h: float, maintenance_h: float
) -> None:
    """A sodium-rich replacement fluid kept on for long maintenance (Pardo 2024).

    A replacement fluid is recognised by its sodium (130–154 mmol/L), not by its
    tonicity class, which shifts with each species' plasma osmolality.
    """
    replacement = fluid_na >= limit("replacement_fluid_min_na_mmol_per_l").value
    if replacement and running_h >= limit("isotonic_maintenance_hours").value:
        ledger.add(
            "info",
            "ISOTONIC_FOR_MAINTENANCE",
            # "replacement fluid", not "isotonic": against this species' plasma the Totals
            # may call the same fluid hypotonic in the body
            f"{fluid_name} is a replacement fluid, near plasma in sodium (Na "
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
