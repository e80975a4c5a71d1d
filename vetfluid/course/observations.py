"""Observations during the course, the alerts they raise, and ins-and-outs.

* Observations are what the clinician records at an hour of the plan: weight,
  PCV/TS, urine output (a measured volume over a period), serum Na and K, heart
  and respiratory rate, mucous membranes and CRT, a note.
* Alerts compare them with the plan and the species table:
  - weight at or above the overload line, 10 % over the euhydrated weight
    (Pardo M et al. 2024 AAHA guidelines);
  - urine output below the oliguria threshold, the low end of the species' normal
    urine output (dogs and cats 1 mL/kg/h; Foster JD 2018 — thresholds of 0.5 or
    0.25 mL/kg/h are also used; editable);
  - serum Na changing faster than the correction limit between two measurements
    (0.5 mmol/L/h default; see ``safety_limits.csv``);
  - the deficit not closing as predicted: after 6 h, less than half the predicted
    weight gain (our rule of thumb, no source);
  - a recorded weight that cannot be this patient's (see below), as a hard alert.
* A measured weight more than 1.5 times, or less than 1/1.5 of, the weight the plan was
  made for is refused when recorded (:func:`check_observation`) and never carried into a
  new plan version (:func:`replan_request`): within a fluid plan the weight moves by the
  deficit and any overload, tens of percent at most, so a factor of 1.5 is a slip of unit
  (g/kg: 1000 times; lb/kg: 2.2 times) or of the decimal point (10 times), or a wrong
  entered weight, not a fluid shift.
* Ins and outs for oliguric or anuric patients (``vetfluid/physiology/ins_and_outs.py``): the
  urine and other losses recorded in each period, summed for the plan.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import asdict, dataclass, fields, replace
from datetime import date, datetime, timedelta

import numpy as np

from vetfluid.common.checks import require_number, require_patient_weight
from vetfluid.common.errors import InputError
from vetfluid.common.findings import Finding
from vetfluid.common.formatting import format_number
from vetfluid.common.formatting import format_quantity as q
from vetfluid.common.units import preferred_weight_unit, weight_in_unit
from vetfluid.physiology.hydration import overload_weight_kg
from vetfluid.physiology.ins_and_outs import InsAndOutsRow, ins_and_outs
from vetfluid.physiology.maintenance import usg_to_osmolality
from vetfluid.planning import body
from vetfluid.planning.plan import Plan, PlanRequest
from vetfluid.tables.limits import limit
from vetfluid.tables.species import SpeciesTable, load_table

MUCOUS_MEMBRANES = ("pink", "pale", "injected", "cyanotic", "icteric", "tacky", "dry")
DEFICIT_CHECK_AFTER_H = 6.0  # our rule of thumb, no source
DEFICIT_CLOSING_FRACTION = 0.5  # our rule of thumb, no source
# A measured weight beyond this factor of the entered weight, either way, is refused.
# Common practice, no source. Why 1.5: the dehydration scale ends at 12–15 % with signs
# of shock (DiBartola SP 2012, Fluid, Electrolyte, and Acid-Base Disorders in Small Animal
# Practice) and the overload line is 10 % over the euhydrated weight (Pardo M et al. 2024
# AAHA Fluid Therapy Guidelines), so a real change within a plan stays well inside it,
# while a g/kg slip (1000), lb/kg (2.2) or a misplaced decimal point (10) lies outside.
WEIGHT_PLAUSIBLE_FACTOR = 1.5
# How far past the workstation's clock an observation may be dated: clocks on the ward and
# the workstation differ by a few minutes. Our choice, no source.
CLOCK_SLACK = timedelta(minutes=10)
# Measured outputs this close (mL) are the same measurement (:func:`outputs_agree`).
OUTPUTS_SAME_WITHIN_ML = 1e-6


@dataclass(frozen=True, kw_only=True)
class Observation:
    """What was measured at ``hour`` of the plan (all values optional but the hour)."""

    hour: float
    weight_kg: float | None = None
    pcv_percent: float | None = None
    total_solids_g_per_dl: float | None = None
    urine_ml: float | None = None
    urine_period_h: float | None = None
    other_losses_ml: float | None = None  # vomit, diarrhoea, drains, measured
    serum_na: float | None = None
    serum_k: float | None = None
    usg: float | None = None  # urine specific gravity, as read
    urine_osmolality: float | None = None  # mOsm/kg, measured
    heart_rate_per_min: float | None = None
    respiratory_rate_per_min: float | None = None
    mucous_membranes: str | None = None
    crt_s: float | None = None
    note: str = ""

    def __post_init__(self) -> None:
        require_number(self.hour, "hour", low=0, high=14 * 24, unit="h")
        if self.weight_kg is not None:
            require_patient_weight(self.weight_kg)
        for name, low, high, unit in (
            ("pcv_percent", 3, 90, "%"),
            ("total_solids_g_per_dl", 1, 15, "g/dL"),
            ("urine_ml", 0, 1e6, "mL"),
            ("urine_period_h", 0.1, 48, "h"),
            ("other_losses_ml", 0, 1e6, "mL"),
            ("serum_na", 80, 230, "mmol/L"),
            ("serum_k", 0.5, 12, "mmol/L"),
            ("urine_osmolality", 20, 12000, "mOsm/kg"),  # as the plan's own entry
            ("heart_rate_per_min", 5, 1000, "/min"),
            ("respiratory_rate_per_min", 1, 300, "/min"),
            ("crt_s", 0, 10, "s"),
        ):
            value = getattr(self, name)
            if value is not None:
                require_number(value, name, low=low, high=high, unit=unit)
        if self.usg is not None:
            usg_to_osmolality(self.usg)  # 1.000–1.080, as the plan's own entry
        if (self.urine_ml is None) != (self.urine_period_h is None):
            raise InputError(
                "urine output needs both a volume and the period it was collected over",
                field="urine",
                value=(self.urine_ml, self.urine_period_h),
                fix="enter mL and hours, e.g. 45 mL over 4 h",
            )
        if self.mucous_membranes is not None and self.mucous_membranes not in MUCOUS_MEMBRANES:
            raise InputError(
                f"unknown mucous membrane finding {self.mucous_membranes!r}",
                field="mucous_membranes",
                value=self.mucous_membranes,
                fix=", ".join(MUCOUS_MEMBRANES),
            )

    def urine_ml_per_kg_h(self, weight_kg: float) -> float | None:
        if self.urine_ml is None or self.urine_period_h is None:
            return None
        return self.urine_ml / self.urine_period_h / weight_kg


def observation_record(observation: Observation) -> dict[str, object]:
    """An observation as stored in a draft or a saved plan version (its set fields)."""
    return {k: v for k, v in asdict(observation).items() if v is not None and v != ""}


def observation_from_record(record: object) -> Observation:
    """An observation read back from a draft or a saved version; a record that is not one
    raises :class:`InputError` naming what is wrong (values are checked as when typed)."""
    known = {f.name for f in fields(Observation)}
    if not isinstance(record, dict) or "hour" not in record:
        raise InputError(
            "a stored observation is not readable", field="observation", value=record,
            fix="it needs at least an hour; the rest of the course is kept",
        )  # fmt: skip
    unknown = sorted(set(record) - known)
    if unknown:
        raise InputError(
            f"a stored observation has unknown fields: {', '.join(unknown)}",
            field="observation", value=record, fix="keep the fields vetfluid writes",
        )  # fmt: skip
    try:
        return Observation(**record)
    except TypeError as exc:
        raise InputError(
            f"a stored observation is not readable: {exc}", field="observation", value=record
        ) from exc


def weight_is_plausible(*, measured_kg: float, entered_kg: float) -> bool:
    """Whether a measured weight lies within :data:`WEIGHT_PLAUSIBLE_FACTOR` of the weight
    the plan was made for, either way (a factor of 1.5: common practice, no source)."""
    measured = require_number(measured_kg, "weight_kg", positive=True, unit="kg")
    entered = require_number(entered_kg, "entered weight", positive=True, unit="kg")
    ratio = measured / entered
    return 1.0 / WEIGHT_PLAUSIBLE_FACTOR <= ratio <= WEIGHT_PLAUSIBLE_FACTOR


def _weights_text(measured_kg: float, entered_kg: float, unit: str) -> tuple[str, str]:
    """Both weights in ``unit``; the entered one also in its usual unit when that differs."""
    natural = preferred_weight_unit(entered_kg)
    entered = q(weight_in_unit(entered_kg, unit), unit)
    if natural != unit:
        entered += f" ({q(weight_in_unit(entered_kg, natural), natural)})"
    return q(weight_in_unit(measured_kg, unit), unit), entered


def _how_far(measured_kg: float, entered_kg: float) -> str:
    ratio = measured_kg / entered_kg
    if ratio >= 1:
        return f"{format_number(ratio)} times"
    return f"{format_number(ratio * 100)} % of"


def _implausible_weight(
    plan: Plan, weight_kg: float, *, unit: str, subject: str, consequence: str
) -> InputError:
    """The refusal of a weight beyond the plausible factor; ``subject`` holds ``{weight}``."""
    measured_text, entered_text = _weights_text(weight_kg, plan.request.weight_kg, unit)
    how_far = _how_far(weight_kg, plan.request.weight_kg)
    return InputError(
        f"{subject.format(weight=measured_text)} is {how_far} the plan's weight of "
        f"{entered_text}; during fluid therapy a patient's weight does not change by more "
        f"than a factor of {WEIGHT_PLAUSIBLE_FACTOR:g}, so {consequence}",
        field="weight",
        value=weight_kg,
        fix="check the unit (g, kg or lb) and the decimal point, then record the weight again; "
        f"if the scale really reads {measured_text}, the plan's weight is wrong: correct the "
        "patient's weight first",
    )


def check_observation(
    plan: Plan, observation: Observation, *, weight_unit: str = "kg", now: datetime | None = None
) -> None:
    """Refuse an observation that cannot be this patient's before it is recorded.

    A measured weight beyond :data:`WEIGHT_PLAUSIBLE_FACTOR` of the plan's entered weight
    (either way) raises :class:`InputError` naming both weights, in ``weight_unit`` (the
    unit it was typed in), and what to fix. So does an observation dated after ``now``
    (by more than :data:`CLOCK_SLACK`), when the plan is on the calendar: it records a
    measurement, which cannot have been made yet. Other quantities are checked by
    :class:`Observation` itself."""
    moment = plan.moment_at(observation.hour)
    if now is not None and moment is not None and moment > now + CLOCK_SLACK:
        raise InputError(
            f"hour {observation.hour:g} of the plan is {moment:%Y-%m-%d %H:%M}, still to come "
            f"(it is now {now:%Y-%m-%d %H:%M}); an observation records what was measured, so "
            "it was not recorded",
            field="hour",
            value=observation.hour,
            fix="set the time the measurement was taken",
        )
    weight = observation.weight_kg
    if weight is None or weight_is_plausible(measured_kg=weight, entered_kg=plan.request.weight_kg):
        return
    raise _implausible_weight(
        plan, weight, unit=weight_unit, subject="{weight}", consequence="it was not recorded"
    )


def predicted_weight_kg(plan: Plan, hour: float) -> float:
    """The course's weight at ``hour`` (the plan's body, :func:`body.of_plan`: entered weight
    + given − insensible, losses and urine, 1 mL ≈ 1 g; Davis 2013), held at its last value
    past the plan."""
    return body.of_plan(plan, load_table()).weight_at(hour)


def alerts(
    plan: Plan,
    observations: list[Observation] | tuple[Observation, ...],
    *,
    oliguria_ml_per_kg_h: float | None = None,
    table: SpeciesTable | None = None,
    predicted_weight: Callable[[float], float] | None = None,
) -> list[Finding]:
    """Findings from what was observed (see the module docstring for each rule).

    ``predicted_weight(hour)`` is the weight the deficit check compares with: the course
    model's where it is shown (``Course.predicted``), else the plan's fluid balance."""
    table = table or load_table()
    expected = predicted_weight or (lambda hour: predicted_weight_kg(plan, hour))
    sid = plan.request.species_id
    ordered = sorted(observations, key=lambda o: o.hour)
    found: list[Finding] = []
    gain = limit("overload_weight_gain_fraction")
    line = overload_weight_kg(
        weight_kg=plan.request.weight_kg, deficit_ml=plan.deficit_ml, gain_fraction=gain.value
    )
    urine = table.get(sid, "urine_output_ml_per_kg_h")
    threshold = oliguria_ml_per_kg_h
    if threshold is None and urine is not None:
        threshold = urine.low if urine.low is not None else urine.number
    na_limit = plan.request.max_na_change_per_h or limit("sodium_max_correction_mmol_per_l_h").value
    last_na: Observation | None = None
    latest_weight = plan.request.weight_kg
    unit = plan.weight_unit  # weights in the unit this species' weight is given in

    def shown(weight_kg: float) -> str:
        return q(weight_in_unit(weight_kg, unit), unit)

    for obs in ordered:
        if obs.weight_kg is not None and not weight_is_plausible(
            measured_kg=obs.weight_kg, entered_kg=plan.request.weight_kg
        ):
            # recorded against an earlier entered weight, or read from a file: not used
            measured_text, entered_text = _weights_text(
                obs.weight_kg, plan.request.weight_kg, preferred_weight_unit(obs.weight_kg)
            )
            found.append(Finding(
                severity="hard", code="IMPLAUSIBLE_WEIGHT",
                message=f"The weight recorded at hour {obs.hour:g}, {measured_text}, is "
                f"{_how_far(obs.weight_kg, plan.request.weight_kg)} the plan's weight of "
                f"{entered_text}; no alert or re-plan uses it.",
                action="Check the plan's weight and this reading (unit, decimal point); weigh "
                "the patient and record the weight again.",
            ))  # fmt: skip
        elif obs.weight_kg is not None:
            latest_weight = obs.weight_kg
            if obs.weight_kg >= line:
                found.append(Finding(
                    severity="soft", code="OBSERVED_OVERLOAD",
                    message=f"At hour {obs.hour:g} the patient weighs {shown(obs.weight_kg)}, "
                    f"at or above the overload line of {shown(line)}.",
                    action="Stop or slow the fluids, examine for overload and re-plan.",
                    source_id=gain.source_id,
                ))  # fmt: skip
            expected_gain = expected(obs.hour) - plan.request.weight_kg
            seen_gain = obs.weight_kg - plan.request.weight_kg
            if (
                obs.hour >= DEFICIT_CHECK_AFTER_H
                and plan.deficit_ml > 0
                and expected_gain > 0
                and seen_gain < DEFICIT_CLOSING_FRACTION * expected_gain
            ):
                found.append(Finding(
                    severity="soft", code="DEFICIT_NOT_CLOSING",
                    message=f"At hour {obs.hour:g} the weight has risen "
                    f"{q(seen_gain * 1000, 'g')}, less than half the predicted "
                    f"{q(expected_gain * 1000, 'g')}.",
                    action="Look for losses not counted (urine, vomit, diarrhoea) and re-plan.",
                ))  # fmt: skip
        rate = obs.urine_ml_per_kg_h(latest_weight)
        if rate is not None and threshold is not None and rate < threshold:
            found.append(Finding(
                severity="soft", code="OLIGURIA",
                message=f"Urine output {q(rate, 'mL/kg/h')} over {q(obs.urine_period_h, 'h')} "
                f"to hour {obs.hour:g} is below {q(threshold, 'mL/kg/h')}.",
                action="Check the catheter and bladder, reassess hydration and blood pressure; "
                "consider ins-and-outs fluid therapy.",
                source_id=urine.source_id if urine is not None else None,
            ))  # fmt: skip
        if obs.serum_na is not None:
            if last_na is not None and obs.hour > last_na.hour:
                speed = (obs.serum_na - (last_na.serum_na or 0.0)) / (obs.hour - last_na.hour)
                if abs(speed) > na_limit:
                    found.append(Finding(
                        severity="soft", code="NA_CHANGING_TOO_FAST",
                        message=f"Serum Na moved {q(abs(speed), 'mmol/L/h')} between hours "
                        f"{last_na.hour:g} and {obs.hour:g}, faster than "
                        f"{q(na_limit, 'mmol/L/h')}.",
                        action="Slow the fluids or change to a fluid closer to the patient's Na; "
                        "recheck in 2–4 h.",
                        source_id="adrogue2000",
                    ))  # fmt: skip
            last_na = obs
    return found


def observed_series(observations: list[Observation], field: str) -> tuple[np.ndarray, np.ndarray]:
    """(hours, values) of one observed quantity, for plotting over the prediction."""
    points = [(o.hour, getattr(o, field)) for o in observations if getattr(o, field) is not None]
    points.sort()
    return np.array([p[0] for p in points]), np.array([p[1] for p in points], dtype=float)


def replan_request(plan: Plan, observations: list[Observation] | tuple[Observation, ...]):
    """A new request from the patient's current state (the earlier plan is kept by the caller).

    Hour 0 of the new version is when the latest weight was taken; its clock and date follow.
    Weight: the latest measured weight, refused (:class:`InputError`) when it is beyond
    :data:`WEIGHT_PLAUSIBLE_FACTOR` of the entered weight. Remaining deficit: the euhydrated weight
    (entered weight + deficit, 1 L ≈ 1 kg) less that weight, as a % of it to 0.1 %. Labs: the
    latest Na and K. Everything else (fluid, route, flags) carries over.
    """
    ordered = sorted(observations, key=lambda o: o.hour)
    weights = [o for o in ordered if o.weight_kg is not None]
    if not weights:
        raise InputError(
            "re-planning needs a measured weight", field="weight", fix="record a weight first"
        )
    current = weights[-1].weight_kg
    if not weight_is_plausible(measured_kg=current, entered_kg=plan.request.weight_kg):
        raise _implausible_weight(  # an implausible weight never becomes the plan's
            plan, current, unit=preferred_weight_unit(current),
            subject=f"the latest weight, {{weight}} at hour {weights[-1].hour:g},",
            consequence="no new plan was made from it",
        )  # fmt: skip
    euhydrated = plan.request.weight_kg + plan.deficit_ml / 1000.0
    # to 0.1 %, as a clinician would type it: the % is an estimate, and 3.26693 % in the
    # form reads as a precision no scale or examination gives
    remaining_percent = round(max(0.0, (euhydrated - current) / current * 100.0), 1)
    latest = {
        name: next((getattr(o, name) for o in reversed(ordered) if getattr(o, name) is not None),
                   getattr(plan.request, name))
        for name in ("serum_na", "serum_k", "pcv_percent", "total_solids_g_per_dl")
    }  # fmt: skip
    hour_zero = weights[-1].hour  # the new version starts when that weight was taken
    start = {}
    if plan.request.start_time is not None:
        day = plan.request.start_date or date(2000, 1, 1)  # a clock alone: only the time moves
        moment = datetime.combine(day, plan.request.start_time) + timedelta(hours=hour_zero)
        start = {
            "start_time": moment.time(),
            "start_date": moment.date() if plan.request.start_date else None,
        }
    return replace(
        plan.request,
        weight_kg=current,
        **start,
        dehydration_percent=min(remaining_percent, 20.0),
        dehydration_findings=(),
        resuscitation_boluses=0,
        measured_outputs=(),  # the new version's periods start at its own hour 0
        **latest,
    )


def measured_outputs(
    observations: list[Observation] | tuple[Observation, ...],
    *,
    period_h: float,
    earlier: tuple[tuple[float, float], ...] = (),
) -> tuple[tuple[float, float], ...]:
    """(urine mL, other losses mL) for each *complete* period of ``period_h`` from hour 0.

    Urine is spread evenly over the window it was collected in (``urine_period_h`` up to
    its hour); the part collected before hour 0 belongs to no period. Other losses count
    in the period they were recorded in (hour in (start, end]; hour 0 in the first). A
    period is complete once urine has been measured to its end. ``earlier`` holds the
    outputs saved with a reopened plan, from measurements not among ``observations``:
    what is recorded now is added to them."""
    require_number(period_h, "period_h", low=1, high=24, unit="h")
    urine_seen = [o for o in observations if o.urine_ml is not None and o.urine_period_h]
    latest = max((o.hour for o in urine_seen), default=0.0)
    complete = max(int(np.floor(latest / period_h + 1e-9)), len(earlier))
    starts = np.arange(complete) * period_h
    pad = [0.0] * (complete - len(earlier))  # float even when a file gave whole numbers
    urine = np.array([u for u, _ in earlier] + pad, dtype=float)
    other = np.array([o for _, o in earlier] + pad, dtype=float)
    for o in urine_seen:
        a, b = o.hour - o.urine_period_h, o.hour
        overlap = np.clip(np.minimum(starts + period_h, b) - np.maximum(starts, a), 0.0, None)
        urine += o.urine_ml * overlap / o.urine_period_h
    for o in observations:
        if o.other_losses_ml:
            number = max(0, int(np.ceil(o.hour / period_h - 1e-9)) - 1)
            if number < complete:
                other[number] += o.other_losses_ml
    return tuple((float(u), float(x)) for u, x in zip(urine, other, strict=True))


def outputs_not_observed(
    saved: tuple[tuple[float, float], ...],
    observations: list[Observation] | tuple[Observation, ...],
    *,
    period_h: float,
) -> tuple[tuple[float, float], ...]:
    """What a reopened plan's saved outputs hold beyond the observations reopened with it.

    A saved version or draft keeps both its measured outputs and the observations they
    came from; counting both would replace urine twice. Per period, the saved outputs
    less what the observations give (never below zero): what :func:`measured_outputs`
    should take as ``earlier``. The observations are measured over as many periods as
    were saved, as they were when saved, so a loss in a period past the latest urine
    measurement is taken off too."""
    own = measured_outputs(observations, period_h=period_h, earlier=((0.0, 0.0),) * len(saved))
    return tuple(
        (
            max(0.0, urine - (own[i][0] if i < len(own) else 0.0)),
            max(0.0, other - (own[i][1] if i < len(own) else 0.0)),
        )
        for i, (urine, other) in enumerate(saved)
    )


def outputs_agree(
    first: tuple[tuple[float, float], ...], second: tuple[tuple[float, float], ...]
) -> bool:
    """Whether two output tables hold the same measurements: as many periods, and each
    volume the same to within a nanolitre. Taking a reopened plan's outputs apart and
    adding them up again (:func:`outputs_not_observed`, :func:`measured_outputs`) leaves
    rounding noise of about 1e-14 mL, which is not a change to the plan."""
    return len(first) == len(second) and all(
        abs(a - b) <= OUTPUTS_SAME_WITHIN_ML
        for pair_a, pair_b in zip(first, second, strict=True)
        for a, b in zip(pair_a, pair_b, strict=True)
    )


def follows_saved_request(
    current: PlanRequest,
    saved: PlanRequest,
    observations: list[Observation] | tuple[Observation, ...],
) -> bool:
    """Whether ``current`` is the plan that reopening ``saved`` with ``observations`` builds.

    The inputs must be the same. For an ins-and-outs plan, the measured outputs may differ
    from the saved ones by exactly what the observations measured since. That is, they must
    equal the saved outputs not taken from ``observations`` (:func:`outputs_not_observed`)
    plus what ``observations`` measure (:func:`measured_outputs`). A urine measurement
    recorded on a saved version therefore leaves it the saved version; the measurement is
    kept with that version's observations. Removing a measurement that was saved with the
    version does not: reopening would still count its urine among the saved outputs."""
    if current == saved:
        return True
    period = saved.ins_and_outs_period_h
    if period is None or replace(current, measured_outputs=saved.measured_outputs) != saved:
        return False
    earlier = outputs_not_observed(saved.measured_outputs, observations, period_h=period)
    reopened = measured_outputs(observations, period_h=period, earlier=earlier)
    return outputs_agree(current.measured_outputs, reopened)


def ins_and_outs_from_observations(
    observations: list[Observation] | tuple[Observation, ...],
    *,
    weight_kg: float,
    insensible_ml_per_kg_day: float,
    period_h: float,
) -> list[InsAndOutsRow]:
    """The ins-and-outs table of the complete periods recorded (:func:`measured_outputs`)."""
    return ins_and_outs(
        weight_kg=weight_kg,
        insensible_ml_per_kg_day=insensible_ml_per_kg_day,
        period_h=period_h,
        measured=list(measured_outputs(observations, period_h=period_h)),
    )
