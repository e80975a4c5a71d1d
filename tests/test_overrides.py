"""Clinic overrides: round trip, refusal before writing, backups, and the loader picking them up."""

from __future__ import annotations

import csv
import os
from dataclasses import replace
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from vetfluid.common.errors import InputError, SpeciesDataError
from vetfluid.tables import overrides
from vetfluid.tables.overrides import (
    backup_file,
    export_effective_table,
    get_override,
    overrides_file,
    read_overrides,
    remove_override,
    set_override,
    shipped_value,
    stored_text,
)
from vetfluid.tables.species import PARAMETER_COLUMNS, SpeciesValue, load_table


def _snapshot():
    """Bytes and stamp of the override file and its backup (None when absent)."""
    result = []
    for path in (overrides_file(), backup_file()):
        if path.exists():
            stat = path.stat()
            result.append((path.read_bytes(), stat.st_mtime_ns, stat.st_size))
        else:
            result.append(None)
    return result


def test_no_file_means_no_overrides():
    assert read_overrides() == []
    assert get_override(species_id="dog", parameter="body_weight_kg") is None
    assert load_table().value("dog", "body_weight_kg").origin == "shipped"


def test_set_read_round_trip_is_exact_and_takes_the_unit_from_the_definition():
    weight = 1 / 3 + 20  # a float with no short decimal form
    set_override(
        species_id="dog",
        parameter="body_weight_kg",
        value=weight,
        low=0.1,
        high=90,
        note='Clinic colony, "lean" line, weighed 2024',
    )
    assert read_overrides() == [
        SpeciesValue(
            species_id="dog",
            parameter="body_weight_kg",
            value=weight,
            low=0.1,
            high=90.0,
            unit="kg",
            source_id=None,
            basis="memory",
            note='Clinic colony, "lean" line, weighed 2024',
            origin="override",
            defined_on="dog",
            location="overrides/parameters.csv:2",
            label=load_table().definitions["body_weight_kg"].label,
        )
    ]
    effective = load_table().value("dog", "body_weight_kg")
    assert effective.value == weight
    assert (effective.origin, effective.defined_on, effective.basis) == (
        "override",
        "dog",
        "memory",
    )
    assert effective.unverified
    assert effective.location.startswith("overrides/parameters.csv:")
    with overrides_file().open(newline="", encoding="utf-8") as handle:
        assert tuple(csv.DictReader(handle).fieldnames) == PARAMETER_COLUMNS


def test_a_row_read_written_back_and_loaded_is_one_type_and_round_trips():
    """Issue 18, point 4: one row type for a species value. The row read from the override
    file, the same row written back, and the value the loader resolves are one
    :class:`SpeciesValue` and equal field for field (origin, holder, file:line, label).
    The figures are an arbitrary clinic entry inside the shipped cat range (2–8 kg,
    species_data/parameters.csv); what is checked is the round trip, not the number."""
    set_override(species_id="cat", parameter="body_weight_kg", value=1 / 3 + 4, low=2.5,
                 high=7, note="clinic colony, weighed 2024")  # fmt: skip
    [read] = read_overrides()
    loaded = load_table().value("cat", "body_weight_kg")
    assert type(read) is type(loaded) is SpeciesValue
    assert read == loaded
    assert (read.origin, read.defined_on, read.location, read.label) == (
        "override",
        "cat",
        "overrides/parameters.csv:2",
        load_table().definitions["body_weight_kg"].label,
    )
    written = overrides_file().read_bytes()
    remove_override(species_id="cat", parameter="body_weight_kg")
    overrides.write_override(read)
    assert overrides_file().read_bytes() == written
    assert read_overrides() == [read]
    assert load_table().value("cat", "body_weight_kg") == read


