"""The hazard log, docs/hazards.md, stays true to the code and the tests (issue 16).

The log is kept in the manner of ISO 14971 risk management: one row per hazard with its
cause, harm, risk control and the test that verifies the control. These tests read the
log's table and check that

1. every row names at least one test;
2. every test it names exists (collected by pytest in a subprocess; a parametrised test is
   named without its brackets);
3. it covers every topic issue 16 ("The mechanism") and its follow-up list require;
4. every finding code it names is one the core raises (``ledger.add(...)`` or
   ``Finding(code=...)`` in ``vetfluid/``), with a severity the core gives it;
5. every ``module.name`` and data file it names exists;
6. every finding code the core can raise is named somewhere in the log, so a new check
   cannot arrive without its hazard.
"""

from __future__ import annotations

import ast
import os
import re
import subprocess
import sys
from dataclasses import dataclass
from functools import cache
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
LOG = ROOT / "docs" / "hazards.md"
SEVERITIES = ("info", "soft", "hard")
COLUMNS = ("id", "hazard", "cause", "harm", "control", "tests")

# The topics the log must cover: issue 16, "The mechanism" (wrong fluid for the role or
# route, volume or rate, potassium, sodium, dextrose, hypertonic and colloid doses, unit
# slips, wrong species, labs, divided and per-site volumes, the wrong patient, the sheet
# against the screen) and the list of its follow-up (dehydration bands, insensible loss,
# the mouse wheel, codes shown). Each is a pattern one row's hazard cell must match.
REQUIRED_TOPICS = {
    "wrong fluid for the role": r"wrong fluid for the role",
    "concentrate as the bag": r"concentrate.*\bbag\b",
    "hypertonic saline as replacement or maintenance": r"hypertonic saline.*maintenance",
    "free water as a shock bolus": r"free water.*shock bolus",
    "dextrose, hypertonic or colloid outside a vein": r"wrong route.*dextrose.*hypertonic.*"
    r"colloid.*(skin|coelom)",
    "potassium under the skin or into the coelom": r"wrong route.*potassium.*(skin|coelom)",
    "osmolarity in a peripheral vein": r"osmolarity.*peripheral vein",
    "volume or rate too high for the species and weight": r"too high for the species and weight",
    "divided doses and the hourly ceiling": r"divided doses.*hourly ceiling",
    "potassium ceiling": r"potassium infused faster than 0\.5 mmol/kg/h",
    "potassium with a high serum K": r"potassium added to a patient whose serum K is .*high",
    "potassium scale for other species": r"scale written for dogs and cats",
    "potassium on a gravity drip": r"potassium on a gravity drip",
    "sodium change rate": r"sodium moved too fast",
    "hypertonic saline dose": r"hypertonic saline dose",
    "colloid dose": r"colloid dose",
    "unit slip g/kg": r"unit slip.*\bin g\b.*\bkg\b",
    "unit slip mL/L": r"unit slip.*mL of concentrate per litre",
    "unit slip mmol/mEq": r"unit slip.*mmol and mEq",
    "lab values in the wrong field or unit": r"lab values in the wrong field or unit",
    "stale or mistyped labs": r"stale or mistyped labs",
    "wrong species": r"^wrong species",
    "per-site volumes": r"divided-dose and per-site volumes",
    "impossible site counts": r"impossible number of sites",
    "site below the smallest syringe mark": r"below the smallest syringe mark",
    "dehydration findings banded too low": r"dehydration findings banded too low",
    "maintenance below insensible loss": r"maintenance below insensible loss",
    "a plan for another patient": r"plan shown for a patient other than the one selected",
    "the printed sheet against the screen": r"printed sheet differing from the screen",
    "the mouse wheel": r"mouse wheel changes an unfocused input",
    "internal codes shown": r"internal codes shown",
}

TEST_REF = re.compile(r"(tests/[\w/]+\.py)::(\w+)(?:\[[^\]\s]*\])?")
# a finding code: bare capitals in back-ticks, with "(hard)", "(soft/hard)", "(soft; …" after it
CODE_REF = re.compile(
    r"`([A-Z][A-Z0-9_]{3,})`(?:\s*\(((?:hard|soft|info)(?:/(?:hard|soft|info))*)\b)?"
)
NAME_REF = re.compile(r"`([a-z_][a-z0-9_]*(?:\.[A-Za-z_][A-Za-z0-9_]*)+)`")
FILE_REF = re.compile(r"`((?:species_data|vetfluid|ui|tests|docs)/[\w./-]+)`")
CODE_SHAPE = re.compile(r"[A-Z][A-Z0-9_]{3,}")


