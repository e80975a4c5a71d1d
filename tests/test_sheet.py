"""The treatment sheet: from the plan's JSON, headless to PDF, every text escaped."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import PlanRequest, build_plan
from vetfluid.printouts.sheet import MAX_PHASES, NURSE_COLUMNS, sheet_html
from vetfluid.records.serialize import plan_dict

VETFLUID = str(Path(sys.executable).with_name("vetfluid"))


def dog_data():
    return plan_dict(build_plan(DEMOS["dehydrated_dog"].request))


def test_sheet_has_the_nurse_columns_labels_cautions_and_sources():
    html = sheet_html(dog_data(), patient={"name": "Rex", "client": "C-12"})
    for column in NURSE_COLUMNS:
        assert column in html
    assert "discard by" in html and "Hourly record" in html
    assert "Verify every volume" in html
    assert "memory — unverified" in html and "davis2013" in html
    assert "08:00" in html and "20:00" in html  # the clock from the demo's start


def test_sheet_numbers_match_the_plan():
    data = dog_data()
    html = sheet_html(data)
    from vetfluid.common.formatting import format_quantity as q

    assert q(data["total_ml_first_24h"], "mL") in html
    assert q(data["phases"][0]["rate_ml_per_h"], "mL/h") in html


def test_markup_in_names_prints_as_text():
    html = sheet_html(dog_data(), patient={"name": "<b>Rex</b><script>x</script>"})
    assert "<script>" not in html and "&lt;script&gt;" in html


def test_headless_sheet_command_writes_a_pdf(tmp_path, pdf_text):
    data = dog_data()
    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps(data), encoding="utf-8")
    out = tmp_path / "sheet.pdf"
    result = subprocess.run([VETFLUID, "sheet", str(plan), "-o", str(out), "--page", "letter"],
                            capture_output=True, text=True, timeout=60)  # fmt: skip
    assert result.returncode == 0, result.stderr
    assert "page" in result.stdout
    text = pdf_text(out)
    from vetfluid.common.formatting import format_quantity as q

    for phase in data["phases"]:
        if phase["mode"] == "continuous":
            assert q(phase["rate_ml_per_h"], "mL/h") in text
    assert q(data["total_ml_first_24h"], "mL") in text
    assert "Page 1 of" in text and "verify before giving" in text


def test_headless_sheet_command_refuses_bad_json(tmp_path):
    plan = tmp_path / "plan.json"
    plan.write_text("{}", encoding="utf-8")
    result = subprocess.run([VETFLUID, "sheet", str(plan), "-o", str(tmp_path / "x.pdf")],
                            capture_output=True, text=True, timeout=60)  # fmt: skip
    assert result.returncode == 2 and "vetfluid-cli plan --json" in result.stderr
    assert "Traceback" not in result.stderr


def test_an_ins_and_outs_sheet_says_maintenance_is_not_given_and_shows_the_periods():
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, renal_disease=True,
                                  ins_and_outs_period_h=6,
                                  measured_outputs=((60.0, 0.0),)))  # fmt: skip
    html = sheet_html(plan_dict(plan))
    assert "not given — ins and outs every 6 h" in html
    assert "the periods planned so far, to hour 12" in html
    assert "Ins and outs (every 6 h" in html and "60 mL" in html


# ---- weights in the species' own unit -------------------------------------------------------
def gerbil_data(weight_kg: float = 0.117, **inputs):
    return plan_dict(build_plan(PlanRequest(species_id="mongolian_gerbil", weight_kg=weight_kg,
                                            dehydration_percent=5, **inputs)))  # fmt: skip


def _header_and_labels(html: str) -> str:
    """The header line and the labels, where the sheet names the patient's weight."""
    header = html.split("<p>", 1)[1].split("</p>", 1)[0]
    labels = html.split(">Labels</h3>", 1)[1].split("<h3>", 1)[0]
    return header + labels


def test_a_gerbil_is_weighed_in_grams_with_every_figure():
    """117 g (the weight entered here) printed as 0.12 kg would be 120 g: a dosing error."""
    data = gerbil_data()
    assert data["weight_unit"] == "g" and data["weight_kg"] == 0.117
    shown = _header_and_labels(sheet_html(data))
    assert "Mongolian gerbil, 117 g" in shown
    from vetfluid.printouts.labels import labels

    assert shown.count("117 g") == 1 + len(labels(data))  # the header and every label
    assert " kg" not in shown


