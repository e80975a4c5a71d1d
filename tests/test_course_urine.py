"""Urine in the course's plots: flow per kg, the oliguria line, what was measured, the band."""

from __future__ import annotations

import numpy as np
import pytest

from vetfluid.common.errors import InputError
from vetfluid.course.model import SHOWN_STEP_MINUTES, course, observed_course
from vetfluid.course.observations import Observation, alerts
from vetfluid.course.urine import (
    band_unverified,
    measured_flow,
    oliguria_line,
    predicted_flow,
    predicted_osmolality,
)
from vetfluid.planning.demos import demo
from vetfluid.planning.plan import build_plan
from vetfluid.tables.species import load_table


@pytest.fixture(scope="module")
def dog_plan():
    return build_plan(demo("dehydrated_dog").request)


def test_the_oliguria_line_is_the_low_end_of_the_species_normal_output():
    # Foster JD 2018 (species_data/parameters.csv): dogs and cats 1–2 mL/kg/h, oliguria below 1
    table = load_table()
    line = oliguria_line(table, "dog")
    assert line.ml_per_kg_h == 1.0 and not line.chosen
    assert line.value.parameter == "urine_output_ml_per_kg_h" and not line.value.unverified
    chosen = oliguria_line(table, "dog", chosen_ml_per_kg_h=0.5)  # Foster: 0.5 also used
    assert chosen.ml_per_kg_h == 0.5 and chosen.chosen
    with pytest.raises(InputError):
        oliguria_line(table, "dog", chosen_ml_per_kg_h=-1.0)


def test_predicted_flow_is_the_courses_urine_per_kg_and_hour(dog_plan):
    result = course(dog_plan, step_minutes=SHOWN_STEP_MINUTES)
    hours, flow = predicted_flow(result, weight_kg=24.0)
    # the same figure Course.at() gives the CLI's rows, per kg of the plan's weight
    for hour in (0.0, 3.0, 11.5, float(hours[-1])):
        i = int(np.argmin(abs(hours - hour)))
        assert flow[i] == pytest.approx(result.at(hour)["urine_ml_per_h"] / 24.0)
    # the urine of the 24 h adds up to what the course says left as urine
    step = np.diff(hours)
    assert float(np.sum(flow[1:] * step) * 24.0) == pytest.approx(
        float(result.urine_ml[len(hours) - 1])
    )


def test_the_urine_osmolality_at_hour_0_is_the_first_steps(dog_plan):
    """No urine is made by hour 0: the first point shows the first step's urine, not the
    resting urine the model starts from (kidney.rest_position, docs/model.md)."""
    result = course(dog_plan, step_minutes=SHOWN_STEP_MINUTES)
    hours, osm = predicted_osmolality(result)
    floor, ceiling = result.urine_band_mosm_per_kg
    assert floor < result.urine_osm_mosm_per_kg[0] < ceiling
    assert osm[0] == osm[1] == result.urine_osm_mosm_per_kg[1]
    np.testing.assert_array_equal(osm[1:], result.urine_osm_mosm_per_kg[1 : len(hours)])


def test_no_urine_flow_is_drawn_after_the_plan_ends(dog_plan):
    # outputs are modelled only while the plan runs (docs/model.md): Course.at() gives None
    result, _ = observed_course(dog_plan, [Observation(hour=40.0, serum_na=147.0)])
    assert result.hours[-1] == pytest.approx(40.0)
    hours, flow = predicted_flow(result, weight_kg=24.0)
    assert hours[-1] == pytest.approx(result.outputs_end_h) and len(flow) == len(hours)
    assert result.at(30.0)["urine_ml_per_h"] is None
    hours, osm = predicted_osmolality(result)
    assert hours[-1] == pytest.approx(result.outputs_end_h)
    assert osm[-1] == pytest.approx(result.at(result.outputs_end_h)["urine_osm_mosm_per_kg"])
    assert result.at(30.0)["urine_osm_mosm_per_kg"] is None


def test_no_urine_flow_in_ins_and_outs_mode(dog_plan):
    # no kidney is modelled then: nothing is drawn, rather than a false zero (anuria)
    from dataclasses import replace

    plan = build_plan(replace(dog_plan.request, ins_and_outs_period_h=6.0))
    result = course(plan, step_minutes=SHOWN_STEP_MINUTES)
    hours, flow = predicted_flow(result, weight_kg=24.0)
    assert len(hours) == 0 and len(flow) == 0
    assert [len(a) for a in predicted_osmolality(result)] == [0, 0]


