"""vetfluid-cli --demo: a demo is a whole patient; patient or plan options typed beside
it are refused with one line naming them, never silently left out."""

from __future__ import annotations

import json

import pytest

from vetfluid import cli
from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import build_plan
from vetfluid.records.serialize import plan_dict


def run(capsys, *args):
    code = cli.main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.mark.parametrize(
    ("extra", "named"),
    [
        (["--boluses", "2"], ["--boluses"]),
        (["--drop-factor", "20", "--device", "gravity"], ["--drop-factor", "--device"]),
        (["--species", "dog"], ["--species"]),
        (["--weight", "80 g"], ["--weight"]),
        (["--replace-hours", "24"], ["--replace-hours"]),  # the default value, typed: still refused
        (["--boluses=0"], ["--boluses"]),
        (["--drop", "20"], ["--drop-factor"]),  # argparse takes --drop for --drop-factor
        (["--cardiac", "--finding", "membranes_possibly_dry"], ["--cardiac", "--finding"]),
        (["--start", "09:00", "--start-date", "2026-12-02"], ["--start", "--start-date"]),
        (["--fluid", "nacl_0_9"], ["--fluid"]),
    ],
)
@pytest.mark.parametrize("command", ["plan", "course"])
def test_plan_options_beside_a_demo_are_refused_by_name(capsys, command, extra, named):
    code, out, err = run(capsys, command, "--demo", "small_gerbil", *extra)
    assert code == cli.EXIT_INPUT
    assert out == ""  # no plan printed that the reader could take for one with their options
    assert err.count("\n") == 1 and "Traceback" not in err
    for flag in named:
        assert flag in err
    assert "leave out --demo" in err  # the fix: either way round


def test_only_the_typed_options_are_named(capsys):
    _, _, err = run(capsys, "plan", "--demo", "dehydrated_dog", "--boluses", "2")
    assert "--boluses" in err
    assert "--replace-hours" not in err and "--fluid" not in err  # defaults, not typed


@pytest.mark.parametrize("demo_id", list(DEMOS))
def test_a_demo_with_json_alone_still_plans_the_demo(capsys, demo_id):
    code, out, err = run(capsys, "plan", "--demo", demo_id, "--json")
    assert code in (cli.EXIT_OK, cli.EXIT_HARD_LIMIT), err
    expected = plan_dict(build_plan(DEMOS[demo_id].request))
    assert json.loads(out)["schedule"] == expected["schedule"]


def test_course_options_are_not_plan_inputs(capsys):
    code, out, err = run(capsys, "course", "--demo", "dehydrated_dog", "--at", "0,1",
                         "--bolus-ml-per-kg", "10", "--json")  # fmt: skip
    assert code == cli.EXIT_OK, err
    assert [row["hour"] for row in json.loads(out)["rows"]] == [0, 1]
