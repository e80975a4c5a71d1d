"""vetfluid-cli: a course's own hard finding gives the exit code of a hard limit, and input
the command line could take a silent default for (an empty loss type, an infusion given a
route other than IV, an empty entry in a comma list) is refused in one line, exit 2."""

from __future__ import annotations

import json

import pytest

from vetfluid import cli

# A furosemide infusion (1 mg/kg/h, the dog's rate on record) started after the plan's
# fluids end and run for 13 days: the plan's checks stop at its end (DIURETIC_AFTER_PLAN_END,
# soft), while the course follows the urine on with no fluid given and finds the plasma
# drained past 40 % (its hard PREDICTED_PLASMA_CONTRACTION, vetfluid/course/model.py).
BEYOND_THE_MODEL = ("course", "--species", "dog", "--weight", "20kg", "--serum-na", "145",
                    "--serum-k", "4", "--diuretic", "furosemide", "--diuretic-cri", "1",
                    "--diuretic-at", "30,336", "--horizon-h", "336")  # fmt: skip
DOG = ("--species", "dog", "--weight", "20 kg")


def run(capsys, *args: str) -> tuple[int, str, str]:
    """Exit code, stdout and stderr, whether refused while the options are read (argparse
    exits) or after (main returns)."""
    try:
        code = cli.main(list(args))
    except SystemExit as stop:
        code = stop.code
    out = capsys.readouterr()
    return code, out.out, out.err


def refused(capsys, *args: str) -> str:
    """The one line of a refusal: exit 2 (cli.EXIT_INPUT), nothing on stdout, no traceback."""
    code, out, err = run(capsys, *args)
    assert code == cli.EXIT_INPUT, (code, err)
    assert out == ""
    assert err.count("\n") == 1 and "Traceback" not in err, err
    return err


# ---- 1. a hard finding of the course ------------------------------------------------------------
# Exit-code contract (module docstring of vetfluid/cli.py, README "Exit codes", docs/hazards.md
# H-43: a CLI script must not take a blocked answer for a usable one); no clinical source.


def test_a_hard_finding_of_the_course_exits_as_a_hard_limit(capsys):
    code, out, _ = run(capsys, *BEYOND_THE_MODEL, "--json")
    data = json.loads(out)
    assert not any(f["severity"] == "hard" for f in data["findings"])  # the plan is not blocked
    assert any(f["severity"] == "hard" for f in data["course_findings"])
    assert code == cli.EXIT_HARD_LIMIT


def test_the_course_text_says_its_hard_finding_with_its_severity(capsys):
    code, out, _ = run(capsys, *BEYOND_THE_MODEL)
    assert code == cli.EXIT_HARD_LIMIT
    predicted = out.split("Predicted by the course", 1)[1].split("Findings of the plan", 1)[0]
    assert "HARD LIMIT: The course predicts the plasma volume" in predicted
    assert "COURSE_BEYOND_THE_MODEL" not in out  # words, never the code


def test_a_course_without_a_hard_finding_still_exits_0(capsys):
    # the same dog with no losses: nothing runs out, so nothing blocks
    code, out, _ = run(capsys, "course", *DOG, "--serum-na", "145", "--json")
    data = json.loads(out)
    assert not any(f["severity"] == "hard" for f in data["findings"] + data["course_findings"])
    assert code == cli.EXIT_OK


@pytest.mark.parametrize("command", ["plan", "course"])
def test_the_help_says_what_each_exit_code_means(capsys, command):
    # exit-code contract (module docstring of vetfluid/cli.py), no clinical source: a
    # script's author reads --help, and a course's hard finding exits 3 as well
    code, out, _ = run(capsys, command, "--help")
    assert code == 0
    text = " ".join(out.split())  # argparse wraps the epilog to the terminal
    assert "exit codes: 0 a usable answer" in text.lower()
    assert "2 invalid input" in text and "3 a hard limit" in text
    assert ("course predicted from it" in text) == (command == "course")


