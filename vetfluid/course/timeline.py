"""The rehydration timeline: what the plan puts in, what the patient needs, hour by hour.

A :class:`Timeline` is the plan sampled on one time grid from hour 0 to the end of
the last phase, as numpy arrays the plots draw directly:

* ``rate_ml_per_h`` — the planned hourly rate, a step function;
* ``given_ml`` — cumulative volume given;
* ``needed_ml`` — cumulative need: the deficit (owed from hour 0) plus maintenance
  and ongoing losses as they accrue;
* ``remaining_deficit_ml`` — the part of the deficit still to give: the plan's account
  (deficit − (given − consumed)), not a weight;
* ``weight_kg`` — predicted body weight: the course's (the plan's body, with the kidney's
  urine), the one weight prediction the Course tab shows too.

Methods and sources:

* Need = deficit + what has left the patient by t (maintenance + ongoing losses
  × t / 24 h, or the measured outputs in ins-and-outs mode), the deficit being
  % dehydration × body weight: the replacement-plus-maintenance frame of
  Davis H et al., 2013 AAHA/AAFP Fluid Therapy Guidelines for Dogs and Cats
  (J Am Anim Hosp Assoc 49:149–159) and Pardo M et al., 2024 AAHA Fluid Therapy
  Guidelines (J Am Anim Hosp Assoc 60:131–163).
* Weight: 1 mL of fluid retained ≈ 1 g of body weight ("1 kg lost ≈ 1 L",
  Davis 2013), so predicted weight = entered weight + what was given − what left
  (insensible water, losses and the urine of the course's kidney:
  :attr:`vetfluid.planning.body.BodyCourse.weight_kg`).
* Overload line: a gain of 10 % or more over baseline weight marks
  overhydration (Pardo 2024), read from the ``overload_weight_gain_fraction``
  safety limit.

The grid is every ``step_minutes`` plus each phase boundary and dose hour, so every
step of the plan falls exactly on a grid point. Everything is computed with
vectorised numpy; the functions are pure and the arrays are read-only.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import time

import numpy as np

from vetfluid.common.arrays import distinct_sorted
from vetfluid.common.checks import require_number
from vetfluid.common.errors import InputError
from vetfluid.common.formatting import format_quantity
from vetfluid.physiology import hydration
from vetfluid.physiology.hydration import overload_weight_kg
from vetfluid.planning import body
from vetfluid.planning.plan import Plan
from vetfluid.planning.schedule import clock_time
from vetfluid.tables.limits import limit
from vetfluid.tables.species import load_table

ML_PER_KG = 1000.0  # 1 mL of body fluid ≈ 1 g (Davis 2013: "1 kg lost ≈ 1 L")
GRID_TOLERANCE_H = 1e-6  # a uniform grid point this close to a plan step gives way to it
SERIES = ("rate_ml_per_h", "given_ml", "needed_ml", "remaining_deficit_ml", "weight_kg")


@dataclass(frozen=True, kw_only=True)
class PhaseSpan:
    """Where one phase sits on the time axis (for shading and labels)."""

    kind: str  # resuscitation | replacement | maintenance
    mode: str  # continuous | intermittent
    start_h: float
    end_h: float


@dataclass(frozen=True, kw_only=True, eq=False)
class Timeline:
    """The plan on one time grid (hours from the start); every array has ``len(hours)``.

    ``rate_ml_per_h[i]`` holds from ``hours[i]`` to ``hours[i + 1]`` (a step that
    starts at each point; 0 after the last phase ends). For intermittent phases
    (divided boluses) it is the dose spread over its interval, dose ÷ interval —
    the average the patient receives, not a pump setting.
    ``given_ml[i]`` counts everything given up to and including ``hours[i]``: a
    dose given at hour t is in ``given_ml`` from the grid point at t onward.
    """

    hours: np.ndarray
    rate_ml_per_h: np.ndarray
    given_ml: np.ndarray
    needed_ml: np.ndarray
    remaining_deficit_ml: np.ndarray
    weight_kg: np.ndarray
    baseline_weight_kg: float
    overload_weight_kg: float
    overload_gain_fraction: float
    deficit_ml: float
    consumed_ml: np.ndarray  # what has left the patient by each hour (Plan.consumed_ml)
    phase_spans: tuple[PhaseSpan, ...]
    start_time: time | None = None

    @property
    def end_h(self) -> float:
        return float(self.hours[-1])

    @property
    def euhydrated_weight_kg(self) -> float:
        """The entered weight plus the deficit: what the overload line is 10 % above."""
        return hydration.euhydrated_weight_kg(
            weight_kg=self.baseline_weight_kg, deficit_ml=self.deficit_ml
        )

    def divided_at(self, hour: float) -> bool:
        """True when the phase running at ``hour`` gives divided doses (its rate is an
        average, not a pump setting)."""
        return any(
            span.mode == "intermittent" and span.start_h <= hour < span.end_h
            for span in self.phase_spans
        )

    @property
    def has_divided_doses(self) -> bool:
        """True when some phase is intermittent (its rate is a dose spread over an interval)."""
        return any(span.mode == "intermittent" for span in self.phase_spans)

    @property
    def overload_gain_percent(self) -> float:
        """The overload gain as a percentage of baseline weight (10 % by default)."""
        return self.overload_gain_fraction * 100.0

    def __repr__(self) -> str:
        return (
            f"Timeline({len(self.hours)} points, 0–{self.end_h:g} h, "
            f"given {format_quantity(float(self.given_ml[-1]), 'mL')}, "
            f"baseline {format_quantity(self.baseline_weight_kg, 'kg')})"
        )


def _frozen(array: np.ndarray) -> np.ndarray:
    array.setflags(write=False)
    return array


def _grid(step_h: float, end_h: float, breaks: np.ndarray) -> np.ndarray:
    """Every ``step_h`` from 0 to ``end_h``, with the plan's own steps (``breaks``) exact."""
    count = int(np.floor(end_h / step_h + 1e-9))
    uniform = np.arange(count + 1) * step_h
    pos = np.searchsorted(breaks, uniform)
    below = breaks[np.clip(pos - 1, 0, len(breaks) - 1)]
    above = breaks[np.clip(pos, 0, len(breaks) - 1)]
    near = np.minimum(np.abs(uniform - below), np.abs(uniform - above)) < GRID_TOLERANCE_H
    return np.sort(np.concatenate((uniform[~near & (uniform < end_h)], breaks)))


