"""vetfluid-cli: JSON keys, exit codes, one-line errors, never a traceback."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from vetfluid import cli
from vetfluid.planning.plan import PlanRequest, build_plan

CLI = [str(Path(sys.executable).with_name("vetfluid-cli"))]


def run(capsys, *args):
    code = cli.main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def run_json(capsys, *args):
    code, out, _ = run(capsys, *args, "--json")
    return code, json.loads(out)


def test_plan_json_has_the_documented_keys(capsys):
    code, data = run_json(capsys, "plan", "--species", "dog", "--weight", "20 kg",
                          "--dehydration", "7", "--replace-hours", "12", "--serum-k", "3.2",
                          "--drop-factor", "20", "--start", "08:00")  # fmt: skip
    assert code == 0
    for key in ("species_id", "weight_kg", "maintenance", "dehydration_percent", "deficit_ml",
                "phases", "total_ml_first_24h", "delivery", "potassium", "findings", "cautions",
                "provenance"):  # fmt: skip
        assert key in data, key
    assert set(data["maintenance"]) >= {"ml_per_day", "method", "formula", "provenance"}
    assert data["maintenance"]["ml_per_day"] == pytest.approx(132 * 20**0.75)
    phase = data["phases"][0]
    assert {"kind", "mode", "start_h", "end_h", "rate_ml_per_h", "volume_ml"} <= set(phase)
    assert set(data["delivery"]) >= {"drop_factor", "drops_per_min", "seconds_per_drop"}
    assert data["delivery"]["drops_per_min"] == pytest.approx(phase["rate_ml_per_h"] * 20 / 60)
    assert set(data["potassium"]) >= {"kcl_mmol_per_l", "mmol_per_kg_per_h"}
    for value in data["provenance"] + data["maintenance"]["provenance"]:
        assert {"source_id", "basis"} <= set(value)
    assert all({"severity", "code", "message"} <= set(f) for f in data["findings"])
    assert any("verify" in c.lower() for c in data["cautions"])


def test_plan_json_equals_the_core_plan(capsys):
    _, data = run_json(capsys, "plan", "--species", "bearded_dragon", "--weight", "350 g",
                       "--dehydration", "5", "--body-temp-c", "26")  # fmt: skip
    plan = build_plan(PlanRequest(species_id="bearded_dragon", weight_kg=0.35,
                                  dehydration_percent=5, body_temp_c=26))  # fmt: skip
    assert data["total_ml_first_24h"] == pytest.approx(plan.total_ml_first_24h)
    assert [p["dose_ml"] for p in data["phases"]] == pytest.approx([p.dose_ml for p in plan.phases])


def test_intermittent_phases_give_dose_and_interval(capsys):
    _, data = run_json(capsys, "plan", "--species", "mongolian_gerbil", "--weight", "70 g",
                       "--dehydration", "6")  # fmt: skip
    phase = data["phases"][0]
    assert phase["mode"] == "intermittent"
    assert {"dose_ml", "interval_h", "sites_per_dose"} <= set(phase)


def test_hard_limit_exits_3_and_names_it(capsys):
    code, data = run_json(capsys, "plan", "--species", "dog", "--weight", "20 g")
    assert code == 3
    assert any(
        f["code"] == "WEIGHT_UNIT_SLIP" and f["severity"] == "hard" for f in data["findings"]
    )


@pytest.mark.parametrize(
    ("args", "names"),
    [
        (["plan", "--species", "dgo", "--weight", "20 kg"], "species"),
        (["plan", "--species", "dog", "--weight", "20"], "weight"),
        (["plan", "--species", "dog", "--weight", "twenty kg"], "weight"),
        (["plan", "--species", "dog", "--weight", "20 stone"], "weight"),
        (["plan", "--species", "dog", "--weight", "20 kg", "--dehydration", "40"], "dehydration"),
        (["plan", "--species", "dog", "--weight", "20 kg", "--dehydration", "x"], "dehydration"),
        (["plan", "--species", "dog", "--weight", "20 kg", "--fluid", "saline"], "saline"),
        (["plan", "--species", "dog", "--weight", "20 kg", "--start", "25:99"], "start"),
        (["plan", "--species", "dog", "--weight", "20 kg", "--usg", "1.5"], "usg"),
        (["plan", "--species", "dog", "--weight", "20 kg", "--serum-k", "-1"], "serum_k"),
        (["plan", "--species", "dog"], "--weight"),
        (
            [
                "sodium",
                "--species",
                "dog",
                "--weight",
                "20 kg",
                "--serum-na",
                "160",
                "--fluid",
                "nope",
            ],
            "nope",
        ),  # fmt: skip
        (["species", "--species", "unicorn"], "unicorn"),
        (
            ["plan", "--species", "dog", "--weight", "20 kg", "--start-date", "2026-13-01"],
            "YYYY-MM-DD",
        ),
        (
            ["plan", "--species", "dog", "--weight", "20 kg", "--start-date", "2026-12-01"],
            "start time",
        ),
        (["frobnicate"], "frobnicate"),
    ],
)
def test_invalid_input_is_one_line_on_stderr_with_exit_2(capsys, args, names):
    try:
        code, out, err = run(capsys, *args)
    except SystemExit as stop:  # argparse errors
        code, err = stop.code, capsys.readouterr().err
    assert code == 2
    assert err.count("\n") == 1 and names in err
    assert "Traceback" not in err


def test_whole_process_never_prints_a_traceback():
    result = subprocess.run([*CLI, "plan", "--species", "cat", "--weight", "abc"],
                            capture_output=True, text=True)  # fmt: skip
    assert result.returncode == 2
    assert "Traceback" not in result.stderr and result.stderr.count("\n") == 1


def test_species_json_has_values_with_basis_and_sources(capsys):
    code, data = run_json(capsys, "species")
    assert code == 0
    assert len(data["species"]) >= 30
    dragon = next(s for s in data["species"] if s["id"] == "bearded_dragon")
    up = dragon["values"]["max_urine_plasma_ratio"]
    assert (up["value"], up["basis"], up["origin"]) == (1.0, "published", "inherited")
    assert {s["source_id"] for s in data["sources"]} >= {"davis2013", "hardy1979"}


def test_species_text_marks_memory_values(capsys):
    code, out, _ = run(capsys, "species", "--species", "cat")
    assert code == 0
    assert "[memory — unverified]" in out and "Decision support" in out


def test_fluids_json_computes_composition(capsys):
    # USP label values: 0.9% NaCl Na 154 mmol/L, 308 mOsm/L.
    code, data = run_json(capsys, "fluids")
    assert code == 0
    saline = next(f for f in data["fluids"] if f["fluid_id"] == "nacl_0_9")
    assert saline["na"] == pytest.approx(154, abs=0.5)
    assert saline["osmolarity_mosm_per_l"] == pytest.approx(308, abs=1)
    assert {"na", "k", "cl", "ca", "mg", "dextrose_g_per_l", "osmolarity_mosm_per_l"} <= set(saline)


def test_sodium_json(capsys):
    # Adrogué–Madias 2000: (77 − 165)/(0.6·10 + 1) for 0.45% NaCl.
    code, data = run_json(capsys, "sodium", "--species", "dog", "--weight", "10 kg",
                          "--serum-na", "165", "--fluid", "nacl_0_45")  # fmt: skip
    assert code == 0
    assert data["tbw_l"] == pytest.approx(6)
    assert data["delta_na_per_l"] == pytest.approx((77 - 165) / 7, abs=0.1)
    # general form (Chen et al., Kidney360 2021): V ≤ 0.5·6/(|77 − 165| − 0.5) L/h = 34.3 mL/h
    assert data["max_rate_ml_per_h"] == pytest.approx(0.5 * 6 / 87.5 * 1000, rel=0.001)


def test_text_plan_is_readable_and_carries_cautions(capsys):
    code, out, _ = run(
        capsys, "plan", "--species", "dog", "--weight", "20 kg", "--dehydration", "7"
    )
    assert code == 0
    assert "Fluid plan — Dog, 20 kg" in out
    assert "replacement" in out and "Verify every volume" in out
    assert "* body_weight_kg" in out  # memory values are starred


def test_course_prints_the_compartments_at_the_requested_hours(capsys):
    code, data = run_json(capsys, "course", "--species", "dog", "--weight", "20 kg",
                          "--dehydration", "7", "--serum-na", "150", "--bolus-ml-per-kg", "15",
                          "--at", "0,0.25,24")  # fmt: skip
    assert code == 0
    rows = data["rows"]
    assert [r["hour"] for r in rows] == [0, 0.25, 24]
    for key in ("plasma_ml", "interstitial_ml", "intracellular_ml", "weight_kg",
                "remaining_deficit_ml", "given_ml", "serum_na"):  # fmt: skip
        assert key in rows[0]
    assert rows[0]["plasma_ml"] == pytest.approx(1000)  # 5 % of 20 kg (Odunayo 2018)
    assert rows[1]["plasma_ml"] > rows[0]["plasma_ml"]  # the bolus expands the plasma
    assert rows[2]["remaining_deficit_ml"] == pytest.approx(0, abs=1)
    assert rows[2]["weight_kg"] > rows[1]["weight_kg"]


def _course_table(out: str) -> list[list[str]]:
    """The cells of the course's text table (columns are two or more spaces apart): the
    lines under the headings that start with an hour."""
    lines = out.split("\n\n", 1)[0].splitlines()[2:]
    return [re.split(r"\s{2,}", line.strip()) for line in lines if re.match(r"\s*\d", line)]


def test_the_course_table_prints_safe_numbers_with_units(capsys):
    """Safe-number rules (ISMP error-prone dose designations): a leading zero, no trailing
    zero, a unit on every figure; a computed 5.7e-14 mL left of the deficit is 0 mL, never
    5.68434e-14 or -0 (the renal cat at 24 h left exactly that before)."""
    _, out, _ = run(capsys, "course", "--demo", "renal_cat", "--at", "0,1,12,24")
    rows = _course_table(out)
    assert [row[0] for row in rows] == ["0", "1", "12", "24"]
    units = ["mL", "mL", "mL", "kg", "mL", "mL", "mL", "mL/h", "mOsm/kg", "mmol/L", "mmol/L"]
    for row in rows:
        assert len(row) == 12
        for cell, unit in zip(row[1:], units, strict=True):
            if cell == "—":
                continue
            number, shown_unit = cell.split(" ")
            assert shown_unit == unit, cell
            assert re.fullmatch(r"\d+(\.\d*[1-9])?", number), cell  # no -0, .5, 5.0, 5e-14
    # issue 19: the renal cat's isosthenuric kidney keeps passing urine, so its deficit is no
    # longer all replaced by 24 h; a healthy cat's is, and its figure left must read 0 mL
    _, out, _ = run(capsys, "course", "--species", "cat", "--weight", "4 kg", "--dehydration",
                    "6", "--at", "24")  # fmt: skip
    assert _course_table(out)[0][5] == "0 mL"  # deficit left at 24 h


def test_the_course_gives_a_small_patients_weight_in_grams(capsys):
    _, out, _ = run(capsys, "course", "--demo", "small_gerbil", "--at", "0,24")
    rows = _course_table(out)
    assert all(row[4].endswith(" g") for row in rows), rows


def test_course_rejects_bad_hours(capsys):
    code, _, err = run(capsys, "course", "--species", "dog", "--weight", "20 kg", "--at", "x")
    assert code == 2 and "--at" in err


def test_a_plan_on_the_calendar_keeps_its_date(capsys):
    code, out, _ = run(capsys, "plan", "--species", "dog", "--weight", "20 kg",
                       "--start", "22:00", "--start-date", "2026-12-31", "--json")  # fmt: skip
    request = json.loads(out)["request"]
    assert code == 0 and request["start_date"] == "2026-12-31" and request["start_time"] == "22:00"
    from vetfluid.records.serialize import request_from_dict

    assert request_from_dict(request).start_date.isoformat() == "2026-12-31"
    with pytest.raises(Exception, match="YYYY-MM-DD"):
        request_from_dict({**request, "start_date": "31/12/2026"})


# ---- the phase list gives the schedule's figures ----------------------------------------------
GRAVITY_DOG = ("plan", "--species", "dog", "--weight", "24 kg", "--dehydration", "8",
               "--boluses", "2", "--device", "gravity", "--drop-factor", "20")  # fmt: skip


def _phase_lines(out: str) -> list[str]:
    block = out.split("\nPhases\n", 1)[1].split("\n\n", 1)[0]
    return block.splitlines()


def test_a_drip_too_fast_to_count_gives_no_drops_in_the_phase_list(capsys):
    from vetfluid.common.formatting import format_quantity as q
    from vetfluid.physiology.delivery import COUNTABLE_DROPS_PER_MIN, drip_ml_per_h, drops_per_min

    code, out, _ = run(capsys, *GRAVITY_DOG)
    _, data = run_json(capsys, *GRAVITY_DOG)
    assert code == 0
    lines = _phase_lines(out)
    assert len(lines) == len(data["phases"])
    fast = 0
    for line, phase in zip(lines, data["phases"], strict=True):
        rate = phase["rate_ml_per_h"]
        # the drops of the rate as shown (delivery: gravity drips run to the figures shown)
        drops = drops_per_min(drip_ml_per_h(rate), 20)
        assert phase["drops_per_min"] == pytest.approx(drops)
        assert phase["drops_countable"] is (drops <= COUNTABLE_DROPS_PER_MIN)
        assert q(rate, "mL/h") in line
        if drops > COUNTABLE_DROPS_PER_MIN:
            fast += 1
            assert "drops/min" not in line and "too fast to count drops" in line
        else:
            assert f"= {q(drops, 'drops/min')}" in line
    # the boluses (1440 mL/h) are too fast to count, as the schedule says
    assert fast == 2
    assert sum("too fast to count drops" in e["action"] for e in data["schedule"]) == fast


def test_divided_doses_read_as_drawn_up_in_the_phase_list_and_the_json(capsys):
    code, out, _ = run(capsys, "plan", "--demo", "small_gerbil")
    _, data = run_json(capsys, "plan", "--demo", "small_gerbil")
    assert code == 0
    lines = _phase_lines(out)
    intermittent = [(line, p) for line, p in zip(lines, data["phases"], strict=True)
                    if p["mode"] == "intermittent"]  # fmt: skip
    assert intermittent
    for line, phase in intermittent:
        drawn = phase["drawn_up"]
        # by hand from the rule in vetfluid/physiology/delivery.py: each site to the 0.01 mL marks
        # of a 1 mL syringe (common practice, no source), the dose = sites × per site
        assert phase["ml_per_site"] < 1
        per_site = round(phase["ml_per_site"], 2)
        assert drawn == {"sites": phase["sites_per_dose"], "ml_per_site": pytest.approx(per_site),
                         "dose_ml": pytest.approx(per_site * phase["sites_per_dose"])}  # fmt: skip
        # planned figures stay under their keys
        assert phase["dose_ml"] == pytest.approx(phase["ml_per_site"] * phase["sites_per_dose"])
        dose, sites, site_ml = (f"{drawn['dose_ml']:.2f}".rstrip("0").rstrip("."),
                                drawn["sites"], f"{drawn['ml_per_site']:.2f}")  # fmt: skip
        assert f"{dose} mL every" in line and f"{sites} sites of {site_ml} mL" in line
        assert "site(s)" not in line
        # and the schedule gives the same dose for this phase
        assert any(
            e["phase"] == phase["kind"] and e["action"].startswith(f"Give {dose} mL ")
            and f"{site_ml} mL per site" in e["action"]
            for e in data["schedule"]
        )  # fmt: skip


def test_the_patient_is_weighed_in_the_unit_of_its_species(capsys):
    """A 65 g gerbil (the weight typed) is '65 g', not '0.065 kg'; a dog stays in kg."""
    _, out, _ = run(capsys, "plan", "--species", "mongolian_gerbil", "--weight", "65 g")
    assert out.splitlines()[0] == "Fluid plan — Mongolian gerbil, 65 g"
    _, out, _ = run(capsys, "course", "--species", "mongolian_gerbil", "--weight", "117 g",
                    "--dehydration", "5")  # fmt: skip
    assert out.splitlines()[0] == "Course — Mongolian gerbil, 117 g"
    _, data = run_json(capsys, "plan", "--species", "mongolian_gerbil", "--weight", "65 g")
    assert data["weight_unit"] == "g" and data["weight_kg"] == pytest.approx(0.065)
    _, data = run_json(capsys, "plan", "--species", "dog", "--weight", "20 kg")
    assert data["weight_unit"] == "kg"


def test_the_potassium_line_is_the_sheets_at_the_fastest_rate(capsys):
    from vetfluid.planning.demos import DEMOS
    from vetfluid.printouts.sheet import potassium_text
    from vetfluid.records.serialize import plan_dict

    _, out, _ = run(capsys, "plan", "--demo", "dehydrated_dog")  # serum K 3.3: KCl added
    data = plan_dict(build_plan(DEMOS["dehydrated_dog"].request))
    assert f"Potassium     {potassium_text(data)}" in out
    assert "at the fastest rate" in out


# Issue 17, terminal output: text the user typed is echoed escaped, so a newline or an ANSI
# escape in it cannot split the message or recolour the terminal.
def test_user_text_is_echoed_escaped_in_one_line(capsys):
    code, out, err = run(capsys, "plan", "--species", "dog", "--weight", "20 kg",
                         "--finding", "x\n\x1b[31mFAKE")  # fmt: skip
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and err.endswith("\n")
    assert "\x1b" not in err and "\\x1b[31mFAKE" in err and "x\\n" in err


def test_a_species_with_a_control_character_is_echoed_escaped(capsys):
    code, _, err = run(capsys, "plan", "--species", "dog\r\x07", "--weight", "20 kg")
    assert code == 2 and err.count("\n") == 1
    assert "\r" not in err and "\x07" not in err


# Issue 17, quiet misreadings: each is refused, not replaced by a default.
@pytest.mark.parametrize("value", ["0", "0.03", "6", "-1"])
def test_sodium_refuses_a_limit_outside_the_plans_range(capsys, value):
    code, out, err = run(capsys, "sodium", "--species", "dog", "--weight", "10 kg",
                         "--serum-na", "165", "--fluid", "nacl_0_45",
                         "--max-na-change", value)  # fmt: skip
    assert code == 2 and out == "" and "max" in err.lower()
    plan_code, _, _ = run(capsys, "plan", "--species", "dog", "--weight", "10 kg",
                          "--max-na-change", value)  # fmt: skip
    assert plan_code == 2  # the same range in both commands


def test_sodium_and_plan_accept_the_same_smallest_limit(capsys):
    code, data = run_json(capsys, "sodium", "--species", "dog", "--weight", "10 kg",
                          "--serum-na", "165", "--fluid", "nacl_0_45",
                          "--max-na-change", "0.05")  # fmt: skip
    assert code == 0 and data["max_change_per_h"] == 0.05
    code, _, _ = run(capsys, "plan", "--species", "dog", "--weight", "10 kg",
                     "--max-na-change", "0.05")  # fmt: skip
    assert code == 0


def test_course_refuses_a_horizon_of_zero(capsys):
    code, _, err = run(capsys, "course", "--species", "dog", "--weight", "20 kg",
                       "--horizon-h", "0")  # fmt: skip
    assert code == 2 and "horizon" in err


def test_course_refuses_hours_beyond_the_horizon_naming_them(capsys):
    code, out, err = run(capsys, "course", "--species", "dog", "--weight", "20 kg",
                         "--at", "0,5,24", "--horizon-h", "2")  # fmt: skip
    assert code == 2 and out == ""
    assert "5" in err and "24" in err and "horizon" in err


def test_sodium_says_in_words_when_the_fluid_barely_moves_na(capsys):
    # Adrogué–Madias 2000: lactated Ringer's (Na + K ≈ 134.3 mmol/L) into a Na of 134.5
    # moves it by less than 0.5 mmol/L/h at any rate: no rate limit follows.
    code, out, _ = run(capsys, "sodium", "--species", "dog", "--weight", "10 kg",
                       "--serum-na", "134.5", "--fluid", "lactated_ringers")  # fmt: skip
    assert code == 0
    line = next(line for line in out.splitlines() if line.startswith("Fastest rate"))
    assert "barely moves" in line and "mL/h" not in line
    code, data = run_json(capsys, "sodium", "--species", "dog", "--weight", "10 kg",
                          "--serum-na", "134.5", "--fluid", "lactated_ringers")  # fmt: skip
    assert data["max_rate_ml_per_h"] is None


@pytest.mark.parametrize(
    "args",
    [("plan", "--species", "dog", "--weight", "20 kg", "--serum-na", "١٦٥"),
     ("plan", "--species", "dog", "--weight", "20 kg", "--boluses", "٣"),
     ("plan", "--species", "dog", "--weight", "٢٠ kg"),
     ("course", "--species", "dog", "--weight", "20 kg", "--at", "0,٥")],
)  # fmt: skip
def test_digits_other_than_0_to_9_are_refused_in_every_option(capsys, args):
    try:
        code = cli.main(list(args))
    except SystemExit as exit_:  # refused while the options are read
        code = exit_.code
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and "0–9" in err and err.count("\n") == 1


@pytest.mark.parametrize(
    ("args", "hint"),
    [
        ([], "see `vetfluid-cli --help`"),
        (["plan", "--species"], "see `vetfluid-cli plan --help`"),
    ],
)
def test_a_usage_error_names_the_help_to_read_once(args, hint):
    """The hint names the program once, and the command when the error is the command's."""
    out = subprocess.run([*CLI, *args], capture_output=True, text=True)
    assert out.returncode == 2
    assert out.stderr.strip().endswith(hint), out.stderr