def test_an_older_plan_file_without_the_unit_still_prints_the_weight_unrounded():
    data = gerbil_data()
    del data["weight_unit"]  # a plan JSON saved before the key existed
    assert "Mongolian gerbil, 117 g" in sheet_html(data)  # unit from the typical weight used
    data["provenance"] = [v for v in data["provenance"] if v["parameter"] != "body_weight_kg"]
    assert "Mongolian gerbil, 117 g" in sheet_html(data)  # unit from the patient's weight
    dog = dog_data()
    del dog["weight_unit"]
    assert "Dog, 24 kg" in sheet_html(dog)  # the demo dog: 24 kg
    # an 800 g puppy is in kg as the window shows it (the unit of the species, not of
    # this patient's weight)
    puppy = plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=0.8)))
    assert puppy["weight_unit"] == "kg" and "Dog, 0.8 kg" in sheet_html(puppy)
    del puppy["weight_unit"]
    assert "Dog, 0.8 kg" in sheet_html(puppy)


def test_weights_keep_their_figures():
    from vetfluid.common.units import weight_text

    assert weight_text(0.065, "g") == "65 g"  # 0.065 × 1000 is 65.00000000000001
    assert weight_text(0.0654, "g") == "65.4 g"
    assert weight_text(4.25, "kg") == "4.25 kg"
    assert weight_text(1.2345, "kg") == "1.2345 kg"


def test_a_plan_file_with_an_unknown_weight_unit_is_refused():
    from vetfluid.common.errors import InputError

    data = gerbil_data()
    data["weight_unit"] = "stone"
    with pytest.raises(InputError, match="stone"):
        sheet_html(data)
    for weight in ("0.117", float("nan"), None):
        with pytest.raises(InputError, match="weight"):
            sheet_html({**gerbil_data(), "weight_kg": weight})


# ---- the hard-limit mark --------------------------------------------------------------------
def _hard_limit_data():
    """A 20 g dog: the weight-unit slip is a hard limit (test_cli: WEIGHT_UNIT_SLIP)."""
    data = plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=0.02)))
    assert data["hard_limit"] and any(f["severity"] == "hard" for f in data["findings"])
    return data


def test_a_hard_finding_marks_the_sheet_even_without_the_hard_limit_flag():
    from vetfluid.printouts.sheet import BLOCKED_MARK, page_mark

    data = _hard_limit_data()
    del data["hard_limit"]  # a hand-edited or older plan JSON
    assert page_mark(data) == BLOCKED_MARK and f"✖ {BLOCKED_MARK}" in sheet_html(data)
    data["hard_limit"] = False  # the flag says no, the finding says yes: marked
    assert page_mark(data) == BLOCKED_MARK and f"✖ {BLOCKED_MARK}" in sheet_html(data)


def test_the_hard_limit_flag_alone_marks_the_sheet():
    from vetfluid.printouts.sheet import BLOCKED_MARK, page_mark

    data = dog_data()
    assert page_mark(data) == "" and BLOCKED_MARK not in sheet_html(data)
    data["hard_limit"] = True  # findings edited away, the flag kept
    assert page_mark(data) == BLOCKED_MARK and f"✖ {BLOCKED_MARK}" in sheet_html(data)


# ---- what a nurse needs on the sheet: the date, the inputs, potassium, the additives -----------
def test_the_date_of_hour_0_heads_the_sheet_and_later_days_carry_their_date():
    """The demo dog starts on DEMO_DAY at 08:00 (vetfluid/planning/demos.py)."""
    from datetime import date, datetime, timedelta

    from vetfluid.planning.demos import DEMO_DAY
    from vetfluid.printouts.sheet import date_text

    data = dog_data()
    html = sheet_html(data)
    assert f"Hour 0: {date_text(DEMO_DAY)}, 08:00" in html
    # hour 16 is 00:00 the next day: the hourly record gives the window's '(+1 d)' under a
    # heading with the date; the labels (discard 24 h after 08:00) the date beside it
    next_day = DEMO_DAY + timedelta(days=1)
    hourly = html.split("Hourly record", 1)[1].split("<h3>", 1)[0]
    assert f"<b>{date_text(next_day)} (+1 d)</b></td></tr><tr><td>00:00 (+1 d)</td>" in hourly
    assert hourly.count("(+1 d)</b>") == 1 and f"<b>{date_text(DEMO_DAY)}</b>" in hourly
    assert f"discard by 08:00 (+1 d, {date_text(next_day, year=False)})" in html
    assert date_text(date(2026, 12, 1)) == "Tue 1 Dec 2026"  # a calendar: a Tuesday
    start = datetime(2026, 12, 1, 8, 0)
    assert (start + timedelta(hours=16)).date() == next_day


