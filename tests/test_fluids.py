"""The fluid library: label values, independent molar masses, tonicity, additives, bad data.

Reference values are from the "Fluids" table of REFERENCE_VALUES.md (USP–NF
monographs and USP-style labels, status C unless said); each test names its source.
"""

from __future__ import annotations

import math
import subprocess
import sys
from dataclasses import fields

import periodictable
import pytest
from hypothesis import given
from hypothesis import strategies as st

from vetfluid.common import paths
from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.tables import fluids as fl
from vetfluid.tables.fluids import (
    Composition,
    Fluid,
    SoluteAmount,
    add_kcl_to_bag,
    composition,
    fluid,
    load_fluids,
    load_solutes,
    tonicity,
    with_additive,
)


def comp(fluid_id: str) -> Composition:
    return composition(fluid(fluid_id))


# --- reference checks against labels ------------------------------------------------

reference = pytest.mark.reference


@reference
def test_sodium_chloride_0_9():
    # USP Sodium Chloride Injection 0.9% label: Na 154, Cl 154 mEq/L, 308 mOsm/L (calc.)
    c = comp("nacl_0_9")
    assert c.meq_per_l("na") == pytest.approx(154, abs=0.5)
    assert c.meq_per_l("cl") == pytest.approx(154, abs=0.5)
    assert c.osmolarity_mosm_per_l == pytest.approx(308, abs=1)


@reference
def test_sodium_chloride_0_45():
    # USP Sodium Chloride Injection 0.45% label: Na 77, Cl 77 mEq/L, 154 mOsm/L
    c = comp("nacl_0_45")
    assert c.meq_per_l("na") == pytest.approx(77, abs=0.5)
    assert c.meq_per_l("cl") == pytest.approx(77, abs=0.5)
    assert c.osmolarity_mosm_per_l == pytest.approx(154, abs=1)


@reference
def test_lactated_ringers():
    # USP Lactated Ringer's Injection labels: Na 130, K 4, Ca 2.7 (some 3), Cl 109 (some
    # 110), lactate 28 mEq/L; 273 mOsm/L (some 275). Ranges span the labels, ± rounding.
    c = comp("lactated_ringers")
    assert c.meq_per_l("na") == pytest.approx(130, abs=0.5)
    assert c.meq_per_l("k") == pytest.approx(4, abs=0.1)
    assert 2.7 - 0.05 <= c.meq_per_l("ca") <= 3.0 + 0.05  # anhydrous CaCl2 would give 3.6
    assert 109 - 0.5 <= c.meq_per_l("cl") <= 110 + 0.5
    assert c.meq_per_l("lactate") == pytest.approx(28, abs=0.5)
    assert 273 - 0.5 <= c.osmolarity_mosm_per_l <= 275 + 0.5


@reference
def test_dextrose_5():
    # USP Dextrose Injection 5% labels: 252 mOsm/L (250–253), 170 kcal/L
    c = comp("dextrose_5")
    assert 250 <= c.osmolarity_mosm_per_l <= 253
    assert c.kcal_per_l == pytest.approx(170, abs=0.5)
    assert c.dextrose_hydrous_g_per_l == pytest.approx(50, rel=1e-9)  # 5% w/v as hydrous
    assert c.cations_meq_per_l == 0


@reference
def test_dextrose_50():
    # USP Dextrose Injection 50% labels: ≈ 2.53 mOsm/mL, 1.7 kcal/mL
    c = comp("dextrose_50")
    assert c.osmolarity_mosm_per_l / 1000 == pytest.approx(2.53, abs=0.01)
    assert c.kcal_per_l / 1000 == pytest.approx(1.7, abs=0.005)


@reference
def test_kcl_concentrate():
    # USP Potassium Chloride for Injection Concentrate, 149 mg/mL: 2 mEq K/mL, 4000 mOsm/L
    c = comp("kcl_2_meq_per_ml")
    assert c.meq_per_l("k") / 1000 == pytest.approx(2, abs=0.01)
    assert c.osmolarity_mosm_per_l == pytest.approx(4000, abs=10)


@reference
def test_sodium_chloride_7_2():
    # USP-style 7.2% sodium chloride label: Na 1232, Cl 1232 mEq/L, 2464 mOsm/L
    c = comp("nacl_7_2")
    assert c.meq_per_l("na") == pytest.approx(1232, abs=1)
    assert c.meq_per_l("cl") == pytest.approx(1232, abs=1)
    assert c.osmolarity_mosm_per_l == pytest.approx(2464, abs=2)


