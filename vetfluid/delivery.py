"""Delivery: pump rates, gravity drip rates, syringe volumes and divided boluses.

* Drip rate (the standard infusion arithmetic taught in every nursing and
  pharmacy text): drops/min = mL/h × drop factor (drops/mL) ÷ 60;
  seconds per drop = 60 ÷ drops/min. Common sets deliver 10, 15, 20 (macro) or
  60 (micro) drops/mL.
* Syringe pumps are set to 0.1 mL; volumes are rounded to 0.1 mL.
* A dose drawn up by hand is rounded to the marks of the syringe it fits: 0.01 mL
  below 1 mL (a 1 mL syringe), 0.1 mL above (common practice, no source).
* Divided boluses for patients too small for a line: each dose is the hourly
  need × the dosing interval, split over as many sites as the route's per-site
  limit requires. SC fluids are absorbed over 6–8 h (Vet Clin North Am Small
  Anim Pract 2017;47:505–519), so doses are at least 6 h apart.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from vetfluid.checks import require_number

STANDARD_DROP_FACTORS = (10, 15, 20, 60)
SYRINGE_STEP_ML = 0.1
SMALL_SYRINGE_ML = 1.0  # a 1 mL syringe is marked every 0.01 mL (common practice, no source)
SMALL_SYRINGE_STEP_ML = 0.01
# Dosing intervals tried for divided boluses, longest first: fewer handlings
# stress a small patient less; never shorter than the 6 h SC absorption time.
DIVIDED_INTERVALS_H = (12.0, 8.0, 6.0)
MAX_SITES_PER_DOSE = 4  # common practice, no source: more sites per handling is impractical


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


def syringe_ml(volume_ml: float) -> float:
    """A volume rounded to the 0.1 mL a syringe pump is set to."""
    require_number(volume_ml, "volume_ml", low=0, unit="mL")
    return round(volume_ml / SYRINGE_STEP_ML) * SYRINGE_STEP_ML


def draw_up_ml(volume_ml: float) -> float:
    """A hand-drawn dose rounded to its syringe's marks: 0.01 mL below 1 mL, else 0.1 mL.

    So a 0.57 mL site volume is not shown as 0.6 mL (six sites would then add up to
    3.6 mL, not the 3.4 mL dose), nor 0.04 mL as nothing.
    """
    require_number(volume_ml, "volume_ml", low=0, unit="mL")
    step = SMALL_SYRINGE_STEP_ML if volume_ml < SMALL_SYRINGE_ML else SYRINGE_STEP_ML
    return round(round(volume_ml / step) * step, 2)


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


def divided_boluses(
    *, need_ml_per_h: float, per_site_limit_ml: float, route: str
) -> DividedBoluses:
    """Split an hourly need into doses: the longest interval whose dose fits few enough sites."""
    need = _rate(need_ml_per_h)
    require_number(per_site_limit_ml, "per_site_limit_ml", positive=True, unit="mL")
    for interval in DIVIDED_INTERVALS_H:
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
            fits=sites <= MAX_SITES_PER_DOSE,
        )
        if schedule.fits:
            break
    return schedule
