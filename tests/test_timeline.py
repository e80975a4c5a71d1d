"""The rehydration timeline: given vs needed, remaining deficit, predicted weight.

Reference checks (``@pytest.mark.reference``) compare with values worked out here by
hand from the published method named beside each check; ``x ** 0.75`` is computed as
``sqrt(x) · sqrt(sqrt(x))``, never by calling the core. Other tests check the
timeline's own identities against the plan it was built from.
"""

from __future__ import annotations

import math
from datetime import time

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vetfluid.common.errors import InputError
from vetfluid.course.model import SHOWN_STEP_MINUTES, course
from vetfluid.course.timeline import (
    SERIES,
    clock_labels,
    nearest_index,
    tick_labels,
    timeline,
    values_at,
)
from vetfluid.planning.plan import PlanRequest, build_plan

reference = pytest.mark.reference
STEP_MIN = 5.0
STEP_H = STEP_MIN / 60.0


def pow075(x: float) -> float:
    root = math.sqrt(x)
    return root * math.sqrt(root)


def at(tl, hour: float) -> int:
    """Index of the grid point exactly at ``hour`` (fails if there is none)."""
    (hits,) = np.nonzero(np.isclose(tl.hours, hour, atol=1e-9, rtol=0))
    assert hits.size == 1, f"no single grid point at {hour} h"
    return int(hits[0])


@pytest.fixture(scope="module")
def dog():
    """20 kg dog, 7 % dehydrated, deficit over 12 h, no resuscitation."""
    return build_plan(
        PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7, replace_hours=12)
    )


@pytest.fixture(scope="module")
def dog_shock():
    return build_plan(
        PlanRequest(
            species_id="dog",
            weight_kg=20,
            dehydration_percent=7,
            replace_hours=12,
            resuscitation_boluses=2,
            start_time=time(22, 30),
        )  # fmt: skip
    )


@pytest.fixture(scope="module")
def gerbil():
    return build_plan(
        PlanRequest(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=6)
    )


PLANS = {
    "dog": dict(species_id="dog", weight_kg=20, dehydration_percent=7, replace_hours=12),
    "dog_shock": dict(
        species_id="dog", weight_kg=20, dehydration_percent=7, resuscitation_boluses=2
    ),
    "cat_losses_syringe": dict(
        species_id="cat",
        weight_kg=4,
        dehydration_percent=8,
        replace_hours=18,
        losses_ml_per_day=120,
        device="syringe",
    ),  # fmt: skip
    "dog_maintenance_only": dict(species_id="dog", weight_kg=30),
    "gerbil": dict(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=6),
}


@pytest.fixture(params=sorted(PLANS), scope="module")
def any_plan(request):
    return build_plan(PlanRequest(**PLANS[request.param]))


# ---- reference values -------------------------------------------------------------------------


@reference
def test_given_meets_need_at_end_of_replacement_dog(dog):
    # Davis 2013: deficit (mL) = 20 kg × 0.07 × 1000 = 1400 mL; maintenance 132 × 20^0.75
    # = 1248.38 mL/day, so over the 12 h replacement 624.19 mL: 2024.19 mL in all.
    expected = 1400 + 132 * pow075(20) * 12 / 24
    tl = timeline(dog, step_minutes=STEP_MIN)
    end = dog.main_phase.end_h
    assert end == 12
    i = at(tl, end)
    assert tl.needed_ml[i] == pytest.approx(expected, abs=0.01)
    tolerance = dog.consumed_ml(STEP_H)  # one grid step of need
    assert abs(tl.given_ml[i] - tl.needed_ml[i]) <= tolerance
    # and not before: an hour earlier the dog is still behind by a whole hour of deficit
    j = at(tl, end - 1)
    assert tl.needed_ml[j] - tl.given_ml[j] == pytest.approx(1400 / 12, abs=tolerance)


@reference
def test_needed_grows_by_maintenance_and_losses(any_plan):
    # Need = deficit + (maintenance + losses) × t/24 (Davis 2013; Pardo 2024).
    tl = timeline(any_plan)
    daily = any_plan.maintenance.ml_per_day + any_plan.request.losses_ml_per_day
    expected = any_plan.deficit_ml + daily * tl.hours / 24.0
    np.testing.assert_allclose(tl.needed_ml, expected, rtol=1e-12, atol=1e-9)
    assert tl.needed_ml[0] == pytest.approx(any_plan.deficit_ml)  # the deficit is owed at once


