"""What the course itself predicts that the plan's own checks cannot see: the plan's sodium
check leaves the kidney and the diuretics out (docs/model.md), so a course whose serum Na
leaves the species' reference interval faster than the correction limit says so, in the
Course tab's alerts and the CLI, in words (issue 19: the plan, the course and the sheet
agree, and nothing the course shows goes unsaid)."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest

from vetfluid import cli
from vetfluid.common.formatting import format_number
from vetfluid.course.model import PLASMA_CONTRACTION_SAID, SHOWN_STEP_MINUTES, course
from vetfluid.planning.bicarbonate import SERUM_HCO3_RANGE_MMOL_PER_L
from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.planning.safety import ECF_CONTRACTION_BLOCKED

FUROSEMIDE = (
    *(("furosemide", 2.0, "iv", h, h) for h in (0.0, 8.0)),
    ("furosemide", 0.66, "cri", 12.0, 20.0),
)


def _codes(findings) -> set[str]:  # noqa: ANN001
    return {f.code for f in findings}


def test_furosemide_that_drives_na_out_of_range_too_fast_is_said():
    """The dehydrated dog demo with furosemide 2 mg/kg IV at hours 0 and 8, then 0.66 mg/kg/h
    from hour 12 to 20 (Adin 2003): Na is driven well above the dog's interval faster than
    0.5 mmol/L/h (the limit, safety_limits.csv; Adrogué & Madias 2000) by free-water loss.
    The plan's own sodium check follows the same body as the course, so the plan says it;
    the course does not say it twice."""
    request = DEMOS["dehydrated_dog"].request
    plan = build_plan(PlanRequest(**{**request.__dict__, "diuretics": FUROSEMIDE}))
    found = {f.code: f for f in plan.findings}
    finding = found["SODIUM_CHANGE_TOO_FAST"]
    assert "rise" in finding.message
    assert "give back the urine furosemide makes" in finding.action.lower()
    result = course(plan, step_minutes=SHOWN_STEP_MINUTES)
    assert "PREDICTED_NA_OUTSIDE_RANGE" not in _codes(result.findings)
    per_hour = int(60 / SHOWN_STEP_MINUTES)
    changes = result.serum_na[per_hour:] - result.serum_na[:-per_hour]
    after_boluses = result.hours[:-per_hour] >= plan.main_phase.start_h - 1e-9
    assert plan.sodium.peak_change_per_h == pytest.approx(np.max(changes[after_boluses]))


def test_a_plain_rehydration_predicts_nothing_to_say():
    """The same dog without the diuretic: Na stays inside the interval (common practice, no
    source: an isotonic replacement fluid moves Na little)."""
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    assert _codes(course(plan, step_minutes=SHOWN_STEP_MINUTES).findings) == set()


def test_unreplaced_potassium_loss_under_a_loop_diuretic_is_said():
    """Furosemide every 8 h with no KCl in a dog whose K starts at the low end: the course
    predicts K below the interval (Gordon et al., Merck Veterinary Manual 2023: loop
    diuretics cause hypokalaemia)."""
    doses = tuple(("furosemide", 4.0, "iv", h, h) for h in (0.0, 8.0, 16.0))
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=145, serum_k=3.6,
                                  kcl_mmol_per_l=0, diuretics=doses))  # fmt: skip
    found = course(plan, step_minutes=SHOWN_STEP_MINUTES).findings
    assert "PREDICTED_K_BELOW_RANGE" in _codes(found)


def test_the_cli_course_prints_and_returns_what_the_course_predicts(capsys):
    base = ["course", "--species", "dog", "--weight", "20 kg", "--serum-na", "145",
            "--serum-k", "3.6", "--kcl-mmol-per-l", "0", "--diuretic", "furosemide",
            "--diuretic-route", "iv", "--diuretic-dose", "4",
            "--diuretic-at", "0,8,16"]  # fmt: skip
    assert cli.main([*base, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert "PREDICTED_K_BELOW_RANGE" in {f["code"] for f in data["course_findings"]}
    cli.main(base)
    out = capsys.readouterr().out
    assert "Predicted by the course" in out and "PREDICTED_" not in out  # words, not codes
    cli.main(["course", "--species", "dog", "--weight", "20 kg", "--json"])
    assert json.loads(capsys.readouterr().out)["course_findings"] == []


def test_a_hypernatraemic_patient_made_worse_is_said_too():
    """Starting above the interval is no exemption: Na 158 in a dog given furosemide four
    times climbs faster than the limit (review finding; Adrogué & Madias 2000: the limit
    holds for any change); the plan says so, and that it moves Na further from normal."""
    doses = tuple(("furosemide", 6.0, "iv", h, h) for h in (0.0, 4.0, 8.0, 12.0))
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=8,
                                  serum_na=158, serum_k=4.0, diuretics=doses))  # fmt: skip
    found = {f.code: f for f in plan.findings}
    assert "rise" in found["SODIUM_CHANGE_TOO_FAST"].message
    assert "diuretic" not in found["SODIUM_AWAY_FROM_NORMAL"].action


def test_potassium_climbing_in_an_oliguric_patient_given_kcl_is_said():
    """An oliguric dog at K 5.4 given 40 mmol/L KCl: K climbs above the interval (oliguria
    retains K; common practice, no source)."""
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=145, serum_k=5.4,
                                  renal_disease=True, renal_output="oliguric",
                                  kcl_mmol_per_l=40))  # fmt: skip
    found = course(plan, step_minutes=SHOWN_STEP_MINUTES).findings
    assert "PREDICTED_K_ABOVE_RANGE" in _codes(found)


def test_a_course_the_body_cannot_hold_is_said_and_never_shown_as_numbers_to_trust():
    """100 mL/day of diarrhoea in a 20 g mouse: more than its body water is lost; the course
    says it cannot follow the plan past that hour (hard) instead of printing negative
    weights as if they were a prediction."""
    plan = build_plan(PlanRequest(species_id="mouse", weight_kg=0.02, losses_ml_per_day=100,
                                  loss_type="diarrhoea", serum_na=145, serum_k=4.0))  # fmt: skip
    found = {f.code: f for f in course(plan, step_minutes=SHOWN_STEP_MINUTES).findings}
    assert found["COURSE_BEYOND_THE_MODEL"].severity == "hard"


def test_repeated_loop_diuretic_doses_that_contract_the_plasma_are_said():
    """Furosemide 2 mg/kg every 8 h for 5 days with maintenance only: Na may stay inside its
    interval while the plasma shrinks by a third (review finding). A fall of more than 20 %
    from where it started is said (common practice, no source: a loss of a fifth or more of
    the circulating volume is clinically significant hypovolaemia)."""
    doses = tuple(("furosemide", 2.0, "iv", float(h), float(h)) for h in range(0, 120, 8))
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=145, serum_k=4.0,
                                  diuretics=doses))  # fmt: skip
    found = course(plan, horizon_h=120, step_minutes=SHOWN_STEP_MINUTES).findings
    assert "PREDICTED_PLASMA_CONTRACTION" in _codes(found)
    plain = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=145, serum_k=4.0))
    assert "PREDICTED_PLASMA_CONTRACTION" not in _codes(
        course(plain, horizon_h=120, step_minutes=SHOWN_STEP_MINUTES).findings
    )


def test_bicarbonate_driven_out_of_its_interval_by_losses_is_said():
    """Large diarrhoeal losses (bicarbonate-rich: DiBartola, Table 14-3) replaced with 0.9 %
    NaCl (no buffer: dilutional) drive an entered HCO3 below the dog's interval; a budgerigar
    has no interval on record, and falling under 12 mmol/L (safety_limits.csv, common
    practice) is said for it. Lactated Ringer's at maintenance is not flagged."""
    dog = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=145, serum_k=4.0,
                                 serum_hco3=21, losses_ml_per_day=3000, fluid_id="nacl_0_9",
                                 loss_type="diarrhoea"))  # fmt: skip
    found = course(dog, horizon_h=48, step_minutes=SHOWN_STEP_MINUTES).findings
    assert "PREDICTED_HCO3_OUTSIDE_RANGE" in _codes(found)
    bird = build_plan(PlanRequest(species_id="budgerigar", weight_kg=0.03, serum_k=4.0,
                                  serum_hco3=22, dehydration_percent=8, losses_ml_per_day=6,
                                  loss_type="diarrhoea", route="io"))  # fmt: skip
    found = course(bird, horizon_h=336, step_minutes=SHOWN_STEP_MINUTES).findings
    assert "PREDICTED_HCO3_OUTSIDE_RANGE" in _codes(found)
    calm = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_hco3=22))
    assert "PREDICTED_HCO3_OUTSIDE_RANGE" not in _codes(
        course(calm, step_minutes=SHOWN_STEP_MINUTES).findings
    )


