"""Molar masses are data: every stored value is recomputed from its formula here.

The core reads each formula's molar mass from ``species_data`` (``solutes.csv`` and
``molar_masses.csv``) and imports no chemistry library. The outside sources for the
checks are two general-purpose chemistry libraries from the package registry, both
implementing the IUPAC standard atomic weights: ``molmass`` and ``periodictable``.
Every stored mass must agree with each within 0.01 g/mol, and the two libraries with
each other within 0.05 g/mol; a wrong mass, or a formula that does not match its mass,
fails here.
"""

from __future__ import annotations

import csv
import subprocess
import sys
import textwrap
from pathlib import Path

import molmass
import periodictable
import pytest

from vetfluid.common import chemistry
from vetfluid.common.chemistry import (
    ELEMENT_SYMBOLS,
    formula_atoms,
    load_molar_masses,
    molar_mass_g_per_mol,
)
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.paths import resource_dir
from vetfluid.tables import fluids as fl
from vetfluid.tables.fluids import Solute, load_solutes

ROOT = Path(__file__).resolve().parents[1]
DATA = resource_dir("species_data")
reference = pytest.mark.reference

STORED_VS_LIBRARY_G_PER_MOL = 0.01
LIBRARY_VS_LIBRARY_G_PER_MOL = 0.05


def _stored_rows() -> list[tuple[str, str, float]]:
    """(file:line, formula, stored g/mol) for every row of both files, read with plain csv."""
    rows = []
    for name in ("solutes.csv", chemistry.MOLAR_MASS_FILE):
        with (DATA / name).open(newline="", encoding="utf-8") as handle:
            for line, row in enumerate(csv.DictReader(handle), start=2):
                rows.append((f"{name}:{line}", row["formula"], float(row["molar_mass_g_per_mol"])))
    return rows


STORED = _stored_rows()


def _molmass_g_per_mol(formula: str) -> float:
    return molmass.Formula(formula).mass


def _periodictable_g_per_mol(formula: str) -> float:
    # periodictable reads "." as a decimal point; it writes water of hydration with "+"
    return periodictable.formula(formula.replace(".", "+")).mass


def test_both_files_have_rows_to_check():
    names = {where.split(":")[0] for where, _, _ in STORED}
    assert names == {"solutes.csv", chemistry.MOLAR_MASS_FILE}


@reference
@pytest.mark.parametrize(("where", "formula", "stored"), STORED, ids=[r[0] for r in STORED])
def test_stored_molar_mass_agrees_with_molmass_and_periodictable(where, formula, stored):
    # Outside sources: molmass and periodictable (IUPAC standard atomic weights).
    by_molmass = _molmass_g_per_mol(formula)
    by_periodictable = _periodictable_g_per_mol(formula)
    assert abs(stored - by_molmass) <= STORED_VS_LIBRARY_G_PER_MOL, (where, by_molmass)
    assert abs(stored - by_periodictable) <= STORED_VS_LIBRARY_G_PER_MOL, (where, by_periodictable)
    assert abs(by_molmass - by_periodictable) <= LIBRARY_VS_LIBRARY_G_PER_MOL, where


def test_the_loaders_use_the_checked_numbers():
    with (DATA / "solutes.csv").open(newline="", encoding="utf-8") as handle:
        solute_rows = {row["solute_id"]: row for row in csv.DictReader(handle)}
    solutes = load_solutes()
    assert set(solutes) == set(solute_rows)
    for solute_id, row in solute_rows.items():
        assert solutes[solute_id].formula == row["formula"]
        assert solutes[solute_id].molar_mass_g_per_mol == float(row["molar_mass_g_per_mol"])
    recorded = {formula: mass for where, formula, mass in STORED if where.startswith("molar_")}
    assert dict(load_molar_masses()) == recorded