@reference
def test_cat_need_after_24_h_from_the_formulas():
    # Davis 2013: 4 kg cat, 8 % → 320 mL; maintenance 80 × 4^0.75 = 226.27 mL/day;
    # plus 120 mL/day of vomiting: 666.27 mL needed by hour 24.
    plan = build_plan(PlanRequest(**PLANS["cat_losses_syringe"]))
    tl = timeline(plan)
    assert tl.needed_ml[at(tl, 24)] == pytest.approx(320 + 80 * pow075(4) + 120, abs=0.01)


@reference
def test_dog_regains_the_deficit_as_weight(dog):
    # Davis 2013, "1 kg lost ≈ 1 L": replacing a 1.4 L deficit puts 1.4 kg back on a
    # 20 kg dog, so it should weigh about 21.4 kg once the deficit is in. The weight is the
    # course's: a dehydrated dog's kidney holds water (ADH answers the volume deficit) while
    # the deficit goes in, then passes the excess once the ECF is full (docs/model.md), so
    # it runs a little over 21.4 kg at 12 h and comes back within 150 g of it by 24 h — and
    # never near the 23.54 kg overload line.
    tl = timeline(dog)
    assert tl.weight_kg[0] == 20
    assert 21.4 <= tl.weight_kg[at(tl, 12)] < 21.4 * 1.03
    assert tl.weight_kg[-1] == pytest.approx(21.4, abs=0.15)


@reference
def test_overload_line_is_ten_percent_over_baseline(dog):
    # Pardo 2024: a gain of 10 % or more over baseline weight marks overhydration; the
    # baseline of a dehydrated patient is its euhydrated weight, 20 kg + 1.4 L deficit
    # (Davis 2013: 1 L ≈ 1 kg), so the line sits at 21.4 × 1.1 = 23.54 kg.
    tl = timeline(dog)
    assert tl.baseline_weight_kg == 20
    assert tl.overload_weight_kg == pytest.approx(23.54)
    assert tl.overload_gain_fraction == pytest.approx(0.10)
    assert tl.weight_kg.max() < tl.overload_weight_kg


@reference
def test_resuscitation_bolus_is_a_high_short_step(dog_shock):
    # Pardo 2024 (bolus over 15 min: published; 15 mL/kg: recalled): 20 kg → 300 mL in
    # 0.25 h = 1200 mL/h, twice, before replacement at 1400/12 + 1248.38/24 mL/h.
    tl = timeline(dog_shock)
    replacement = 1400 / 12 + 132 * pow075(20) / 24
    first, second = at(tl, 0.25), at(tl, 0.5)
    assert np.all(tl.rate_ml_per_h[:second] == pytest.approx(1200))
    assert tl.rate_ml_per_h[second] == pytest.approx(replacement)
    assert tl.rate_ml_per_h[second] < tl.rate_ml_per_h[0] / 5
    assert tl.given_ml[first] == pytest.approx(300)
    assert tl.given_ml[second] == pytest.approx(600)
    # the bolus shows in the weight at once (1 mL ≈ 1 g) less the little that left meanwhile
    # (a maintenance allowance would be 0.5 × 132 × 20^0.75 / 24 ≈ 26 mL in the half hour)
    assert 20.6 - 0.1 < tl.weight_kg[second] <= 20.6


# ---- identities ---------------------------------------------------------------------------------


def test_last_given_is_the_plan_volume(any_plan):
    tl = timeline(any_plan)
    assert tl.given_ml[-1] == pytest.approx(sum(p.volume_ml for p in any_plan.phases), rel=1e-12)
    assert tl.given_ml[0] >= 0
    assert np.all(np.diff(tl.given_ml) >= -1e-9)  # fluid given is never taken back


