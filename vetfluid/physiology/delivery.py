"""Delivery: pump rates, gravity drip rates, syringe volumes and divided boluses.

* Drip rate (the standard infusion arithmetic taught in every nursing and
  pharmacy text): drops/min = mL/h × drop factor (drops/mL) ÷ 60;
  seconds per drop = 60 ÷ drops/min. Common sets deliver 10, 15, 20 (macro) or
  60 (micro) drops/mL. A gravity drip's rate is kept to the figures it is shown
  with, so the drops/min shown are those of the rate shown. Faster than two drops a
  second drops cannot be counted by eye (common practice, no source); such a drip
  is timed by the bag's volume marks instead.
* Syringe pumps are set to 0.1 mL; volumes are rounded to 0.1 mL.
* A dose drawn up by hand is rounded to the marks of the syringe it fits: 0.01 mL
  below 1 mL (a 1 mL syringe), 0.1 mL above (common practice, no source).
* Divided boluses for patients too small for a line: each dose is the hourly
  need × the dosing interval, split over as many sites as the route's per-site
  limit requires. SC fluids are absorbed over 6–8 h (Vet Clin North Am Small
  Anim Pract 2017;47:505–519), so doses are at least 6 h apart.
* Dosing the way it is done: the clinician may choose the interval (every 6, 8, 12 or
  24 h) and the most sites per dose. A dose then holds at most the sites × the route's
  per-site limit (drawn to the syringe's marks, :func:`dose_ceiling`); when that is
  less than the need, the deficit is replaced over as many whole intervals as the room
  above maintenance takes (:func:`replacement_hours`), never in more sites.
* Routes into one space (the coelom, the epicoelomic space, the peritoneum) and by mouth
  or tube take one injection or one tube per dose (:data:`ONE_SITE_ROUTES`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from vetfluid.common.checks import require_number
from vetfluid.common.errors import InputError
from vetfluid.common.formatting import default_decimals

STANDARD_DROP_FACTORS = (10, 15, 20, 60)
SYRINGE_STEP_ML = 0.1
SMALL_SYRINGE_ML = 1.0  # a 1 mL syringe is marked every 0.01 mL (common practice, no source)
SMALL_SYRINGE_STEP_ML = 0.01
# Dosing intervals tried for divided boluses, longest first: fewer handlings
# stress a small patient less; never shorter than the 6 h SC absorption time.
DIVIDED_INTERVALS_H = (12.0, 8.0, 6.0)
# SC fluid is absorbed over 6–8 h (Vet Clin North Am Small Anim Pract 2017;47:505–519);
# the shorter end is used wherever absorption speed matters for safety (faster = harsher).
# No figure is on record for the coelom, the peritoneum or the gut: every divided dose is
# taken as absorbed over the same time (our modelling choice, no source; docs/model.md).
SC_ABSORPTION_H = 6.0
MAX_SITES_PER_DOSE = 4  # common practice, no source: more sites per handling is impractical
# One injection (or one tube) per dose: a cavity is one space, so more punctures do not make
# room; a crop or stomach takes one tube at a time (common practice, no source).
ONE_SITE_ROUTES = ("icoel", "epicoel", "ip", "oral")
# The dosing intervals a clinician may choose for divided doses, in hours (issue 20: every
# 6, 8, 12 or 24 h; reptiles are often dosed once a day). Common practice, no source.
CHOSEN_INTERVALS_H = (6.0, 8.0, 12.0, 24.0)
# Software bound on the sites a clinician may choose per dose: the hard limit in
# safety_limits.csv (divided_sites_max_per_dose, 10; common practice, no source).
MOST_SITES_CHOSEN = 10
# Fastest drip whose drops a nurse can count by eye: two drops a second (common
# practice, no source). Faster drops blur together and are miscounted.
COUNTABLE_DROPS_PER_MIN = 120.0


# Discard a spiked bag or a filled syringe after 24 h at the latest: common practice, no
# source (CDC 2002, O'Grady et al., made no recommendation for IV fluid hang time). The
# schedule's syringe fills and the printed labels both keep it.
HANG_LIMIT_H = 24.0


def _rate(rate_ml_per_h: float) -> float:
    return require_number(rate_ml_per_h, "rate_ml_per_h", low=0, unit="mL/h")


def check_drop_factor(drop_factor: float) -> float:
    """A drop factor in drops/mL (any positive value up to 100; 10, 15, 20, 60 are usual)."""
    return require_number(
        drop_factor, "drop_factor", low=1, high=100, unit="drops/mL",
        fix="read it off the giving-set packet (10, 15, 20 or 60)",
    )  # fmt: skip


def drops_per_min(rate_ml_per_h: float, drop_factor: float) -> float:
    """Drops per minute = mL/h × drops/mL ÷ 60."""
    return _rate(rate_ml_per_h) * check_drop_factor(drop_factor) / 60.0


def seconds_per_drop(rate_ml_per_h: float, drop_factor: float) -> float | None:
    """Seconds between drops = 60 ÷ drops/min; None when nothing runs."""
    dpm = drops_per_min(rate_ml_per_h, drop_factor)
    return None if dpm == 0 else 60.0 / dpm


def drip_ml_per_h(rate_ml_per_h: float) -> float:
    """A gravity drip's rate in mL/h to the figures it is shown with
    (:func:`vetfluid.common.formatting.default_decimals`: 1 mL/h from 100 mL/h, 0.1 mL/h from
    10, 0.01 mL/h from 1). Drops are counted from the rate shown, so the plan runs
    that rate: 229.64 mL/h is set as 230 mL/h = 76.7 drops/min at 20 drops/mL, not
    shown as 230 mL/h beside the 76.5 drops/min of 229.64 mL/h. This changes the rate
    by at most 0.5 % from 1 mL/h up, and by at most 5 % below 1 mL/h (two significant
    figures).
    """
    rate = _rate(rate_ml_per_h)
    return round(rate, default_decimals(rate))


def countable(drops_per_min: float) -> bool:
    """Whether a drip is slow enough to count its drops (at most
    :data:`COUNTABLE_DROPS_PER_MIN`); faster ones are timed by the bag's volume marks."""
    require_number(drops_per_min, "drops_per_min", low=0, unit="drops/min")
    return drops_per_min <= COUNTABLE_DROPS_PER_MIN


