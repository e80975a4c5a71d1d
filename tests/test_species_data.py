"""The shipped species table: complete, traceable, and physiologically sane."""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import pytest

from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.common.paths import resource_dir
from vetfluid.physiology.maintenance import concentrating_ceiling
from vetfluid.tables.species import BASES, load_table

DATA = resource_dir("species_data")
REQUIRED_SPECIES = [
    "dog", "cat", "ferret", "rabbit", "guinea_pig", "chinchilla", "rat", "mouse",
    "syrian_hamster", "mongolian_gerbil", "kangaroo_rat", "jerboa", "sugar_glider", "hedgehog",
    "budgerigar", "cockatiel", "african_grey", "canary", "pigeon", "chicken", "red_tailed_hawk",
    "bearded_dragon", "leopard_gecko", "green_iguana", "ball_python", "corn_snake",
    "red_eared_slider", "hermanns_tortoise",
]  # fmt: skip


@pytest.fixture(scope="module")
def table():
    return load_table(overrides=Path("/nonexistent-override-folder"))


def _rows(name):
    with (DATA / name).open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def test_at_least_30_species_in_6_groups(table):
    ids = table.species_ids()
    assert len(ids) >= 30
    assert len({table.species(i).taxon_group for i in ids}) >= 6
    assert set(REQUIRED_SPECIES) <= set(ids)


def test_every_value_has_a_valid_basis_and_published_values_cite_a_known_source(table):
    rows = _rows("parameters.csv")
    assert rows
    for line, row in enumerate(rows, start=2):
        assert row["basis"] in BASES, f"parameters.csv:{line}"
        if row["basis"] == "published":
            assert row["source_id"] in table.sources, f"parameters.csv:{line}"
        if row["basis"] == "derived":
            assert row["note"], f"parameters.csv:{line} derived without a note"


def test_every_source_has_a_citation_and_is_cited_somewhere(table):
    data_files = ("parameters.csv", "fluids.csv", "potassium_scale.csv", "safety_limits.csv",
                  "dehydration_findings.csv", "fluid_roles.csv", "route_limits.csv",
                  "diuretics.csv")  # fmt: skip
    used = {  # every column naming a source: source_id, dose_source_id, times_source_id
        cell for name in data_files for r in _rows(name)
        for column, cell in r.items() if column.endswith("source_id")
    }  # fmt: skip
    code = " ".join(
        p.read_text(encoding="utf-8") for p in Path(DATA.parent, "vetfluid").rglob("*.py")
    )
    for source in table.sources.values():
        assert len(source.citation) > 20, source.source_id
        assert source.source_id in used or f'"{source.source_id}"' in code, source.source_id


def test_inheritance_resolves_every_required_parameter(table):
    for sid in table.species_ids():
        values = table.effective(sid)
        for definition in table.definitions.values():
            needed = definition.required == "all" or (
                definition.required == "ectotherm" and table.species(sid).is_ectotherm
            )
            if needed:
                assert definition.name in values, (sid, definition.name)


def test_values_say_where_they_come_from(table):
    dog_shock = table.value("dog", "shock_dose_ml_per_kg")
    assert (dog_shock.origin, dog_shock.defined_on) == ("shipped", "dog")
    gecko_up = table.value("leopard_gecko", "max_urine_plasma_ratio")
    assert (gecko_up.origin, gecko_up.defined_on) == ("inherited", "group_reptile")
    assert table.value("dog", "energy_exponent").defined_on == "group_mammal"


def test_no_reptile_concentrates_urine_above_plasma(table):
    # Reptiles lack a loop of Henle (Holz, Vet Clin North Am Exot Anim Pract; Braun 1985);
    # also common practice, no source: "reptiles no higher than plasma".
    reptiles = [s for s in table.species_ids() if table.species(s).is_ectotherm]
    assert len(reptiles) >= 7
    for sid in reptiles:
        ceiling, _, _ = concentrating_ceiling(table, sid)
        plasma = table.value(sid, "plasma_osmolality_mosm_per_kg").number
        assert ceiling <= plasma, sid


def test_some_desert_rodent_exceeds_2000_and_dogs_sit_between_people_and_gerbils(table):
    # Common practice, no source: desert rodents concentrate well over 2000 mOsm/kg,
    # a person 1200–1400; the dog maximum 2289 is Hardy & Osborne 1979.
    gerbil, _, _ = concentrating_ceiling(table, "mongolian_gerbil")
    dog, _, _ = concentrating_ceiling(table, "dog")
    assert gerbil > 2000
    assert 1400 < dog < gerbil
    assert dog == pytest.approx(2289)