def timeline(plan: Plan, *, step_minutes: float = 5.0) -> Timeline:
    """Sample ``plan`` every ``step_minutes`` (and at each phase boundary and dose hour).

    Given: continuous phases integrate their rate (rate × time within the phase);
    divided boluses add each dose at its dose hour. What is consumed is the plan's
    outflow (:meth:`Plan.consumed_ml`: maintenance + ongoing losses, or in ins-and-outs
    mode the measured outputs, up to the plan's end). Then, in mL:

    * needed = deficit + consumed(t) (Davis 2013; Pardo 2024),
    * weight (kg) = the course's: entered weight + (given − insensible − losses − urine) ÷
      1000 (1 mL ≈ 1 g, Davis 2013; :attr:`vetfluid.planning.body.BodyCourse.weight_kg`),
    * deficit still to give = max(deficit − (given − consumed(t)), 0): the plan's account,
    * overload weight = entered weight × (1 + 10 %) (Pardo 2024).
    """
    step = require_number(step_minutes, "step_minutes", low=0.1, high=60, unit="min")
    if not plan.phases:
        raise InputError("the plan has no phases to draw", field="phases", value=plan.phases)
    phases = sorted(plan.phases, key=lambda p: p.start_h)
    starts = np.array([p.start_h for p in phases])
    ends = np.array([p.end_h for p in phases])
    rates = np.array([p.average_ml_per_h for p in phases])
    continuous = np.array([p.mode == "continuous" for p in phases])
    dose_hours = np.array([h for p in phases for h in p.dose_hours()], dtype=float)
    dose_ml = np.array([p.dose_ml or 0.0 for p in phases for _ in p.dose_hours()], dtype=float)
    end_h = float(ends.max())
    breaks = distinct_sorted(np.concatenate(([0.0, end_h], starts, ends, dose_hours)))
    hours = _grid(step / 60.0, end_h, breaks)

    # the planned rate: the phase whose [start, end) holds each point, else 0
    index = np.searchsorted(starts, hours, side="right") - 1
    safe = np.clip(index, 0, len(phases) - 1)
    active = (index >= 0) & (hours < ends[safe])
    rate = np.where(active, rates[safe], 0.0)

    # given: continuous phases integrate; doses step up at their hour (inclusive)
    elapsed = np.clip(hours[None, :] - starts[continuous, None], 0.0, None)
    elapsed = np.minimum(elapsed, (ends - starts)[continuous, None])
    given = rates[continuous] @ elapsed if continuous.any() else np.zeros_like(hours)
    if dose_hours.size:
        order = np.argsort(dose_hours, kind="stable")
        cumulative = np.concatenate(([0.0], np.cumsum(dose_ml[order])))
        given = given + cumulative[np.searchsorted(dose_hours[order], hours, side="right")]

    consumed = plan.consumed_ml(hours)
    # the weight is the course's (the plan's body: the kidney's urine too), never a second
    # prediction from given − consumed
    followed = body.of_plan(plan, load_table())
    weight = np.interp(hours, followed.hours, followed.weight_kg)
    deficit = float(plan.deficit_ml)
    baseline = float(plan.request.weight_kg)
    gain = limit("overload_weight_gain_fraction").value
    return Timeline(
        hours=_frozen(hours),
        rate_ml_per_h=_frozen(rate),
        given_ml=_frozen(given),
        needed_ml=_frozen(deficit + consumed),
        remaining_deficit_ml=_frozen(np.maximum(deficit - (given - consumed), 0.0)),
        weight_kg=_frozen(weight),
        baseline_weight_kg=baseline,
        overload_weight_kg=overload_weight_kg(
            weight_kg=baseline, deficit_ml=deficit, gain_fraction=gain
        ),
        overload_gain_fraction=gain,
        deficit_ml=deficit,
        consumed_ml=_frozen(consumed),
        phase_spans=tuple(
            PhaseSpan(kind=p.kind, mode=p.mode, start_h=p.start_h, end_h=p.end_h) for p in phases
        ),
        start_time=plan.request.start_time,
    )