# ---- reading the log -------------------------------------------------------------------------
@dataclass(frozen=True, kw_only=True)
class Row:
    id: str
    hazard: str
    cause: str
    harm: str
    control: str
    tests: tuple[tuple[str, str], ...]  # (file, test name)


def section(text: str, title: str) -> str:
    """The text under a level-2 heading, up to the next one."""
    match = re.search(rf"^## {re.escape(title)}\s*$(.*?)(?=^## |\Z)", text, re.M | re.S)
    assert match, f"the log has no section '## {title}'"
    return match.group(1)


def parse_rows(text: str) -> list[Row]:
    """The rows of the hazard table (lines starting ``| H-``), cell by cell."""
    rows = []
    for line in section(text, "Hazard table").splitlines():
        if not line.startswith("| H-"):
            continue
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        assert len(cells) == len(COLUMNS), f"{cells[0]}: {len(cells)} cells, not {len(COLUMNS)}"
        found = dict(zip(COLUMNS, cells, strict=True))
        rows.append(
            Row(
                id=found["id"],
                hazard=found["hazard"],
                cause=found["cause"],
                harm=found["harm"],
                control=found["control"],
                tests=tuple(TEST_REF.findall(found["tests"])),
            )  # fmt: skip
        )
    return rows


def named_codes(text: str) -> dict[str, set[str]]:
    """Each finding code the text names, with the severities it states for it."""
    codes: dict[str, set[str]] = {}
    for code, stated in CODE_REF.findall(text):
        codes.setdefault(code, set()).update(stated.split("/") if stated else ())
    return codes


@cache
def log_text() -> str:
    return LOG.read_text(encoding="utf-8")


# ---- what the core raises --------------------------------------------------------------------
@dataclass(frozen=True, kw_only=True)
class CoreCodes:
    exact: dict[str, frozenset[str] | None]  # code → severities (None: set by data)
    templates: tuple[tuple[re.Pattern[str], frozenset[str]], ...]  # f-string code, its words


def _severities(node: ast.expr | None) -> frozenset[str] | None:
    """The severities a call gives: a literal, either side of a conditional, or None when
    it comes from data (a limit's own severity)."""
    if isinstance(node, ast.Constant) and node.value in SEVERITIES:
        return frozenset({node.value})
    if isinstance(node, ast.IfExp):
        body, orelse = _severities(node.body), _severities(node.orelse)
        return None if body is None or orelse is None else body | orelse
    return None


def _code_argument(call: ast.Call) -> tuple[ast.expr | None, ast.expr | None]:
    """(severity, code) of ``ledger.add(severity, code, …)``, ``Finding(severity=…,
    code=…)`` or ``Rule(code, severity, …)``; (None, None) for any other call."""
    func = call.func
    keywords = {k.arg: k.value for k in call.keywords}
    if isinstance(func, ast.Attribute) and func.attr == "add" and len(call.args) >= 3:
        return call.args[0], call.args[1]
    name = func.id if isinstance(func, ast.Name) else getattr(func, "attr", "")
    if name == "Finding" and "code" in keywords:
        return keywords.get("severity"), keywords["code"]
    if name == "Rule" and len(call.args) >= 2:  # a row of a table of rules: Rule(code, severity…)
        return call.args[1], call.args[0]
    return None, None


