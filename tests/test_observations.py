"""Observations: alerts against the plan, ins-and-outs, re-planning from the current state."""

from __future__ import annotations

import pytest

from vetfluid.errors import InputError
from vetfluid.ins_and_outs import ins_and_outs
from vetfluid.observations import (
    Observation,
    alerts,
    predicted_weight_kg,
    replan_request,
)
from vetfluid.plan import PlanRequest, build_plan


@pytest.fixture(scope="module")
def dog():
    return build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7,
                                  replace_hours=12, serum_na=160))  # fmt: skip


def codes(findings):
    return {f.code for f in findings}


def test_weight_at_the_overload_line_alerts(dog):
    # Pardo 2024: ≥ 10 % over baseline; baseline = euhydrated 21.4 kg → line 23.54 kg.
    assert "OBSERVED_OVERLOAD" in codes(alerts(dog, [Observation(hour=10, weight_kg=23.6)]))
    assert "OBSERVED_OVERLOAD" not in codes(alerts(dog, [Observation(hour=10, weight_kg=21.3)]))


def test_oliguria_below_the_species_threshold(dog):
    # Foster 2018: normal 1–2 mL/kg/h in dogs; below 1 is oliguria (our default threshold).
    low = Observation(hour=8, weight_kg=20.6, urine_ml=60, urine_period_h=4)  # 0.73 mL/kg/h
    ok = Observation(hour=8, weight_kg=20.6, urine_ml=120, urine_period_h=4)  # 1.46 mL/kg/h
    assert "OLIGURIA" in codes(alerts(dog, [low]))
    assert "OLIGURIA" not in codes(alerts(dog, [ok]))
    assert "OLIGURIA" not in codes(alerts(dog, [low], oliguria_ml_per_kg_h=0.5))  # editable


def test_sodium_falling_faster_than_the_limit(dog):
    fast = [Observation(hour=0, serum_na=160), Observation(hour=4, serum_na=156)]  # 1 mmol/L/h
    slow = [Observation(hour=0, serum_na=160), Observation(hour=4, serum_na=158.5)]
    assert "NA_CHANGING_TOO_FAST" in codes(alerts(dog, fast))
    assert "NA_CHANGING_TOO_FAST" not in codes(alerts(dog, slow))


def test_deficit_not_closing(dog):
    predicted = predicted_weight_kg(dog, 8)
    assert predicted > 20.5
    stuck = Observation(hour=8, weight_kg=20.1)
    assert "DEFICIT_NOT_CLOSING" in codes(alerts(dog, [stuck]))
    on_track = Observation(hour=8, weight_kg=predicted)
    assert "DEFICIT_NOT_CLOSING" not in codes(alerts(dog, [on_track]))


def test_ins_and_outs_follow_the_measured_urine():
    # Côté 2020: insensible (20 mL/kg/day) + measured urine + other losses, over the next period.
    rows = ins_and_outs(weight_kg=10, insensible_ml_per_kg_day=20, period_h=6,
                        measured=[(30, 0), (0, 0), (90, 20)])  # fmt: skip
    insensible = 20 * 10 * 6 / 24  # 50 mL per 6 h
    assert [r.replace_ml for r in rows] == [insensible + 30, insensible, insensible + 110]
    assert rows[2].next_rate_ml_per_h == pytest.approx((insensible + 110) / 6)
    assert [(r.start_h, r.end_h) for r in rows] == [(0, 6), (6, 12), (12, 18)]


def test_replan_starts_from_the_current_state(dog):
    observed = [Observation(hour=6, weight_kg=20.7, serum_na=157),
                Observation(hour=12, weight_kg=21.0, serum_k=3.4)]  # fmt: skip
    request = replan_request(dog, observed)
    assert request.weight_kg == 21.0
    assert request.dehydration_percent == pytest.approx((21.4 - 21.0) / 21.0 * 100)
    assert (request.serum_na, request.serum_k) == (157, 3.4)
    assert request.fluid_id == dog.request.fluid_id
    again = build_plan(request)
    assert again.deficit_ml == pytest.approx(400, rel=0.01)
    assert dog.deficit_ml == pytest.approx(1400)  # the earlier version is untouched


def test_a_replan_starts_when_its_weight_was_taken():
    from datetime import date, time

    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7,
                                  start_time=time(20, 0),
                                  start_date=date(2026, 12, 31)))  # fmt: skip
    request = replan_request(plan, [Observation(hour=6, weight_kg=20.9)])
    assert (request.start_date, request.start_time) == (date(2027, 1, 1), time(2, 0))


@pytest.mark.parametrize(
    "kwargs",
    [{"hour": -1}, {"hour": 1, "urine_ml": 20}, {"hour": 1, "weight_kg": 0},
     {"hour": 1, "mucous_membranes": "purple"}, {"hour": 1, "serum_na": 500}],
)  # fmt: skip
def test_bad_observations_are_input_errors(kwargs):
    with pytest.raises(InputError):
        Observation(**kwargs)


def test_replan_needs_a_weight(dog):
    with pytest.raises(InputError, match="measured weight"):
        replan_request(dog, [Observation(hour=2, serum_na=158)])


def test_ins_and_outs_table_follows_the_recorded_urine():
    # Côté 2020: each period's urine and other losses plus insensible loss, given next period.
    from vetfluid.observations import ins_and_outs_from_observations

    recorded = [Observation(hour=4, urine_ml=20, urine_period_h=4),
                Observation(hour=6, other_losses_ml=15),
                Observation(hour=10, urine_ml=5, urine_period_h=4),
                Observation(hour=12, urine_ml=3, urine_period_h=2)]  # fmt: skip
    rows = ins_and_outs_from_observations(recorded, weight_kg=10, insensible_ml_per_kg_day=20,
                                          period_h=6)  # fmt: skip
    insensible = 20 * 10 * 6 / 24
    assert [(r.urine_ml, r.other_losses_ml) for r in rows] == [(20, 15), (8, 0)]
    assert [r.next_rate_ml_per_h for r in rows] == [(insensible + 35) / 6, (insensible + 8) / 6]


def test_only_complete_periods_count_and_urine_is_spread_over_its_collection():
    from vetfluid.observations import measured_outputs

    # 3 h into a 6 h period nothing is complete yet: the plan stays in the first period
    assert measured_outputs([Observation(hour=3, urine_ml=9, urine_period_h=3)], period_h=6) == ()
    # 70 mL collected over hours 0–7: 60 mL in the first 6 h period, 10 in the second, which
    # is not complete yet
    assert measured_outputs([Observation(hour=7, urine_ml=70, urine_period_h=7)],
                            period_h=6) == ((60.0, 0.0),)  # fmt: skip
    # outputs saved with a reopened plan stay; what is recorded now adds to them
    saved = ((60.0, 0.0), (30.0, 12.0))
    again = [Observation(hour=18, urine_ml=20, urine_period_h=6),
             Observation(hour=9, other_losses_ml=5)]  # fmt: skip
    assert measured_outputs(again, period_h=6, earlier=saved) == ((60.0, 0.0), (30.0, 17.0),
                                                                  (20.0, 0.0))  # fmt: skip
    # urine collected before the plan started belongs to no period: 120 mL over 12 h to
    # hour 6 puts 60 mL in hours 0–6
    before = [Observation(hour=6, urine_ml=120, urine_period_h=12)]
    assert measured_outputs(before, period_h=6) == ((60.0, 0.0),)
    # a loss alone does not complete a period: its urine is still to come
    assert measured_outputs([Observation(hour=13, other_losses_ml=8)], period_h=6) == ()