def test_a_later_days_schedule_entry_carries_its_date():
    """Boluses at 22:30 on 1 March 2026 (a Sunday by the calendar): replacement starts at
    23:15, maintenance 24 h later on Monday 2 March."""
    from datetime import date, time

    from vetfluid.printouts.sheet import date_text

    plan = build_plan(PlanRequest(species_id="dog", weight_kg=24, resuscitation_boluses=3,
                                  dehydration_percent=5, start_time=time(22, 30),
                                  start_date=date(2026, 3, 1)))  # fmt: skip
    html = sheet_html(plan_dict(plan))
    schedule = html.split("<h3>Schedule</h3>", 1)[1].split("<h3>", 1)[0]
    assert f"<td>23:15 (+1 d, {date_text(date(2026, 3, 2), year=False)})</td>" in schedule
    assert date_text(date(2026, 3, 2), year=False) == "Mon 2 Mar"


def test_without_a_date_or_a_time_the_sheet_leaves_a_blank_to_write_it_in():
    eight = DEMOS["dehydrated_dog"].request.start_time  # 08:00
    no_date = plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=20, start_time=eight)))
    html = sheet_html(no_date)
    assert "Hour 0: 08:00, date not entered — write it here" in html
    assert "00:00 (+1 d)" in html  # the window's words, no date to add
    html = sheet_html(plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=20))))
    assert "Hour 0: clock time not entered — write it here" in html


def test_a_start_date_that_is_not_a_date_is_refused():
    from vetfluid.common.errors import InputError

    data = dog_data()
    data["request"]["start_date"] = "1/12/2026"
    with pytest.raises(InputError, match="start date"):
        sheet_html(data)


def _inputs_block(html: str) -> str:
    return html.split("<h3>Patient inputs</h3>", 1)[1].split("<h3>", 1)[0]


def test_the_patient_inputs_block_lists_flags_temperature_dehydration_and_the_labs_entered():
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, dehydration_percent=6,
                                  renal_disease=True, neonate=True, serum_na=146.5,
                                  usg=1.012, pcv_percent=35, losses_ml_per_day=120))  # fmt: skip
    block = _inputs_block(sheet_html(plan_dict(plan)))
    assert "renal disease, neonate" in block and "cardiac" not in block
    assert "6 %, entered" in block and "120 mL/day" in block
    # the figures entered above, none rounded (146.5 is not 147) and only those entered
    assert "Na 146.5 mmol/L · USG 1.012 · PCV 35 %" in block
    assert "K " not in block and "TS" not in block and "osmolality" not in block
    bare = plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=20)))
    nothing = _inputs_block(sheet_html(bare))
    assert "none entered" in nothing and "none (renal" in nothing


def test_an_estimate_from_findings_is_marked_not_confirmed_and_a_temperature_is_shown():
    plan = build_plan(PlanRequest(species_id="rabbit", weight_kg=2.5,
                                  dehydration_findings=("membranes_possibly_dry",)))  # fmt: skip
    data = plan_dict(plan)
    block = _inputs_block(sheet_html(data))
    estimate = data["dehydration_estimate"]
    # the finding as DiBartola's Table 14-4 words it (dehydration_findings.csv), not its id
    assert "NOT CONFIRMED" in block and "Mucous membranes possibly dry" in block
    assert "membranes_possibly_dry" not in block
    assert f"{estimate['percent_low']:g}–{estimate['percent_high']:g} %" in block
    # a reptile's signs have no % band: the sheet says the % must be entered, in words
    dragon = plan_dict(build_plan(PlanRequest(
        species_id="bearded_dragon", weight_kg=0.38, body_temp_c=24,
        dehydration_findings=("reptile_eyes_sunken",),
    )))  # fmt: skip
    said = _inputs_block(sheet_html(dragon))
    assert "NOT ENTERED" in said and "Eyes sunken" in said
    assert "24 °C" in said
    confirmed = plan_dict(build_plan(PlanRequest(
        species_id="bearded_dragon", weight_kg=0.38, dehydration_percent=5,
        dehydration_findings=("reptile_eyes_sunken",),
    )))  # fmt: skip
    block = _inputs_block(sheet_html(confirmed))
    assert "5 %, entered" in block and "NOT CONFIRMED" not in block