# A syringe pump is set in 0.01 mL/h steps below 10 mL/h and 0.1 mL/h above (common
# practice, no source: the usual resolution of veterinary and neonatal syringe drivers).
SYRINGE_PUMP_FINE_BELOW_ML_PER_H = 10.0


def syringe_pump_ml_per_h(rate_ml_per_h: float) -> float:
    """The rate a syringe pump is set to: 0.01 mL/h steps below 10 mL/h, else 0.1 mL/h
    (common practice, no source). A rate under half a step rounds to 0: the plan then
    says it cannot be set."""
    rate = _rate(rate_ml_per_h)
    return round(rate, 2 if rate < SYRINGE_PUMP_FINE_BELOW_ML_PER_H else 1)


def syringe_load_ml(volume_ml: float) -> float:
    """What to load into a syringe to run ``volume_ml``: up to the next 0.1 mL mark, so a
    syringe never holds less than it is to give (a 0.04 mL run is loaded as 0.1 mL)."""
    require_number(volume_ml, "volume_ml", low=0, unit="mL")
    return math.ceil(round(volume_ml / SYRINGE_STEP_ML, 9)) * SYRINGE_STEP_ML


def syringe_ml(volume_ml: float) -> float:
    """A volume rounded to the 0.1 mL a syringe pump is set to."""
    require_number(volume_ml, "volume_ml", low=0, unit="mL")
    return round(volume_ml / SYRINGE_STEP_ML) * SYRINGE_STEP_ML


def draw_up_ml(volume_ml: float, *, at_most: float | None = None) -> float:
    """A hand-drawn dose rounded to its syringe's marks: 0.01 mL below 1 mL, else 0.1 mL;
    down to the mark below when the nearest one is above ``at_most`` (a site's limit).

    So a 0.57 mL site volume is not shown as 0.6 mL (six sites would then add up to
    3.6 mL, not the 3.4 mL dose), 1.17 mL under a 1.17 mL limit is 1.1 mL, not 1.2 mL,
    and a volume too small for the marks is the smallest mark, never nothing: even above
    ``at_most`` when the limit is under one mark (at 10 mL/kg per site, a patient under
    1 g), which the plan reports as a hard limit (SITE_BELOW_SMALLEST_MARK).
    """
    require_number(volume_ml, "volume_ml", low=0, unit="mL")
    step = SMALL_SYRINGE_STEP_ML if volume_ml < SMALL_SYRINGE_ML else SYRINGE_STEP_ML
    marks = round(volume_ml / step)
    if at_most is not None and marks * step > require_number(at_most, "at_most", low=0) + 1e-9:
        marks = math.floor(volume_ml / step + 1e-9)
    if marks == 0 and volume_ml > 0:
        marks = 1
    return round(marks * step, 2)


@dataclass(frozen=True, kw_only=True)
class DrawnUpDose:
    """A divided dose as the nurse gives it: ``sites`` injections of ``ml_per_site``
    (drawn up to the syringe's marks); ``dose_ml`` is what they add up to."""

    sites: int
    ml_per_site: float
    dose_ml: float