def test_writing_back_a_row_in_another_unit_puts_it_back_as_it_was_still_ignored():
    """Undo over a row an older file holds in another unit (minutes for bolus_minutes, whose
    unit is min): the row goes back verbatim, the loader ignores it again and the shipped
    value applies, as before the edit."""
    shipped = load_table().get("dog", "bolus_minutes")
    overrides_file().parent.mkdir(parents=True, exist_ok=True)
    overrides_file().write_text(
        ",".join(PARAMETER_COLUMNS) + "\ndog,bolus_minutes,20,,,minutes,,memory,old file\n",
        encoding="utf-8",
    )
    [old] = read_overrides()
    assert load_table().get("dog", "bolus_minutes").value == shipped.value  # ignored
    set_override(species_id="dog", parameter="bolus_minutes", value=25)
    assert load_table().get("dog", "bolus_minutes").value == 25.0
    overrides.write_override(old)  # what undo does
    assert read_overrides() == [old]
    table = load_table()
    assert table.get("dog", "bolus_minutes").value == shipped.value
    assert [(n.species_id, n.parameter) for n in table.notices] == [("dog", "bolus_minutes")]


def test_a_row_written_back_that_breaks_a_rule_is_kept_but_never_used():
    """Write-back stores what undo hands it; the loader still decides what is used. Plasma
    cannot exceed the blood volume (species.py RULES): such a row is reported and ignored,
    and the shipped plasma fraction applies."""
    set_override(species_id="cat", parameter="body_weight_kg", value=4)
    [read] = read_overrides()
    shipped = load_table().get("cat", "plasma_fraction")
    blood = load_table().get("cat", "blood_volume_ml_per_kg").number
    too_much = replace(read, parameter="plasma_fraction", value=blood / 1000 * 2)
    overrides.write_override(replace(too_much, unit="fraction of BW"))
    table = load_table()
    assert table.get("cat", "plasma_fraction") == shipped
    assert ("cat", "plasma_fraction") in {(n.species_id, n.parameter) for n in table.notices}
    assert table.get("cat", "body_weight_kg").value == 4.0  # the other row untouched


def test_the_export_writes_an_override_as_the_override_file_holds_it(tmp_path):
    """One row type, one written form: the stored columns of an exported override are the
    cells of its row in the override file (the export adds origin and holder)."""
    set_override(species_id="rabbit", parameter="body_weight_kg", value=1 / 3 + 2,
                 low=1.5, high=4, note="clinic line")  # fmt: skip
    with overrides_file().open(newline="", encoding="utf-8") as handle:
        [in_file] = list(csv.DictReader(handle))
    export_effective_table(tmp_path / "effective.csv")
    with (tmp_path / "effective.csv").open(newline="", encoding="utf-8") as handle:
        exported = next(
            r
            for r in csv.DictReader(handle)
            if (r["species_id"], r["parameter"]) == ("rabbit", "body_weight_kg")
        )
    assert {column: exported[column] for column in PARAMETER_COLUMNS} == in_file
    assert (exported["origin"], exported["defined_on"]) == ("override", "rabbit")


def test_typed_text_is_read_like_the_number_and_flags_and_words_round_trip():
    set_override(species_id="rabbit", parameter="bolus_ml_per_kg", value=" 12.5 ")
    set_override(species_id="rabbit", parameter="usg_interpretable", value="no")
    set_override(species_id="cat", parameter="usg_interpretable", value=False)
    set_override(species_id="cat", parameter="maintenance_method", value="linear")
    rows = {(r.species_id, r.parameter): r.value for r in read_overrides()}
    assert rows == {
        ("rabbit", "bolus_ml_per_kg"): 12.5,
        ("rabbit", "usg_interpretable"): False,
        ("cat", "usg_interpretable"): False,
        ("cat", "maintenance_method"): "linear",
    }
    table = load_table()
    assert table.value("rabbit", "usg_interpretable").value is False
    assert table.value("cat", "maintenance_method").value == "linear"