def test_the_timelines_weight_is_the_courses_everywhere(any_plan):
    # Issue 20: one weight prediction. The Timeline shows the course's weight (given less
    # insensible water, losses and the kidney's urine; 1 mL ≈ 1 g, Davis 2013) at every hour
    # the two grids share.
    tl = timeline(any_plan)
    # a standard plan's outflow: maintenance + losses every hour up to the plan's end
    rate = any_plan.maintenance.ml_per_h + any_plan.request.losses_ml_per_day / 24.0
    np.testing.assert_allclose(tl.consumed_ml, rate * np.minimum(tl.hours, any_plan.end_h))
    modelled = course(any_plan, step_minutes=SHOWN_STEP_MINUTES)
    shared = np.isin(np.round(tl.hours, 9), np.round(modelled.hours, 9))
    assert shared.sum() > 10
    np.testing.assert_allclose(
        tl.weight_kg[shared], np.interp(tl.hours[shared], modelled.hours, modelled.weight_kg),
        rtol=1e-12,
    )  # fmt: skip
    # the deficit still to give is the plan's account, not a weight
    net = tl.given_ml - tl.consumed_ml
    np.testing.assert_allclose(tl.remaining_deficit_ml, np.maximum(any_plan.deficit_ml - net, 0))


def test_remaining_deficit_never_negative_and_zero_when_replaced(any_plan):
    tl = timeline(any_plan)
    assert np.all(tl.remaining_deficit_ml >= 0)
    assert tl.remaining_deficit_ml[0] <= any_plan.deficit_ml
    replacement = [p for p in any_plan.phases if p.kind == "replacement"]
    if replacement:
        done = at(tl, replacement[-1].end_h)
        # a syringe pump is set to 0.1 mL/h: up to 0.05 mL/h × hours may stay unreplaced;
        # a divided dose is drawn to the 0.01 mL marks: half a mark a site may stay
        last = replacement[-1]
        slack = 0.05 * last.hours if last.syringe_fills else 1e-9
        if last.mode == "intermittent":
            slack = 0.005 * last.sites_per_dose * len(last.dose_hours())
        assert tl.remaining_deficit_ml[done] == pytest.approx(0, abs=slack)
        assert np.all(tl.remaining_deficit_ml[done:] <= slack)
    else:
        assert np.all(tl.remaining_deficit_ml == 0)


def test_remaining_deficit_falls_steadily_during_a_continuous_replacement(dog):
    tl = timeline(dog)
    during = tl.hours < 12
    remaining = tl.remaining_deficit_ml[during]
    assert np.all(remaining > 0)
    assert np.all(np.diff(remaining) < 0)
    np.testing.assert_allclose(remaining, 1400 - 1400 / 12 * tl.hours[during], atol=1e-9)


def test_divided_boluses_step_at_dose_hours(gerbil):
    tl = timeline(gerbil)
    doses = [(h, p.dose_ml) for p in gerbil.phases for h in p.dose_hours()]
    assert gerbil.device == "divided" and len(doses) >= 4
    assert [h for h, _ in doses] == list(range(0, int(gerbil.end_h), 6))
    for hour, dose in doses:
        i = at(tl, hour)
        before = tl.given_ml[i - 1] if i else 0.0
        assert tl.given_ml[i] - before == pytest.approx(dose)
    # flat between doses: no fluid runs in continuously
    dose_points = {at(tl, h) for h, _ in doses}
    flat = [k for k in range(1, len(tl.hours)) if k not in dose_points]
    np.testing.assert_array_equal(np.diff(tl.given_ml)[np.array(flat) - 1], 0.0)
    # the rate plot shows each dose spread over its interval
    for phase in gerbil.phases:
        i = at(tl, phase.start_h)
        assert tl.rate_ml_per_h[i] == pytest.approx(phase.dose_ml / phase.interval_h)


def test_divided_at_knows_which_hours_run_on_doses(gerbil, dog):
    tl = timeline(gerbil)
    assert all(tl.divided_at(h) for h in (0.0, 5.9, 24.0, tl.end_h - 0.1))
    assert not tl.divided_at(tl.end_h)  # nothing runs after the plan
    dog_tl = timeline(dog)
    assert not any(dog_tl.divided_at(h) for h in (0.0, 12.0, dog_tl.end_h - 0.1))


def test_overload_line_is_ten_percent_over_the_rehydrated_weight(dog):
    tl = timeline(dog)
    # euhydrated = entered + deficit (1 L ≈ 1 kg, Davis 2013); +10 % marks overload (Pardo 2024)
    assert tl.euhydrated_weight_kg == pytest.approx(tl.baseline_weight_kg + tl.deficit_ml / 1000)
    assert tl.overload_weight_kg == pytest.approx(tl.euhydrated_weight_kg * 1.10)


