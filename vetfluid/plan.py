"""The plan builder: one patient request in, a checked, timed fluid plan out.

Phases follow the trade's three-phase frame (Pardo M et al., 2024 AAHA Fluid
Therapy Guidelines): resuscitation when asked for (boluses with reassessment),
replacement of the deficit over the chosen period plus maintenance plus ongoing
losses, then maintenance. Every species value used is carried in
``Plan.provenance`` with its basis, and every safety check becomes a
:class:`~vetfluid.findings.Finding`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from datetime import datetime, time, timedelta

from vetfluid import delivery, electrolytes, fluids, hydration, maintenance, resuscitation
from vetfluid.errors import InputError
from vetfluid.findings import Finding, worst
from vetfluid.limits import limit
from vetfluid.species import SpeciesTable, SpeciesValue, load_table

ROUTES = ("iv", "io", "sc", "icoel")
DEVICES = ("pump", "gravity", "syringe", "divided")
LINE_ROUTES = ("iv", "io")
# Per-site limit parameter for each bolus route.
SITE_LIMIT_PARAMETER = {
    "sc": "max_site_volume_sc_ml_per_kg",
    "icoel": "max_site_volume_icoel_ml_per_kg",
}
MAINTENANCE_TAIL_H = 12.0  # maintenance runs to hour 24, and at least 12 h after replacement
KCL_CONCENTRATE_ID = "kcl_2_meq_per_ml"
DEXTROSE_CONCENTRATE_ID = "dextrose_50"


@dataclass(frozen=True, kw_only=True)
class PlanRequest:
    """Everything the clinician entered. Values are validated on construction."""

    species_id: str
    weight_kg: float
    dehydration_percent: float | None = None
    dehydration_findings: tuple[str, ...] = ()
    replace_hours: float = 24.0
    losses_ml_per_day: float = 0.0
    maintenance_method: str | None = None
    fluid_id: str = "lactated_ringers"
    route: str | None = None
    device: str | None = None
    drop_factor: float | None = None
    resuscitation_boluses: int = 0
    body_temp_c: float | None = None
    serum_na: float | None = None
    serum_k: float | None = None
    usg: float | None = None
    urine_osmolality: float | None = None
    kcl_mmol_per_l: float | None = None
    dextrose_percent: float = 0.0
    start_time: time | None = None
    cardiac_disease: bool = False
    renal_disease: bool = False
    anaesthesia: bool = False
    neonate: bool = False
    max_na_change_per_h: float | None = None

    def __post_init__(self) -> None:
        _require(self.weight_kg, "weight_kg", 1e-4, 5000, "kg")
        if self.dehydration_percent is not None:
            hydration.check_percent(self.dehydration_percent)
        _require(self.replace_hours, "replace_hours", 1, 96, "h")
        _require(self.losses_ml_per_day, "losses_ml_per_day", 0, 1e6, "mL/day")
        _require(self.dextrose_percent, "dextrose_percent", 0, 10, "%")
        if self.route is not None and self.route not in ROUTES:
            raise InputError(
                f"unknown route {self.route!r}",
                field="route",
                value=self.route,
                fix=", ".join(ROUTES),
            )
        if self.device is not None and self.device not in DEVICES:
            raise InputError(
                f"unknown delivery {self.device!r}",
                field="device",
                value=self.device,
                fix=", ".join(DEVICES),
            )
        if self.drop_factor is not None:
            delivery.check_drop_factor(self.drop_factor)
        if not (
            isinstance(self.resuscitation_boluses, int) and 0 <= self.resuscitation_boluses <= 10
        ):
            raise InputError(
                "resuscitation boluses must be a whole number from 0 to 10",
                field="resuscitation_boluses",
                value=self.resuscitation_boluses,
            )
        for name, low, high, unit in (
            ("serum_na", 80, 230, "mmol/L"),
            ("serum_k", 0.5, 12, "mmol/L"),
            ("urine_osmolality", 20, 12000, "mOsm/kg"),
            ("kcl_mmol_per_l", 0, 200, "mmol/L"),
            ("max_na_change_per_h", 0.05, 5, "mmol/L/h"),
            ("body_temp_c", -5, 50, "°C"),
        ):
            value = getattr(self, name)
            if value is not None:
                _require(value, name, low, high, unit)
        if self.usg is not None:
            maintenance.usg_to_osmolality(self.usg)
        if self.dehydration_findings:
            hydration.estimate_dehydration(self.dehydration_findings)


def _require(value: object, name: str, low: float, high: float, unit: str) -> None:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise InputError(f"{name} must be a number", field=name, value=value)
    if not low <= value <= high:
        raise InputError(
            f"{name} must be between {low:g} and {high:g} {unit}", field=name, value=value
        )


@dataclass(frozen=True, kw_only=True)
class Phase:
    """One phase of the plan. Continuous phases have a rate; intermittent ones doses."""

    kind: str  # resuscitation | replacement | maintenance
    mode: str  # continuous | intermittent
    start_h: float
    end_h: float
    volume_ml: float
    rate_ml_per_h: float | None = None
    dose_ml: float | None = None
    interval_h: float | None = None
    doses: int | None = None
    sites_per_dose: int | None = None
    ml_per_site: float | None = None
    route: str = "iv"
    drops_per_min: float | None = None
    seconds_per_drop: float | None = None
    kcl_mmol_per_l: float = 0.0
    note: str = ""

    @property
    def hours(self) -> float:
        return self.end_h - self.start_h

    def volume_between(self, start_h: float, end_h: float) -> float:
        """Volume this phase delivers within [start_h, end_h)."""
        if self.mode == "continuous":
            overlap = max(0.0, min(end_h, self.end_h) - max(start_h, self.start_h))
            return (self.rate_ml_per_h or 0.0) * overlap
        assert self.dose_ml is not None and self.interval_h is not None and self.doses is not None
        times = (self.start_h + i * self.interval_h for i in range(self.doses))
        return sum(self.dose_ml for t in times if start_h <= t < end_h)


@dataclass(frozen=True, kw_only=True)
class ScheduleEntry:
    hour: float
    clock: str | None
    phase: str
    action: str


@dataclass(frozen=True, kw_only=True)
class Plan:
    request: PlanRequest
    species_name: str
    maintenance: maintenance.Maintenance
    dehydration_percent: float
    dehydration_estimate: hydration.DehydrationEstimate | None
    deficit_ml: float
    free_water_deficit_ml: float | None
    phases: tuple[Phase, ...]
    schedule: tuple[ScheduleEntry, ...]
    fluid_name: str
    fluid_na_mmol_per_l: float
    fluid_k_mmol_per_l: float
    tonicity: fluids.Tonicity
    route: str
    device: str
    resuscitation: resuscitation.Resuscitation | None
    potassium: dict[str, object] | None
    sodium: dict[str, object] | None
    water_budget: maintenance.WaterBudget | None
    findings: tuple[Finding, ...]
    provenance: tuple[SpeciesValue, ...] = field(repr=False)

    @property
    def total_ml_first_24h(self) -> float:
        return sum(p.volume_between(0.0, 24.0) for p in self.phases)

    @property
    def has_hard_limit(self) -> bool:
        return worst(self.findings) == "hard"

    def unacknowledged(self, acknowledged: dict[str, str]) -> list[Finding]:
        """Soft findings without a written reason, and every hard finding: what blocks 'ready'."""
        return [
            f
            for f in self.findings
            if f.severity == "hard"
            or (f.severity == "soft" and not acknowledged.get(f.code, "").strip())
        ]

    @property
    def main_phase(self) -> Phase:
        """The phase the pump is set for first after resuscitation (replacement, else maintenance)."""
        return next(p for p in self.phases if p.kind != "resuscitation")

    @property
    def unverified_values(self) -> list[SpeciesValue]:
        return [v for v in self.provenance if v.unverified]


# ---- building ----------------------------------------------------------------------------------
class _Collector:
    """Gathers provenance (once per parameter) and findings while the plan is built."""

    def __init__(self, table: SpeciesTable, species_id: str) -> None:
        self.table = table
        self.species_id = species_id
        self.values: dict[str, SpeciesValue] = {}
        self.findings: list[Finding] = []

    def use(self, *values: SpeciesValue) -> None:
        for value in values:
            self.values.setdefault(value.parameter, value)

    def value(self, parameter: str) -> SpeciesValue:
        found = self.table.value(self.species_id, parameter)
        self.use(found)
        return found

    def get(self, parameter: str) -> SpeciesValue | None:
        found = self.table.get(self.species_id, parameter)
        if found is not None:
            self.use(found)
        return found

    def add(
        self, severity: str, code: str, message: str, action: str = "", source_id: str | None = None
    ) -> None:
        self.findings.append(
            Finding(
                severity=severity, code=code, message=message, action=action, source_id=source_id
            )
        )


def _fmt(value: float, unit: str) -> str:
    from vetfluid.formatting import format_quantity

    return format_quantity(value, unit)


def _check_weight(c: _Collector, weight_kg: float) -> None:
    """Soft outside the species' usual range, hard far outside it (the g/kg slip)."""
    weight = c.value("body_weight_kg")
    low, high = weight.low or weight.number, weight.high or weight.number
    factor = limit("weight_far_outside_factor")
    if weight_kg > high * factor.value or weight_kg < low / factor.value:
        c.add(
            "hard",
            "WEIGHT_UNIT_SLIP",
            f"{_fmt(weight_kg, 'kg')} is far outside the usual {_fmt(low, 'kg')}–{_fmt(high, 'kg')} "
            f"for this species (more than {factor.value:g}× beyond the range).",
            "Check the unit (g or kg) and re-weigh before planning.",
        )
    elif weight_kg > high or weight_kg < low:
        c.add(
            "soft",
            "WEIGHT_OUTSIDE_RANGE",
            f"{_fmt(weight_kg, 'kg')} is outside the usual {_fmt(low, 'kg')}–{_fmt(high, 'kg')} "
            "for this species.",
            "Confirm the weight and unit; acknowledge with a reason if it is right.",
        )