def test_every_formula_the_core_converts_with_is_on_record():
    on_record = load_molar_masses()
    assert fl.GLUCOSE_FORMULA in on_record and fl.DEXTROSE_HYDROUS_FORMULA in on_record
    for analyte, formula in (("glucose", "C6H12O6"), ("urea", "CH4N2O"), ("bun", "N2"),
                             ("creatinine", "C4H7N3O")):  # fmt: skip
        assert formula in on_record, analyte


def test_a_formula_in_both_files_has_one_mass():
    # 5% dextrose reads 50 g/L hydrous only if the solute weighed and the hydrous
    # conversion in the composition use one mass
    by_formula: dict[str, set[float]] = {}
    for _, formula, mass in STORED:
        by_formula.setdefault(formula, set()).add(mass)
    assert {f: m for f, m in by_formula.items() if len(m) > 1} == {}
    dextrose = load_solutes()["dextrose_h2o"]
    assert dextrose.formula == fl.DEXTROSE_HYDROUS_FORMULA
    assert dextrose.molar_mass_g_per_mol == load_molar_masses()[fl.DEXTROSE_HYDROUS_FORMULA]


def test_lab_conversions_use_the_recorded_mass():
    from vetfluid.common.units import mmol_per_l_to_mg_per_dl

    # 10 mmol/L × M g/mol = 10·M mg/L = M mg/dL
    for analyte, formula in (("glucose", "C6H12O6"), ("creatinine", "C4H7N3O")):
        assert mmol_per_l_to_mg_per_dl(10, analyte) == pytest.approx(
            load_molar_masses()[formula], rel=1e-12
        )


def test_an_unrecorded_formula_is_an_input_error_naming_the_file():
    with pytest.raises(InputError) as caught:
        molar_mass_g_per_mol("NaHCO3")
    assert caught.value.field == "formula"
    assert chemistry.MOLAR_MASS_FILE in (caught.value.fix or "")


# --- counting atoms (the check of a solute's ions against its formula) -----------------

EXTRA_FORMULAS = ("Ca(OH)2", "Al2(SO4)3.18H2O", "CH3CH(OH)COONa", "K4(Fe(CN)6).3H2O",
                  "(NH4)2SO4", "HOCH2(CHOH)4COONa")  # fmt: skip


@pytest.mark.parametrize("formula", sorted({f for _, f, _ in STORED} | set(EXTRA_FORMULAS)))
def test_atom_counts_agree_with_molmass(formula):
    expected = {
        symbol: item.count for symbol, item in molmass.Formula(formula).composition().items()
    }
    assert dict(formula_atoms(formula)) == expected


@pytest.mark.parametrize(
    "text",
    ["", "NaQ", "Xq9", "na", "Na Cl", "Na(", "Na)", "()", "(2)", "2", "NaCl.", ".H2O",
     "NaCl..H2O", "Cl0", "H02", "0H2O", "CaCl2.0H2O", "Na2(", "Ca(OH)2)"],
)  # fmt: skip
def test_unreadable_formulas_are_input_errors(text):
    with pytest.raises(InputError) as caught:
        formula_atoms(text)
    assert caught.value.field == "formula" and caught.value.fix


def test_element_symbols_are_the_iupac_ones():
    assert ELEMENT_SYMBOLS == {e.symbol for e in periodictable.elements if e.number > 0}
    assert {e.symbol for e in molmass.ELEMENTS} <= ELEMENT_SYMBOLS


def test_a_solute_value_with_a_bad_molar_mass_is_an_input_error():
    solute = load_solutes()["nacl"]
    for bad in (0, -58.4, float("nan"), float("inf"), "58.4", True):
        with pytest.raises(InputError) as caught:
            Solute(
                solute_id="nacl_copy",
                name=solute.name,
                formula=solute.formula,
                molar_mass_g_per_mol=bad,
                ions=solute.ions,
            )
        assert caught.value.field == "molar_mass_g_per_mol"


# --- molar_masses.csv: bad rows name the file, the line and the fix ---------------------

HEADER = "formula,name,molar_mass_g_per_mol,note\n"
GOOD = "C6H12O6,glucose,180.1562,\n"


