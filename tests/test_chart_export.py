"""The weight-band chart and formula-safe CSV."""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from vetfluid import cli
from vetfluid.common.csvcells import csv_text, safe_cell
from vetfluid.physiology.delivery import COUNTABLE_DROPS_PER_MIN, drip_ml_per_h, drops_per_min
from vetfluid.physiology.maintenance import maintenance
from vetfluid.printouts.chart import chart
from vetfluid.tables.species import load_table


@pytest.mark.parametrize("species", ["dog", "cat", "bearded_dragon", "mongolian_gerbil",
                                     "african_grey", "red_kangaroo"])  # fmt: skip
def test_chart_agrees_with_the_scalar_calculators(species):
    table = load_table()
    result = chart(species, table=table)
    for w, ml_day in zip(result.weight_kg, result.maintenance_ml_per_day, strict=True):
        assert ml_day == pytest.approx(maintenance(table, species, float(w)).ml_per_day)
    assert np.allclose(result.deficit_ml_per_5_percent, result.weight_kg * 50)  # Davis 2013
    # a gravity drip runs its rate to the figures shown and drops come from that rate
    # (the schedule's rule, vetfluid/physiology/delivery.py)
    for rate, drops in zip(result.maintenance_ml_per_h, result.drops_per_min, strict=True):
        assert drops == drops_per_min(drip_ml_per_h(float(rate)), 20)
    weight = table.value(species, "body_weight_kg")
    assert result.weight_kg[0] == pytest.approx(weight.low)
    assert result.weight_kg[-1] == pytest.approx(weight.high)


def test_dog_chart_matches_the_2013_guideline_and_bolus():
    # Davis 2013: 132 · BW^0.75 mL/day; bolus 15 mL/kg (recalled from Pardo 2024).
    result = chart("dog")
    assert result.maintenance_ml_per_day[0] == pytest.approx(132.0)  # 1 kg
    assert result.bolus_ml[0] == pytest.approx(15.0)


def test_drops_come_from_the_rate_as_shown():
    # By hand: the dog's second band is 1 kg × (90 kg / 1 kg)^(1/9) (log-spaced bands);
    # 132 × BW^0.75 mL/day (Davis 2013) / 24 = 8.0023 mL/h, shown as 8 mL/h (two
    # decimals below 10 mL/h, no trailing zeros), so 8 × 20 / 60 drops/min.
    result = chart("dog")
    weight = 90 ** (1 / 9)
    assert result.weight_kg[1] == pytest.approx(weight)
    rate = 132 * weight**0.75 / 24
    assert round(rate, 2) == 8.0 and rate > 8.002
    assert result.drops_per_min[1] == pytest.approx(8.0 * 20 / 60, abs=1e-12)
    assert result.drops_per_min[1] != pytest.approx(rate * 20 / 60, abs=1e-6)


def test_a_drip_too_fast_to_count_is_worded_as_the_schedule_words_it(capsys):
    from vetfluid.common.formatting import format_quantity as q
    from vetfluid.printouts.chart_sheet import chart_cells

    result = chart("dog", drop_factor=60)  # a micro-drip set: 1 drop/min per mL/h
    texts = result.drip_texts()
    cells = chart_cells(result)
    fast = 0
    for i, rate in enumerate(result.maintenance_ml_per_h):
        shown = drip_ml_per_h(float(rate))
        drops = shown * 60 / 60
        assert bool(result.drops_countable[i]) is (drops <= COUNTABLE_DROPS_PER_MIN)
        if drops > COUNTABLE_DROPS_PER_MIN:  # over two drops a second (common practice)
            fast += 1
            # the schedule: 'too fast to count drops: set the clamp by the bag's volume
            # marks, V every 15 min', V = the rate × 15 min
            assert texts[i] == (
                "too fast to count drops: set the clamp by the bag's volume marks, "
                f"{q(shown * 15 / 60, 'mL')} every 15 min"
            )
        else:
            assert texts[i] == q(drops, "drops/min")
        assert cells[i][-1] == texts[i]
    # the heaviest dog band (90 kg: 132 × 90^0.75 / 24 ≈ 161 mL/h, Davis 2013) is too fast
    assert fast >= 1 and not result.drops_countable[-1]
    assert cli.main(["chart", "--species", "dog", "--drop-factor", "60"]) == 0
    out = capsys.readouterr().out
    assert texts[-1] in out and f"{q(result.drops_per_min[-1], 'drops/min')}" not in out


def test_bolus_is_blank_where_no_line_is_practical():
    assert np.all(np.isnan(chart("mongolian_gerbil").bolus_ml))


@pytest.mark.parametrize("text", ["=1+1", "+SUM(A1)", "-2+3", "@cmd", "\t=x"])
def test_formula_cells_are_neutralised(text):
    assert safe_cell(text) == "'" + text
    rows = list(csv.reader(io.StringIO(csv_text(["a"], [[text]]))))
    assert rows[1][0].startswith("'")


def test_numbers_and_plain_text_pass_unchanged():
    assert safe_cell(-5.0) == -5.0 and safe_cell("Dog") == "Dog"


def test_cli_chart_csv_and_json(capsys):
    assert cli.main(["chart", "--species", "cat", "--csv"]) == 0
    rows = list(csv.reader(io.StringIO(capsys.readouterr().out)))
    assert rows[0][0] == "weight_kg" and len(rows) == 11
    assert cli.main(["chart", "--species", "cat", "--json", "--drop-factor", "60"]) == 0
    import json

    data = json.loads(capsys.readouterr().out)
    assert data["drop_factor"] == 60 and len(data["rows"]) == 10
    countable = data["columns"].index("drops_countable")
    assert all(row[countable] is True for row in data["rows"])  # a cat's drips are slow
    used = {v["parameter"]: v for v in data["provenance"]}
    assert used["maintenance_allometric_a"]["value"] == 80  # Davis 2013: cat 80 × BW^0.75
    assert "davis2013" in data["sources"]
    assert cli.main(["chart", "--species", "mongolian_gerbil"]) == 0
    assert "Recalled, not checked against a publication" in capsys.readouterr().out


def test_schedule_and_observations_export_safely():
    from vetfluid.course.observations import Observation
    from vetfluid.planning.demos import DEMOS
    from vetfluid.planning.plan import build_plan
    from vetfluid.printouts.export import observations_csv, schedule_csv
    from vetfluid.records.serialize import plan_dict

    data = plan_dict(build_plan(DEMOS["dehydrated_dog"].request))
    rows = list(csv.reader(io.StringIO(schedule_csv(data))))
    assert rows[0] == ["clock", "hour", "phase", "action"]
    assert rows[1][0] == "08:00" and rows[1][3].startswith("Set ")
    notes = [Observation(hour=2, weight_kg=24.2, note='=HYPERLINK("x")')]
    rows = list(csv.reader(io.StringIO(observations_csv(notes))))
    assert rows[1][:3] == ["", "2", "24.2"]  # no date without the plan's start
    assert rows[1][-1].startswith("'=")
    from datetime import datetime

    rows = list(csv.reader(io.StringIO(observations_csv(notes, datetime(2026, 12, 1, 23, 0)))))
    assert rows[0][0] == "at" and rows[1][0] == "2026-12-02 01:00"