def _route_and_device(c: _Collector, request: PlanRequest) -> tuple[str, str]:
    """Route and delivery: a line when the patient is big enough, divided boluses otherwise."""
    line_min = c.value("continuous_line_min_kg")
    small = request.weight_kg < line_min.number
    chelonian = c.table.species(request.species_id).taxon_group == "chelonian"
    default_route = "iv" if not small else ("icoel" if chelonian else "sc")
    route = request.route or default_route
    device = request.device or ("pump" if route in LINE_ROUTES else "divided")
    if route not in LINE_ROUTES and device != "divided":
        raise InputError(
            f"{route.upper()} fluids are given as divided boluses, not by {device}",
            field="device",
            value=device,
            fix="choose divided boluses, or an IV/IO route",
        )
    if device == "gravity" and request.drop_factor is None:
        raise InputError(
            "a gravity drip needs the giving set's drop factor",
            field="drop_factor",
            value=None,
            fix="enter the drops/mL printed on the set (10, 15, 20 or 60)",
        )
    if small and request.route is None:
        c.add(
            "info",
            "DIVIDED_BOLUSES",
            f"At {_fmt(request.weight_kg, 'kg')} this patient is below the "
            f"{_fmt(line_min.number, 'kg')} at which a continuous line is practical; "
            "fluids are planned as divided boluses.",
            "Choose an IV or IO route instead if a line is in place.",
            line_min.source_id,
        )
    return route, device