def _load(tmp_path: Path, text: str):
    (tmp_path / chemistry.MOLAR_MASS_FILE).write_text(text, encoding="utf-8")
    return load_molar_masses(tmp_path)


def test_a_good_file_loads(tmp_path):
    assert dict(_load(tmp_path, HEADER + GOOD)) == {"C6H12O6": 180.1562}


@pytest.mark.parametrize(
    ("row", "words"),
    [
        ("N2,urea nitrogen,,\n", "molar_mass_g_per_mol is missing"),
        ("N2,urea nitrogen,0,\n", "not a number above zero"),
        ("N2,urea nitrogen,-28.0134,\n", "not a number above zero"),
        ("N2,urea nitrogen,28 g/mol,\n", "not a number above zero"),
        ("N2,urea nitrogen,nan,\n", "not a number above zero"),
        ("Nq2,urea nitrogen,28.0134,\n", "not an element symbol"),
        ("C6H12O6,glucose again,180.1562,\n", "already listed at molar_masses.csv:2"),
    ],
)
def test_bad_rows_name_file_line_and_fix(tmp_path, row, words):
    with pytest.raises(SpeciesDataError) as caught:
        _load(tmp_path, HEADER + GOOD + row)
    assert caught.value.location == "molar_masses.csv:3"
    assert words in str(caught.value)
    assert caught.value.fix


def test_a_file_with_only_its_header_is_refused(tmp_path):
    with pytest.raises(SpeciesDataError) as caught:
        _load(tmp_path, HEADER)
    assert caught.value.location == "molar_masses.csv:1" and "no rows" in str(caught.value)


def test_a_missing_column_points_at_the_header(tmp_path):
    with pytest.raises(SpeciesDataError) as caught:
        _load(tmp_path, "formula,name,note\nC6H12O6,glucose,\n")
    assert caught.value.location == "molar_masses.csv:1"
    assert "molar_mass_g_per_mol" in str(caught.value)


def test_an_empty_or_missing_file_is_a_data_error(tmp_path):
    with pytest.raises(SpeciesDataError):
        load_molar_masses(tmp_path)
    with pytest.raises(SpeciesDataError) as caught:
        _load(tmp_path, HEADER)
    assert caught.value.location == "molar_masses.csv:1"


# --- the core runs without a chemistry library -------------------------------------------


def test_the_core_imports_no_chemistry_library():
    # Import the modules named, walk every core module, and do the work that used to
    # compute molar masses: every fluid's composition, each lab conversion, a plan,
    # and the CLI's fluids and plan commands.
    script = textwrap.dedent(
        """
        import contextlib, importlib, io, pkgutil, sys
        import vetfluid.planning.plan, vetfluid.tables.fluids, vetfluid.common.units, vetfluid.cli
        import vetfluid
        for module in pkgutil.walk_packages(vetfluid.__path__, "vetfluid."):
            importlib.import_module(module.name)
        from vetfluid.tables import fluids
        from vetfluid.common import units
        from vetfluid.planning.demos import DEMOS
        for item in fluids.load_fluids().values():
            fluids.composition(item).dextrose_hydrous_g_per_l
        for analyte in ("glucose", "urea", "bun", "creatinine"):
            units.mg_per_dl_to_umol_per_l(units.mmol_per_l_to_mg_per_dl(5, analyte), analyte)
        vetfluid.planning.plan.build_plan(next(iter(DEMOS.values())).request)
        with contextlib.redirect_stdout(io.StringIO()):
            vetfluid.cli.main(["fluids"])
            vetfluid.cli.main(["plan", "--species", "dog", "--weight", "20 kg", "--json"])
        print(",".join(sorted(n for n in sys.modules
                               if n.split(".")[0] in ("molmass", "periodictable"))))
        """
    )
    out = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, check=True, cwd=ROOT
    )
    assert out.stdout.strip() == "", f"the core pulled in: {out.stdout}"