def test_findings_a_saved_plan_names_are_printed_in_words_even_when_retired_or_unknown():
    """A plan saved by an earlier vetfluid may name a finding since split (``membranes_dry``,
    hydration.RETIRED_FINDINGS) or one this version does not know: the first prints as it
    read then, the second is said to be unknown, and neither stops the sheet."""
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20,
                                  dehydration_findings=("eyes_possibly_sunken",)))  # fmt: skip
    data = plan_dict(plan)
    data["dehydration_estimate"]["findings"] = ["eyes_possibly_sunken", "membranes_dry", "wobbly"]
    block = _inputs_block(sheet_html(data))
    assert "Eyes possibly sunken in orbits" in block
    assert "Dry mucous membranes" in block  # DiBartola 2012, Table 14-4, as it was worded then
    assert "a finding this vetfluid does not know (“wobbly”)" in block
    assert "eyes_possibly_sunken" not in block and "membranes_dry" not in block


def test_the_potassium_line_and_the_labels_give_the_strength_in_the_bag():
    from vetfluid.common.formatting import format_quantity as q

    data = dog_data()  # serum K 3.3: KCl from the scale (Côté 2020)
    k = data["potassium"]
    html = sheet_html(data)
    line = (f"{q(k['kcl_mmol_per_l'], 'mmol/L')} KCl added (serum-K scale): "
            f"K {q(k['bag_k_mmol_per_l'], 'mmol/L')} in the bag; "
            f"{q(k['peak_mmol_per_kg_per_h'], 'mmol/kg/h')} at the fastest rate")  # fmt: skip
    assert line in html
    label = f"K {q(data['fluid']['k_mmol_per_l'], 'mmol/L')} in the bag"
    labels = html.split(">Labels</h3>", 1)[1].split("<h3>", 1)[0]
    from vetfluid.printouts.labels import labels as containers

    bags = [x for x in containers(data) if x.kind == "bag"]
    assert len(bags) == 4 and labels.count(label) == len(bags)  # every bag carries the KCl
    none = sheet_html(plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=20))))
    assert "no serum K entered, no KCl added" in none and "in the bag" not in none


def test_a_bolus_bag_has_nothing_added_and_dextrose_is_given_by_its_strength():
    from vetfluid.common.formatting import format_quantity as q

    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, resuscitation_boluses=1,
                                  kcl_mmol_per_l=20, dextrose_percent=2.5))  # fmt: skip
    data = plan_dict(plan)
    labels = sheet_html(data).split(">Labels</h3>", 1)[1].split("</table>", 1)[0]
    cells = labels.split("<td")[1:]
    assert "with nothing added" in cells[0] and "in the bag" not in cells[0]
    from vetfluid.tables import fluids

    dextrose = fluids.composition(plan.bag).dextrose_hydrous_g_per_l / 10  # g/L → % w/v
    assert all(f"dextrose {q(dextrose, '%')} in the bag" in c for c in cells[1:])


# ---- a bolus after the first is given only if still poorly perfused ---------------------------
def _three_boluses():
    eight = DEMOS["dehydrated_dog"].request.start_time  # 08:00
    return plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=24,
                                            resuscitation_boluses=3, dehydration_percent=5,
                                            start_time=eight)))  # fmt: skip


def test_later_boluses_are_marked_conditional_wherever_the_sheet_lists_them():
    from vetfluid.printouts.sheet import CONDITIONAL

    data = _three_boluses()
    schedule = [e["action"] for e in data["schedule"] if e["phase"] == "resuscitation"]
    assert schedule[0].startswith("Bolus") and all(
        a.startswith("If still poorly perfused at reassessment") for a in schedule[1:]
    )  # the schedule's words, which the sheet follows
    html = sheet_html(data)
    hourly = html.split("Hourly record", 1)[1].split("<h3>", 1)[0]
    first_hour = hourly.split("<td>08:00</td>", 1)[1].split("</tr>", 1)[0]
    assert "bolus 360 mL in 15 min" in first_hour  # 15 mL/kg × 24 kg over 15 min
    assert f"bolus 2 ({CONDITIONAL})" in first_hour and f"bolus 3 ({CONDITIONAL})" in first_hour
    assert "bolus 1 (" not in first_hour
    # the rate that follows the boluses in that hour is listed too, from its start
    replacement = next(p for p in data["phases"] if p["kind"] == "replacement")
    from vetfluid.common.formatting import format_quantity as q

    assert f"from 08:45: {q(replacement['rate_ml_per_h'], 'mL/h')}" in first_hour
    labels = html.split(">Labels</h3>", 1)[1].split("<h3>", 1)[0]
    assert labels.count(CONDITIONAL.upper()) == 2
    assert "bolus 2: " + CONDITIONAL.upper() in labels
    plan_rows = html.split("<h3>Plan</h3>", 1)[1].split("<h3>", 1)[0]
    assert plan_rows.count(CONDITIONAL) == 3  # boluses 2 and 3, and the first 24 h total


