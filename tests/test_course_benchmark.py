"""Course speed: a 14-day course at 1-minute steps in at most 10 ms median, growing
linearly with the horizon (1, 7 and 14 days). Skipped in the ordinary run."""

from __future__ import annotations

import pytest

from vetfluid.course.model import course
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.tables.species import load_table

pytestmark = pytest.mark.benchmark


@pytest.mark.parametrize("days", [1, 7, 14])
def test_course_at_one_minute_steps(benchmark, days):
    table = load_table()
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7,
                                  serum_na=150, resuscitation_boluses=1), table)  # fmt: skip
    result = benchmark(course, plan, horizon_h=days * 24.0, table=table)
    assert len(result.hours) == days * 24 * 60 + 1