def test_balanced_acetate_gluconate_hits_its_targets():
    # Targets are memory (REFERENCE_VALUES "Fluids", status M); the g/L were derived to
    # give them, so this checks the derivation and the CSV, not the targets.
    c = comp("balanced_acetate_gluconate")
    targets = {"na": 140, "k": 5, "mg": 1.5, "cl": 98, "acetate": 27, "gluconate": 23}
    for ion, mmol in targets.items():
        assert c.mmol_per_l(ion) == pytest.approx(mmol, abs=0.001), ion
    assert c.osmolarity_mosm_per_l == pytest.approx(294, abs=1)  # ≈ 294 (status M)
    assert fluid("balanced_acetate_gluconate").basis == "memory"


def test_every_fluid_is_electrically_neutral():
    # Independent of any label: cations and anions must balance in every real solution.
    for fluid_id, item in load_fluids().items():
        c = composition(item)
        assert c.cations_meq_per_l == pytest.approx(c.anions_meq_per_l, rel=1e-12), fluid_id


# --- molar masses against a second chemistry library --------------------------------

# The compound each solute is meant to be, spelled for periodictable, written
# independently of solutes.csv so a wrong hydrate there fails here.
PERIODICTABLE_FORMULA = {
    "nacl": "NaCl",
    "kcl": "KCl",
    "sodium_lactate": "CH3CH(OH)COONa",
    "cacl2_2h2o": "CaCl2(H2O)2",
    "mgcl2_6h2o": "MgCl2(H2O)6",
    "sodium_acetate_3h2o": "CH3COONa(H2O)3",
    "sodium_gluconate": "HOCH2(CHOH)4COONa",
    "dextrose_h2o": "C6H12O6(H2O)",
}


def test_every_solute_has_an_independent_mass_check():
    assert set(load_solutes()) == set(PERIODICTABLE_FORMULA)


@pytest.mark.parametrize("solute_id", sorted(PERIODICTABLE_FORMULA))
def test_molar_mass_matches_periodictable(solute_id):
    expected = periodictable.formula(PERIODICTABLE_FORMULA[solute_id]).mass
    assert load_solutes()[solute_id].molar_mass_g_per_mol == pytest.approx(expected, abs=0.01)


@pytest.mark.parametrize(
    ("formula", "other"),
    [(fl.GLUCOSE_FORMULA, "C6H12O6"), (fl.DEXTROSE_HYDROUS_FORMULA, "C6H12O6(H2O)")],
)
def test_dextrose_formulas_match_periodictable(formula, other):
    from vetfluid.common.units import molar_mass_g_per_mol

    assert molar_mass_g_per_mol(formula) == pytest.approx(
        periodictable.formula(other).mass, abs=0.01
    )


# --- tonicity ----------------------------------------------------------------------


def test_lactated_ringers_is_isotonic_in_vitro_and_in_vivo():
    result = tonicity(fluid("lactated_ringers"), plasma_osmolality_mosm_per_kg=300)
    assert (result.in_vitro_class, result.effective_class) == ("isotonic", "isotonic")
    # lactate becomes bicarbonate one-for-one, so nothing is lost in vivo
    assert result.effective_ratio == pytest.approx(result.in_vitro_ratio)


def test_half_strength_saline_is_hypotonic():
    result = tonicity(fluid("nacl_0_45"), plasma_osmolality_mosm_per_kg=300)
    assert (result.in_vitro_class, result.effective_class) == ("hypotonic", "hypotonic")
    assert result.in_vitro_ratio == pytest.approx(154 / 300, abs=0.005)


def test_hypertonic_saline_is_hypertonic():
    result = tonicity(fluid("nacl_7_2"), plasma_osmolality_mosm_per_kg=300)
    assert (result.in_vitro_class, result.effective_class) == ("hypertonic", "hypertonic")