def test_a_bolus_running_into_the_next_hour_is_listed_once_and_then_said_to_run_on():
    from datetime import time

    from vetfluid.printouts.sheet import CONDITIONAL, _planned_at

    # a 60 min bolus from h 0.5 (a shape the hourly rows must handle even if no species
    # default gives it today): due at 08:30, still running in the 09:00 row
    phases = [
        {"kind": "resuscitation", "mode": "continuous", "start_h": 0.5, "end_h": 1.5,
         "rate_ml_per_h": 240.0, "volume_ml": 240.0},
        {"kind": "replacement", "mode": "continuous", "start_h": 1.5, "end_h": 24.0,
         "rate_ml_per_h": 50.0, "volume_ml": 1125.0},
    ]  # fmt: skip
    first, second = (_planned_at(phases, h, time(8, 0)) for h in (0, 1))
    assert first == "bolus 240 mL in 60 min (240 mL/h)"
    assert second.startswith("bolus still running until 09:30 (240 mL/h)")
    assert "240 mL in" not in second  # never read as a second bolus to give
    # a later bolus keeps its condition, and a run past midnight its day
    later = [{**phases[0], "start_h": 0.0, "end_h": 0.25, "volume_ml": 60.0}, *phases]
    late = _planned_at(later, 1, time(23, 0))
    assert late.startswith(f"bolus 2 ({CONDITIONAL}) still running until 00:30 (+1 d)")


def test_the_first_24_h_total_says_how_much_is_conditional():
    from vetfluid.common.formatting import format_quantity as q
    from vetfluid.printouts.sheet import first_24h_text

    data = _three_boluses()
    later = [p for p in data["phases"] if p["kind"] == "resuscitation"][1:]
    maybe = sum(p["volume_ml"] for p in later)
    assert f"of which {q(maybe, 'mL')} in boluses given only if" in first_24h_text(data)
    assert "only if" not in first_24h_text(dog_data())  # no boluses
    one = plan_dict(build_plan(PlanRequest(species_id="dog", weight_kg=24,
                                           resuscitation_boluses=1)))  # fmt: skip
    assert "only if" not in sheet_html(one)  # a single bolus is given


def test_species_values_print_the_safe_way_without_trailing_zeros():
    """The safe-number rule (vetfluid/common/formatting.py): 20 kg, never 20.0 kg."""
    data = dog_data()
    sources = sheet_html(data).split("Sources of the species values used", 1)[1]
    whole = [v for v in data["provenance"] if isinstance(v["value"], float)
             and v["value"].is_integer()]  # fmt: skip
    assert whole  # e.g. the typical weight, 20 kg
    for v in whole:
        assert f"<td>{int(v['value'])} {v['unit']}</td>" in sources
        assert f"{v['value']} {v['unit']}" not in sources
    assert "True" not in sources  # a yes/no value says yes or no


# ---- `vetfluid sheet` on malformed plan files (issue 17, item 6) ------------------------------
# Each case reproduces a traceback, a runaway or a "nan" printed with exit 0 found by hostile
# testing; the rule checked is the command's own contract (vetfluid.cli: exit 2 is invalid
# input, one line on stderr naming the field).
def _sheet(capsys, tmp_path, data: object = None, *, raw: str | None = None, out=None):
    from ui.app import sheet_command

    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps(data) if raw is None else raw, encoding="utf-8")
    code = sheet_command([str(plan), "-o", str(out or tmp_path / "sheet.pdf")])
    return code, capsys.readouterr()


def _changed(change) -> dict:
    data = dog_data()
    change(data)
    return data


HUGE = int("9" * 400)  # beyond any float