def test_replacing_keeps_one_row_in_place_and_backs_up_the_previous_file():
    set_override(species_id="dog", parameter="body_weight_kg", value=25)
    set_override(species_id="cat", parameter="body_weight_kg", value=4.5)
    before = overrides_file().read_bytes()
    set_override(species_id="dog", parameter="body_weight_kg", value=30)
    assert backup_file().read_bytes() == before
    assert [(r.species_id, r.value) for r in read_overrides()] == [("dog", 30.0), ("cat", 4.5)]
    leftovers = {p.name for p in overrides_file().parent.iterdir()}
    assert leftovers == {"parameters.csv", "parameters.csv.bak"}, "staging files left behind"


def test_remove_brings_the_shipped_value_back():
    shipped = shipped_value(species_id="mongolian_gerbil", parameter="blood_volume_ml_per_kg")
    set_override(species_id="mongolian_gerbil", parameter="blood_volume_ml_per_kg", value=80)
    assert load_table().value("mongolian_gerbil", "blood_volume_ml_per_kg").value == 80
    remove_override(species_id="mongolian_gerbil", parameter="blood_volume_ml_per_kg")
    back = load_table().value("mongolian_gerbil", "blood_volume_ml_per_kg")
    assert back == shipped
    assert back.origin == "shipped"
    assert read_overrides() == []
    assert backup_file().exists()


def test_shipped_value_ignores_overrides_and_reports_inheritance():
    set_override(species_id="ferret", parameter="plasma_osmolality_mosm_per_kg", value=305)
    shipped = shipped_value(species_id="ferret", parameter="plasma_osmolality_mosm_per_kg")
    assert shipped.origin == "inherited"
    assert shipped.defined_on == "group_mammal"
    assert shipped.value == 300


def test_removing_what_is_not_there_is_refused_and_writes_nothing():
    set_override(species_id="dog", parameter="body_weight_kg", value=25)
    before = _snapshot()
    with pytest.raises(InputError, match="no clinic override for cat / body_weight_kg") as info:
        remove_override(species_id="cat", parameter="body_weight_kg")
    assert info.value.fix
    assert _snapshot() == before


BAD = [
    ({"value": "abc"}, InputError, "not a number"),
    ({"value": "1,5"}, InputError, "comma"),
    ({"value": "nan"}, InputError, "finite"),
    ({"value": float("inf")}, InputError, "finite"),
    ({"value": True}, InputError, "must be a number"),
    ({"value": ""}, InputError, "empty"),
    ({"value": -1}, InputError, "negative"),
    ({"value": 200, "low": 1, "high": 90}, InputError, "outside the range 1–90 kg"),
    ({"value": 20, "low": 30, "high": 10}, InputError, "low 30 is above high 10"),
    ({"value": 20, "low": "x"}, InputError, "low 'x' is not a number"),
    ({"value": 20, "basis": "guess"}, InputError, "basis 'guess' unknown"),
    ({"value": 20, "basis": "published"}, InputError, "needs a source_id"),
    ({"value": 20, "basis": "derived"}, InputError, "needs a note"),
    (
        {"value": 20, "basis": "published", "source_id": "nobody2099"},
        SpeciesDataError,
        "nobody2099",
    ),
    ({"species_id": "dgo"}, InputError, "did you mean dog"),
    ({"parameter": "body_weight"}, InputError, "did you mean body_weight_kg"),
    ({"parameter": "usg_interpretable", "value": "maybe"}, InputError, "yes or no"),
    ({"parameter": "maintenance_method", "value": "guess"}, InputError, "maintenance method"),
    # the table as a whole must still load: budgerigars have no allometric constants
    (
        {"species_id": "budgerigar", "parameter": "maintenance_method", "value": "allometric"},
        SpeciesDataError,
        "lacks maintenance_allometric_a",
    ),
]