def test_plasma_osmolality_near_300_for_mammals(table):
    # Common practice, no source: plasma ≈ 300 mOsm/kg.
    for sid in table.species_ids():
        if table.lineage(sid)[-1] == "group_mammal":
            assert 280 <= table.value(sid, "plasma_osmolality_mosm_per_kg").number <= 330, sid


def test_dog_and_cat_guideline_values(table):
    # Davis H et al. 2013 AAHA/AAFP guidelines: 132·BW^0.75 (dog), 80·BW^0.75 (cat),
    # shock dose dog 80–90, cat 50–55 mL/kg.
    assert table.value("dog", "maintenance_allometric_a").number == 132
    assert table.value("cat", "maintenance_allometric_a").number == 80
    assert table.value("dog", "shock_dose_ml_per_kg").high == 90
    assert table.value("cat", "shock_dose_ml_per_kg").low == 50


def test_basic_dog_and_cat_values_cite_only_what_was_checked(table):
    # Issue 20, item 7: a recalled value never names a source it was not checked
    # against (house rule: `published` only what was seen; otherwise no citation). The
    # basics a new user reads first: plasma osmolality, normal Na and K, bolus size.
    basics = ("plasma_osmolality_mosm_per_kg", "serum_na_mmol_per_l", "serum_k_mmol_per_l",
              "bolus_ml_per_kg")  # fmt: skip
    for sid in ("dog", "cat"):
        for parameter in basics:
            value = table.value(sid, parameter)
            if value.basis == "memory":
                assert not value.source_id, (sid, parameter, value.source_id)
            else:
                assert value.source_id in table.sources, (sid, parameter)


def test_usg_flag_follows_urine_concentration(table):
    for sid in table.species_ids():
        ceiling, _, _ = (
            concentrating_ceiling(table, sid)
            if table.get(sid, "max_urine_osmolality_mosm_per_kg")
            or table.get(sid, "max_urine_plasma_ratio")
            else (None, None, None)
        )
        if ceiling is not None and table.species(sid).is_ectotherm:
            assert table.value(sid, "usg_interpretable").value is False


def test_unknown_species_lists_close_matches(table):
    with pytest.raises(InputError, match="did you mean: dog"):
        table.species("dgo")


def test_search_finds_common_scientific_and_group_names(table):
    assert [s.id for s in table.search("gerbil")] == ["mongolian_gerbil"]
    assert "ball_python" in [s.id for s in table.search("python regius")]
    assert len(table.search("chelonian")) == 2


def test_species_are_found_by_the_words_clinicians_use_for_their_groups(table):
    """The group rows' common names: "turtle" finds the chelonians, "lizard" the squamates,
    "reptile" every reptile (turtles included), "mammal" rodents and marsupials too."""
    reptiles = {"bearded_dragon", "leopard_gecko", "green_iguana", "ball_python", "corn_snake",
                "red_eared_slider", "hermanns_tortoise"}  # fmt: skip
    assert {s.id for s in table.search("turtle")} == {"red_eared_slider", "hermanns_tortoise"}
    assert "bearded_dragon" in {s.id for s in table.search("lizard")}
    assert {s.id for s in table.search("reptile")} == reptiles
    assert {"mongolian_gerbil", "sugar_glider", "dog"} <= {s.id for s in table.search("mammal")}
    assert table.choice_label("red_eared_slider") == (
        "Red-eared slider — Trachemys scripta elegans · turtles and tortoises, reptiles"
    )
    assert table.group_names("canary") == ["passerine birds"]  # "birds" is in it already
    assert table.group_names("dog") == ["placental mammals"]


# ---- broken files: errors name the file and line ---------------------------------------------
@pytest.fixture()
def data_copy(tmp_path):
    target = tmp_path / "species_data"
    shutil.copytree(DATA, target)
    return target


def _append(path: Path, line: str) -> int:
    text = path.read_text(encoding="utf-8")
    path.write_text(text + line + "\n", encoding="utf-8")
    return len((text + line).splitlines())