def nearest_index(tl: Timeline, hour: float) -> int:
    """Index of the grid point nearest ``hour`` (clamped to the timeline)."""
    h = require_number(hour, "hour")
    pos = int(np.searchsorted(tl.hours, h))
    if pos <= 0:
        return 0
    if pos >= len(tl.hours):
        return len(tl.hours) - 1
    return pos if tl.hours[pos] - h < h - tl.hours[pos - 1] else pos - 1


def values_at(tl: Timeline, hour: float) -> dict[str, float]:
    """Every series at the grid point nearest ``hour``, plus that point's ``hour``."""
    i = nearest_index(tl, hour)
    values = {"hour": float(tl.hours[i])}
    values.update({name: float(getattr(tl, name)[i]) for name in SERIES})
    return values


def clock_labels(tl: Timeline, hours: Iterable[float]) -> tuple[str | None, ...]:
    """Clock time (``HH:MM``, ``(+N d)`` past midnight) of each hour; ``None`` without a start."""
    return tuple(clock_time(tl.start_time, float(h)) for h in hours)


def tick_labels(tl: Timeline, hours: Iterable[float]) -> tuple[str, ...]:
    """Axis tick text: ``"6 h"``, with the clock time on a second line when a start is set."""
    labels = []
    for h in hours:
        text = format_quantity(float(h), "h")
        clock = clock_time(tl.start_time, float(h))
        labels.append(f"{text}\n{clock}" if clock else text)
    return tuple(labels)