@pytest.mark.parametrize(("change", "error", "words"), BAD)
def test_bad_values_are_refused_with_the_fix_and_leave_the_files_untouched(change, error, words):
    set_override(species_id="dog", parameter="body_weight_kg", value=25)
    set_override(species_id="dog", parameter="body_weight_kg", value=26)  # so a backup exists
    before = _snapshot()
    table_before = load_table()
    arguments = {"species_id": "dog", "parameter": "body_weight_kg", "value": 20} | change
    with pytest.raises(error, match=words) as info:
        set_override(**arguments)
    if error is InputError:
        assert info.value.field and info.value.fix, "the message must name the field and the fix"
    assert _snapshot() == before
    assert load_table() is table_before


def test_a_hand_broken_row_is_named_kept_as_typed_and_blocks_no_other_edit():
    set_override(species_id="dog", parameter="body_weight_kg", value=25)
    with overrides_file().open("a", encoding="utf-8", newline="") as handle:
        handle.write("cat,body_weight_kg,4,,,lb,,memory,typed by hand\n")
    [notice] = load_table().notices
    assert notice.location == "overrides/parameters.csv:3" and "unit 'lb'" in notice.one_line()
    set_override(species_id="rabbit", parameter="body_weight_kg", value=2)
    assert "cat,body_weight_kg,4,,,lb,,memory,typed by hand" in overrides_file().read_text()
    table = load_table()
    assert table.value("rabbit", "body_weight_kg").value == 2
    assert [n.location for n in table.notices] == ["overrides/parameters.csv:3"]
    # the broken row can be reset like any other
    remove_override(species_id="cat", parameter="body_weight_kg")
    assert load_table().notices == ()


def test_an_edit_that_would_break_a_rule_is_refused_even_with_a_broken_row_present():
    overrides_file().parent.mkdir(parents=True)
    overrides_file().write_text(
        ",".join(PARAMETER_COLUMNS) + "\ncat,body_weight_kg,4,,,lb,,memory,\n", encoding="utf-8"
    )
    before = _snapshot()
    with pytest.raises(SpeciesDataError, match="Plasma volume"):
        set_override(species_id="dog", parameter="ecf_fraction", value=0.05)
    assert _snapshot() == before


def test_a_row_that_does_not_parse_is_left_out_of_reading_but_kept_in_the_file():
    overrides_file().parent.mkdir(parents=True)
    overrides_file().write_text(
        ",".join(PARAMETER_COLUMNS) + "\n"
        "cat,no_such_parameter,4,,,kg,,memory,\n"
        "dog,body_weight_kg,twenty,,,kg,,memory,\n"
        "rabbit,body_weight_kg,2,,,kg,,memory,\n",
        encoding="utf-8",
    )
    assert [(r.species_id, r.value) for r in read_overrides()] == [("rabbit", 2.0)]
    assert len(load_table().notices) == 2
    set_override(species_id="dog", parameter="body_weight_kg", value=21)
    assert load_table().value("dog", "body_weight_kg").value == 21
    assert "cat,no_such_parameter" in overrides_file().read_text()