def test_dextrose_5_is_near_isotonic_in_the_bag_but_free_water_in_the_body():
    result = tonicity(fluid("dextrose_5"), plasma_osmolality_mosm_per_kg=300)
    assert 0.8 < result.in_vitro_ratio < 0.9  # 252 / 300
    assert result.effective_ratio == 0
    assert result.effective_class == "hypotonic"
    wide = tonicity(fluid("dextrose_5"), plasma_osmolality_mosm_per_kg=300, band_fraction=0.2)
    assert (wide.in_vitro_class, wide.effective_class) == ("isotonic", "hypotonic")


def test_saline_with_dextrose_loses_the_dextrose_in_vivo():
    c = comp("nacl_0_45_dextrose_2_5")
    assert c.effective_osmolarity_mosm_per_l == pytest.approx(
        comp("nacl_0_45").osmolarity_mosm_per_l
    )
    result = tonicity(fluid("nacl_0_45_dextrose_2_5"), plasma_osmolality_mosm_per_kg=300)
    assert (result.in_vitro_class, result.effective_class) == ("isotonic", "hypotonic")


@pytest.mark.parametrize(
    ("plasma", "band"), [(0, 0.1), (-300, 0.1), (math.nan, 0.1), (300, 0), (300, 1), (300, True)]
)
def test_tonicity_rejects_bad_input(plasma, band):
    with pytest.raises(InputError):
        tonicity(fluid("nacl_0_9"), plasma_osmolality_mosm_per_kg=plasma, band_fraction=band)


# --- additives ---------------------------------------------------------------------


def test_twenty_mmol_kcl_into_a_litre_of_saline():
    concentrate = fluid("kcl_2_meq_per_ml")
    ml = 20 / comp("kcl_2_meq_per_ml").k_mmol_per_l * 1000  # 20 mmol K, ≈ 10 mL
    mixed = with_additive(
        fluid("nacl_0_9"), bag_volume_ml=1000, additive=concentrate, additive_ml=ml
    )
    c = mixed.composition
    assert mixed.volume_ml == pytest.approx(1000 + ml)
    assert c.k_mmol_per_l == pytest.approx(20 * 1000 / (1000 + ml), rel=1e-12)
    assert c.k_mmol_per_l == pytest.approx(20 * 1000 / 1010, abs=0.01)
    assert c.na_mmol_per_l == pytest.approx(comp("nacl_0_9").na_mmol_per_l * 1000 / (1000 + ml))
    assert mixed.fluid.basis == "derived"


def test_fifty_percent_dextrose_makes_five_percent():
    # Bedside arithmetic: 100 mL of 50% in 900 mL gives 50 g in 1 L, i.e. 5%.
    mixed = with_additive(
        fluid("nacl_0_9"), bag_volume_ml=900, additive=fluid("dextrose_50"), additive_ml=100
    )
    c = mixed.composition
    assert c.dextrose_hydrous_g_per_l == pytest.approx(50, rel=1e-9)
    assert c.na_mmol_per_l == pytest.approx(0.9 * comp("nacl_0_9").na_mmol_per_l)


def test_zero_additive_changes_nothing():
    base = fluid("lactated_ringers")
    mixed = with_additive(base, bag_volume_ml=500, additive=fluid("dextrose_50"), additive_ml=0)
    assert mixed.composition.na_mmol_per_l == pytest.approx(composition(base).na_mmol_per_l)
    assert mixed.composition.glucose_mmol_per_l == 0


def test_memory_basis_carries_into_a_mixture():
    mixed = with_additive(
        fluid("balanced_acetate_gluconate"),
        bag_volume_ml=1000,
        additive=fluid("kcl_2_meq_per_ml"),
        additive_ml=5,
    )
    assert mixed.fluid.basis == "memory"


def test_add_kcl_to_lactated_ringers():
    result = add_kcl_to_bag(fluid("lactated_ringers"), bag_volume_ml=1000, target_k_mmol_per_l=20)
    assert result.final_k_mmol_per_l == pytest.approx(20, abs=1e-9)
    # independent solve with periodictable masses: (k·V + c·x)/(V + x) = 20
    kcl = periodictable.formula("KCl").mass
    k_bag, k_conc = 0.3 / kcl * 1000, 149 / kcl * 1000
    assert result.concentrate_ml == pytest.approx(1000 * (20 - k_bag) / (k_conc - 20), abs=0.01)
    assert 7.9 < result.concentrate_ml < 8.2  # rough: 16 mEq at 2 mEq/mL ≈ 8 mL
    assert result.potassium_mmol == pytest.approx(result.concentrate_ml * k_conc / 1000, rel=1e-3)