@cache
def core_codes() -> CoreCodes:
    """Every finding code in ``vetfluid/``: literal codes with their severities, and codes
    built by an f-string (``ROUTE_{what.upper()}_LIMIT``) as patterns whose filled-in
    part must be a word the same module spells out ("potassium")."""
    exact: dict[str, frozenset[str] | None] = {}
    templates = []
    for path in sorted((ROOT / "vetfluid").rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        words = frozenset(
            n.value.upper()
            for n in ast.walk(tree)
            if isinstance(n, ast.Constant) and isinstance(n.value, str)
        )
        for node in ast.walk(tree):
            if not isinstance(node, ast.Call):
                continue
            severity, code = _code_argument(node)
            if isinstance(code, ast.Constant) and isinstance(code.value, str):
                if not CODE_SHAPE.fullmatch(code.value):
                    continue
                given = _severities(severity)
                known = exact.get(code.value, frozenset())
                exact[code.value] = None if given is None or known is None else known | given
            elif isinstance(code, ast.JoinedStr):
                parts = [
                    re.escape(v.value) if isinstance(v, ast.Constant) else "([A-Z0-9_]+)"
                    for v in code.values
                ]
                templates.append((re.compile("".join(parts)), words))
    return CoreCodes(exact=exact, templates=tuple(templates))


def code_in_core(code: str) -> tuple[bool, frozenset[str] | None]:
    """Whether the core can raise ``code``, and with which severities (None: any)."""
    core = core_codes()
    if code in core.exact:
        return True, core.exact[code]
    for pattern, words in core.templates:
        match = pattern.fullmatch(code)
        if match and all(part in words for part in match.groups()):
            return True, None
    return False, None


def code_problems(text: str) -> list[str]:
    """Codes the text names that the core cannot raise, or with a severity it never has."""
    problems = []
    for code, stated in sorted(named_codes(text).items()):
        exists, severities = code_in_core(code)
        if not exists:
            problems.append(f"{code}: no such finding code in vetfluid/")
        elif severities is not None and not stated <= severities:
            problems.append(
                f"{code}: the log says {'/'.join(sorted(stated))}, the core gives "
                f"{'/'.join(sorted(severities))}"
            )
    return problems


# ---- names and files -------------------------------------------------------------------------
def _defines(body: list[ast.stmt], name: str) -> ast.stmt | None:
    """The statement in ``body`` that defines ``name`` (a function, class or assignment)."""
    for node in body:
        if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef | ast.ClassDef):
            if node.name == name:
                return node
        targets: list[ast.expr] = []
        if isinstance(node, ast.Assign):
            targets = node.targets
        elif isinstance(node, ast.AnnAssign):
            targets = [node.target]
        for target in targets:
            names = target.elts if isinstance(target, ast.Tuple) else [target]
            if any(isinstance(n, ast.Name) and n.id == name for n in names):
                return node
    return None


def _module_files(dotted: str) -> list[tuple[Path, list[str]]]:
    """Where ``module.name`` may live: ``module`` is a module's name in any layer of vetfluid/
    or ui/ (``safety``), or its path below the layer (``course.model``)."""
    parts = dotted.split(".")
    found = []
    for package in ("vetfluid", "ui"):
        for cut in range(len(parts) - 1, 0, -1):
            tail = Path(*parts[:cut]).with_suffix(".py")
            for path in (ROOT / package).rglob(tail.name):
                if path.as_posix().endswith("/" + tail.as_posix()):
                    found.append((path, parts[cut:]))
    return found


def name_exists(dotted: str) -> bool:
    """``module.name`` (or ``module.Class.member``) defined in vetfluid/ or ui/."""
    for path, names in _module_files(dotted):
        body: list[ast.stmt] = ast.parse(path.read_text(encoding="utf-8")).body
        for name in names:
            node = _defines(body, name)
            if node is None:
                break
            body = node.body if isinstance(node, ast.ClassDef) else []
        else:
            return True
    return False


# ---- the tests that exist --------------------------------------------------------------------
def referenced_tests(text: str) -> set[tuple[str, str]]:
    return set(TEST_REF.findall(text))


@cache
def collected(files: tuple[str, ...]) -> tuple[frozenset[str], str]:
    """Node ids (brackets dropped) pytest collects from ``files``, and its report."""
    result = subprocess.run(
        [sys.executable, "-m", "pytest", "--collect-only", "-q", "-p", "no:cacheprovider",
         "--continue-on-collection-errors", *files],
        cwd=ROOT, capture_output=True, text=True, timeout=600,
        env={**os.environ, "QT_QPA_PLATFORM": "offscreen"},
    )  # fmt: skip
    ids = set()
    for line in result.stdout.splitlines():
        match = re.match(r"(tests/\S+?\.py)::(\S+?)(?:\[.*\])?$", line.strip())
        if match:
            ids.add(f"{match.group(1)}::{match.group(2)}")
    return frozenset(ids), result.stdout[-3000:] + result.stderr[-2000:]


def missing_tests(refs: set[tuple[str, str]]) -> list[str]:
    files = tuple(sorted({f for f, _ in refs if (ROOT / f).exists()}))
    ids, _ = collected(files) if files else (frozenset(), "")
    return sorted(f"{f}::{t}" for f, t in refs if f"{f}::{t}" not in ids)


# ---- the log itself --------------------------------------------------------------------------
@pytest.fixture(scope="module")
def rows() -> list[Row]:
    found = parse_rows(log_text())
    assert found, "the hazard table has no rows"
    return found