def test_a_plasma_contraction_past_the_plans_own_block_is_hard():
    """Furosemide 1 mg/kg/h for 14 days with maintenance only: the course predicts the plasma
    nearly gone. Past ``safety.ECF_CONTRACTION_BLOCKED`` (40 %) the course blocks (hard), as
    the plan's own ECF check does (common practice, no source: 30–40 % of the circulating
    volume lost brings hypotension, the human haemorrhage classes, recalled); a smaller fall
    stays soft."""
    infusion = (("furosemide", 1.0, "cri", 0.0, 336.0),)
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=145, serum_k=4.0,
                                  diuretics=infusion))  # fmt: skip
    result = course(plan, horizon_h=336, step_minutes=SHOWN_STEP_MINUTES)
    found = {f.code: f for f in result.findings}
    assert 1.0 - result.plasma_ml.min() / result.plasma_ml[0] > ECF_CONTRACTION_BLOCKED
    assert found["PREDICTED_PLASMA_CONTRACTION"].severity == "hard"
    # 2 mg/kg every 12 h for 5 days with no fluid after the plan's day: said, not blocked
    doses = tuple(("furosemide", 2.0, "iv", float(h), float(h)) for h in range(0, 120, 12))
    milder = build_plan(PlanRequest(species_id="dog", weight_kg=20, serum_na=145, serum_k=4.0,
                                    diuretics=doses))  # fmt: skip
    soft = course(milder, horizon_h=120, step_minutes=SHOWN_STEP_MINUTES)
    fall = 1.0 - soft.plasma_ml.min() / soft.plasma_ml[0]
    assert PLASMA_CONTRACTION_SAID < fall <= ECF_CONTRACTION_BLOCKED
    assert {f.code: f for f in soft.findings}["PREDICTED_PLASMA_CONTRACTION"].severity == "soft"