def _bag(c: _Collector, request: PlanRequest, plasma: float) -> tuple[fluids.Fluid, float]:
    """The fluid with its additives, and the KCl added per litre."""
    base = fluids.fluid(request.fluid_id)
    kcl = 0.0
    if request.kcl_mmol_per_l is not None:
        kcl = request.kcl_mmol_per_l
    elif request.serum_k is not None:
        band = electrolytes.potassium_band(request.serum_k)
        kcl = band.kcl_mmol_per_l if band else 0.0
    bag = base
    if kcl > 0:
        concentrate = fluids.fluid(KCL_CONCENTRATE_ID)
        k_per_ml = fluids.composition(concentrate).k_mmol_per_l / 1000.0
        bag = fluids.with_additive(
            bag, bag_volume_ml=1000.0, additive=concentrate, additive_ml=kcl / k_per_ml
        ).fluid
    if request.dextrose_percent > 0:
        concentrate = fluids.fluid(DEXTROSE_CONCENTRATE_ID)
        strength = fluids.composition(concentrate).dextrose_hydrous_g_per_l / 10.0  # % w/v
        p = request.dextrose_percent
        if p >= strength:
            raise InputError(
                f"dextrose must be below the concentrate's {strength:g} %",
                field="dextrose_percent",
                value=p,
            )
        bag = fluids.with_additive(
            bag, bag_volume_ml=1000.0, additive=concentrate, additive_ml=1000.0 * p / (strength - p)
        ).fluid
    return bag, kcl


