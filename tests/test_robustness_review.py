"""Defects a robustness review found after issue 17's fixes, each with its test."""

import json
import subprocess
import sys

import pytest

from vetfluid.common.csvfiles import parse_number
from vetfluid.common.errors import SpeciesDataError
from vetfluid.physiology import electrolytes

ESCAPE = "x\n\x1b[31mFAKE"


def _vetfluid(*args, tmp_path):
    return subprocess.run(
        [sys.executable, "-c", "import sys; from ui.app import main; sys.exit(main())", *args],
        capture_output=True, text=True, check=False, cwd=tmp_path,
        env={"QT_QPA_PLATFORM": "offscreen", "VETFLUID_HOME": str(tmp_path),
             "PATH": "/usr/bin:/bin"},
    )  # fmt: skip


def test_sheet_and_chart_echo_a_file_name_escaped_on_one_line(tmp_path):
    done = _vetfluid("sheet", ESCAPE, "-o", "out.pdf", tmp_path=tmp_path)
    assert done.returncode == 2
    assert "\x1b" not in done.stderr and done.stderr.count("\n") == 1
    assert "\\x1b" in done.stderr


def test_chart_drop_factor_takes_the_digits_0_to_9_only(tmp_path):
    done = _vetfluid("chart", "--species", "dog", "-o", "c.pdf", "--drop-factor", "٦٠",
                     tmp_path=tmp_path)  # fmt: skip
    assert done.returncode == 2 and "0–9" in done.stderr


@pytest.mark.parametrize("text", ["٢٥", "2_5", "６０"])
def test_an_override_number_in_other_digits_is_refused(text):
    with pytest.raises(SpeciesDataError):
        parse_number(text, location="overrides/parameters.csv:2", column="value")
    assert parse_number("2.5e1", location="x", column="value") == 25.0


def test_a_fluid_near_the_patients_na_gives_no_runaway_rate():
    # 0.9 % NaCl (Na 154) at serum Na 154.501: |d| = 0.5 ≤ 2 × 0.5, so only more than a
    # whole body water an hour could move Na by the limit: no rate from this rule
    assert (
        electrolytes.max_rate_for_sodium(
            serum_na=154.501, infusate_na_k=154, tbw_l=24, max_change_per_h=0.5
        )
        is None
    )
    # lactated Ringer's (Na + K 134) at 135: the same
    assert (
        electrolytes.max_rate_for_sodium(
            serum_na=135, infusate_na_k=134, tbw_l=12, max_change_per_h=0.5
        )
        is None
    )
    fine = electrolytes.max_rate_for_sodium(
        serum_na=140, infusate_na_k=130, tbw_l=12, max_change_per_h=0.5
    )
    assert fine == pytest.approx(0.5 * 12 / 9.5 * 1000) and fine < 12_000


def test_a_sheet_prints_what_the_core_plans_not_figures_edited_in_the_file(tmp_path):
    out = subprocess.run(
        [sys.executable, "-m", "vetfluid.cli", "plan", "--species", "dog", "--weight", "20 kg",
         "--json"], capture_output=True, text=True, check=False,
    )  # fmt: skip
    assert out.returncode == 0
    data = json.loads(out.stdout)
    data["phases"][0]["rate_ml_per_h"] = 5000.0
    data["phases"][0]["volume_ml"] = 120000.0
    edited = tmp_path / "edited.json"
    edited.write_text(json.dumps(data), encoding="utf-8")

    from ui.app import _plan_to_print

    printed, _ = _plan_to_print(edited)
    assert printed["phases"][0]["rate_ml_per_h"] != 5000.0
    assert printed["phases"][0]["volume_ml"] < 10000


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX file modes")
def test_a_log_an_older_version_left_readable_is_narrowed_when_written(tmp_path, monkeypatch):
    import os
    import stat

    from ui.common import errors

    log = tmp_path / "vetfluid.log"
    log.write_text("old\n")
    os.chmod(log, 0o644)
    monkeypatch.setattr(errors, "log_path", lambda: log)
    errors.write_log("new\n")
    assert stat.S_IMODE(log.stat().st_mode) == 0o600
    assert log.read_text() == "old\nnew\n"