def test_add_kcl_when_already_at_target_adds_nothing():
    bag = fluid("lactated_ringers")
    result = add_kcl_to_bag(
        bag, bag_volume_ml=1000, target_k_mmol_per_l=composition(bag).k_mmol_per_l
    )
    assert result.concentrate_ml == pytest.approx(0, abs=1e-12)


@pytest.mark.parametrize(
    ("volume", "target"),
    [(1000, 2), (1000, 2000), (1000, 5000), (0, 20), (-5, 20), (math.inf, 20), (1000, math.nan)],
)
def test_add_kcl_rejects_bad_input(volume, target):
    with pytest.raises(InputError):
        add_kcl_to_bag(fluid("lactated_ringers"), bag_volume_ml=volume, target_k_mmol_per_l=target)


@pytest.mark.parametrize(("volume", "added"), [(0, 10), (1000, -1), (1000, math.nan), ("1 L", 10)])
def test_with_additive_rejects_bad_volumes(volume, added):
    with pytest.raises(InputError):
        with_additive(
            fluid("nacl_0_9"),
            bag_volume_ml=volume,
            additive=fluid("kcl_2_meq_per_ml"),
            additive_ml=added,
        )


# --- the library ---------------------------------------------------------------------


def test_library_holds_the_fluids_and_their_basis():
    library = load_fluids()
    expected = {
        "nacl_0_9", "nacl_0_45", "nacl_0_45_dextrose_2_5", "lactated_ringers", "dextrose_5",
        "balanced_acetate_gluconate", "nacl_7_2", "kcl_2_meq_per_ml", "dextrose_50",
    }  # fmt: skip
    assert expected <= set(library)
    for item in library.values():
        assert (item.basis == "published") == bool(item.source_id), item.fluid_id
    assert library["kcl_2_meq_per_ml"].kind == "additive_concentrate"
    assert library["nacl_0_45_dextrose_2_5"].basis == "memory"


def test_library_is_cached_and_read_only():
    assert load_fluids() is load_fluids()
    with pytest.raises(TypeError):
        load_fluids()["x"] = fluid("nacl_0_9")  # type: ignore[index]


def test_unknown_fluid_lists_the_known_ones():
    with pytest.raises(InputError) as caught:
        fluid("ringer_lactate_typo")
    assert "nacl_0_9" in caught.value.fix and "lactated_ringers" in caught.value.fix


@pytest.mark.parametrize("call", [
    lambda: composition("nacl_0_9"),
    lambda: tonicity("nacl_0_9", plasma_osmolality_mosm_per_kg=300),
    lambda: with_additive(fluid("nacl_0_9"), bag_volume_ml=1000, additive="kcl", additive_ml=5),
    lambda: add_kcl_to_bag(None, bag_volume_ml=1000, target_k_mmol_per_l=20),
])  # fmt: skip
def test_a_fluid_id_where_a_fluid_belongs_is_an_input_error(call):
    with pytest.raises(InputError):
        call()


def test_unknown_ion_key_is_an_input_error():
    with pytest.raises(InputError):
        comp("nacl_0_9").mmol_per_l("bicarbonate")


def test_loading_the_library_needs_neither_pandas_nor_qt():
    code = (
        "import sys, vetfluid.tables.fluids as f; f.load_fluids(); "
        "bad = [m for m in ('pandas', 'PySide6', 'pyqtgraph', 'ui') if m in sys.modules]; "
        "sys.exit(', '.join(bad) or None)"
    )
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr


# --- composition is linear in g/L ----------------------------------------------------

_SOLUTES = tuple(load_solutes().values())
_amounts = st.lists(
    st.floats(min_value=0, max_value=1000, allow_nan=False), min_size=len(_SOLUTES),
    max_size=len(_SOLUTES),
)  # fmt: skip


def _make(grams: list[float]) -> Fluid:
    return Fluid(
        fluid_id="test_mix",
        name="test mix",
        kind="crystalloid",
        solutes=tuple(
            SoluteAmount(solute=s, g_per_l=g) for s, g in zip(_SOLUTES, grams, strict=True)
        ),
        basis="memory",
    )


_NUMBERS = [f.name for f in fields(Composition) if f.name != "fluid_id"]