def test_a_predicted_bicarbonate_past_what_can_be_entered_is_beyond_the_model():
    """2 L/day of vomitus in a 4 kg cat: each mL leaves 0.07 mmol of bicarbonate behind
    (docs/model.md), and the course would predict about 90 mmol/L. An entered HCO3 outside
    3–60 mmol/L is refused as impossible (bicarbonate.SERUM_HCO3_RANGE_MMOL_PER_L, plausibility
    bounds, no source), so a predicted one past them is no prediction either: hard, from the
    hour it crosses (as HCO3 reaching 0 already is; review finding)."""
    plan = build_plan(PlanRequest(species_id="cat", weight_kg=4, serum_na=155, serum_k=4.0,
                                  serum_hco3=20, losses_ml_per_day=2000,
                                  loss_type="vomitus"))  # fmt: skip
    result = course(plan, step_minutes=SHOWN_STEP_MINUTES)
    found = {f.code: f for f in result.findings}
    beyond = found["COURSE_BEYOND_THE_MODEL"]
    assert beyond.severity == "hard"
    high = SERUM_HCO3_RANGE_MMOL_PER_L[1]
    crossed = float(result.hours[int(np.argmax(result.serum_hco3 > high))])
    assert result.serum_hco3[-1] > high  # the case is what the review saw
    assert f"From hour {format_number(crossed, decimals=1)} " in beyond.message
    assert "PREDICTED_HCO3_OUTSIDE_RANGE" not in found  # no soft figure read from it


def test_a_predicted_na_change_after_the_plan_names_its_own_hour():
    """An oliguric cat given mannitol 2.9 g/kg IV at hour 0, followed to hour 72: Na falls to
    about 121 mmol/L in the first hour (mannitol drawing water from the cells, which the
    plan's own check reads as no change in tonicity), and climbs above the interval after the
    plan ends as the mannitol leaves with more water than Na (docs/model.md, "Mannitol").
    The course's finding is about what happens after the plan ends, so it names that rise and
    the hour it happens at, never the fall at hour 0.3 as if it came after the plan (review
    finding: words true to the hour; common practice, no source)."""
    mannitol = (("mannitol", 2.9, "iv", 0.0, 0.0),)
    plan = build_plan(PlanRequest(species_id="cat", weight_kg=4, serum_na=155,
                                  renal_disease=True, renal_output="oliguric",
                                  diuretics=mannitol))  # fmt: skip
    result = course(plan, horizon_h=72, step_minutes=SHOWN_STEP_MINUTES)
    message = {f.code: f for f in result.findings}["PREDICTED_NA_OUTSIDE_RANGE"].message
    assert "rise" in message and "fall" not in message
    assert "hour 0.3" not in message
    said = re.search(r"in the hour from hour ([\d.]+)", message)
    assert said is not None and float(said.group(1)) > plan.end_h  # after the plan, truly
    per_hour = int(60 / SHOWN_STEP_MINUTES)
    i = int(np.searchsorted(result.hours, float(said.group(1)) - 0.05))
    rise = result.serum_na[i + per_hour] - result.serum_na[i]
    assert rise > result.na_max_change_per_h  # the hour named is the one that is too fast
    assert f"after the plan ends at hour {format_number(plan.end_h, decimals=1)}" in message
