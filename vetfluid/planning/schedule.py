"""Phases and the timed schedule: what runs when, at what rate or dose.

Continuous phases carry a pump rate (and drops/min for a gravity drip);
intermittent phases carry a dose, an interval and the sites per dose
(see :mod:`vetfluid.physiology.delivery` for the methods).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import datetime, time, timedelta

import numpy as np

from vetfluid.common.errors import InputError
from vetfluid.common.formatting import entered_number, format_quantity, hour_text
from vetfluid.physiology import delivery

# A drip too fast to count is checked against the bag's marks every 15 min (a bolus:
# over its own minutes). Common practice, no source.
MARKS_CHECK_MIN = 15.0


@dataclass(frozen=True, kw_only=True)
class Phase:
    """One phase of the plan. Continuous phases have a rate; intermittent ones doses."""

    kind: str  # resuscitation | replacement | maintenance
    mode: str  # continuous | intermittent
    start_h: float
    end_h: float
    volume_ml: float
    route: str
    rate_ml_per_h: float | None = None
    dose_ml: float | None = None
    interval_h: float | None = None
    doses: int | None = None
    sites_per_dose: int | None = None
    ml_per_site: float | None = None
    drops_per_min: float | None = None
    seconds_per_drop: float | None = None
    syringe_fills: tuple[tuple[float, float], ...] = ()  # (hour, mL) for a syringe pump
    fluid_name: str = ""
    kcl_mmol_per_l: float = 0.0
    fits_sites: bool = True
    note: str = ""

    @property
    def hours(self) -> float:
        return self.end_h - self.start_h

    @property
    def average_ml_per_h(self) -> float:
        """The hourly rate, or for doses the dose spread over its interval."""
        if self.mode == "continuous":
            return self.rate_ml_per_h or 0.0
        return (self.dose_ml or 0.0) / (self.interval_h or 1.0)

    def dose_hours(self) -> list[float]:
        """When each dose of an intermittent phase is given (empty for continuous)."""
        if self.mode != "intermittent" or self.doses is None or self.interval_h is None:
            return []
        return [self.start_h + i * self.interval_h for i in range(self.doses)]

    def given_by(self, hours: np.ndarray) -> np.ndarray:
        """Volume this phase has delivered by each hour (a dose counts from its hour on)."""
        if self.mode == "continuous":
            return (self.rate_ml_per_h or 0.0) * np.clip(hours - self.start_h, 0.0, self.hours)
        doses = np.asarray(self.dose_hours(), dtype=float)
        return (self.dose_ml or 0.0) * np.searchsorted(doses, hours, side="right")

    def absorbed_by(self, hours: np.ndarray) -> np.ndarray:
        """Volume of this phase in the circulation by each hour: a line's as given; a
        divided dose (SC, intracoelomic) taken up evenly over
        :data:`~vetfluid.physiology.delivery.SC_ABSORPTION_H` from its hour (Vet Clin North Am 2017:
        6–8 h; the intracoelomic route assumed alike)."""
        if self.mode == "continuous":
            return self.given_by(hours)
        doses = np.asarray(self.dose_hours(), dtype=float)
        share = np.clip((hours[:, None] - doses[None, :]) / delivery.SC_ABSORPTION_H, 0.0, 1.0)
        return (self.dose_ml or 0.0) * share.sum(axis=1)

    def volume_between(self, start_h: float, end_h: float) -> float:
        """Volume this phase delivers within [start_h, end_h)."""
        if self.mode == "continuous":
            overlap = max(0.0, min(end_h, self.end_h) - max(start_h, self.start_h))
            return (self.rate_ml_per_h or 0.0) * overlap
        return sum(self.dose_ml or 0.0 for t in self.dose_hours() if start_h <= t < end_h)


def continuous_phase(
    *,
    kind: str,
    start_h: float,
    end_h: float,
    rate_ml_per_h: float,
    route: str,
    drop_factor: float | None,
    kcl_mmol_per_l: float,
    fluid_name: str = "",
    syringe_size_ml: float | None = None,
    note: str = "",
) -> Phase:
    """A phase at a constant rate; drops/min for a gravity drip.

    A gravity drip runs the rate to the figures it is shown with
    (:func:`vetfluid.physiology.delivery.drip_ml_per_h`), so its drops/min match the rate shown.
    For a syringe pump the rate is set in the pump's steps
    (:func:`vetfluid.physiology.delivery.syringe_pump_ml_per_h`) and the phase is split into syringe
    fills of at most ``syringe_size_ml`` (volumes to 0.1 mL), each with the hour it
    goes in, so syringe changes stand on the clock.
    """
    fills: tuple[tuple[float, float], ...] = ()
    if drop_factor:
        rate_ml_per_h = delivery.drip_ml_per_h(rate_ml_per_h)
    if syringe_size_ml is not None:
        rate_ml_per_h = delivery.syringe_pump_ml_per_h(rate_ml_per_h)
        fills = syringe_fills(
            start_h=start_h, end_h=end_h, rate_ml_per_h=rate_ml_per_h, size_ml=syringe_size_ml
        )
    return Phase(
        kind=kind,
        mode="continuous",
        start_h=start_h,
        end_h=end_h,
        volume_ml=rate_ml_per_h * (end_h - start_h),
        rate_ml_per_h=rate_ml_per_h,
        route=route,
        drops_per_min=delivery.drops_per_min(rate_ml_per_h, drop_factor) if drop_factor else None,
        seconds_per_drop=(
            delivery.seconds_per_drop(rate_ml_per_h, drop_factor) if drop_factor else None
        ),
        syringe_fills=fills,
        kcl_mmol_per_l=kcl_mmol_per_l,
        fluid_name=fluid_name,
        note=note,
    )


def intermittent_phase(
    *,
    kind: str,
    start_h: float,
    end_h: float,
    need_ml_per_h: float,
    route: str,
    per_site_limit_ml: float,
    kcl_mmol_per_l: float,
    fluid_name: str = "",
    interval_h: float | None = None,
    sites_at_most: int | None = None,
) -> Phase:
    """A phase of divided boluses giving ``need_ml_per_h`` × its hours, as drawn up.

    ``interval_h`` and ``sites_at_most``: the clinician's interval and most sites per dose.
    With them a dose never holds more than those sites each drawn up to the site's limit
    (:func:`vetfluid.physiology.delivery.dose_ceiling`): what the need asks beyond that is
    not given (the plan replaces the deficit over longer, or says the doses fall short),
    never put into more sites.

    The interval comes from :func:`vetfluid.physiology.delivery.divided_boluses`; the phase is
    split into that many evenly spaced doses (rounding up, so no dose grows beyond
    what the sites allow). Each site's volume is what a nurse draws up
    (:func:`vetfluid.physiology.delivery.drawn_up_dose`: to the syringe's marks, never above the
    site's limit), and the dose and the phase's volume are what those add up to, so
    every figure shown is one that is given; it differs from the exact need by at most
    half a syringe mark per site, or by less than a mark where the site's limit forces
    each site a mark down (then one more SC site is taken when that lands closer). When
    the phase is not a whole number of intervals the doses are spread a little wider
    (never closer than the interval, so each is absorbed before the next); a phase
    shorter than one interval is one dose, which the plan reports as a finding.
    """
    split = delivery.divided_boluses(
        need_ml_per_h=need_ml_per_h, per_site_limit_ml=per_site_limit_ml, route=route,
        sites_at_most=sites_at_most, interval_h=interval_h,
    )  # fmt: skip
    hours = end_h - start_h
    # whole intervals only (rounded down): doses never come closer than the interval, so SC
    # fluid is absorbed before the next (6–8 h, Vet Clin North Am 2017)
    doses = max(1, math.floor(round(hours / split.interval_h, 9)))
    spacing = hours / doses
    need = need_ml_per_h * spacing
    sites = max(1, math.ceil(round(need / per_site_limit_ml, 9)))
    if sites_at_most is not None and sites > sites_at_most:
        # the clinician's sites, each to its limit: the most a dose holds, never more sites
        sites = sites_at_most
        need = sites * per_site_limit_ml
    drawn = delivery.drawn_up_dose(ml_per_site=need / sites, sites=sites, at_most=per_site_limit_ml)
    if _site_forced_down(need / sites, per_site_limit_ml) and route not in delivery.ONE_SITE_ROUTES:
        # the limit drew every site a mark down; one more site (under the usual site
        # count or the clinician's; never a second puncture into one cavity) when closer
        more = sites + 1
        if more <= (sites_at_most or delivery.MAX_SITES_PER_DOSE):
            spread = delivery.drawn_up_dose(
                ml_per_site=need / more, sites=more, at_most=per_site_limit_ml
            )
            if round(abs(spread.dose_ml - need), 9) < round(abs(drawn.dose_ml - need), 9):
                drawn, sites = spread, more
    return Phase(
        kind=kind,
        mode="intermittent",
        start_h=start_h,
        end_h=end_h,
        volume_ml=drawn.dose_ml * doses,
        dose_ml=drawn.dose_ml,
        interval_h=spacing,
        doses=doses,
        sites_per_dose=sites,
        ml_per_site=drawn.ml_per_site,
        route=route,
        kcl_mmol_per_l=kcl_mmol_per_l,
        fluid_name=fluid_name,
        fits_sites=sites <= delivery.MAX_SITES_PER_DOSE,
    )


def _site_forced_down(ml_per_site: float, limit_ml: float) -> bool:
    """Whether the site's limit, not the nearest mark, decides what is drawn up."""
    return delivery.draw_up_ml(ml_per_site, at_most=limit_ml) < delivery.draw_up_ml(ml_per_site)


def syringe_fills(
    *, start_h: float, end_h: float, rate_ml_per_h: float, size_ml: float
) -> tuple[tuple[float, float], ...]:
    """When each syringe goes in and how much it holds (to 0.1 mL) to run a phase: at most
    the syringe, and at most :data:`delivery.HANG_LIMIT_H` of the rate (a fresh syringe
    each day even when one would last longer)."""
    total = rate_ml_per_h * (end_h - start_h)
    if rate_ml_per_h <= 0 or total <= 0:
        return ((start_h, 0.0),)
    fills = []
    given = 0.0
    most = min(size_ml, rate_ml_per_h * delivery.HANG_LIMIT_H)
    while given < total - 1e-9:
        volume = min(most, total - given)
        fills.append((start_h + given / rate_ml_per_h, delivery.syringe_load_ml(volume)))
        given += volume
    return tuple(fills)


@dataclass(frozen=True, kw_only=True)
class ScheduleEntry:
    hour: float
    clock: str | None
    phase: str
    action: str


# Routes in the words a nurse reads (never the id ``icoel``).
ROUTE_WORDS = {
    "iv": "IV", "cvc": "IV (central line)", "io": "IO", "sc": "SC", "icoel": "intracoelomic",
    "epicoel": "epicoelomic", "ip": "IP", "oral": "by mouth",
}  # fmt: skip


def route_text(route: str) -> str:
    """A route in words: ``IV``, ``SC``, ``intracoelomic``."""
    return ROUTE_WORDS.get(route, route.upper())


def clock_time(start: time | None, hour: float) -> str | None:
    """``HH:MM`` of an hour offset from the start time, with ``(+N d)`` past midnight."""
    if start is None:
        return None
    origin = datetime(2000, 1, 1)
    moment = datetime.combine(origin.date(), start) + timedelta(hours=hour)
    day = (moment.date() - origin.date()).days
    return moment.strftime("%H:%M") + (f" (+{day} d)" if day else "")


def hours_since(start: datetime, at: datetime) -> float:
    """Hours from the plan's start to a date and time (an observation's); never before it."""
    hours = (at - start).total_seconds() / 3600.0
    if hours < 0:
        raise InputError(
            f"{at:%Y-%m-%d %H:%M} is before the plan started ({start:%Y-%m-%d %H:%M})",
            field="hour", value=at, fix="give a date and time after the plan's start",
        )  # fmt: skip
    return hours


def _ml(value: float | None) -> str:
    return format_quantity(value or 0.0, "mL")


def _drip(phase: Phase) -> tuple[str, str]:
    """How to set a gravity drip, as ``(drops, spacing)``: ``("76.7 drops/min", "1 drop
    every 0.78 s")``; too fast to count, ``("", how to time it by the bag's volume
    marks)``; for a pump ``("", "")``."""
    if phase.drops_per_min is None:
        return "", ""
    if delivery.countable(phase.drops_per_min):
        spacing = (
            f"1 drop every {format_quantity(phase.seconds_per_drop, 's')}"
            if phase.seconds_per_drop is not None
            else "nothing runs"
        )
        return format_quantity(phase.drops_per_min, "drops/min"), spacing
    if phase.kind == "resuscitation":
        return "", by_the_marks(phase.rate_ml_per_h or 0.0, minutes=phase.hours * 60, per="in")
    return "", by_the_marks(phase.rate_ml_per_h or 0.0)


def by_the_marks(
    rate_ml_per_h: float, *, minutes: float = MARKS_CHECK_MIN, per: str = "every"
) -> str:
    """How to run a drip too fast to count: ``too fast to count drops: set the clamp by
    the bag's volume marks, 35 mL every 15 min`` (a bolus: ``360 mL in 15 min``)."""
    volume = _ml(rate_ml_per_h * minutes / 60)
    return (
        "too fast to count drops: set the clamp by the bag's volume marks, "
        f"{volume} {per} {minutes:.0f} min"
    )


def rate_or_dose_text(phase: Phase) -> str:
    """A phase's rate or dose in a few words, with the figures the schedule gives:
    ``140 mL/h = 46.7 drops/min``, ``1440 mL/h (too fast to count drops)``, or a divided
    dose as drawn up, ``3.42 mL every 6 h × 4, 6 sites of 0.57 mL``."""
    if phase.mode == "continuous":
        rate = format_quantity(phase.rate_ml_per_h or 0.0, "mL/h")
        drops, how = _drip(phase)
        if drops:
            return f"{rate} = {drops}"
        return f"{rate} (too fast to count drops)" if how else rate
    drawn = delivery.drawn_up_dose(ml_per_site=phase.ml_per_site or 0.0, sites=phase.sites_per_dose)
    every = f"{format_quantity(drawn.dose_ml, 'mL', decimals=2)} every {phase.interval_h:g} h "
    return every + f"× {phase.doses}, {spread_text(phase.route, drawn)}"


def _continuous_action(phase: Phase, *, bolus_number: int = 1) -> str:
    """A continuous phase's instruction; a bolus after the first is given only if the
    patient is still poorly perfused when reassessed."""
    rate = format_quantity(phase.rate_ml_per_h or 0.0, "mL/h")
    drops, how = _drip(phase)
    if phase.kind == "resuscitation":
        minutes = phase.hours * 60
        fluid = f" of {phase.fluid_name}" if phase.fluid_name else ""
        drip = f" = {drops}, {how}" if drops else (f", {how}" if how else "")
        bolus = (
            f"{_ml(phase.volume_ml)}{fluid} {route_text(phase.route)} over {minutes:.0f} min "
            f"({rate}{drip}); then reassess"
        )
        if bolus_number == 1:
            return "Bolus " + bolus
        return "If still poorly perfused at reassessment: bolus " + bolus
    drip = f" = {drops} ({how})" if drops else (f" ({how})" if how else "")
    return f"Set {rate}{drip} until hour {phase.end_h:g} ({_ml(phase.volume_ml)} in this phase)"


def sites_text(sites: int) -> str:
    """``1 site`` or ``N sites``."""
    return f"{sites} site" if sites == 1 else f"{sites} sites"


def spread_text(route: str, drawn: delivery.DrawnUpDose) -> str:
    """How one divided dose is given, as drawn up: ``4 sites of 0.64 mL``, or by mouth
    ``by mouth or tube`` (no sites). The phase table, the records' comparison and the
    sheet all say it so."""
    if route == "oral":
        return "by mouth or tube"
    return f"{sites_text(drawn.sites)} of {format_quantity(drawn.ml_per_site, 'mL', decimals=2)}"


def divided_dose_text(*, ml_per_site: float, sites: int, route: str) -> str:
    """What the nurse gives at each divided dose, as drawn up
    (:func:`vetfluid.physiology.delivery.drawn_up_dose`): the dose is the sites' volumes added up.

    Keeps its word positions (``Give DOSE mL ROUTE in SITES sites, PER_SITE mL per
    site``) for readers that split it.
    """
    drawn = delivery.drawn_up_dose(ml_per_site=ml_per_site, sites=sites)
    dose = format_quantity(drawn.dose_ml, "mL", decimals=2)
    per_site = format_quantity(drawn.ml_per_site, "mL", decimals=2)
    if route == "oral":  # one go by mouth, crop or stomach tube: no sites
        return f"Give {dose} {route_text(route)} (syringe, crop or stomach tube) in one go"
    return f"Give {dose} {route_text(route)} in {sites_text(sites)}, {per_site} per site"


def soak_entries(
    *, hours: tuple[float, ...], start: time | None, water_temp_c: float, minutes: float
) -> list[ScheduleEntry]:
    """Each soak on the clock: an adjunct the plan records and never counts as intake
    (what is drunk or taken in through the cloaca in a bath is not measured)."""
    action = (
        f"Soak in shallow warm water ({format_quantity(water_temp_c, '°C')}) for "
        f"{minutes:g} min, head clear of the water, watched throughout; an adjunct, not "
        "counted in the fluid given"
    )
    return [
        ScheduleEntry(hour=h, clock=clock_time(start, h), phase="soak", action=action)
        for h in hours
    ]


@dataclass(frozen=True, kw_only=True)
class DiureticDose:
    """A diuretic on the plan's clock: one dose at ``start_h``, or an infusion (route
    ``cri``) from ``start_h`` to ``end_h``; the dose in the table's unit (mg/kg, g/kg, or
    mg/kg/h for an infusion) and what that is for this patient (mg, g, or mg/h)."""

    drug_id: str
    name: str
    drug_class: str
    dose: float
    unit: str
    route: str
    start_h: float
    end_h: float
    amount: float
    amount_unit: str

    @property
    def infusion(self) -> bool:
        return self.route == "cri"


# Diuretic routes in words (the table's ``cri`` is a constant-rate infusion into a vein).
DIURETIC_ROUTE_WORDS = {"iv": "IV", "im": "IM", "sc": "SC", "po": "PO", "cri": "IV"}


def diuretic_text(dose: DiureticDose) -> str:
    """``Furosemide 2 mg/kg IV = 40 mg``; an infusion ``Furosemide infusion 0.66 mg/kg/h
    IV = 13.2 mg/h until hour 20``, ``until hour 6 h 30 min`` off the whole hour."""
    name = dose.name[:1].upper() + dose.name[1:]
    # two significant figures below 1 (0.035 mg, 0.00035 mg/h): never rounded to 0
    amount = format_quantity(dose.amount, dose.amount_unit)
    given = f"{entered_number(dose.dose)} {dose.unit} {DIURETIC_ROUTE_WORDS[dose.route]}"
    if dose.infusion:
        return f"{name} infusion {given} = {amount} until {hour_text(dose.end_h)}"
    return f"{name} {given} = {amount}"


def diuretic_entries(doses: tuple[DiureticDose, ...], start: time | None) -> list[ScheduleEntry]:
    """Each diuretic dose, and each infusion's start, on the clock."""
    return [
        ScheduleEntry(hour=d.start_h, clock=clock_time(start, d.start_h), phase="diuretic",
                      action=diuretic_text(d))
        for d in doses
    ]  # fmt: skip


def schedule_entries(
    phases: tuple[Phase, ...],
    start: time | None,
    diuretics: tuple[DiureticDose, ...] = (),
    soaks: tuple[ScheduleEntry, ...] = (),
) -> tuple[ScheduleEntry, ...]:
    """The plan on the clock: each phase start and each divided dose (volumes to the
    syringe's marks, :func:`vetfluid.physiology.delivery.draw_up_ml`), each diuretic
    dose and each soak (:func:`soak_entries`), in order of the hour (at the same hour the
    fluids first). The first resuscitation
    bolus is given; each later one only if the patient is still poorly perfused when
    reassessed (its time stays reserved on the clock)."""
    entries = []
    boluses = 0
    for phase in phases:
        if phase.syringe_fills:
            set_rate = phase.rate_ml_per_h or 0.0
            # the pump's own step: 0.01 mL/h below 10 mL/h (delivery.syringe_pump_ml_per_h)
            fine = set_rate < delivery.SYRINGE_PUMP_FINE_BELOW_ML_PER_H
            rate = format_quantity(set_rate, "mL/h", decimals=2 if fine else 1)
            for number, (hour, volume) in enumerate(phase.syringe_fills):
                load = format_quantity(volume, "mL", decimals=1)
                action = (
                    f"Syringe pump: set {rate}; load {load}"
                    if number == 0
                    else f"Change syringe: load {load}; {rate} continues"
                )
                entries.append(
                    ScheduleEntry(hour=hour, clock=clock_time(start, hour), phase=phase.kind,
                                  action=action + f" (until hour {phase.end_h:g})")
                )  # fmt: skip
            continue
        if phase.mode == "continuous":
            boluses += phase.kind == "resuscitation"
            entries.append(
                ScheduleEntry(
                    hour=phase.start_h,
                    clock=clock_time(start, phase.start_h),
                    phase=phase.kind,
                    action=_continuous_action(phase, bolus_number=boluses),
                )
            )
            continue
        action = divided_dose_text(
            ml_per_site=phase.ml_per_site or 0.0, sites=phase.sites_per_dose or 1,
            route=phase.route,
        )  # fmt: skip
        for hour in phase.dose_hours():
            entries.append(
                ScheduleEntry(hour=hour, clock=clock_time(start, hour), phase=phase.kind,
                              action=action)
            )  # fmt: skip
    if diuretics or soaks:  # a stable sort: the fluids' own order holds at each hour
        entries = sorted(
            [*entries, *diuretic_entries(diuretics, start), *soaks], key=lambda e: e.hour
        )
    return tuple(entries)