@given(a=_amounts, b=_amounts, alpha=st.floats(0, 10), beta=st.floats(0, 10))
def test_composition_is_linear_and_never_negative(a, b, alpha, beta):
    mixed = composition(_make([alpha * x + beta * y for x, y in zip(a, b, strict=True)]))
    ca, cb = composition(_make(a)), composition(_make(b))
    for name in _NUMBERS:
        value = getattr(mixed, name)
        assert math.isfinite(value) and value >= 0, name
        expected = alpha * getattr(ca, name) + beta * getattr(cb, name)
        assert value == pytest.approx(expected, rel=1e-9, abs=1e-9), name
    assert mixed.effective_osmolarity_mosm_per_l <= mixed.osmolarity_mosm_per_l * (1 + 1e-12)


# --- bad data names the file and line -----------------------------------------------

SHIPPED_SOLUTES = paths.resource_file("species_data", "solutes.csv").read_text(encoding="utf-8")
HEADER = "fluid_id,name,kind,solute_id,g_per_l,source_id,basis,note\n"
GOOD_ROW = "saline,saline,crystalloid,nacl,9,,memory,\n"


def _folder(tmp_path, fluids_text: str, solutes_text: str = SHIPPED_SOLUTES, sources=None):
    (tmp_path / "fluids.csv").write_text(fluids_text, encoding="utf-8")
    (tmp_path / "solutes.csv").write_text(solutes_text, encoding="utf-8")
    if sources is not None:
        (tmp_path / "sources.csv").write_text(sources, encoding="utf-8")
    return tmp_path


def test_a_good_folder_loads(tmp_path):
    folder = _folder(tmp_path, HEADER + GOOD_ROW)
    assert composition(load_fluids(folder)["saline"]).na_mmol_per_l == pytest.approx(154, abs=0.5)
    assert fluid("saline", folder=folder).basis == "memory"


@pytest.mark.parametrize(
    ("rows", "line", "words"),
    [
        (GOOD_ROW + "saline,saline,crystalloid,sodium_bicarb,1,,memory,\n", 3, "unknown solute"),
        ("saline,saline,crystalloid,nacl,-9,,memory,\n", 2, "not a number above zero"),
        ("saline,saline,crystalloid,nacl,nine,,memory,\n", 2, "not a number above zero"),
        ("saline,saline,crystalloid,nacl,nan,,memory,\n", 2, "not a number above zero"),
        (GOOD_ROW + "saline,saline,crystalloid,nacl,4,,memory,\n", 3, "fluids.csv:2"),
        (GOOD_ROW + "saline,saline,colloid,kcl,1,,memory,\n", 3, "kind"),
        ("saline,saline,gel,nacl,9,,memory,\n", 2, "unknown kind"),
        ("saline,saline,colloid,nacl,9,,memory,\n", 2, "names its colloid"),
        ("saline,saline,crystalloid,nacl,9,,recalled,\n", 2, "unknown basis"),
        ("saline,saline,crystalloid,nacl,9,,published,\n", 2, "needs its source"),
        ("Saline 0.9,saline,crystalloid,nacl,9,,memory,\n", 2, "lower-case"),
        ("saline,saline,crystalloid,nacl,9,,memory,note, with a comma\n", 2, "number of fields"),
    ],
)
def test_bad_fluid_rows_name_file_and_line(tmp_path, rows, line, words):
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(_folder(tmp_path, HEADER + rows))
    error = caught.value
    assert error.location == f"fluids.csv:{line}"
    assert f"fluids.csv:{line}" in str(error) and words in str(error)
    assert error.fix


