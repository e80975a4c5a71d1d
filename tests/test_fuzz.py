"""Hostile input, generated: the CLI's options, plan-request files, plan JSON for
`vetfluid sheet` and clinic override rows (issue 17, "Tests to keep").

The contract checked is vetfluid's own (vetfluid/cli.py module docstring): every run exits
0, 2 or 3; exit 2 prints one line naming what is wrong and no traceback; JSON output holds
no NaN or Infinity (RFC 8259 has neither); nothing runs away (a generous per-example
deadline, set in the hypothesis settings, not a timed assertion).

The ordinary suite runs ~100 examples of each, derandomized; the long run (3,000 inputs
and more) is marked ``fuzz``:

    QT_QPA_PLATFORM=offscreen .venv/bin/python -m pytest -m fuzz tests/test_fuzz.py \
        -p no:cacheprovider
"""

from __future__ import annotations

import contextlib
import io
import json
import re
import shutil
import tempfile
from datetime import timedelta
from functools import cache
from pathlib import Path
from unittest import mock

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from vetfluid import cli
from vetfluid.common.errors import VetfluidError
from vetfluid.planning.plan import build_plan
from vetfluid.records.request_file import read_request_file
from vetfluid.records.serialize import plan_dict
from vetfluid.tables.overrides import overrides_file
from vetfluid.tables.species import PARAMETER_COLUMNS, parameter_definitions

FAST = 100  # examples per test in the ordinary suite
LONG = 3_000  # examples per test in the marked run
_SETTINGS = dict(
    deadline=timedelta(seconds=10),  # generous: a runaway takes minutes
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                           HealthCheck.data_too_large],
)  # fmt: skip


def _long(request) -> None:
    if "fuzz" not in (request.config.getoption("markexpr") or ""):
        pytest.skip("the long fuzz run: pytest -m fuzz tests/test_fuzz.py")


# ---- values a hostile file or command line holds ----------------------------------------------
NASTY_NUMBERS = st.sampled_from([
    0, -1, 1, 2, 1e308, -1e308, 1e-320, float("nan"), float("inf"), float("-inf"),
    int("9" * 400), 10**20, 2**63, 0.5, 24, 1441, 336.0001,
])  # fmt: skip
NASTY_TEXT = st.sampled_from([
    "", " ", "dog", "cat", "lactated_ringers", "nacl_0_9", "x\n\x1b[31mFAKE", "<b>x</b>",
    "=cmd|' /C calc'!A0", "1e309", "NaN", "-0", "١٢", "20 kg", "08:00", "25:61", "2026-02-30",
    "a" * 300, "true", "false", "no", "null",
])  # fmt: skip
SCALARS = st.one_of(
    st.none(), st.booleans(), NASTY_NUMBERS, NASTY_TEXT,
    st.integers(-(10**6), 10**6), st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=20),
)  # fmt: skip
JSON_VALUES = st.recursive(
    SCALARS,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=8), inner, max_size=4)
    ),
    max_leaves=12,
)


def _json_text(data: object) -> str:
    """JSON as a hand-edited file may hold it: NaN and Infinity written out, and integers
    of any length (Python's json writes both)."""
    return json.dumps(data)


def _strict(text: str) -> object:
    def refuse(name: str) -> None:
        raise AssertionError(f"{name} in JSON output")

    return json.loads(text, parse_constant=refuse)


def _check_exit(code: int, err: str, *, notices_allowed: bool = False) -> None:
    assert code in (0, 2, 3), (code, err)
    assert "Traceback" not in err, err
    if code == 2:
        lines = err.splitlines()
        if notices_allowed:  # a bad override is told, one line each, and ignored
            lines = [line for line in lines if not line.startswith("vetfluid-cli: clinic override")]
        assert len(lines) == 1 and lines[0].strip(), err


