"""The ins-and-outs plan mode for oliguric and anuric patients, checked against the rule
of Côté E (ed.) Clinical Veterinary Advisor 2020 (AKI algorithm): the next period's fluid
= insensible loss (20 mL/kg/day) + the urine and other losses measured over the last."""

from __future__ import annotations

import json

import numpy as np
import pytest

from vetfluid import cli
from vetfluid.common.errors import InputError
from vetfluid.course.model import course
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.records.serialize import plan_dict, request_from_dict, request_to_dict

reference = pytest.mark.reference
INSENSIBLE_ML_PER_H = 20 * 20 / 24  # Côté 2020: 20 mL/kg/day, a 20 kg dog


def anuric_dog(measured=(), **changes):
    return build_plan(PlanRequest(species_id="dog", weight_kg=20, renal_disease=True,
                                  ins_and_outs_period_h=6, measured_outputs=measured,
                                  **changes))  # fmt: skip


@reference
def test_before_anything_is_measured_the_first_period_gives_insensible_loss_only():
    plan = anuric_dog()
    assert [(p.kind, p.start_h, p.end_h) for p in plan.phases] == [("ins and outs", 0, 6)]
    assert plan.phases[0].rate_ml_per_h == pytest.approx(INSENSIBLE_ML_PER_H)
    assert "INS_AND_OUTS" in {f.code for f in plan.findings}


@reference
def test_each_period_replaces_what_was_measured_over_the_one_before():
    plan = anuric_dog(measured=((60.0, 0.0), (30.0, 12.0)))
    rates = [p.rate_ml_per_h for p in plan.phases]
    # Côté 2020 by hand: (insensible for 6 h + urine + other) / 6 h
    assert rates == pytest.approx([INSENSIBLE_ML_PER_H, (100 + 60) / 6, (100 + 30 + 12) / 6])
    assert [r.replace_ml for r in plan.ins_and_outs] == pytest.approx([160, 142])


def test_a_deficit_is_added_over_its_replacement_hours():
    plan = anuric_dog(measured=((60.0, 0.0),), dehydration_percent=5, replace_hours=12)
    deficit_rate = 1000 / 12  # 5 % of 20 kg over 12 h (Davis 2013: 1 kg ≈ 1 L)
    rates = [p.rate_ml_per_h for p in plan.phases]
    assert rates == pytest.approx(
        [INSENSIBLE_ML_PER_H + deficit_rate, (100 + 60) / 6 + deficit_rate]
    )


def test_the_course_follows_the_measured_outputs():
    # what leaves is what was measured (and, in the period planned, the last measured again);
    # each period gives back the one before, so the patient runs one period behind
    measured = ((60.0, 0.0), (30.0, 12.0))
    plan = anuric_dog(measured=measured)
    c = course(plan)
    consumed = c.consumed_ml[[6 * 60, 12 * 60]]
    assert consumed == pytest.approx([160, 160 + 142])
    end = int(plan.end_h * 60)
    given, left = 100 + 160 + 142, 160 + 142 + 142
    assert c.weight_kg[end] == pytest.approx(20 + (given - left) / 1000, abs=1e-9)
    assert np.all(np.isfinite(c.plasma_ml))


def test_no_urine_is_assumed_on_top_of_what_was_measured():
    # an anuric patient whose kidneys are not flagged: the measured outflow is all that
    # leaves, so two boluses stay in the body (renal elimination is left out in this mode)
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, ins_and_outs_period_h=6,
                                  measured_outputs=((0.0, 0.0),),
                                  resuscitation_boluses=2))  # fmt: skip
    c = course(plan)
    assert c.excess_excretion_left_out and np.all(c.urine_ml == 0)
    end = int(plan.end_h * 60)
    assert c.weight_kg[end] == pytest.approx(20 + (c.given_ml[end] - c.consumed_ml[end]) / 1000)


def test_the_mode_round_trips_through_json_and_the_cli(capsys):
    plan = anuric_dog(measured=((60.0, 0.0), (30.0, 12.0)))
    request = json.loads(json.dumps(request_to_dict(plan.request)))
    assert request_from_dict(request) == plan.request
    assert cli.main(["plan", "--species", "dog", "--weight", "20 kg", "--renal",
                     "--ins-and-outs-period", "6", "--measured-urine-ml", "60,30",
                     "--measured-other-ml", "0,12", "--json"]) == 0  # fmt: skip
    data = json.loads(capsys.readouterr().out)
    assert data["ins_and_outs"] == plan_dict(plan)["ins_and_outs"]
    assert [p["rate_ml_per_h"] for p in data["phases"]] == pytest.approx(
        [p.rate_ml_per_h for p in plan.phases]
    )


@pytest.mark.parametrize(
    "changes",
    [
        {"measured_outputs": ((10.0, 0.0),)},  # measured but no period
        {"ins_and_outs_period_h": 0.5},
        {"ins_and_outs_period_h": 6, "measured_outputs": ((-1.0, 0.0),)},
        {"ins_and_outs_period_h": 6, "measured_outputs": ((1.0,),)},
    ],
)
def test_bad_ins_and_outs_input_is_refused(changes):
    with pytest.raises(InputError):
        PlanRequest(species_id="dog", weight_kg=20, **changes)


def test_a_species_without_an_insensible_loss_says_so():
    with pytest.raises(InputError, match="insensible_loss"):
        build_plan(PlanRequest(species_id="bearded_dragon", weight_kg=0.4,
                               ins_and_outs_period_h=6))  # fmt: skip


def test_boluses_longer_than_the_first_periods_leave_the_period_after_them():
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, ins_and_outs_period_h=1,
                                  resuscitation_boluses=4))  # fmt: skip
    periods = [p for p in plan.phases if p.kind == "ins and outs"]
    assert periods and periods[0].start_h == pytest.approx(1.0)  # 4 × 15 min of boluses


def test_boluses_whose_minutes_do_not_add_up_exactly_still_leave_a_period():
    # a clinic's 20 min boluses: 6 × 20 min sums to 1.9999999999999998 h in floating point
    from vetfluid.tables.overrides import set_override
    from vetfluid.tables.species import load_table

    set_override(species_id="dog", parameter="bolus_minutes", value=20, low=15, high=30,
                 note="clinic protocol")  # fmt: skip
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, ins_and_outs_period_h=2,
                                  resuscitation_boluses=6), load_table())  # fmt: skip
    periods = [p for p in plan.phases if p.kind == "ins and outs"]
    assert [(round(p.start_h, 6), p.end_h) for p in periods] == [(2.0, 4.0)]
    assert all(p.volume_ml > 0 for p in plan.phases)


def test_the_deficit_is_given_in_full_after_a_bolus():
    # Davis 2013: deficit = 5 % of 20 kg = 1 L, over the 12 h after the bolus
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, ins_and_outs_period_h=6,
                                  measured_outputs=((0.0, 0.0), (0.0, 0.0)),
                                  dehydration_percent=5, replace_hours=12,
                                  resuscitation_boluses=1))  # fmt: skip
    periods = [p for p in plan.phases if p.kind == "ins and outs"]
    insensible = sum(p.hours for p in periods) * INSENSIBLE_ML_PER_H
    deficit_given = sum(p.volume_ml for p in periods) - insensible
    assert periods[-1].end_h > periods[0].start_h + 12  # the plan covers the replacement
    assert deficit_given == pytest.approx(1000)