@pytest.mark.parametrize(
    ("bad_row", "words"),
    [
        ("cacl2_bad,calcium chloride,CaCl2.2H2O,147.0144,Ca2+:1;Cl-:1,no,", "net charge"),
        ("nacl_bad,sodium chloride,NaCl,58.4427,K+:1;Cl-:1,no,", "has 1 Na but the ions give 0"),
        ("hco3,sodium bicarbonate,NaHCO3,84.0067,Na+:1;HCO3-:1,no,", "unknown ion"),
        ("nacl_bad,sodium chloride,NaQ,58.4427,Na+:1;Cl-:1,no,", "formula"),
        ("nacl_bad,sodium chloride,NaCl,58.4427,Na+:one;Cl-:1,no,", "whole number"),
        ("nacl_bad,sodium chloride,NaCl,58.4427,Na+:1;Cl-:1,sometimes,", "metabolic fate"),
        ("nacl_bad,sodium chloride,NaCl,58.4427,Na+:1;Cl-:1,anion_to_bicarbonate,", "lactate"),
        ("nacl,sodium chloride again,NaCl,58.4427,Na+:1;Cl-:1,no,", "already listed at"),
    ],
)
def test_bad_solute_rows_name_file_and_line(tmp_path, bad_row, words):
    solutes = SHIPPED_SOLUTES.rstrip("\n") + "\n" + bad_row + "\n"
    line = solutes.count("\n")
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(_folder(tmp_path, HEADER + GOOD_ROW, solutes))
    assert caught.value.location == f"solutes.csv:{line}"
    assert words in str(caught.value)
    assert caught.value.fix  # every refused row says what to change


def test_a_solute_table_with_only_its_header_is_refused(tmp_path):
    header = SHIPPED_SOLUTES.splitlines(keepends=True)[0]
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(_folder(tmp_path, HEADER + GOOD_ROW, header))
    assert caught.value.location == "solutes.csv:1" and "no rows" in str(caught.value)


@pytest.mark.parametrize(
    ("mass", "words"),
    [
        ("", "molar_mass_g_per_mol is missing"),
        ("0", "not a number above zero"),
        ("-58.4427", "not a number above zero"),
        ("58.4 g", "not a number above zero"),
        ("inf", "not a number above zero"),
        ("nan", "not a number above zero"),
    ],
)
def test_a_missing_or_bad_molar_mass_names_file_line_and_fix(tmp_path, mass, words):
    # never a default: a solute without a usable molar mass stops the library loading
    solutes = (
        SHIPPED_SOLUTES.rstrip("\n") + f"\nnacl_2,sodium chloride,NaCl,{mass},Na+:1;Cl-:1,no,\n"
    )
    line = solutes.count("\n")
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(_folder(tmp_path, HEADER + GOOD_ROW, solutes))
    assert caught.value.location == f"solutes.csv:{line}"
    assert words in str(caught.value)
    assert caught.value.fix  # every refused row says what to change
    assert "g/mol" in (caught.value.fix or "")


def test_a_solute_file_without_molar_masses_is_refused(tmp_path):
    # the old layout (no molar_mass_g_per_mol column) must fail loudly, not fall back
    old_layout = (
        "solute_id,name,formula,ions,metabolised,note\nnacl,sodium chloride,NaCl,Na+:1;Cl-:1,no,\n"
    )
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(_folder(tmp_path, HEADER + GOOD_ROW, old_layout))
    assert caught.value.location == "solutes.csv:1"
    assert "molar_mass_g_per_mol" in str(caught.value)


def test_missing_column_points_at_the_header(tmp_path):
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(_folder(tmp_path, HEADER.replace("g_per_l", "grams") + GOOD_ROW))
    assert caught.value.location == "fluids.csv:1" and "g_per_l" in str(caught.value)


def test_unknown_source_is_caught_when_sources_are_present(tmp_path):
    rows = "saline,saline,crystalloid,nacl,9,usp_typo,published,\n"
    folder = _folder(tmp_path, HEADER + rows, sources="source_id,citation,year,kind\nusp,x,1,y\n")
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(folder)
    assert caught.value.location == "fluids.csv:2" and "usp_typo" in str(caught.value)


def test_missing_file_is_a_data_error(tmp_path):
    (tmp_path / "fluids.csv").write_text(HEADER + GOOD_ROW, encoding="utf-8")
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(tmp_path)
    assert caught.value.location == "solutes.csv"


def test_empty_fluids_file_is_a_data_error(tmp_path):
    with pytest.raises(SpeciesDataError):
        load_fluids(_folder(tmp_path, HEADER))


def test_a_file_that_is_not_utf8_is_a_data_error(tmp_path):
    folder = _folder(tmp_path, HEADER + GOOD_ROW)
    (folder / "fluids.csv").write_bytes(
        (HEADER + "saline,s\xe9rum,crystalloid,nacl,9,,memory,\n").encode("latin-1")
    )
    with pytest.raises(SpeciesDataError) as caught:
        load_fluids(folder)
    assert caught.value.location == "fluids.csv:1"