def _intermittent_phase(
    c: _Collector,
    *,
    kind: str,
    start_h: float,
    end_h: float,
    need_ml_per_h: float,
    route: str,
    weight_kg: float,
    kcl: float,
) -> Phase:
    site_limit = c.value(SITE_LIMIT_PARAMETER[route]) if route in SITE_LIMIT_PARAMETER else None
    if site_limit is None:
        raise InputError(
            f"no per-site limit for route {route!r}",
            field="route",
            value=route,
            fix="use SC (or intracoelomic for reptiles), or an IV/IO line",
        )
    split = delivery.divided_boluses(
        need_ml_per_h=need_ml_per_h, per_site_limit_ml=site_limit.number * weight_kg, route=route
    )
    doses = max(1, math.ceil(round((end_h - start_h) / split.interval_h, 9)))
    if not split.fits:
        c.add(
            "soft",
            "DIVIDED_TOO_MANY_SITES",
            f"Each {route.upper()} dose of {_fmt(split.dose_ml, 'mL')} needs {split.sites_per_dose} "
            f"sites at {_fmt(split.per_site_limit_ml, 'mL')} per site.",
            "Replace the deficit over a longer period, or place an IO/IV line.",
        )
    return Phase(
        kind=kind,
        mode="intermittent",
        start_h=start_h,
        end_h=end_h,
        volume_ml=split.dose_ml * doses,
        dose_ml=split.dose_ml,
        interval_h=split.interval_h,
        doses=doses,
        sites_per_dose=split.sites_per_dose,
        ml_per_site=split.ml_per_site,
        route=route,
        kcl_mmol_per_l=kcl,
    )


def _continuous_phase(
    *,
    kind: str,
    start_h: float,
    end_h: float,
    rate: float,
    route: str,
    drop_factor: float | None,
    kcl: float,
    note: str = "",
) -> Phase:
    return Phase(
        kind=kind,
        mode="continuous",
        start_h=start_h,
        end_h=end_h,
        volume_ml=rate * (end_h - start_h),
        rate_ml_per_h=rate,
        route=route,
        drops_per_min=delivery.drops_per_min(rate, drop_factor) if drop_factor else None,
        seconds_per_drop=delivery.seconds_per_drop(rate, drop_factor) if drop_factor else None,
        kcl_mmol_per_l=kcl,
        note=note,
    )


def _clock(start: time | None, hour: float) -> str | None:
    if start is None:
        return None
    moment = datetime.combine(datetime(2000, 1, 1), start) + timedelta(hours=hour)
    day = (moment.date() - datetime(2000, 1, 1).date()).days
    return moment.strftime("%H:%M") + (f" (+{day} d)" if day else "")


def _schedule(
    phases: tuple[Phase, ...], start: time | None, res: resuscitation.Resuscitation | None
) -> tuple[ScheduleEntry, ...]:
    entries = []
    for phase in phases:
        if phase.kind == "resuscitation":
            assert res is not None
            entries.append(
                ScheduleEntry(
                    hour=phase.start_h,
                    clock=_clock(start, phase.start_h),
                    phase=phase.kind,
                    action=f"Bolus {_fmt(phase.volume_ml, 'mL')} {phase.route.upper()} over "
                    f"{res.minutes:g} min ({_fmt(phase.rate_ml_per_h or 0, 'mL/h')}); then reassess",
                )
            )
        elif phase.mode == "continuous":
            action = f"Set {_fmt(phase.rate_ml_per_h or 0, 'mL/h')}"
            if phase.drops_per_min is not None:
                action += f" = {_fmt(phase.drops_per_min, 'drops/min')}"
                if phase.seconds_per_drop is not None:
                    action += f" (1 drop every {_fmt(phase.seconds_per_drop, 's')})"
            action += f" until hour {phase.end_h:g} ({_fmt(phase.volume_ml, 'mL')} in this phase)"
            entries.append(
                ScheduleEntry(
                    hour=phase.start_h,
                    clock=_clock(start, phase.start_h),
                    phase=phase.kind,
                    action=action,
                )
            )
        else:
            assert phase.doses is not None and phase.interval_h is not None
            for i in range(phase.doses):
                hour = phase.start_h + i * phase.interval_h
                entries.append(
                    ScheduleEntry(
                        hour=hour,
                        clock=_clock(start, hour),
                        phase=phase.kind,
                        action=f"Give {_fmt(delivery.syringe_ml(phase.dose_ml or 0), 'mL')} "
                        f"{phase.route.upper()} in {phase.sites_per_dose} site(s), "
                        f"{_fmt(delivery.syringe_ml(phase.ml_per_site or 0), 'mL')} per site",
                    )
                )
    return tuple(entries)