def test_a_data_folder_that_cannot_be_made_is_said_not_a_traceback(tmp_path):
    """Finding (11): VETFLUID_HOME under a file. No command writes there, so each still
    answers (from the shipped values), and says in one line on stderr that the clinic
    overrides are not read, why, and what to do."""
    import os

    blocked = tmp_path / "a-file"
    blocked.write_text("x", encoding="utf-8")
    env = dict(os.environ, VETFLUID_HOME=str(blocked / "vetfluid"))
    run = subprocess.run([*CLI, "plan", "--demo", "dehydrated_dog", "--json"], env=env,
                         capture_output=True, text=True, timeout=60)  # fmt: skip
    assert run.returncode == 0, run.stderr
    assert json.loads(run.stdout)["species_id"] == "dog"
    assert run.stderr == (
        f"vetfluid-cli: the user data folder {blocked}/vetfluid (set by VETFLUID_HOME) cannot "
        f"be used: {blocked} is a file, not a folder, so no clinic overrides are read from it "
        "and nothing can be saved there — set VETFLUID_HOME to a folder you can write to, or "
        "move that file away, then start vetfluid again\n"
    )
    fluids = subprocess.run([*CLI, "fluids"], env=env, capture_output=True, text=True,
                            timeout=60)  # fmt: skip
    assert fluids.returncode == 0 and fluids.stderr == ""  # reads no species value