COLLOID_HEADER = "fluid_id,colloid,g_per_l,volume_half_life_h,source_id,basis,note\n"
STARCH = "starch,starch in saline,colloid,nacl,9,,memory,\n"


def test_a_colloid_carries_its_molecule_and_adds_no_effective_osmoles(tmp_path):
    folder = _folder(tmp_path, HEADER + STARCH)
    (folder / "colloids.csv").write_text(COLLOID_HEADER + "starch,a starch,60,3,,memory,\n")
    starch = load_fluids(folder)["starch"]
    assert starch.colloid.volume_half_life_h == 3 and starch.colloid.g_per_l == 60
    # the carrier alone sets the osmoles: 9 g/L NaCl → 2 × 9 / M(NaCl), M from periodictable
    saline = fl.composition(starch).effective_osmolarity_mosm_per_l
    assert saline == pytest.approx(2 * 9000 / periodictable.formula("NaCl").mass, rel=1e-4)


@pytest.mark.parametrize(
    ("colloids", "words"),
    [
        ("starch,a starch,60,3,,memory,\nother,a starch,60,3,,memory,\n", "fluids.csv lacks"),
        ("starch,a starch,60,three,,memory,\n", "not a number"),
        ("starch,a starch,60,3,,memory,\nstarch,a starch,60,3,,memory,\n", "twice"),
    ],
)
def test_bad_colloid_rows_are_refused(tmp_path, colloids, words):
    folder = _folder(tmp_path, HEADER + STARCH)
    (folder / "colloids.csv").write_text(COLLOID_HEADER + colloids)
    with pytest.raises(SpeciesDataError, match=words):
        load_fluids(folder)


def test_colloid_plans_are_flagged_and_never_given_under_the_skin():
    from vetfluid.planning.plan import PlanRequest, build_plan

    iv = build_plan(PlanRequest(species_id="dog", weight_kg=20, fluid_id="hes_130_0_4_6"))
    assert "COLLOID_CHOSEN" in {f.code for f in iv.findings}
    sc = build_plan(PlanRequest(species_id="dog", weight_kg=20, fluid_id="hes_130_0_4_6",
                                route="sc", device="divided"))  # fmt: skip
    # Vet Clin North Am Small Anim Pract 2017: no colloid SC
    assert {f.code for f in sc.findings if f.severity == "hard"} >= {"FLUID_NOT_FOR_SC"}
    with_k = build_plan(PlanRequest(species_id="dog", weight_kg=20, fluid_id="hes_130_0_4_6",
                                    serum_k=3.0))  # fmt: skip
    assert with_k.bag.colloid is not None  # KCl added to a colloid bag keeps it a colloid


def test_a_whole_plan_of_colloid_is_a_hard_limit():
    from vetfluid.planning.plan import PlanRequest, build_plan

    # 20 mL/kg/day (recalled, safety_limits.csv): a day of starch for a dog is far above it
    plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, fluid_id="hes_130_0_4_6",
                                  dehydration_percent=8, resuscitation_boluses=3))  # fmt: skip
    limit = next(f for f in plan.findings if f.code == "COLLOID_DAILY_LIMIT")
    assert limit.severity == "hard" and "unverified" in limit.message
    assert "memory — unverified" in next(f.message for f in plan.findings
                                         if f.code == "COLLOID_CHOSEN")  # fmt: skip


def test_the_colloid_limit_holds_for_every_24_hours_not_only_the_first():
    from vetfluid.planning.plan import PlanRequest, build_plan

    def codes(**changes):
        plan = build_plan(PlanRequest(species_id="dog", weight_kg=20, fluid_id="hes_130_0_4_6",
                                      renal_disease=True, **changes))  # fmt: skip
        return {f.code for f in plan.findings}

    # ins and outs of an anuric dog on starch: 100 mL insensible loss each 6 h period is
    # 0.83 mL/kg/h, 20 mL/kg in 24 h — at the limit; measured urine takes it over on day 2
    under = codes(ins_and_outs_period_h=6, measured_outputs=((0.0, 0.0),) * 3)
    assert "COLLOID_DAILY_LIMIT" not in under
    over = codes(ins_and_outs_period_h=6,
                 measured_outputs=((0.0, 0.0),) * 4 + ((120.0, 0.0),) * 4)  # fmt: skip
    assert "COLLOID_DAILY_LIMIT" in over
