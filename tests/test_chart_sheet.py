"""The printable weight-band chart: the same numbers as the chart, cautions, sources;
headless to PDF and read back."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from vetfluid.common.cautions import CAUTIONS
from vetfluid.common.formatting import format_quantity as q
from vetfluid.printouts.chart import chart
from vetfluid.printouts.chart_sheet import NO_LINE, chart_cells, chart_note, chart_sheet_html

VETFLUID = str(Path(sys.executable).with_name("vetfluid"))


def test_page_carries_every_number_the_cautions_and_the_sources():
    result = chart("dog")
    html = chart_sheet_html(result)
    for row in chart_cells(result):
        for cell in row:
            assert cell in html
    for caution in CAUTIONS:
        assert caution.replace("'", "&#x27;") in html
    # the 2013 guideline formula the dog's maintenance rests on, cited in full
    assert "davis2013" in html and "Fluid Therapy Guidelines" in html


def test_memory_values_are_named_in_words():
    result = chart("mongolian_gerbil")
    unverified = [v.label for v in result.provenance if v.unverified]
    assert unverified, "the gerbil chart uses recalled values"
    html = chart_sheet_html(result)
    assert "memory — unverified" in html
    note = chart_note(result)  # the sentence under the chart names them in words
    assert all(name in note for name in unverified)
    assert not any(v.parameter in note for v in result.provenance)


def test_no_bolus_where_no_line_is_practical_and_small_species_in_grams():
    result = chart("mongolian_gerbil")
    cells = chart_cells(result)
    assert all(row[4] == NO_LINE for row in cells)
    assert cells[0][0] == q(result.weight_kg[0] * 1000, "g")
    assert chart_cells(chart("dog"))[0][0].endswith(" kg")


def test_headless_chart_command_writes_the_numbers_into_a_pdf(tmp_path, pdf_text):
    out = tmp_path / "chart.pdf"
    result = subprocess.run(
        [VETFLUID, "chart", "--species", "cat", "--drop-factor", "60", "-o", str(out)],
        capture_output=True, text=True, timeout=60,
    )  # fmt: skip
    assert result.returncode == 0, result.stderr
    text = pdf_text(out)
    expected = chart("cat", drop_factor=60)
    assert q(expected.maintenance_ml_per_day[0], "mL") in text
    assert q(expected.drops_per_min[-1], "drops/min") in text
    assert "Verify every volume" in text


@pytest.mark.parametrize(
    ("arguments", "message"),
    [(["--species", "unicorn"], "unicorn"), (["--species", "cat", "--drop-factor", "0"], "drop")],
)
def test_headless_chart_command_refuses_bad_input(tmp_path, arguments, message):
    result = subprocess.run([VETFLUID, "chart", *arguments, "-o", str(tmp_path / "x.pdf")],
                            capture_output=True, text=True, timeout=60)  # fmt: skip
    assert result.returncode == 2 and message in result.stderr.lower()
    assert "Traceback" not in result.stderr
    assert not (tmp_path / "x.pdf").exists()


# ---- `vetfluid sheet` (ui/app.py, beside `vetfluid chart`): refusals and the hard-limit mark ---
def _dog_plan_json(**request) -> dict:
    from vetfluid.planning.plan import PlanRequest, build_plan
    from vetfluid.records.serialize import plan_dict

    return plan_dict(build_plan(PlanRequest(species_id="dog", **request)))


@pytest.mark.parametrize(
    ("broken", "message"),
    [
        # NaN is valid JSON for Python; the core refuses to print it (InputError)
        (lambda d: {**d, "weight_kg": float("nan")}, "not finite"),
        (
            lambda d: {**d, "phases": [{**d["phases"][0], "rate_ml_per_h": float("inf")}]},
            "not finite",
        ),  # fmt: skip
        (lambda d: [d], "not a plan"),
        (lambda d: {**d, "request": "08:00"}, "cannot read"),
    ],
    ids=["NaN weight", "infinite rate", "a list", "request not an object"],
)
def test_headless_sheet_command_refuses_a_broken_plan_in_one_line(tmp_path, broken, message):
    from ui.app import sheet_command

    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps(broken(_dog_plan_json(weight_kg=20.0))), encoding="utf-8")
    out = tmp_path / "sheet.pdf"
    result = subprocess.run([VETFLUID, "sheet", str(plan), "-o", str(out)],
                            capture_output=True, text=True, timeout=60)  # fmt: skip
    assert result.returncode == 2
    assert "Traceback" not in result.stderr and result.stderr.count("\n") == 1
    assert message in result.stderr and "vetfluid-cli plan --json" in result.stderr
    assert not out.exists()
    assert sheet_command([str(plan), "-o", str(out)]) == 2  # in-process too: no exception


def test_headless_sheet_of_a_hard_limit_plan_is_marked_on_every_page(tmp_path):
    from vetfluid.printouts.sheet import BLOCKED_MARK

    data = _dog_plan_json(weight_kg=0.02)  # 20 g for a dog: the gram/kilogram slip
    assert data["hard_limit"]
    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps(data), encoding="utf-8")
    out = tmp_path / "sheet.pdf"
    result = subprocess.run([VETFLUID, "sheet", str(plan), "-o", str(out)],
                            capture_output=True, text=True, timeout=60)  # fmt: skip
    assert result.returncode == 0, result.stderr
    import pypdf

    pages = pypdf.PdfReader(out).pages
    footers = [re.sub(r"\s+", " ", page.extract_text()) for page in pages]
    assert all(f"✖ {BLOCKED_MARK}" in text for text in footers), len(pages)