@pytest.mark.parametrize(
    ("change", "key"),
    [
        pytest.param(lambda d: d.update(weight_kg=HUGE), "weight_kg", id="weight 400 digits"),
        pytest.param(lambda d: d.update(deficit_ml=HUGE), "deficit_ml", id="deficit 400 digits"),
        pytest.param(lambda d: d["phases"][0].update(start_h=1e308), "start_h", id="start_h"),
        pytest.param(lambda d: d["phases"][0].update(end_h=1e308), "end_h", id="end_h runaway"),
        pytest.param(lambda d: d["schedule"][0].update(hour=1e308), "hour", id="hour 1e308"),
        pytest.param(lambda d: d.update(dehydration_percent=float("nan")), "dehydration_percent",
                     id="dehydration NaN printed as nan"),
        pytest.param(lambda d: d.update(phases=(d["phases"] * 700)[: MAX_PHASES + 1]), "phases",
                     id="more phases than any plan"),
        pytest.param(lambda d: d["phases"][0].update(mode="intermittent", doses=10**12,
                                                     interval_h=1e-9, ml_per_site=1,
                                                     sites_per_dose=1),
                     "doses", id="a trillion doses"),
        pytest.param(lambda d: d.update(species_name=["Dog"]), "species_name", id="name a list"),
        pytest.param(lambda d: d["findings"].append({"severity": "odd", "message": "m",
                                                     "action": "a", "code": "C"}),
                     "severity", id="unknown severity"),
    ],
)  # fmt: skip
def test_a_malformed_plan_file_is_refused_in_one_line(capsys, tmp_path, change, key):
    code, out = _sheet(capsys, tmp_path, _changed(change))
    assert code == 2, out
    assert "Traceback" not in out.err and len(out.err.splitlines()) == 1 and key in out.err
    assert not (tmp_path / "sheet.pdf").exists()


def test_deep_nesting_is_refused_in_one_line(capsys, tmp_path):
    code, out = _sheet(capsys, tmp_path, raw="[" * 100_000 + "]" * 100_000)
    assert code == 2 and len(out.err.splitlines()) == 1 and "nested too deeply" in out.err


def test_the_sheet_never_overwrites_its_own_input(capsys, tmp_path):
    plan = tmp_path / "plan.json"
    for out in (plan, tmp_path / "." / "plan.json"):
        code, got = _sheet(capsys, tmp_path, dog_data(), out=out)
        assert code == 2 and "would overwrite" in got.err
        json.loads(plan.read_text(encoding="utf-8"))  # still the plan, not a PDF


def test_the_windows_own_plan_file_prints_its_plan(capsys, tmp_path, pdf_text):
    """A saved ``*.vfplan.json`` holds the request: the sheet builds its plan and prints
    it with the reasons given, the same figures the CLI's plan JSON gives."""
    from ui.app import sheet_command
    from vetfluid.common.formatting import format_quantity as q
    from vetfluid.records.request_file import write_request_file

    request = DEMOS["dehydrated_dog"].request
    path = write_request_file(tmp_path / "rex", request, {})
    out = tmp_path / "sheet.pdf"
    assert sheet_command([str(path), "-o", str(out)]) == 0, capsys.readouterr().err
    text = pdf_text(out)
    data = plan_dict(build_plan(request))
    assert q(data["total_ml_first_24h"], "mL") in text
    assert q(data["phases"][0]["rate_ml_per_h"], "mL/h") in text


def test_a_broken_plan_request_file_names_its_key(capsys, tmp_path):
    raw = json.dumps(
        {
            "format": "vetfluid-plan-request",
            "version": 1,
            "request": {"species_id": "dog", "weight_kg": 20, "renal_disease": "no"},
        }
    )
    code, out = _sheet(capsys, tmp_path, raw=raw)
    assert code == 2 and len(out.err.splitlines()) == 1 and "renal_disease" in out.err


def test_a_plan_files_reasons_print_only_for_the_warnings_as_they_were_given(tmp_path):
    """As in the window (ui/planning/session.py): a reason covers a warning as it read when the
    reason was given; one given for other words has lapsed and is not printed."""
    from ui.app import _plan_to_print
    from vetfluid.records.request_file import write_request_file

    request = DEMOS["renal_cat"].request
    soft = next(f for f in build_plan(request).findings if f.severity == "soft")
    reason = {soft.code: "weighed 6-hourly"}
    for wording, printed in (
        ({soft.code: soft.message}, reason),  # given for these very words
        (None, reason),  # an older file without the wording: the first plan's words
        ({soft.code: "another dose than this one"}, {}),  # lapsed
    ):
        path = write_request_file(tmp_path / "cat", request, reason, acknowledged_for=wording)
        assert _plan_to_print(path)[1] == printed