def test_measured_flow_is_what_the_oliguria_alert_compares(dog_plan):
    # the alert's own arithmetic (observations.alerts): mL ÷ hours ÷ the latest weight
    observations = [
        Observation(hour=8.0, urine_ml=60.0, urine_period_h=4.0),  # 0.625 mL/kg/h at 24 kg
        Observation(hour=10.0, weight_kg=25.0),
        Observation(hour=12.0, urine_ml=200.0, urine_period_h=4.0),  # 2 mL/kg/h at 25 kg
    ]
    start, end, flow = measured_flow(observations, plan_weight_kg=24.0)
    assert list(start) == [4.0, 8.0] and list(end) == [8.0, 12.0]
    assert list(flow) == pytest.approx([60 / 4 / 24, 200 / 4 / 25])
    found = alerts(dog_plan, observations)
    assert sum(f.code == "OLIGURIA" for f in found) == 1  # only the first is under the line


def test_a_weight_that_cannot_be_the_patients_does_not_scale_the_measured_flow():
    observations = [
        Observation(hour=2.0, weight_kg=2.4),  # a slip of the decimal point on a 24 kg dog
        Observation(hour=6.0, urine_ml=48.0, urine_period_h=4.0),
    ]
    _, _, flow = measured_flow(observations, plan_weight_kg=24.0)
    assert list(flow) == pytest.approx([48 / 4 / 24])


def test_the_band_says_which_of_its_values_are_recalled():
    # dog: floor 50 (van Vonderen 1997) and ceiling 2289 (Hardy & Osborne 1979), published;
    # cat: the mammalian floor and the ceiling of 3100 are recalled (parameters.csv)
    table = load_table()
    dog = course(build_plan(demo("dehydrated_dog").request), step_minutes=SHOWN_STEP_MINUTES)
    assert band_unverified(dog) == (False, False)
    cat_request = demo("renal_cat").request
    from dataclasses import replace

    cat = course(
        build_plan(replace(cat_request, renal_disease=False, usg=None)),
        step_minutes=SHOWN_STEP_MINUTES, table=table,
    )  # fmt: skip
    assert cat.urine_band_mosm_per_kg == (50.0, 3100.0)
    assert band_unverified(cat) == (True, True)


def test_a_measured_urine_osmolality_or_usg_stands_beside_the_prediction():
    """Issue 19: measured urine beside the predicted. A dog's USG becomes an osmolality by
    (USG − 1) × 30 000 (maintenance.usg_to_osmolality, recalled: memory); a bird's USG is
    not read (uric acid and mucus make it meaningless: the species' usg_interpretable), so it
    is kept and counted but never drawn; an entered osmolality is drawn as it is."""
    from vetfluid.course.observations import Observation
    from vetfluid.course.urine import measured_osmolality
    from vetfluid.tables.species import load_table

    table = load_table()
    seen = [Observation(hour=2, usg=1.020), Observation(hour=4, urine_osmolality=900.0)]
    hours, osm, not_read = measured_osmolality(seen, table, "dog")
    np.testing.assert_allclose(hours, [2, 4])
    np.testing.assert_allclose(osm, [600.0, 900.0])
    assert not_read == 0
    hours, osm, not_read = measured_osmolality(seen, table, "budgerigar")
    np.testing.assert_allclose(osm, [900.0])
    assert not_read == 1
    with pytest.raises(InputError):
        Observation(hour=1, usg=1.2)  # past 1.080: a typing slip, refused
    with pytest.raises(InputError):
        Observation(hour=1, urine_osmolality=5.0)


def test_the_course_gives_its_urine_osmolality_and_k_to_set_beside_a_measurement(dog_plan):
    result = course(dog_plan, step_minutes=SHOWN_STEP_MINUTES)
    assert result.predicted("urine_osmolality", 3.0) == pytest.approx(
        result.at(3.0)["urine_osm_mosm_per_kg"]
    )
    assert result.predicted("usg", 3.0) is None  # an osmolality is predicted, not a USG