def drawn_up_dose(*, ml_per_site: float, sites: int, at_most: float | None = None) -> DrawnUpDose:
    """The dose a nurse gives: each site's volume to its syringe's marks
    (:func:`draw_up_ml`, never above ``at_most`` per site) times the sites, so the dose
    is what the sites add up to (4 sites of 0.56 mL give 2.24 mL, not 2.25 mL)."""
    if isinstance(sites, bool) or not isinstance(sites, int) or sites < 1:
        raise InputError(
            "the number of sites must be a whole number, at least 1",
            field="sites", value=sites, fix="give 1 or more sites",
        )  # fmt: skip
    per_site = draw_up_ml(
        require_number(ml_per_site, "ml_per_site", low=0, unit="mL"), at_most=at_most
    )
    return DrawnUpDose(sites=sites, ml_per_site=per_site, dose_ml=round(per_site * sites, 2))


@dataclass(frozen=True, kw_only=True)
class DividedBoluses:
    """A dose schedule for a patient too small for a line."""

    route: str
    interval_h: float
    doses_per_day: float
    dose_ml: float
    sites_per_dose: int
    ml_per_site: float
    per_site_limit_ml: float
    fits: bool  # False when even the shortest interval needs more than MAX_SITES_PER_DOSE


def most_sites(route: str) -> int:
    """The usual most sites per dose: one for a route into one space or by mouth
    (:data:`ONE_SITE_ROUTES`), else :data:`MAX_SITES_PER_DOSE`."""
    return 1 if route in ONE_SITE_ROUTES else MAX_SITES_PER_DOSE


def divided_boluses(
    *,
    need_ml_per_h: float,
    per_site_limit_ml: float,
    route: str,
    sites_at_most: int | None = None,
    interval_h: float | None = None,
) -> DividedBoluses:
    """Split an hourly need into doses: the longest interval whose dose fits few enough sites
    — under the skin up to :data:`MAX_SITES_PER_DOSE` (or ``sites_at_most``), into one space
    or by mouth one (:func:`most_sites`). ``interval_h``: the clinician's interval, the only
    one tried."""
    need = _rate(need_ml_per_h)
    require_number(per_site_limit_ml, "per_site_limit_ml", positive=True, unit="mL")
    most = sites_at_most or most_sites(route)
    for interval in (interval_h,) if interval_h else DIVIDED_INTERVALS_H:
        dose = need * interval
        sites = max(1, math.ceil(round(dose / per_site_limit_ml, 9)))
        schedule = DividedBoluses(
            route=route,
            interval_h=interval,
            doses_per_day=24.0 / interval,
            dose_ml=dose,
            sites_per_dose=sites,
            ml_per_site=dose / sites,
            per_site_limit_ml=per_site_limit_ml,
            fits=sites <= most,
        )
        if schedule.fits:
            break
    return schedule


@dataclass(frozen=True, kw_only=True)
class DoseCeiling:
    """The most one divided dose holds at the clinician's interval and sites: each site
    drawn up to its limit (to the syringe's marks, never above it)."""

    route: str
    interval_h: float
    sites: int
    per_site_limit_ml: float
    ml_per_site: float  # the limit as drawn up
    dose_ml: float  # sites × ml_per_site

    @property
    def ml_per_h(self) -> float:
        """What these doses give on average, mL/h."""
        return self.dose_ml / self.interval_h


def dose_ceiling(
    *, route: str, interval_h: float, sites: int, per_site_limit_ml: float
) -> DoseCeiling:
    """The most a dose holds: ``sites`` sites each drawn up to the per-site limit
    (:func:`drawn_up_dose` with ``at_most`` the limit)."""
    require_number(interval_h, "interval_h", positive=True, unit="h")
    require_number(per_site_limit_ml, "per_site_limit_ml", positive=True, unit="mL")
    drawn = drawn_up_dose(ml_per_site=per_site_limit_ml, sites=sites, at_most=per_site_limit_ml)
    return DoseCeiling(
        route=route, interval_h=interval_h, sites=sites, per_site_limit_ml=per_site_limit_ml,
        ml_per_site=drawn.ml_per_site, dose_ml=drawn.dose_ml,
    )  # fmt: skip


def replacement_hours(
    *, deficit_ml: float, background_ml_per_h: float, ceiling: DoseCeiling
) -> float | None:
    """How long doses at ``ceiling`` take to replace a deficit on top of maintenance and
    losses (``background_ml_per_h``): the deficit ÷ the room the doses leave above the
    background, rounded up to whole intervals (a dose is given whole or not at all). None
    when the doses give no more than the background: the deficit is never replaced."""
    deficit = require_number(deficit_ml, "deficit_ml", low=0, unit="mL")
    room = ceiling.ml_per_h - _rate(background_ml_per_h)
    if room <= 1e-12:
        return None
    return math.ceil(round(deficit / room / ceiling.interval_h, 9)) * ceiling.interval_h
