"""Charts for every species: well under a second in all (skipped in the ordinary run)."""

from __future__ import annotations

import pytest

from vetfluid.printouts.chart import chart
from vetfluid.tables.species import load_table

pytestmark = pytest.mark.benchmark


def test_all_species_charts(benchmark):
    table = load_table()
    charts = benchmark(lambda: [chart(sid, table=table) for sid in table.species_ids()])
    assert len(charts) == len(table.species_ids())
    assert benchmark.stats["median"] < 1.0