def build_plan(request: PlanRequest, table: SpeciesTable | None = None) -> Plan:
    """Build the plan for a request (pure: same request and table, same plan)."""
    table = table or load_table()
    species = table.species(request.species_id)
    if species.rank != "species":
        raise InputError(
            f"{request.species_id!r} is a taxon group, not a species",
            field="species",
            value=request.species_id,
            fix="pick a species; groups only hold shared defaults",
        )
    c = _Collector(table, request.species_id)
    w = request.weight_kg
    _check_weight(c, w)

    # Maintenance (with temperature for ectotherms)
    maint = maintenance.maintenance(
        table,
        request.species_id,
        w,
        method=request.maintenance_method,
        body_temp_c=request.body_temp_c,
    )
    c.use(*maint.provenance)
    if species.is_ectotherm:
        preferred = c.value("preferred_temp_c")
        low, high = preferred.low or preferred.number, preferred.high or preferred.number
        if request.body_temp_c is None:
            c.add(
                "info",
                "ECTOTHERM_TEMP_NOT_ENTERED",
                f"No body temperature entered; maintenance assumes the preferred {_fmt(preferred.number, '°C')}.",
                "Measure the body temperature and enter it.",
            )
        elif not low <= request.body_temp_c <= high:
            c.add(
                "soft",
                "ECTOTHERM_OUTSIDE_PREFERRED_TEMP",
                f"Body temperature {_fmt(request.body_temp_c, '°C')} is outside the preferred "
                f"{_fmt(low, '°C')}–{_fmt(high, '°C')}; maintenance is scaled ×{maint.temperature_factor:.2f} "
                "by Q10 and the estimate is less reliable.",
                "Warm the animal into its preferred range, then re-plan.",
            )

    # Dehydration and deficit
    estimate = (
        hydration.estimate_dehydration(request.dehydration_findings)
        if request.dehydration_findings
        else None
    )
    if request.dehydration_percent is not None:
        percent = request.dehydration_percent
    elif estimate is not None:
        percent = estimate.suggested_percent
        c.add(
            "info",
            "DEHYDRATION_FROM_FINDINGS",
            f"Findings suggest {estimate.percent_low:g}–{estimate.percent_high:g} % dehydration; "
            f"the plan uses {percent:g} %.",
            "Confirm or enter the percentage yourself.",
            estimate.source_id,
        )
    else:
        percent = 0.0
    deficit = hydration.deficit_ml(w, percent)
    losses_h = request.losses_ml_per_day / 24.0

    # Fluid, tonicity and additives
    plasma = c.value("plasma_osmolality_mosm_per_kg")
    band = limit("tonicity_band_fraction")
    bag, kcl = _bag(c, request, plasma.number)
    base_fluid = fluids.fluid(request.fluid_id)
    tone = fluids.tonicity(
        base_fluid, plasma_osmolality_mosm_per_kg=plasma.number, band_fraction=band.value
    )
    bag_comp = fluids.composition(bag)

    route, device = _route_and_device(c, request)
    drop_factor = request.drop_factor if device == "gravity" else None
    if route not in LINE_ROUTES and (
        tone.in_vitro_class == "hypertonic" or bag_comp.dextrose_g_per_l > 0
    ):
        c.add(
            "hard",
            "FLUID_NOT_FOR_SC",
            f"{base_fluid.name} {'with dextrose ' if request.dextrose_percent else ''}is not suitable "
            f"{route.upper()}: no hypertonic or dextrose-containing fluids outside a vein.",
            "Choose an isotonic crystalloid for SC/intracoelomic use.",
            "vcna2017_sc",
        )

    if species.is_ectotherm and request.dextrose_percent > 0:
        c.add(
            "soft",
            "REPTILE_DEXTROSE",
            "Dextrose-containing fluids caused severe hyperglycaemia in dehydrated bearded dragons.",
            "Prefer an isotonic crystalloid without dextrose; check blood glucose if you add it.",
            "parkinson2020",
        )

    # Phases
    phases: list[Phase] = []
    hour = 0.0
    res = None
    if request.resuscitation_boluses:
        if route not in LINE_ROUTES:
            c.add(
                "hard",
                "RESUSCITATION_NEEDS_LINE",
                f"Resuscitation boluses cannot be given {route.upper()}.",
                "Place an IV or IO line for shock.",
            )
        else:
            res = resuscitation.resuscitation(table, request.species_id, w, route=route)
            c.use(*res.provenance)
            for i in range(request.resuscitation_boluses):
                end = hour + res.minutes / 60.0
                phases.append(
                    _continuous_phase(
                        kind="resuscitation",
                        start_h=hour,
                        end_h=end,
                        rate=res.rate_ml_per_h,
                        route=route,
                        drop_factor=drop_factor,
                        kcl=0.0,
                        note=f"bolus {i + 1} of {request.resuscitation_boluses}; reassess before the next",
                    )
                )
                hour = end
            given = res.bolus_ml_per_kg * request.resuscitation_boluses
            if given > res.cap_ml_per_kg + 1e-9:
                c.add(
                    "soft",
                    "BOLUSES_ABOVE_SHOCK_DOSE",
                    f"{request.resuscitation_boluses} boluses give {_fmt(given, 'mL/kg')}, above the "
                    f"{res.cap_from} of {_fmt(res.cap_ml_per_kg, 'mL/kg')}.",
                    "Reassess after each bolus; look for other causes of poor perfusion.",
                    c.values.get(
                        "shock_dose_ml_per_kg", c.values.get("blood_volume_ml_per_kg")
                    ).source_id,
                )
    replace_end = hour + request.replace_hours
    maint_end = (
        max(24.0, replace_end + MAINTENANCE_TAIL_H)
        if deficit > 0
        else max(24.0, hour + MAINTENANCE_TAIL_H)
    )
    segments = []
    if deficit > 0:
        segments.append(
            (
                "replacement",
                hour,
                replace_end,
                deficit / request.replace_hours + maint.ml_per_h + losses_h,
            )
        )
        hour = replace_end
    segments.append(("maintenance", hour, maint_end, maint.ml_per_h + losses_h))
    for kind, start_h, end_h, rate in segments:
        if device == "divided":
            phases.append(
                _intermittent_phase(
                    c,
                    kind=kind,
                    start_h=start_h,
                    end_h=end_h,
                    need_ml_per_h=rate,
                    route=route,
                    weight_kg=w,
                    kcl=kcl,
                )
            )
        else:
            phases.append(
                _continuous_phase(
                    kind=kind,
                    start_h=start_h,
                    end_h=end_h,
                    rate=rate,
                    route=route,
                    drop_factor=drop_factor,
                    kcl=kcl,
                )
            )
    main = next(p for p in phases if p.kind != "resuscitation")
    main_rate = (
        main.rate_ml_per_h
        if main.mode == "continuous"
        else (main.dose_ml or 0) / (main.interval_h or 1)
    )

    # Hourly rate against the shock dose per hour
    cap = c.get("shock_dose_ml_per_kg") or c.value("blood_volume_ml_per_kg")
    for p in phases:
        if p.mode == "continuous" and (p.rate_ml_per_h or 0) > cap.number * w * (1 + 1e-9):
            c.add(
                "hard",
                "RATE_ABOVE_SHOCK_DOSE",
                f"The {p.kind} rate {_fmt(p.rate_ml_per_h or 0, 'mL/h')} exceeds one "
                f"{'shock dose' if cap.parameter == 'shock_dose_ml_per_kg' else 'blood volume'} per hour "
                f"({_fmt(cap.number * w, 'mL/h')}).",
                "Check the weight, deficit and replacement period.",
                cap.source_id,
            )
            break

    # Potassium
    potassium = None
    if kcl > 0 or request.serum_k is not None:
        k_rate = electrolytes.potassium_mmol_per_kg_h(
            k_mmol_per_l=bag_comp.k_mmol_per_l, rate_ml_per_h=main_rate or 0, weight_kg=w
        )
        ceiling = limit("potassium_max_mmol_per_kg_h")
        band_k = (
            electrolytes.potassium_band(request.serum_k) if request.serum_k is not None else None
        )
        potassium = {
            "serum_k": request.serum_k,
            "kcl_mmol_per_l": kcl,
            "from": "entered by hand" if request.kcl_mmol_per_l is not None else "serum-K scale",
            "bag_k_mmol_per_l": bag_comp.k_mmol_per_l,
            "mmol_per_kg_per_h": k_rate,
            "ceiling_mmol_per_kg_per_h": ceiling.value,
            "max_rate_ml_per_h": electrolytes.max_rate_for_potassium(
                k_mmol_per_l=bag_comp.k_mmol_per_l, weight_kg=w, ceiling=ceiling.value
            ),
            "band_max_rate_ml_per_kg_h": band_k.max_rate_ml_per_kg_h if band_k else None,
            "source_id": ceiling.source_id,
        }
        peak_rate = (
            max(
                (p.rate_ml_per_h or 0)
                for p in phases
                if p.kind != "resuscitation" and p.mode == "continuous"
            )
            if device != "divided"
            else main_rate
        )
        peak_k = electrolytes.potassium_mmol_per_kg_h(
            k_mmol_per_l=bag_comp.k_mmol_per_l, rate_ml_per_h=peak_rate or 0, weight_kg=w
        )
        if peak_k > ceiling.value:
            c.add(
                "hard",
                "POTASSIUM_ABOVE_CEILING",
                f"Potassium would run at {_fmt(peak_k, 'mmol/kg/h')}, above the {_fmt(ceiling.value, 'mmol/kg/h')} ceiling.",
                f"Lower the rate to at most {_fmt(potassium['max_rate_ml_per_h'] or 0, 'mL/h')} or the KCl added.",
                ceiling.source_id,
            )
        elif band_k and kcl > 0 and (peak_rate or 0) > band_k.max_rate_ml_per_kg_h * w:
            c.add(
                "soft",
                "POTASSIUM_RATE_ABOVE_BAND",
                f"{_fmt(peak_rate or 0, 'mL/h')} is faster than the scale's {_fmt(band_k.max_rate_ml_per_kg_h, 'mL/kg/h')} "
                f"for this serum K ({_fmt(band_k.max_rate_ml_per_kg_h * w, 'mL/h')}).",
                "Slow the rate or run potassium in a separate line.",
                band_k.source_id,
            )
        peripheral = limit("kcl_peripheral_max_mmol_per_l")
        if bag_comp.k_mmol_per_l > peripheral.value and route == "iv":
            c.add(
                "soft",
                "KCL_PERIPHERAL_CONCENTRATION",
                f"The bag holds {_fmt(bag_comp.k_mmol_per_l, 'mmol/L')} K, above {_fmt(peripheral.value, 'mmol/L')} for a peripheral vein.",
                "Use a central line or a lower concentration.",
                peripheral.source_id,
            )

    # Sodium
    sodium = None
    free_water = None
    normal_na = c.value("serum_na_mmol_per_l")
    if request.serum_na is not None:
        tbw_fraction = c.value("total_body_water_fraction")
        tbw_l = tbw_fraction.number * w
        change = electrolytes.sodium_change_per_litre(
            serum_na=request.serum_na,
            infusate_na=bag_comp.na_mmol_per_l,
            infusate_k=bag_comp.k_mmol_per_l,
            tbw_l=tbw_l,
        )
        na_limit = limit("sodium_max_correction_mmol_per_l_h")
        max_change = request.max_na_change_per_h or na_limit.value
        max_rate = electrolytes.max_rate_for_sodium(
            change_per_litre=change, max_change_per_h=max_change
        )
        predicted = change * (main_rate or 0) / 1000.0
        sodium = {
            "serum_na": request.serum_na,
            "tbw_l": tbw_l,
            "delta_na_per_l": change,
            "predicted_change_per_h": predicted,
            "max_change_per_h": max_change,
            "max_rate_ml_per_h": max_rate,
            "source_id": "adrogue2000",
        }
        if max_rate is not None and (main_rate or 0) > max_rate:
            direction = "fall" if change < 0 else "rise"
            c.add(
                "soft",
                "SODIUM_CHANGE_TOO_FAST",
                f"At {_fmt(main_rate or 0, 'mL/h')} serum Na is predicted to {direction} "
                f"{_fmt(abs(predicted), 'mmol/L/h')}, faster than {_fmt(max_change, 'mmol/L/h')}.",
                f"Keep the rate at or below {_fmt(max_rate, 'mL/h')} or choose a fluid closer to the patient's Na; recheck Na every 4–6 h.",
                "adrogue2000",
            )
        high_na = normal_na.high or normal_na.number
        if request.serum_na > high_na:
            free_water = hydration.free_water_deficit_ml(
                weight_kg=w,
                serum_na=request.serum_na,
                normal_na=normal_na.number,
                tbw_fraction=tbw_fraction.number,
            )
            c.add(
                "info",
                "FREE_WATER_DEFICIT",
                f"Serum Na {_fmt(request.serum_na, 'mmol/L')} is above the {_fmt(high_na, 'mmol/L')} reference; "
                f"free-water deficit ≈ {_fmt(free_water, 'mL')}.",
                f"Correct no faster than {_fmt(max_change, 'mmol/L/h')}.",
            )

    # Urine concentration and the water budget
    usg_ok = c.value("usg_interpretable")
    if request.usg is not None and not usg_ok.value:
        c.add(
            "info",
            "USG_NOT_INTERPRETABLE",
            f"USG does not judge hydration in {species.taxon_group}s: {usg_ok.note}.",
            "Judge hydration by weight, examination, PCV/TS and uric acid or urea.",
            usg_ok.source_id,
        )
    budget = None
    try:
        budget = maintenance.water_budget(
            table,
            request.species_id,
            w,
            body_temp_c=request.body_temp_c,
            usg=request.usg if usg_ok.value else None,
            urine_osmolality=request.urine_osmolality,
        )
        c.use(*budget.provenance)
    except InputError as exc:
        c.add("info", "NO_CONCENTRATING_CEILING", exc.message, exc.fix or "")
    if (
        budget is not None
        and budget.ceiling_from in ("USG", "urine osmolality")
        and budget.ceiling_mosm_per_kg <= 1.2 * budget.plasma_mosm_per_kg
    ):
        c.add(
            "info",
            "LOW_CONCENTRATING_CEILING",
            f"Urine at {_fmt(budget.ceiling_mosm_per_kg, 'mOsm/kg')} is close to plasma: the kidney needs "
            f"{_fmt(budget.obligatory_urine_ml, 'mL/day')} of urine for its solute load.",
            "Expect higher urine losses; measure urine output and add it as ongoing losses.",
        )

    # Clinical flags
    if request.cardiac_disease or request.renal_disease:
        factor = limit("heart_kidney_slowdown_factor")
        slower_h = max(24.0, request.replace_hours * factor.value)
        suggested = (deficit / slower_h if deficit else 0) + maint.ml_per_h + losses_h
        which = " and ".join(
            n
            for n, on in (("cardiac", request.cardiac_disease), ("renal", request.renal_disease))
            if on
        )
        gain = limit("overload_weight_gain_fraction")
        c.add(
            "soft",
            "OVERLOAD_RISK",
            f"With {which} disease fluid overload is more likely; suggested rate "
            f"{_fmt(suggested, 'mL/h')} (deficit over {slower_h:g} h).",
            f"Weigh every 6–12 h; stop and reassess at a gain of {gain.value:.0%} over baseline "
            f"({_fmt(w * (1 + gain.value), 'kg')}).",
            gain.source_id,
        )
    if request.anaesthesia:
        anaes = limit("anaesthesia_max_ml_per_kg_h")
        start = c.get("anaesthesia_rate_ml_per_kg_h")
        if main.mode == "continuous" and (main.rate_ml_per_h or 0) > anaes.value * w:
            c.add(
                "soft",
                "ANAESTHESIA_RATE",
                f"{_fmt(main.rate_ml_per_h or 0, 'mL/h')} is above {_fmt(anaes.value, 'mL/kg/h')} "
                f"({_fmt(anaes.value * w, 'mL/h')}) for an anaesthetised patient.",
                "Start at "
                + (f"{_fmt(start.number, 'mL/kg/h')} " if start else "a lower rate ")
                + "and reduce by 25% per hour as tolerated.",
                anaes.source_id,
            )
    if request.neonate:
        c.add(
            "info",
            "NEONATE",
            "Neonates hold more body water (up to 80% of body weight) and tolerate fasting poorly.",
            "Check glucose; weigh on a gram scale; reassess often.",
            "odunayo2018",
        )

    running_h = maint_end - main.start_h
    if (
        tone.effective_class == "isotonic"
        and running_h >= limit("isotonic_maintenance_hours").value
    ):
        c.add(
            "info",
            "ISOTONIC_FOR_MAINTENANCE",
            f"{base_fluid.name} is an isotonic replacement fluid; this plan runs it for "
            f"{running_h:g} h, the last {maint_end - hour:g} h as maintenance.",
            "For maintenance beyond a day consider a hypotonic maintenance fluid with potassium.",
            "pardo2024",
        )
    if deficit > 0 and res is not None:
        c.add(
            "info",
            "BOLUS_NOT_SUBTRACTED",
            "Resuscitation volume is not subtracted from the deficit.",
            "Reassess hydration after resuscitation and re-plan.",
        )

    unverified = [v for v in c.values.values() if v.unverified]
    if unverified:
        c.add(
            "info",
            "UNVERIFIED_VALUES",
            f"{len(unverified)} species value(s) used here were recalled from memory, not checked "
            f"against a publication: {', '.join(v.parameter for v in unverified)}.",
            "Check them against your references before relying on them.",
        )

    phases_t = tuple(phases)
    return Plan(
        request=request,
        species_name=species.common_name,
        maintenance=maint,
        dehydration_percent=percent,
        dehydration_estimate=estimate,
        deficit_ml=deficit,
        free_water_deficit_ml=free_water,
        phases=phases_t,
        schedule=_schedule(phases_t, request.start_time, res),
        fluid_name=bag.name,
        fluid_na_mmol_per_l=bag_comp.na_mmol_per_l,
        fluid_k_mmol_per_l=bag_comp.k_mmol_per_l,
        tonicity=tone,
        route=route,
        device=device,
        resuscitation=res,
        potassium=potassium,
        sodium=sodium,
        water_budget=budget,
        findings=tuple(c.findings),
        provenance=tuple(c.values.values()),
    )
