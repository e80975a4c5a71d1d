"""Course speed (issue 19): a 14-day course at the window's 5-minute step in at most 10 ms
median, at 1-minute steps in at most 40 ms, growing with the horizon (1, 7 and 14 days).
Skipped in the ordinary run."""

from __future__ import annotations

import pytest

from vetfluid.course.model import SHOWN_STEP_MINUTES, course
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.tables.species import load_table

pytestmark = pytest.mark.benchmark


@pytest.mark.parametrize("step_minutes", [SHOWN_STEP_MINUTES, 1.0])
@pytest.mark.parametrize("days", [1, 7, 14])
def test_course_speed(benchmark, days, step_minutes):
    table = load_table()
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7,
                                  serum_na=150, serum_k=3.8, resuscitation_boluses=1),
                      table)  # fmt: skip
    result = benchmark(course, plan, horizon_h=days * 24.0, table=table,
                       step_minutes=step_minutes)  # fmt: skip
    assert len(result.hours) == round(days * 24 * 60 / step_minutes) + 1
