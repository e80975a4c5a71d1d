"""Speed of the timeline (skipped in the ordinary run; `python3 dev.py bench` runs them).

The plots recompute the timeline on every edit: a 36 h plan at 5-minute steps
must take well under a millisecond.
"""

from __future__ import annotations

import pytest

from vetfluid.course.timeline import timeline, values_at
from vetfluid.planning.plan import PlanRequest, build_plan

pytestmark = pytest.mark.benchmark


@pytest.mark.parametrize(
    "request_",
    [
        # 36 h of divided boluses: replacement 0–24 h, maintenance to 36 h
        PlanRequest(species_id="mongolian_gerbil", weight_kg=0.07, dehydration_percent=6),
        # two resuscitation boluses, 24 h replacement, maintenance to 36.5 h
        PlanRequest(
            species_id="dog",
            weight_kg=20,
            dehydration_percent=8,
            replace_hours=24,
            resuscitation_boluses=2,
            losses_ml_per_day=200,
        ),  # fmt: skip
    ],
    ids=["gerbil_divided", "dog_shock"],
)
def test_timeline_36_h_at_5_minutes(benchmark, request_):
    plan = build_plan(request_)
    tl = benchmark(timeline, plan, step_minutes=5.0)
    assert tl.end_h >= 36
    assert len(tl.hours) >= 36 * 12
    assert benchmark.stats["median"] < 1e-3


def test_values_at_for_hover(benchmark):
    tl = timeline(build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=7)))
    values = benchmark(values_at, tl, 17.3)
    assert values["hour"] == pytest.approx(17.3, abs=5 / 60)
    assert benchmark.stats["median"] < 1e-4
