"""Speed benchmarks (skipped in the ordinary run; `python3 dev.py bench` runs them).

* building a plan with findings — well under a millisecond;
* `vetfluid-cli plan` as a whole process — at most 1.5× `python -c "import pandas"`,
  both measured in the same run.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

import pytest

from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.tables.species import load_table

pytestmark = pytest.mark.benchmark
CLI = str(Path(sys.executable).with_name("vetfluid-cli"))


def test_build_plan_with_findings(benchmark):
    table = load_table()
    request = PlanRequest(
        species_id="dog", weight_kg=20, dehydration_percent=7, replace_hours=12, serum_k=3.2,
        serum_na=160, resuscitation_boluses=1, cardiac_disease=True,
    )  # fmt: skip
    plan = benchmark(build_plan, request, table)
    assert plan.findings
    assert benchmark.stats["median"] < 1e-3


def _median_seconds(command: list[str], runs: int = 7) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(command, check=True, capture_output=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def test_cli_plan_process_against_importing_pandas(benchmark):
    plan_cmd = [
        CLI,
        "plan",
        "--species",
        "dog",
        "--weight",
        "20 kg",
        "--dehydration",
        "7",
        "--json",
    ]
    pandas_cmd = [sys.executable, "-c", "import pandas"]
    _median_seconds(plan_cmd, runs=1)  # warm the file cache for both
    _median_seconds(pandas_cmd, runs=1)
    benchmark.pedantic(
        subprocess.run, args=(plan_cmd,), kwargs={"check": True, "capture_output": True},
        rounds=7, iterations=1,
    )  # fmt: skip
    cli_s = benchmark.stats["median"]
    pandas_s = _median_seconds(pandas_cmd)
    benchmark.extra_info.update(import_pandas_median_s=pandas_s, ratio=cli_s / pandas_s)
    assert cli_s <= 1.5 * pandas_s, f"cli {cli_s:.3f}s vs import pandas {pandas_s:.3f}s"


def test_build_plan_with_500_ins_and_outs_periods(benchmark):
    # issue 17: plan time grew with the square of the periods; 500 hourly periods (three
    # weeks measured hour by hour) must build in well under a second.
    request = PlanRequest(
        species_id="dog", weight_kg=20, dehydration_percent=7, ins_and_outs_period_h=1,
        measured_outputs=((20.0, 5.0),) * 500,
    )  # fmt: skip
    plan = benchmark.pedantic(build_plan, args=(request, load_table()), rounds=5, iterations=1)
    assert len(plan.phases) == 501
    assert benchmark.stats["median"] < 0.5