def test_extra_columns_written_by_hand_survive_a_rewrite():
    path = overrides_file()
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(
        ",".join(PARAMETER_COLUMNS) + ",checked_by\n"
        "dog,body_weight_kg,25,,,kg,,memory,weighed,Dr A\n",
        encoding="utf-8",
    )
    set_override(species_id="cat", parameter="body_weight_kg", value=4)
    with path.open(newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert rows[0]["checked_by"] == "Dr A"
    assert rows[1]["checked_by"] == ""
    assert [r.value for r in read_overrides()] == [25.0, 4.0]


def test_quick_edits_of_equal_length_are_never_mistaken_for_each_other(monkeypatch):
    """The loader caches on (mtime_ns, size); on a file system with a coarse clock two
    writes of equal length can get the same mtime, so each write must end up later."""
    real_replace = os.replace
    tick = 1_700_000_000_000_000_000

    def coarse_clock_replace(source, target):
        real_replace(source, target)
        if Path(target).name == "parameters.csv":
            os.utime(target, ns=(tick, tick))  # every write lands in the same clock tick

    monkeypatch.setattr(overrides.os, "replace", coarse_clock_replace)
    seen = set()
    for value in ("12.5", "13.5", "12.5", "14.5"):
        set_override(species_id="dog", parameter="bolus_ml_per_kg", value=value, low=10, high=20)
        stat = overrides_file().stat()
        assert (stat.st_mtime_ns, stat.st_size) not in seen
        seen.add((stat.st_mtime_ns, stat.st_size))
        assert load_table().value("dog", "bolus_ml_per_kg").value == float(value)


@given(st.floats(min_value=0, allow_nan=False, allow_infinity=False))
def test_stored_text_reads_back_exactly(number):
    assert float(stored_text(number)) == number


def test_stored_text_forms():
    assert stored_text(12.0) == "12"
    assert stored_text(0.1) == "0.1"
    assert stored_text(True) == "yes"
    assert stored_text(False) == "no"
    assert stored_text(None) == ""
    assert stored_text("energy") == "energy"


def test_export_matches_the_effective_table(tmp_path):
    set_override(species_id="jerboa", parameter="blood_volume_ml_per_kg", value=66.6)
    path = tmp_path / "effective.csv"
    count = export_effective_table(path)
    with path.open(newline="", encoding="utf-8") as handle:
        reader = csv.DictReader(handle)
        assert tuple(reader.fieldnames) == overrides.EXPORT_COLUMNS
        rows = list(reader)
    table = load_table()
    assert count == len(rows) == len(list(table))
    by_key = {(r["species_id"], r["parameter"]): r for r in rows}
    for value in table:
        row = by_key[(value.species_id, value.parameter)]
        assert row["value"] == stored_text(value.value)
        assert (row["origin"], row["basis"], row["defined_on"]) == (
            value.origin,
            value.basis,
            value.defined_on,
        )
    assert by_key[("jerboa", "blood_volume_ml_per_kg")]["origin"] == "override"
    assert float(by_key[("jerboa", "blood_volume_ml_per_kg")]["value"]) == 66.6


def test_export_into_a_missing_folder_is_refused(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        export_effective_table(tmp_path / "nowhere" / "effective.csv")


def test_export_neutralises_a_formula_in_a_clinic_note(tmp_path):
    import csv as csv_module

    from vetfluid.tables.overrides import export_effective_table, set_override

    set_override(species_id="ferret", parameter="blood_volume_ml_per_kg", value=75,
                 note="=HYPERLINK(\"http://x\")")  # fmt: skip
    out = tmp_path / "table.csv"
    export_effective_table(out)
    rows = list(csv_module.DictReader(out.read_text(encoding="utf-8").splitlines()))
    ferret = next(r for r in rows if r["species_id"] == "ferret"
                  and r["parameter"] == "blood_volume_ml_per_kg")  # fmt: skip
    assert ferret["note"].startswith("'=")


def test_export_keeps_a_note_with_a_line_break_in_its_row(tmp_path):
    import io

    import pandas as pd

    set_override(species_id="ferret", parameter="blood_volume_ml_per_kg", value=75,
                 note="x\r=cmd|' /C calc'!A0")  # fmt: skip
    out = tmp_path / "table.csv"
    count = export_effective_table(out)
    text = out.read_bytes().decode("utf-8")
    rows = list(csv.DictReader(io.StringIO(text, newline="")))
    frame = pd.read_csv(io.StringIO(text), keep_default_na=False, dtype=str)
    assert len(rows) == len(frame) == count
    ferret = frame[(frame.species_id == "ferret") & (frame.parameter == "blood_volume_ml_per_kg")]
    assert list(ferret.note) == ["x\r'=cmd|' /C calc'!A0"]
    for cell in frame.to_numpy().ravel():
        assert not any(line.startswith(("=", "+", "-", "@", "\t")) for line in cell.splitlines())