# ---- 2a. an empty loss type ---------------------------------------------------------------------
# Input handling, no clinical source.


@pytest.mark.parametrize("typed", ["", "   "])
def test_an_empty_loss_type_is_refused_not_taken_as_isotonic(capsys, typed):
    err = refused(capsys, "plan", *DOG, "--losses-ml-per-day", "500", "--loss-type", typed)
    assert "--loss-type" in err
    for name in ("isotonic", "vomitus", "diarrhoea", "polyuria", "drain"):  # the fix lists them
        assert name in err


def test_no_loss_type_keeps_the_isotonic_default():
    # the documented default (--loss-type help, README): unknown losses are taken as isotonic
    args = cli._parser().parse_args(["plan", *DOG, "--losses-ml-per-day", "500"])
    assert cli._request(args).loss_type == "isotonic"


# ---- 2b. an infusion's route --------------------------------------------------------------------
# Input handling, no clinical source (a constant-rate infusion runs into a vein: the
# diuretic table's "cri" route, species_data/diuretics.csv).
CRI = ("--diuretic", "furosemide", "--diuretic-cri", "0.5", "--diuretic-at", "0,6")


@pytest.mark.parametrize("route", ["po", "im", "sc"])
def test_an_infusion_given_a_route_other_than_iv_is_refused(capsys, route):
    err = refused(capsys, "plan", *DOG, *CRI, "--diuretic-route", route)
    assert "--diuretic-route" in err and "IV" in err


def test_an_infusion_may_say_iv(capsys):
    code, out, err = run(capsys, "plan", *DOG, *CRI, "--diuretic-route", "iv", "--json")
    assert code == cli.EXIT_OK, err
    assert [d["route"] for d in json.loads(out)["diuretics"]] == ["cri"]


# ---- 2c. empty entries in a comma list ----------------------------------------------------------
# Input handling, no clinical source: "0,,4" may be a dropped hour or volume, never guessed.
MEASURED = ("--ins-and-outs-period", "4")


@pytest.mark.parametrize(
    ("args", "flag"),
    [
        (("course", *DOG, "--at", "0,,4"), "--at"),
        (("course", *DOG, "--at", "0,4,"), "--at"),
        (("plan", *DOG, "--diuretic", "furosemide", "--diuretic-dose", "2",
          "--diuretic-route", "iv", "--diuretic-at", "0,,4"), "--diuretic-at"),
        (("plan", *DOG, "--diuretic", "furosemide", "--diuretic-dose", "2",
          "--diuretic-route", "iv", "--diuretic-at", ",8"), "--diuretic-at"),
        (("plan", *DOG, *MEASURED, "--measured-urine-ml", "60,,45"), "--measured-urine-ml"),
        (("plan", *DOG, *MEASURED, "--measured-urine-ml", "60,45,"), "--measured-urine-ml"),
        (("plan", *DOG, *MEASURED, "--measured-urine-ml", ""), "--measured-urine-ml"),
        (("plan", *DOG, *MEASURED, "--measured-urine-ml", "60,45",
          "--measured-other-ml", "10,,5"), "--measured-other-ml"),
        (("plan", *DOG, *MEASURED, "--measured-urine-ml", "60",
          "--measured-other-ml", ""), "--measured-other-ml"),
    ],
)  # fmt: skip
def test_an_empty_entry_in_a_comma_list_is_refused(capsys, args, flag):
    err = refused(capsys, *args)
    assert flag in err and "empty" in err, err


def test_a_full_comma_list_is_still_read(capsys):
    code, out, err = run(capsys, "plan", *DOG, *MEASURED, "--measured-urine-ml", "60, 45",
                         "--measured-other-ml", "10,5", "--json")  # fmt: skip
    assert code == cli.EXIT_OK, err
    assert json.loads(out)["ins_and_outs"]["periods"]  # both periods taken