def _run_cli(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = cli.main(argv)
        except SystemExit as exit_:  # argparse's own exits
            code = exit_.code if isinstance(exit_.code, int) else 2
    return code, out.getvalue(), err.getvalue()


# ---- 1. the CLI's options ---------------------------------------------------------------------
OPTION_VALUES = {
    "--species": st.sampled_from(["dog", "cat", "mongolian_gerbil", "bearded_dragon", "x"]),
    "--weight": st.sampled_from(["20 kg", "350 g", "4 lb", "0", "-1 kg", "1e309 kg", "nan kg",
                                 "20", "١٢ kg", "1,500 g", "0.0001 g", "5001 kg"]),
    "--dehydration": NASTY_NUMBERS, "--replace-hours": NASTY_NUMBERS,
    "--losses-ml-per-day": NASTY_NUMBERS, "--drop-factor": NASTY_NUMBERS,
    "--boluses": st.sampled_from(["0", "1", "3", "11", "-1", "1.5", "99999999999999999999"]),
    "--body-temp-c": NASTY_NUMBERS, "--serum-na": NASTY_NUMBERS, "--serum-k": NASTY_NUMBERS,
    "--usg": NASTY_NUMBERS, "--urine-osm": NASTY_NUMBERS, "--kcl-mmol-per-l": NASTY_NUMBERS,
    "--dextrose-percent": NASTY_NUMBERS, "--max-na-change": NASTY_NUMBERS,
    "--syringe-ml": NASTY_NUMBERS, "--pcv": NASTY_NUMBERS, "--ts": NASTY_NUMBERS,
    "--ins-and-outs-period": NASTY_NUMBERS,
    "--fluid": NASTY_TEXT, "--shock-fluid": NASTY_TEXT, "--finding": NASTY_TEXT,
    "--route": st.sampled_from(["iv", "sc", "io", "cvc", "icoel", "im"]),
    "--device": st.sampled_from(["pump", "gravity", "syringe", "divided", "x"]),
    "--maintenance-method": st.sampled_from(["linear", "allometric", "energy", "x"]),
    "--start": NASTY_TEXT, "--start-date": NASTY_TEXT,
    "--measured-urine-ml": st.sampled_from(["60", "60,45", "-1", "nan", "1e309", "x", ""]),
    "--measured-other-ml": st.sampled_from(["0", "0,0", "nan", "5"]),
}  # fmt: skip
FLAGS = ["--cardiac", "--renal", "--anaesthesia", "--neonate"]


@st.composite
def plan_argvs(draw) -> list[str]:
    command = draw(st.sampled_from(["plan", "plan", "plan", "course", "sodium", "chart"]))
    argv = [command, "--json"] if draw(st.booleans()) else [command]
    if command == "sodium":
        return argv + ["--species", draw(OPTION_VALUES["--species"]), "--weight",
                       draw(OPTION_VALUES["--weight"]), "--serum-na",
                       str(draw(NASTY_NUMBERS)), "--fluid", draw(NASTY_TEXT)]  # fmt: skip
    if command == "chart":
        bands = str(draw(st.integers(-5, 200)))
        return argv + ["--species", draw(OPTION_VALUES["--species"]), "--drop-factor",
                       str(draw(NASTY_NUMBERS)), "--bands", bands]  # fmt: skip
    if draw(st.integers(0, 9)) == 0:
        argv += ["--demo", draw(st.sampled_from(["dehydrated_dog", "renal_cat", "nobody"]))]
    else:
        argv += ["--species", draw(OPTION_VALUES["--species"]),
                 "--weight", draw(OPTION_VALUES["--weight"])]  # fmt: skip
    for flag in draw(st.lists(st.sampled_from(sorted(OPTION_VALUES)), max_size=5, unique=True)):
        argv += [flag, str(draw(OPTION_VALUES[flag]))]
    argv += draw(st.lists(st.sampled_from(FLAGS), max_size=2, unique=True))
    if command == "course" and draw(st.booleans()):
        argv += ["--horizon-h", str(draw(NASTY_NUMBERS)), "--at", draw(NASTY_TEXT)]
    return argv


def _check_cli(argv: list[str]) -> None:
    code, out, err = _run_cli(argv)
    _check_exit(code, err)
    if "--json" in argv and code in (0, 3):
        _strict(out)


@settings(max_examples=FAST, derandomize=True, **_SETTINGS)
@given(plan_argvs())
def test_the_cli_never_crashes_on_any_options(argv):
    _check_cli(argv)


@pytest.mark.fuzz
@pytest.mark.timeout(3600)
def test_the_cli_never_crashes_on_any_options_long_run(request):
    _long(request)
    settings(max_examples=LONG, **_SETTINGS)(given(plan_argvs())(_check_cli))()


# ---- 2. plan-request files (*.vfplan.json) -----------------------------------------------------
REQUEST_VALUES = {
    "species_id": st.sampled_from(["dog", "cat", "mongolian_gerbil", "bearded_dragon"]),
    "weight_kg": st.sampled_from([20, 4.2, 0.065, 0.3]),
    "dehydration_percent": st.sampled_from([None, 0, 5, 8, 12]),
    "replace_hours": st.sampled_from([12, 24, 48]),
    "resuscitation_boluses": st.sampled_from([0, 1, 3]),
    "serum_na": st.sampled_from([None, 120, 145, 170]),
    "serum_k": st.sampled_from([None, 2.5, 4, 7]),
    "cardiac_disease": st.booleans(), "renal_disease": st.booleans(),
    "ins_and_outs_period_h": st.sampled_from([None, 4, 6]),
    "start_time": st.sampled_from([None, "08:00", "23:30"]),
}  # fmt: skip


DAMAGED_KEYS = [*REQUEST_VALUES, "fluid_id", "route", "device", "measured_outputs",
                "dehydration_findings", "start_date", "usg", "kcl_mmol_per_l", "neonate",
                "unknown_key"]  # fmt: skip


@st.composite
def request_files(draw) -> str:
    request = {key: draw(values) for key, values in REQUEST_VALUES.items() if draw(st.booleans())}
    request.setdefault("species_id", "dog")
    request.setdefault("weight_kg", 20)
    for _ in range(draw(st.integers(0, 3))):  # damage: a key given a hostile value
        key = draw(st.sampled_from(DAMAGED_KEYS))
        request[key] = draw(JSON_VALUES)
    if draw(st.integers(0, 4)) == 0:
        request.pop(draw(st.sampled_from(sorted(request))), None)
    data = {"format": "vetfluid-plan-request", "version": 1, "request": request,
            "acknowledged": {}}  # fmt: skip
    if draw(st.integers(0, 4)) == 0:
        data[draw(st.sampled_from(["version", "acknowledged", "acknowledged_for", "request"]))] = (
            draw(JSON_VALUES)
        )
    return _json_text(data)


def _check_request_file(text: str) -> None:
    folder = Path(tempfile.mkdtemp())
    try:
        path = folder / "p.vfplan.json"
        path.write_text(text, encoding="utf-8")
        try:
            opened = read_request_file(path)
            plan = build_plan(opened.request)
        except VetfluidError as exc:
            assert "\n" not in exc.one_line()
            return
        json.dumps(plan_dict(plan), allow_nan=False)  # no NaN or Infinity in the plan's JSON
    finally:
        shutil.rmtree(folder)


@settings(max_examples=FAST, derandomize=True, **_SETTINGS)
@given(request_files())
def test_a_plan_file_is_read_or_refused_in_words(text):
    _check_request_file(text)


@pytest.mark.fuzz
@pytest.mark.timeout(3600)
def test_a_plan_file_is_read_or_refused_in_words_long_run(request):
    _long(request)
    settings(max_examples=LONG, **_SETTINGS)(given(request_files())(_check_request_file))()


# ---- 3. plan JSON for `vetfluid sheet` ---------------------------------------------------------
@cache
def _plans() -> tuple[str, ...]:
    from vetfluid.planning.demos import DEMOS
    from vetfluid.planning.plan import PlanRequest

    requests = [d.request for d in DEMOS.values()] + [
        PlanRequest(species_id="dog", weight_kg=20, renal_disease=True, ins_and_outs_period_h=6,
                    measured_outputs=((60.0, 0.0),)),
        PlanRequest(species_id="dog", weight_kg=0.02),  # a hard limit
    ]  # fmt: skip
    return tuple(json.dumps(plan_dict(build_plan(r))) for r in requests)


def _paths(value: object, prefix: tuple = ()) -> list[tuple]:
    """Every place in a JSON value (key paths), for damage to pick from."""
    found = [prefix]
    if isinstance(value, dict):
        for key, inner in value.items():
            found += _paths(inner, (*prefix, key))
    elif isinstance(value, list):
        for index, inner in enumerate(value[:3]):
            found += _paths(inner, (*prefix, index))
    return found


def _at(data: object, path: tuple) -> object:
    for step in path:
        data = data[step]  # type: ignore[index]
    return data


@st.composite
def sheet_files(draw) -> str:
    data = json.loads(draw(st.sampled_from(_plans())))
    for _ in range(draw(st.integers(1, 3))):
        places = _paths(data)[1:]
        figures = [p for p in places if isinstance(_at(data, p), int | float)]
        path = draw(st.sampled_from(figures if figures and draw(st.booleans()) else places))
        parent = data
        for step in path[:-1]:
            parent = parent[step]
        if draw(st.integers(0, 4)) == 0 and isinstance(parent, dict):
            parent.pop(path[-1], None)
        elif isinstance(parent[path[-1]], int | float):  # a figure: mostly another number
            parent[path[-1]] = draw(st.one_of(NASTY_NUMBERS, NASTY_NUMBERS, JSON_VALUES))
        else:
            parent[path[-1]] = draw(JSON_VALUES)
    if draw(st.integers(0, 9)) == 0:  # the window's own file instead
        return draw(request_files())
    return _json_text(data)


WORDS_OF_NONSENSE = re.compile(r"\b(nan|inf|infinity)\b", re.IGNORECASE)


def _check_sheet(text: str) -> None:
    from ui import app

    folder = Path(tempfile.mkdtemp())
    printed: list[str] = []
    try:
        plan = folder / "plan.json"
        plan.write_text(text, encoding="utf-8")
        out, err = io.StringIO(), io.StringIO()
        # the PDF itself is Qt's work (tests/test_sheet.py prints real ones): the HTML is kept
        with (
            mock.patch.object(app, "_write_pdf", lambda html, *a, **k: printed.append(html) or 0),
            contextlib.redirect_stdout(out), contextlib.redirect_stderr(err),
        ):  # fmt: skip
            try:
                code = app.sheet_command([str(plan), "-o", str(folder / "sheet.pdf")])
            except SystemExit as exit_:
                code = exit_.code
        _check_exit(code, err.getvalue())
        assert code in (0, 2), code
        if code == 0:
            assert not WORDS_OF_NONSENSE.search(re.sub(r"<[^>]*>", " ", printed[0])), text
    finally:
        shutil.rmtree(folder)


@settings(max_examples=FAST, derandomize=True, **_SETTINGS)
@given(sheet_files())
def test_the_sheet_prints_a_plan_or_refuses_it_in_one_line(text):
    _check_sheet(text)


@pytest.mark.fuzz
@pytest.mark.timeout(3600)
def test_the_sheet_prints_a_plan_or_refuses_it_in_one_line_long_run(request):
    _long(request)
    settings(max_examples=LONG, **_SETTINGS)(given(sheet_files())(_check_sheet))()


# ---- 4. clinic override rows -----------------------------------------------------------------
OVERRIDE_VALUES = st.one_of(
    st.sampled_from(["0", "-1", "1e308", "1e-308", "nan", "inf", "400", "0.5", "1", "20", "",
                     "x", "true", "linear", "energy", "9" * 400, "=cmd|' /C calc'!A0"]),
    st.text(alphabet="0123456789.-e,\"\n", max_size=12),
)  # fmt: skip


def _csv_cell(text: str) -> str:
    return '"' + text.replace('"', '""') + '"' if any(c in text for c in ',"\n') else text


@st.composite
def override_files(draw) -> str:
    names = sorted(parameter_definitions())
    rows = []
    for _ in range(draw(st.integers(1, 3))):
        cells = {
            "species_id": draw(st.sampled_from(["dog", "cat", "group_mammal", "x", ""])),
            "parameter": draw(st.sampled_from([*names, "x"])),
            "value": draw(OVERRIDE_VALUES),
            "low": draw(st.sampled_from(["", "0", "nan", "5"])),
            "high": draw(st.sampled_from(["", "1", "1e308", "-5"])),
            "unit": draw(st.sampled_from(["", "min", "mL/kcal", "x"])),
            "source_id": "", "basis": draw(st.sampled_from(["memory", "published", "x", ""])),
            "note": "",
        }  # fmt: skip
        rows.append(",".join(_csv_cell(cells[c]) for c in PARAMETER_COLUMNS))
    return "\n".join([",".join(PARAMETER_COLUMNS), *rows]) + "\n"


OVERRIDE_COMMANDS = [
    ["plan", "--species", "dog", "--weight", "20 kg", "--dehydration", "5", "--boluses", "1",
     "--serum-k", "3", "--json"],
    ["plan", "--species", "cat", "--weight", "4 kg", "--maintenance-method", "energy", "--json"],
    ["course", "--species", "dog", "--weight", "20 kg", "--dehydration", "5", "--serum-na",
     "140", "--json"],
    ["species", "--species", "dog", "--json"],
]  # fmt: skip


def _check_overrides(content: str, argv: list[str]) -> None:
    path = overrides_file()
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(content, encoding="utf-8")
    try:
        code, out, err = _run_cli(argv)
        _check_exit(code, err, notices_allowed=True)
        if code in (0, 3):
            _strict(out)
    finally:
        path.unlink(missing_ok=True)


@settings(max_examples=FAST, derandomize=True, **_SETTINGS)
@given(override_files(), st.sampled_from(OVERRIDE_COMMANDS))
def test_a_bad_override_row_is_told_and_ignored_never_fatal(content, argv):
    _check_overrides(content, argv)


@pytest.mark.fuzz
@pytest.mark.timeout(3600)
def test_a_bad_override_row_is_told_and_ignored_never_fatal_long_run(request):
    _long(request)
    settings(max_examples=LONG, **_SETTINGS)(
        given(override_files(), st.sampled_from(OVERRIDE_COMMANDS))(_check_overrides)
    )()