@pytest.mark.parametrize(
    ("row", "message"),
    [
        ("dog,no_such_parameter,1,,,kg,,memory,", "unknown parameter"),
        ("dgo,body_weight_kg,1,,,kg,,memory,", "unknown species id"),
        ("cat,shock_dose_ml_per_kg,40,50,55,mL/kg,davis2013,published,", "outside low–high"),
        ("cat,body_weight_kg,4,2,8,kg,,memory,", "duplicate row"),
        ("ferret,shock_dose_ml_per_kg,60,,,mL,,memory,", "unit 'mL'"),
        ("ferret,shock_dose_ml_per_kg,60,,,mL/kg,nobody2099,published,", "unknown source_id"),
        ("ferret,shock_dose_ml_per_kg,60,,,mL/kg,,published,", "needs a source_id"),
        ("ferret,shock_dose_ml_per_kg,sixty,,,mL/kg,,memory,", "not a number"),
        ("ferret,shock_dose_ml_per_kg,60,,,mL/kg,,guess,", "basis 'guess'"),
        ("ferret,shock_dose_ml_per_kg,60,,,mL/kg,,derived,", "needs a note"),
        ("ferret,usg_interpretable,maybe,,,yes/no,,memory,", "yes or no"),
    ],
)
def test_broken_rows_name_file_and_line(data_copy, tmp_path, row, message):
    line = _append(data_copy / "parameters.csv", row)
    with pytest.raises(SpeciesDataError, match=message) as caught:
        load_table(data_copy, overrides=tmp_path / "none")
    assert f"parameters.csv:{line}" in str(caught.value)


@pytest.mark.parametrize(
    ("row", "message"),
    [
        ("ferret,bolus_minutes,0,,,min,,memory,", "plausible range 1–240 min"),
        ("ferret,bolus_minutes,15,0.5,30,min,,memory,", "low 0.5 min lies outside"),
        ("ferret,total_body_water_fraction,1e308,,,fraction of BW,,memory,", "plausible"),
    ],
)
def test_a_shipped_value_outside_its_plausible_range_stops_loading(data_copy, tmp_path, row,
                                                                    message):  # fmt: skip
    line = _append(data_copy / "parameters.csv", row)
    with pytest.raises(SpeciesDataError, match=message) as caught:
        load_table(data_copy, overrides=tmp_path / "none")
    assert f"parameters.csv:{line}" in str(caught.value)


def test_shipped_values_that_break_a_rule_across_parameters_stop_loading(data_copy, tmp_path):
    _append(data_copy / "parameters.csv", "ferret,ecf_fraction,0.05,,,fraction of BW,,memory,")
    with pytest.raises(SpeciesDataError, match="Plasma volume .* Extracellular fluid"):
        load_table(data_copy, overrides=tmp_path / "none")


def test_a_shipped_file_that_is_a_folder_is_named(data_copy, tmp_path):
    (data_copy / "sources.csv").unlink()
    (data_copy / "sources.csv").mkdir()
    with pytest.raises(SpeciesDataError, match="sources.csv.*folder"):
        load_table(data_copy, overrides=tmp_path / "none")


def test_missing_required_parameter_after_inheritance_is_reported(data_copy, tmp_path):
    path = data_copy / "parameters.csv"
    kept = [ln for ln in path.read_text(encoding="utf-8").splitlines()
            if not ln.startswith("group_mammal,serum_k_mmol_per_l")]  # fmt: skip
    path.write_text("\n".join(kept) + "\n", encoding="utf-8")
    with pytest.raises(SpeciesDataError, match="lacks serum_k_mmol_per_l"):
        load_table(data_copy, overrides=tmp_path / "none")


def test_parent_loop_is_reported(data_copy, tmp_path):
    path = data_copy / "species.csv"
    text = path.read_text(encoding="utf-8").replace(
        "group_mammal,group,Mammals,Mammalia,mammal,endotherm,urea,",
        "group_mammal,group,Mammals,Mammalia,mammal,endotherm,urea,group_rodent",
    )
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SpeciesDataError, match="loops"):
        load_table(data_copy, overrides=tmp_path / "none")


# ---- clinic overrides --------------------------------------------------------------------------
def test_clinic_override_merges_on_top_and_says_so(tmp_path):
    overrides = tmp_path / "overrides"
    overrides.mkdir()
    (overrides / "parameters.csv").write_text(
        "species_id,parameter,value,low,high,unit,source_id,basis,note\n"
        "ferret,blood_volume_ml_per_kg,75,,,mL/kg,,memory,Clinic protocol 2026\n",
        encoding="utf-8",
    )
    table = load_table(overrides=overrides)
    value = table.value("ferret", "blood_volume_ml_per_kg")
    assert (value.value, value.origin, value.basis) == (75, "override", "memory")
    assert table.value("dog", "blood_volume_ml_per_kg").origin == "shipped"


def test_broken_override_is_named_with_its_line_and_ignored(tmp_path):
    overrides = tmp_path / "overrides"
    overrides.mkdir()
    (overrides / "parameters.csv").write_text(
        "species_id,parameter,value,low,high,unit,source_id,basis,note\n"
        "ferret,blood_volume_ml_per_kg,-5,,,mL/kg,,memory,\n",
        encoding="utf-8",
    )
    table = load_table(overrides=overrides)
    [notice] = table.notices
    assert notice.location == "overrides/parameters.csv:2"
    assert table.value("ferret", "blood_volume_ml_per_kg").origin == "shipped"