def test_rows_are_numbered_h01_upwards_once_each(rows):
    assert [r.id for r in rows] == [f"H-{n:02d}" for n in range(1, len(rows) + 1)]


def test_every_row_fills_every_column(rows):
    for row in rows:
        for column in ("hazard", "cause", "harm", "control"):
            assert getattr(row, column), f"{row.id} has no {column}"


def test_every_row_names_a_test(rows):
    assert [r.id for r in rows if not r.tests] == []


def test_every_test_the_log_names_exists():
    refs = referenced_tests(log_text())
    files = tuple(sorted({f for f, _ in refs}))
    absent_files = [f for f in files if not (ROOT / f).exists()]
    assert absent_files == [], f"the log names test files that do not exist: {absent_files}"
    missing = missing_tests(refs)
    assert missing == [], (
        "the log names tests pytest does not collect:\n"
        + "\n".join(missing)
        + "\n--- pytest said:\n"
        + collected(files)[1]
    )


def test_the_log_covers_every_required_topic(rows):
    uncovered = [
        topic
        for topic, pattern in REQUIRED_TOPICS.items()
        if not any(re.search(pattern, r.hazard, re.I) for r in rows)
    ]
    assert uncovered == [], f"no hazard row covers: {uncovered}"


def test_every_finding_code_the_log_names_is_raised_by_the_core_as_stated():
    assert code_problems(log_text()) == []


def test_every_control_row_names_a_finding_code_or_a_function(rows):
    for row in rows:
        assert CODE_REF.search(row.control) or NAME_REF.search(row.control), row.id


def test_every_module_name_and_file_the_log_names_exists():
    text = log_text()
    assert [n for n in sorted(set(NAME_REF.findall(text))) if not name_exists(n)] == []
    assert [f for f in sorted(set(FILE_REF.findall(text))) if not (ROOT / f).exists()] == []


def test_every_finding_code_of_the_core_is_in_the_log():
    """A new check arrives with its hazard: a row, or an entry under Open hazards."""
    named = set(named_codes(log_text()))
    core = core_codes()
    assert sorted(set(core.exact) - named) == [], "add these codes to docs/hazards.md"
    for pattern, _ in core.templates:
        assert any(pattern.fullmatch(c) for c in named), pattern.pattern


def test_the_log_says_what_is_open():
    open_part = section(log_text(), "Open hazards")
    assert re.search(r"^\d+\. \*\*", open_part, re.M), "Open hazards lists nothing"


# ---- the checks above can fail ---------------------------------------------------------------
SYNTHETIC = """## Hazard table

| id | hazard | cause | harm | control | tests |
|---|---|---|---|---|---|
| H-01 | a | b | c | `safety.check_carrier` → `FLUID_NOT_A_CARRIER` (hard) | `tests/test_plan.py::test_no_such_test_exists` |
| H-02 | a | b | c | `NO_SUCH_FINDING_CODE` (hard); `FLUID_NOT_A_CARRIER` (soft) | none |

## Open hazards
"""  # noqa: E501 — a table row is one line


def test_the_checks_catch_a_row_without_a_test_a_missing_test_and_a_wrong_code():
    rows = parse_rows(SYNTHETIC)
    assert [r.id for r in rows if not r.tests] == ["H-02"]
    assert missing_tests(referenced_tests(SYNTHETIC)) == [
        "tests/test_plan.py::test_no_such_test_exists"
    ]
    problems = code_problems(SYNTHETIC)
    assert any(p.startswith("NO_SUCH_FINDING_CODE: no such") for p in problems)
    assert any(p.startswith("FLUID_NOT_A_CARRIER: the log says hard/soft") for p in problems)


def test_codes_built_by_an_f_string_are_found_with_their_words():
    # safety.check_route_limits raises ROUTE_{what.upper()}_LIMIT for "potassium" and others
    assert code_in_core("ROUTE_POTASSIUM_LIMIT")[0]
    assert not code_in_core("ROUTE_BANANA_LIMIT")[0]
    assert code_in_core("SODIUM_CHANGE_TOO_FAST") == (True, frozenset({"soft", "hard"}))


def test_a_parametrised_test_is_named_without_its_brackets():
    # tests/test_fluid_roles.py holds this test parametrised by fluid
    ref = "tests/test_fluid_roles.py::test_a_concentrate_or_hypertonic_saline_as_the_bag_is_blocked"
    assert missing_tests(referenced_tests(f"`{ref}`")) == []
    assert missing_tests(referenced_tests(f"`{ref}[dextrose_50]`")) == []
