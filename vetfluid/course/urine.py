"""Urine as the course is shown: flow per kg of body weight, the oliguria line it is read
against, the urine measured, and whether the osmolality band rests on recalled values.

Pure functions over a :class:`vetfluid.course.model.Course` and the observations; the
window draws what they return and computes nothing itself.

* **Flow** (:func:`predicted_flow`): the urine of each model step ÷ the step's length ÷
  the plan's weight, mL/kg/h, the figure ``Course.at()`` gives per hour. Only while the
  plan runs (``Course.outputs_end_h``: afterwards the patient's own intake is taken to
  match its losses, so no flow is predicted) and only where a kidney is modelled (none in
  ins-and-outs mode, where the urine is measured); the osmolality likewise
  (:func:`predicted_osmolality`).
* **Oliguria line** (:func:`oliguria_line`): the threshold the alerts use
  (:func:`vetfluid.course.observations.alerts`), the one chosen or else the low end of the
  species' normal urine output ``urine_output_ml_per_kg_h`` (dogs and cats 1–2 mL/kg/h,
  oliguria below 1; Foster JD 2018, thresholds of 0.5 or 0.25 also used).
* **Measured** (:func:`measured_flow`): each urine collection as a mean flow over its
  period, per kg of the latest plausible weight recorded by then: the alerts' arithmetic,
  so a measurement under the line is the one the alert names.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from vetfluid.common.checks import require_number
from vetfluid.course.model import Course
from vetfluid.course.observations import Observation, weight_is_plausible
from vetfluid.physiology.maintenance import usg_to_osmolality
from vetfluid.tables.species import SpeciesTable, SpeciesValue

URINE_OUTPUT = "urine_output_ml_per_kg_h"
FLOOR = ("min_urine_osmolality_mosm_per_kg", "min_urine_plasma_ratio")
CEILING = ("max_urine_osmolality_mosm_per_kg", "max_urine_plasma_ratio")


@dataclass(frozen=True, kw_only=True)
class OliguriaLine:
    """Urine output below ``ml_per_kg_h`` is oliguria; ``chosen`` when the user set it,
    else it is the species' own (``value``)."""

    ml_per_kg_h: float
    chosen: bool
    value: SpeciesValue | None


def oliguria_line(
    table: SpeciesTable, species_id: str, *, chosen_ml_per_kg_h: float | None = None
) -> OliguriaLine | None:
    """The oliguria threshold the alerts use: ``chosen_ml_per_kg_h`` when given, else the low
    end of the species' normal urine output (Foster JD 2018: dogs and cats < 1 mL/kg/h);
    None when the species has no value and none was chosen."""
    value = table.get(species_id, URINE_OUTPUT)
    if chosen_ml_per_kg_h is not None:
        chosen = require_number(chosen_ml_per_kg_h, "oliguria threshold", low=0, high=10,
                                unit="mL/kg/h")  # fmt: skip
        return OliguriaLine(ml_per_kg_h=chosen, chosen=True, value=value)
    if value is None:
        return None
    low = value.low if value.low is not None else value.number
    return OliguriaLine(ml_per_kg_h=low, chosen=False, value=value)


def predicted_flow(result: Course, *, weight_kg: float) -> tuple[np.ndarray, np.ndarray]:
    """(hours, mL/kg/h): the urine of the step ending at each grid hour ÷ its length ÷
    ``weight_kg`` (the first hour takes the first step's), up to ``result.outputs_end_h``.
    Empty where no kidney is modelled (``urine_osm_mosm_per_kg`` is None): no false zero."""
    weight = require_number(weight_kg, "weight_kg", positive=True, unit="kg")
    hours = result.hours
    last = int(np.searchsorted(hours, result.outputs_end_h + 1e-9))
    if result.urine_osm_mosm_per_kg is None or min(last, len(hours)) < 2:
        return np.zeros(0), np.zeros(0)
    hours = hours[:last]
    flow = np.diff(result.urine_ml[:last]) / np.diff(hours) / weight
    return hours, np.concatenate((flow[:1], flow))


def predicted_osmolality(result: Course) -> tuple[np.ndarray, np.ndarray]:
    """(hours, mOsm/kg): the osmolality of the urine of the step ending at each grid hour, up
    to ``result.outputs_end_h``; empty where no kidney is modelled. Hour 0 takes the first
    step's, as the flow does: no urine has been made by then, and the model's value there
    is only the point its first step starts from (the middle of the band)."""
    hours = result.hours
    last = int(np.searchsorted(hours, result.outputs_end_h + 1e-9))
    if result.urine_osm_mosm_per_kg is None or min(last, len(hours)) < 2:
        return np.zeros(0), np.zeros(0)
    osm = result.urine_osm_mosm_per_kg[:last]
    return hours[:last], np.concatenate((osm[1:2], osm[1:]))


def measured_flow(
    observations: Sequence[Observation], *, plan_weight_kg: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(start hour, end hour, mL/kg/h) of each urine collection, in order of hour: the
    volume ÷ its period ÷ the latest weight recorded by then that can be this patient's
    (:func:`weight_is_plausible`; the plan's weight before any), as the alerts reckon it."""
    weight = require_number(plan_weight_kg, "plan_weight_kg", positive=True, unit="kg")
    starts, ends, flows = [], [], []
    for obs in sorted(observations, key=lambda o: o.hour):
        if obs.weight_kg is not None and weight_is_plausible(
            measured_kg=obs.weight_kg, entered_kg=plan_weight_kg
        ):
            weight = obs.weight_kg
        rate = obs.urine_ml_per_kg_h(weight)
        if rate is not None and obs.urine_period_h is not None:
            starts.append(obs.hour - obs.urine_period_h)
            ends.append(obs.hour)
            flows.append(rate)
    return np.array(starts, dtype=float), np.array(ends, dtype=float), np.array(flows, dtype=float)


def measured_osmolality(
    observations: Sequence[Observation], table: SpeciesTable, species_id: str
) -> tuple[np.ndarray, np.ndarray, int]:
    """(hours, mOsm/kg) of each measured urine, in order of hour, and how many USGs were not
    read. An entered osmolality is taken as it is; a USG becomes (USG − 1) × 30 000
    (:func:`vetfluid.physiology.maintenance.usg_to_osmolality`, recalled: memory) where the
    species' USG can be read (``usg_interpretable``: not in birds and reptiles, whose urine
    carries urates and mucus), else it is counted and not drawn. An observation with both
    is drawn once, by its osmolality."""
    readable = bool(table.value(species_id, "usg_interpretable").value)
    points, not_read = [], 0
    for obs in observations:
        if obs.urine_osmolality is not None:
            points.append((obs.hour, obs.urine_osmolality))
        elif obs.usg is not None and readable:
            points.append((obs.hour, usg_to_osmolality(obs.usg)))
        elif obs.usg is not None:
            not_read += 1
    points.sort()
    hours = np.array([h for h, _ in points], dtype=float)
    return hours, np.array([v for _, v in points], dtype=float), not_read


def band_unverified(result: Course) -> tuple[bool, bool]:
    """Whether the urine osmolality band's floor, and its ceiling, rest on a recalled
    species value (basis ``memory``), to be shown as unverified."""
    used = result.provenance
    floor = any(v.unverified for v in used if v.parameter in FLOOR)
    ceiling = any(v.unverified for v in used if v.parameter in CEILING)
    return floor, ceiling
