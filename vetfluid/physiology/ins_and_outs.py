"""Ins and outs for oliguric or anuric patients (Côté E 2020, AKI algorithm).

The fluid for the next period = insensible loss for the period (20 mL/kg/day in
dogs and cats) + the urine output and other losses measured over the last period.
The plan builder (``vetfluid/planning/plan.py``) uses it when a request asks for
ins-and-outs periods; how often to recalculate (4–6 h is usual) is the clinician's.
"""

from __future__ import annotations

from dataclasses import dataclass

from vetfluid.common.checks import require_number


def maintenance_not_given(period_h: float) -> str:
    """What every surface says of the maintenance rate in ins-and-outs mode."""
    return (
        f"not given — ins and outs every {period_h:g} h instead (insensible loss + "
        "measured urine and other losses)"
    )


def planned_so_far(end_h: float, period_h: float | None) -> str | None:
    """What a first-24-h total covers when an ins-and-outs plan ends before hour 24
    (None otherwise: then it is the whole first day)."""
    if period_h is None or end_h >= 24:
        return None
    return f"the periods planned so far, to hour {end_h:g}; more follow as each is measured"


@dataclass(frozen=True, kw_only=True)
class InsAndOutsRow:
    period: int
    start_h: float
    end_h: float
    urine_ml: float
    other_losses_ml: float
    insensible_ml: float
    replace_ml: float
    next_rate_ml_per_h: float


def ins_and_outs(
    *,
    weight_kg: float,
    insensible_ml_per_kg_day: float,
    period_h: float,
    measured: list[tuple[float, float]],
) -> list[InsAndOutsRow]:
    """Ins and outs (Côté 2020): each period's measured urine and other losses, plus the
    insensible loss for the period, are given over the next period.

    ``measured`` holds (urine mL, other losses mL) per period, oldest first.
    """
    require_number(weight_kg, "weight_kg", positive=True, unit="kg")
    require_number(insensible_ml_per_kg_day, "insensible_ml_per_kg_day", low=0)
    require_number(period_h, "period_h", low=1, high=24, unit="h")
    rows = []
    insensible = insensible_ml_per_kg_day * weight_kg * period_h / 24.0
    for number, (urine, other) in enumerate(measured, start=1):
        require_number(urine, "urine_ml", low=0, unit="mL")
        require_number(other, "other_losses_ml", low=0, unit="mL")
        total = insensible + urine + other
        rows.append(
            InsAndOutsRow(
                period=number,
                start_h=(number - 1) * period_h,
                end_h=number * period_h,
                urine_ml=urine,
                other_losses_ml=other,
                insensible_ml=insensible,
                replace_ml=total,
                next_rate_ml_per_h=total / period_h,
            )
        )
    return rows
