"""Observations: alerts against the plan, ins-and-outs, re-planning from the current state."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vetfluid.common.errors import InputError
from vetfluid.course.observations import (
    Observation,
    alerts,
    check_observation,
    outputs_agree,
    predicted_weight_kg,
    replan_request,
    weight_is_plausible,
)
from vetfluid.physiology.ins_and_outs import ins_and_outs
from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import PlanRequest, build_plan


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
    # 0.4 kg short of the rehydrated 21.4 kg is 1.905 % of 21 kg, entered as 1.9 %
    assert request.dehydration_percent == 1.9
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
    from vetfluid.course.observations import ins_and_outs_from_observations

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
    from vetfluid.course.observations import measured_outputs

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


@pytest.fixture(scope="module")
def lizard():
    # a 350 g bearded dragon at a temperature inside its preferred range
    return build_plan(PlanRequest(species_id="bearded_dragon", weight_kg=0.35,
                                  dehydration_percent=5, body_temp_c=30))  # fmt: skip


@pytest.mark.parametrize(
    ("weight_kg", "accepted"),
    # the rule: within a factor of 1.5 of the entered 20 kg, either way (common practice)
    [(20 * 1.49, True), (20 * 1.51, False), (20 / 1.49, True), (20 / 1.51, False),
     (20.0, True), (23.6, True)],
)  # fmt: skip
def test_a_weight_beyond_a_factor_of_one_and_a_half_is_refused(dog, weight_kg, accepted):
    observation = Observation(hour=4, weight_kg=weight_kg)
    assert weight_is_plausible(measured_kg=weight_kg, entered_kg=20) is accepted
    if accepted:
        check_observation(dog, observation)
    else:
        with pytest.raises(InputError, match="plan's weight of 20 kg"):
            check_observation(dog, observation)


def test_a_gram_reading_typed_as_kilograms_is_refused_naming_both_weights(lizard):
    # the review's case: a scale reading of 352 g typed into a kg field
    with pytest.raises(InputError) as caught:
        check_observation(lizard, Observation(hour=2, weight_kg=352), weight_unit="kg")
    text = caught.value.one_line()
    assert "352 kg" in text and "350 g" in text
    assert "unit (g, kg or lb)" in text and "not recorded" in text
    check_observation(lizard, Observation(hour=2, weight_kg=0.352), weight_unit="g")


def test_pounds_typed_as_kilograms_and_back_are_refused(dog):
    # 1 lb = 0.45359237 kg: the 20 kg dog weighs about 44 lb
    with pytest.raises(InputError, match="44 kg"):
        check_observation(dog, Observation(hour=2, weight_kg=44.0))
    with pytest.raises(InputError, match="20 lb"):
        check_observation(dog, Observation(hour=2, weight_kg=20 * 0.45359237), weight_unit="lb")


def test_replan_refuses_an_implausible_latest_weight(lizard):
    with pytest.raises(InputError, match="no new plan") as caught:
        replan_request(lizard, [Observation(hour=2, weight_kg=0.36),
                                Observation(hour=4, weight_kg=352)])  # fmt: skip
    assert "352 kg" in str(caught.value) and "350 g" in str(caught.value)
    assert replan_request(lizard, [Observation(hour=4, weight_kg=0.36)]).weight_kg == 0.36


def test_an_implausible_recorded_weight_is_a_hard_alert_and_nothing_else(lizard):
    # e.g. recorded before the plan's weight was corrected: no overload alarm from it
    found = alerts(lizard, [Observation(hour=8, weight_kg=352)])
    assert codes(found) == {"IMPLAUSIBLE_WEIGHT"}
    assert found[0].severity == "hard"
    assert "352 kg" in found[0].message and "350 g" in found[0].message


def test_a_small_patients_overload_alert_speaks_in_grams(lizard):
    # Pardo 2024: the line is 10 % over the rehydrated weight (350 g + 5 % deficit)
    line_g = (0.35 + lizard.deficit_ml / 1000) * 1.1 * 1000
    found = alerts(lizard, [Observation(hour=8, weight_kg=line_g / 1000 + 0.005)])
    overload = next(f for f in found if f.code == "OBSERVED_OVERLOAD")
    assert f"{line_g + 5:.0f} g" in overload.message and " kg" not in overload.message


def test_outputs_saved_with_their_observations_are_not_counted_again():
    from vetfluid.course.observations import measured_outputs, outputs_not_observed

    observed = [Observation(hour=4.0, urine_ml=70.0, urine_period_h=4.0)]
    saved = measured_outputs(observed, period_h=4)  # what the saved request holds
    assert saved == ((70.0, 0.0),)
    assert outputs_not_observed(saved, observed, period_h=4) == ((0.0, 0.0),)
    # outputs with no observation behind them (an older plan file) are kept
    assert outputs_not_observed(((90.0, 10.0),), observed, period_h=4) == ((20.0, 10.0),)
    assert outputs_not_observed(((50.0, 0.0),), observed, period_h=4) == ((0.0, 0.0),)


@pytest.mark.parametrize(
    "older",  # outputs saved from measurements that are no longer among the observations
    [(), ((50.0, 0.0),), ((50.0, 0.0), (0.0, 0.0)), ((30.0, 5.0), (20.0, 0.0), (0.0, 0.0))],
)
def test_a_reopened_plan_with_outputs_from_earlier_periods_counts_each_loss_once(older):
    """Saved outputs that reach past the latest urine measurement: a loss recorded in such
    a period is in the saved outputs and among the observations, and counts once."""
    from vetfluid.course.observations import measured_outputs, outputs_not_observed

    observed = [
        Observation(hour=4.0, urine_ml=40.0, urine_period_h=4.0),
        Observation(hour=6.0, other_losses_ml=20.0),  # vomit in the second period
    ]
    saved = measured_outputs(observed, period_h=4, earlier=older)
    reopened = measured_outputs(
        observed, period_h=4, earlier=outputs_not_observed(saved, observed, period_h=4)
    )
    assert outputs_agree(reopened, saved)  # reopened untouched: the same volumes replaced


def test_outputs_agree_within_a_nanolitre_and_never_across_periods():
    assert outputs_agree(((46.666666666666664, 0.0),), ((46.66666666666667, 0.0),))
    assert not outputs_agree(((46.6667, 0.0),), ((46.6666, 0.0),))  # a real 0.1 µL apart
    assert not outputs_agree(((70.0, 0.0),), ((70.0, 0.0), (0.0, 0.0)))  # a period more
    assert outputs_agree((), ())


_urine = st.builds(
    Observation,
    hour=st.floats(0.25, 30.0).map(lambda h: round(h, 2)),
    urine_ml=st.floats(1.0, 300.0),
    urine_period_h=st.sampled_from([1.0, 2.0, 3.0, 4.0, 5.0, 7.0]),
)
_loss = st.builds(
    Observation,
    hour=st.floats(0.0, 30.0).map(lambda h: round(h, 1)),
    other_losses_ml=st.floats(1.0, 100.0),
)


@settings(max_examples=300, deadline=None)
@given(
    observed=st.lists(st.one_of(_urine, _loss), min_size=1, max_size=6),
    older=st.lists(st.tuples(st.floats(0.0, 80.0), st.sampled_from([0.0, 5.5])), max_size=3),
    period=st.sampled_from([1.0, 2.0, 3.0, 4.0, 6.0, 8.0]),
)
def test_any_reopened_plan_replaces_the_volumes_it_was_saved_with(observed, older, period):
    """Saved outputs taken apart and added up again (what reopening a version does) give
    the saved volumes back, whatever was measured: fractional volumes, urine collected
    across periods, losses past the latest urine measurement."""
    from vetfluid.course.observations import measured_outputs, outputs_not_observed

    saved = measured_outputs(observed, period_h=period, earlier=tuple(older))
    earlier = outputs_not_observed(saved, observed, period_h=period)
    assert outputs_agree(measured_outputs(observed, period_h=period, earlier=earlier), saved)


def _io_request(outputs=((70.0, 0.0),)):
    from dataclasses import replace

    return replace(DEMOS["renal_cat"].request, ins_and_outs_period_h=4.0, measured_outputs=outputs)


def test_a_saved_ins_and_outs_plan_still_follows_after_a_new_urine_measurement():
    """The outputs of an ins-and-outs plan come from the urine measured: a measurement
    recorded on a saved version leaves the plan that version (reopening it with that
    measurement builds the same plan); a change of any input, or a saved measurement
    removed, does not."""
    from dataclasses import replace

    from vetfluid.course.observations import follows_saved_request, measured_outputs

    first = Observation(hour=4.0, urine_ml=70.0, urine_period_h=4.0)
    second = Observation(hour=8.0, urine_ml=40.0, urine_period_h=4.0)
    saved = _io_request(measured_outputs([first], period_h=4.0))
    assert follows_saved_request(saved, saved, [first])
    now = _io_request(measured_outputs([first, second], period_h=4.0))
    assert now.measured_outputs == ((70.0, 0.0), (40.0, 0.0))
    assert follows_saved_request(now, saved, [first, second])
    # the same outputs with an input changed: another plan
    assert not follows_saved_request(replace(now, weight_kg=4.5), saved, [first, second])
    # outputs that the observations do not account for (a measurement removed, typed over)
    assert not follows_saved_request(_io_request(((40.0, 0.0),)), saved, [second])
    assert not follows_saved_request(
        _io_request(((70.0, 0.0), (45.0, 0.0))), saved, [first, second]
    )
    # a plan that does not follow its outputs is compared input for input
    plain = DEMOS["renal_cat"].request
    assert follows_saved_request(plain, plain, [first])
    assert not follows_saved_request(replace(plain, weight_kg=4.5), plain, [])


def test_whole_numbers_from_a_plan_file_take_the_next_measurement():
    """A hand-edited file may give outputs as whole numbers; the next urine adds to them."""
    from vetfluid.course.observations import measured_outputs

    observed = [Observation(hour=8.0, urine_ml=30.0, urine_period_h=4.0)]
    assert measured_outputs(observed, period_h=4, earlier=((70, 0),)) == ((70.0, 0.0), (30.0, 0.0))


def test_an_observation_dated_after_now_is_refused_when_the_plan_is_on_the_calendar():
    """A measurement cannot have been made yet (our rule, no source; 10 min of clock slack)."""
    from dataclasses import replace
    from datetime import date, datetime, time

    from vetfluid.course.observations import CLOCK_SLACK

    request = replace(DEMOS["dehydrated_dog"].request, start_date=date(2026, 12, 4),
                      start_time=time(8, 0))  # fmt: skip
    plan = build_plan(request)
    now = datetime(2026, 12, 4, 11, 0)
    check_observation(plan, Observation(hour=3.0, heart_rate_per_min=120), now=now)
    slack_h = CLOCK_SLACK.total_seconds() / 3600
    check_observation(plan, Observation(hour=3.0 + slack_h, heart_rate_per_min=120), now=now)
    with pytest.raises(InputError, match="2026-12-04 12:00, still to come"):
        check_observation(plan, Observation(hour=4.0, heart_rate_per_min=120), now=now)
    # a plan with a clock but no date cannot tell: accepted
    undated = build_plan(replace(request, start_date=None))
    check_observation(undated, Observation(hour=40.0, heart_rate_per_min=120), now=now)