def test_every_parameter_is_documented_in_the_data_readme(table):
    readme = (DATA / "README.md").read_text(encoding="utf-8")
    for name in table.definitions:
        assert f"`{name}`" in readme, name


def test_every_parameter_has_a_label_people_read():
    from vetfluid.planning.plan import PlanRequest, build_plan
    from vetfluid.tables.species import load_table

    table = load_table()
    labels = [d.label for d in table.definitions.values()]
    assert all(labels) and len(set(labels)) == len(labels)
    plan = build_plan(PlanRequest(species_id="mongolian_gerbil", weight_kg=0.065))
    note = next(f for f in plan.findings if f.code == "UNVERIFIED_VALUES")
    assert "Lightest weight for a continuous line" in note.message
    assert "continuous_line_min_kg" not in note.message


# ---- plausible ranges ----------------------------------------------------------------------
def test_every_number_parameter_has_a_plausible_range_and_other_types_none(table):
    rows = _rows("parameter_definitions.csv")
    assert rows and {"min", "max"} <= set(rows[0])
    for row in rows:
        if row["type"] == "number":
            assert float(row["min"]) < float(row["max"]), row["parameter"]
            assert float(row["min"]) >= 0, row["parameter"]  # no value is negative
        else:
            assert row["min"] == row["max"] == "", row["parameter"]
    dog_bolus = table.definitions["bolus_minutes"]
    assert (dog_bolus.minimum, dog_bolus.maximum) == (1, 240)


def test_every_shipped_value_low_and_high_lies_in_its_plausible_range():
    """Read from the CSV files themselves, not through the loader that enforces it."""
    ranges = {
        r["parameter"]: r for r in _rows("parameter_definitions.csv") if r["type"] == "number"
    }
    checked = 0
    for line, row in enumerate(_rows("parameters.csv"), start=2):
        bounds = ranges.get(row["parameter"])
        if bounds is None:
            continue
        for column in ("value", "low", "high"):
            if row[column]:
                assert float(bounds["min"]) <= float(row[column]) <= float(bounds["max"]), (
                    f"parameters.csv:{line} {row['parameter']} {column} {row[column]}"
                )
                checked += 1
    assert checked > 300


def test_body_weight_range_is_the_patient_weight_range():
    from vetfluid.common.checks import PATIENT_WEIGHT_KG

    row = next(r for r in _rows("parameter_definitions.csv") if r["parameter"] == "body_weight_kg")
    assert (float(row["min"]), float(row["max"])) == PATIENT_WEIGHT_KG


def test_every_species_keeps_the_rules_across_parameters(table):
    """Plasma is part of the ECF, the ECF part of the body's water (adult and neonate)
    and plasma part of the blood; a single bolus is no larger than the shock dose that
    caps all boluses (Davis et al. 2013: shock dose in fractions, i.e. boluses within it)."""
    for sid in table.species_ids():

        def number(name, sid=sid):
            found = table.get(sid, name)
            return None if found is None else found.number

        plasma, ecf, tbw = (number(n) for n in ("plasma_fraction", "ecf_fraction",
                                                 "total_body_water_fraction"))  # fmt: skip
        assert 0 < plasma < ecf < tbw < 1, sid
        neonate = number("neonate_total_body_water_fraction")
        assert neonate is None or ecf < neonate < 1, sid
        assert plasma * 1000 < number("blood_volume_ml_per_kg"), sid
        bolus, shock = number("bolus_ml_per_kg"), number("shock_dose_ml_per_kg")
        if bolus is not None and shock is not None:
            assert bolus <= shock, sid
        for value in table.effective(sid).values():
            if value.low is not None and value.high is not None:
                assert value.low <= value.high, (sid, value.parameter)


def test_the_readme_gives_every_plausible_range_with_a_reason():
    readme = (DATA / "README.md").read_text(encoding="utf-8")
    section = readme.split("### Plausible ranges", 1)[1].split("\n## ", 1)[0]
    documented = {}
    for line in section.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) == 4 and cells[0].startswith("`"):
            documented[cells[0].strip("`")] = cells[1:]
    for row in _rows("parameter_definitions.csv"):
        if row["type"] != "number":
            continue
        name = row["parameter"]
        assert name in documented, name
        low, high, why = documented[name]
        assert (float(low), float(high)) == (float(row["min"]), float(row["max"])), name
        assert len(why) > 15, name