def test_rate_is_a_step_per_phase_and_zero_after_the_end(dog_shock):
    tl = timeline(dog_shock)
    for phase in dog_shock.phases:
        inside = (tl.hours >= phase.start_h) & (tl.hours < phase.end_h)
        assert inside.any()
        np.testing.assert_allclose(tl.rate_ml_per_h[inside], phase.rate_ml_per_h)
    assert tl.rate_ml_per_h[-1] == 0
    assert tl.end_h == dog_shock.phases[-1].end_h


def test_grid_spans_the_plan_with_every_step_on_it(dog_shock):
    tl = timeline(dog_shock, step_minutes=7)
    assert tl.hours[0] == 0 and tl.hours[-1] == dog_shock.phases[-1].end_h
    gaps = np.diff(tl.hours)
    assert np.all(gaps > 0) and gaps.max() <= 7 / 60 + 1e-12
    for phase in dog_shock.phases:
        at(tl, phase.start_h)
        at(tl, phase.end_h)
    for name in ("hours", *SERIES):
        assert getattr(tl, name).shape == tl.hours.shape


def test_arrays_are_read_only(dog):
    tl = timeline(dog)
    with pytest.raises(ValueError):
        tl.given_ml[0] = 1.0


@pytest.mark.parametrize("step", [0, -5, float("nan"), 61])
def test_bad_step_is_refused(dog, step):
    with pytest.raises(InputError) as caught:
        timeline(dog, step_minutes=step)
    assert caught.value.field == "step_minutes"


@settings(max_examples=30, deadline=None)
@given(
    weight=st.floats(2, 60),
    percent=st.floats(0, 12),
    hours=st.floats(4, 48),
    losses=st.floats(0, 500),
    boluses=st.integers(0, 2),
)
def test_identities_hold_for_any_dog(weight, percent, hours, losses, boluses):
    plan = build_plan(
        PlanRequest(
            species_id="dog",
            weight_kg=weight,
            dehydration_percent=percent,
            replace_hours=hours,
            losses_ml_per_day=losses,
            resuscitation_boluses=boluses,
        )  # fmt: skip
    )
    tl = timeline(plan)
    assert tl.given_ml[-1] == pytest.approx(sum(p.volume_ml for p in plan.phases), rel=1e-9)
    assert np.all(tl.remaining_deficit_ml >= 0)
    assert np.all(np.diff(tl.hours) > 0)
    # what stays is at most what was given (nothing comes from nowhere)
    assert np.all((tl.weight_kg - weight) * 1000 <= tl.given_ml + 1e-6)


# ---- hover read-out and clock ---------------------------------------------------------------


def test_values_at_returns_the_nearest_grid_values(dog):
    tl = timeline(dog)
    i = at(tl, 6)
    for hour in (6.0, 6.0 + 0.4 * STEP_H, 6.0 - 0.4 * STEP_H):
        values = values_at(tl, hour)
        assert values["hour"] == tl.hours[i]
        for name in SERIES:
            assert values[name] == getattr(tl, name)[i]
    assert nearest_index(tl, 6.0 + 0.6 * STEP_H) == i + 1
    assert values_at(tl, -3)["hour"] == 0
    assert values_at(tl, 1e4)["given_ml"] == tl.given_ml[-1]
    assert set(values_at(tl, 1)) == {"hour", *SERIES}


def test_values_at_refuses_a_non_number(dog):
    with pytest.raises(InputError):
        values_at(timeline(dog), float("nan"))


def test_clock_labels_follow_the_start_time(dog_shock, dog):
    # 22:30 + 2 h = 00:30 the next day; + 26 h = 00:30 two days on (clock arithmetic)
    tl = timeline(dog_shock)
    assert clock_labels(tl, [0, 1.5, 2, 26]) == ("22:30", "00:00 (+1 d)", "00:30 (+1 d)",
                                                 "00:30 (+2 d)")  # fmt: skip
    assert tick_labels(tl, [0, 6]) == ("0 h\n22:30", "6 h\n04:30 (+1 d)")
    plain = timeline(dog)
    assert clock_labels(plain, [0, 6]) == (None, None)
    assert tick_labels(plain, [0, 0.5, 12]) == ("0 h", "0.5 h", "12 h")
