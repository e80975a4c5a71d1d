"""Plan-request files: round trip, atomic write, and clear errors for broken files."""

from __future__ import annotations

import json

import pytest

from vetfluid.common.errors import InputError
from vetfluid.planning.demos import DEMOS
from vetfluid.records.request_file import read_request_file, write_request_file


def test_round_trip_keeps_request_and_reasons(tmp_path):
    request = DEMOS["renal_cat"].request
    path = write_request_file(tmp_path / "cat", request, {"OVERLOAD_RISK": "weighed 6-hourly"})
    assert path.name == "cat.vfplan"  # issue 21: plan files' own extension
    assert not list(tmp_path.glob("*.tmp"))
    opened = read_request_file(path)
    assert (opened.request, opened.acknowledged) == (request, {"OVERLOAD_RISK": "weighed 6-hourly"})
    assert opened.acknowledged_for is None  # no wording given: none written


def test_the_words_each_reason_was_given_for_are_kept(tmp_path):
    said = {"OVERLOAD_RISK": "Given volume may reach 11 % over the starting weight"}
    path = write_request_file(
        tmp_path / "cat", DEMOS["renal_cat"].request, {"OVERLOAD_RISK": "weighed 6-hourly"},
        acknowledged_for=said,
    )  # fmt: skip
    assert read_request_file(path).acknowledged_for == said


@pytest.mark.parametrize(
    ("content", "message"),
    [
        ("[]", "not a vetfluid plan file"),
        ("not json", "not readable JSON"),
        ('{"format": "vetfluid-plan-request", "version": 9, "request": {}}', "version 9"),
        ('{"format": "vetfluid-plan-request", "version": 1}', "holds no request"),
        ('{"format": "vetfluid-plan-request", "version": 1, "request": {"species_id": "dog", '
         '"weight_kg": 20, "dehydration_findings": 5}}', "list of finding ids"),
        ('{"format": "vetfluid-plan-request", "version": 1, "request": {"species_id": "dog", '
         '"weight_kg": 20}, "acknowledged": [1]}', "acknowledgements"),
        ('{"format": "vetfluid-plan-request", "version": 1, "request": {"species_id": "dog", '
         '"weight_kg": 20}, "acknowledged_for": {"X": 1}}', "what each warning said"),
        ('{"format": "vetfluid-plan-request", "version": 1, "request": {"species_id": "dog", '
         '"weight_kg": 20, "start_time": 8}}', "HH:MM"),
        ('{"format": "vetfluid-plan-request", "version": 1, "request": {"species_id": "dog"}}',
         "weight_kg"),
    ],
)  # fmt: skip
def test_broken_files_are_input_errors(tmp_path, content, message):
    path = tmp_path / "broken.vfplan.json"
    path.write_text(content, encoding="utf-8")
    with pytest.raises(InputError, match=message):
        read_request_file(path)


def test_a_failed_write_leaves_the_old_file_intact(tmp_path, monkeypatch):
    request = DEMOS["dehydrated_dog"].request
    path = write_request_file(tmp_path / "dog", request, {})
    before = path.read_text(encoding="utf-8")

    def broken_dump(*args, **kwargs):
        raise OSError("disk full")

    monkeypatch.setattr(json, "dump", broken_dump)
    with pytest.raises(OSError):
        write_request_file(path, DEMOS["small_gerbil"].request, {})
    assert path.read_text(encoding="utf-8") == before
    assert not list(tmp_path.glob("*.tmp"))


# ---- malformed files (issue 17, item 5): every one refused in words, naming the key ---------
# Each case reproduces a crash or a silent misreading found by hostile testing; the rule
# checked is the file format this module's docstring declares (JSON true/false for the
# flags, whole numbers for counts, finite numbers for measurements).
def _file(tmp_path, request: object = None, *, raw: str | None = None, **top: object):
    data = {"format": "vetfluid-plan-request", "version": 1, "request": request, **top}
    path = tmp_path / "malformed.vfplan.json"
    path.write_text(json.dumps(data) if raw is None else raw, encoding="utf-8")
    return path


DOG = {"species_id": "dog", "weight_kg": 20}
HUGE = int("9" * 400)  # beyond any float: int → float raised OverflowError


@pytest.mark.parametrize(
    ("change", "key"),
    [
        ({"weight_kg": HUGE}, "weight_kg"),
        ({"replace_hours": HUGE}, "replace_hours"),
        ({"kcl_mmol_per_l": HUGE}, "kcl_mmol_per_l"),
        ({"species_id": 5}, "species_id"),
        ({"species_id": []}, "species_id"),
        ({"species_id": None}, "species_id"),
        ({"fluid_id": {}}, "fluid_id"),
        ({"cardiac_disease": "false"}, "cardiac_disease"),  # read as true before
        ({"renal_disease": "no"}, "renal_disease"),  # read as true before
        ({"neonate": 2}, "neonate"),
        ({"resuscitation_boluses": True}, "resuscitation_boluses"),
        ({"resuscitation_boluses": 2.5}, "resuscitation_boluses"),
        ({"max_sites_per_dose": float("inf")}, "max_sites_per_dose"),
        ({"weight_kg": True}, "weight_kg"),
        ({"weight_kg": "20"}, "weight_kg"),
        ({"serum_na": None, "serum_k": [4]}, "serum_k"),
        ({"measured_outputs": [[1, 2, 3]]}, "measured_outputs"),
        ({"measured_outputs": [["1", 2]]}, "measured_outputs"),
        ({"dehydration_findings": [1]}, "dehydration_findings"),
        ({"maintenance_method": 3}, "maintenance_method"),
    ],
)
def test_a_value_of_the_wrong_type_is_refused_by_its_key(tmp_path, change, key):
    with pytest.raises(InputError) as caught:
        read_request_file(_file(tmp_path, {**DOG, **change}))
    assert caught.value.field == key and key in caught.value.one_line()


def test_a_count_written_with_a_zero_fraction_is_that_count(tmp_path):
    # JSON Schema (draft 6 on, json-schema.org): "integer" matches any number with a zero
    # fractional part, so 2.0 is the count 2, as a spreadsheet or another tool may write it
    request = read_request_file(
        _file(
            tmp_path,
            {
                **DOG,
                "route": "sc",
                "device": "divided",
                "max_sites_per_dose": 2.0,
                "resuscitation_boluses": 0.0,
            },
        )  # fmt: skip
    ).request
    assert request.max_sites_per_dose == 2 and isinstance(request.max_sites_per_dose, int)
    assert request.resuscitation_boluses == 0


@pytest.mark.parametrize("missing", ["species_id", "weight_kg"])
def test_a_missing_required_key_is_named(tmp_path, missing):
    request = {k: v for k, v in DOG.items() if k != missing}
    with pytest.raises(InputError, match=f"{missing}.*required"):
        read_request_file(_file(tmp_path, request))


def test_nan_and_infinity_are_refused(tmp_path):
    for word in ("NaN", "Infinity", "-Infinity"):
        raw = ('{"format": "vetfluid-plan-request", "version": 1, "request": '
               f'{{"species_id": "dog", "weight_kg": 20, "serum_na": {word}}}}}')  # fmt: skip
        with pytest.raises(InputError, match="serum_na"):
            read_request_file(_file(tmp_path, raw=raw))


def test_version_true_is_not_version_1(tmp_path):
    with pytest.raises(InputError, match="version"):
        read_request_file(_file(tmp_path, DOG, version=True))


@pytest.mark.parametrize(
    "raw",
    [
        "[" * 100_000 + "]" * 100_000,  # RecursionError in json before
        '{"format": "vetfluid-plan-request", "version": 1, "request": {"species_id": "dog", '
        '"weight_kg": ' + "9" * 5000 + "}}",  # ValueError: beyond 4300 digits before
    ],
    ids=["deep nesting", "5000 digits"],
)
def test_deep_nesting_and_endless_digits_are_refused_in_words(tmp_path, raw):
    with pytest.raises(InputError, match="malformed.vfplan.json"):
        read_request_file(_file(tmp_path, raw=raw))


def test_a_file_too_large_to_be_a_plan_request_is_not_read(tmp_path):
    raw = json.dumps({"format": "vetfluid-plan-request", "version": 1, "request": DOG,
                      "acknowledged": {"X": "y" * 5_000_000}})  # fmt: skip
    with pytest.raises(InputError, match="too large"):
        read_request_file(_file(tmp_path, raw=raw))


def test_acknowledgements_that_are_not_a_mapping_are_refused_even_when_empty(tmp_path):
    for value in (False, "", 0, []):
        with pytest.raises(InputError, match="acknowledge"):
            read_request_file(_file(tmp_path, DOG, acknowledged=value))


# ---- one size limit, and words for what cannot be read (review of 66a3521, 4 and 5) -------
def _padded_plan_file(tmp_path, size: int):
    """A valid plan file of exactly ``size`` bytes (JSON allows trailing white space)."""
    path = write_request_file(tmp_path / "dog", DEMOS["dehydrated_dog"].request, {})
    text = path.read_text(encoding="utf-8")
    path.write_text(text + " " * (size - len(text.encode("utf-8"))), encoding="utf-8")
    assert path.stat().st_size == size
    return path


def _sheet(path, tmp_path, capsys) -> tuple[int, str]:  # noqa: ANN001
    from ui.app import main

    code = main(["vetfluid", "sheet", str(path), "-o", str(tmp_path / "sheet.pdf")])
    return code, capsys.readouterr().err


def test_the_window_and_the_sheet_read_plan_files_up_to_one_limit(tmp_path, capsys):
    """The window read 2,000,000 bytes, `vetfluid sheet` 1,000,000: one limit now."""
    from vetfluid.records.request_file import MAX_FILE_BYTES

    path = _padded_plan_file(tmp_path, MAX_FILE_BYTES)
    assert read_request_file(path).request == DEMOS["dehydrated_dog"].request
    assert _sheet(path, tmp_path, capsys) == (0, "")
    path = _padded_plan_file(tmp_path, MAX_FILE_BYTES + 1)
    with pytest.raises(InputError) as caught:
        read_request_file(path)
    refused = caught.value.one_line()
    assert refused == (
        f"dog.vfplan is too large to be a vetfluid plan file ({MAX_FILE_BYTES + 1:,} bytes; at "
        f"most {MAX_FILE_BYTES:,})"
    )
    code, err = _sheet(path, tmp_path, capsys)
    assert code == 2 and refused in err


def test_a_missing_plan_file_is_said_in_words(tmp_path, capsys):
    gone = tmp_path / "gone.vfplan"
    with pytest.raises(InputError) as caught:
        read_request_file(gone)
    assert caught.value.one_line() == f"no such file: {gone} — check the file's name and folder"
    code, err = _sheet(gone, tmp_path, capsys)
    assert code == 2 and "Errno" not in err
    assert err == (
        f"vetfluid sheet: cannot read {gone}: no such file: {gone} — check the file's name "
        "and folder\n"
    )


def test_a_plan_file_with_a_byte_order_mark_is_read(tmp_path, capsys):
    """UTF-8 with a byte order mark (as Windows Notepad saved it) is UTF-8 (Unicode 15,
    section 23.8): read it, as the window and the sheet alike."""
    path = write_request_file(tmp_path / "dog", DEMOS["dehydrated_dog"].request, {})
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    assert read_request_file(path).request == DEMOS["dehydrated_dog"].request
    assert _sheet(path, tmp_path, capsys) == (0, "")


def test_what_cannot_be_read_has_one_fix_and_no_plan_request(tmp_path, capsys):
    folder = tmp_path / "folder.vfplan"
    folder.mkdir()
    with pytest.raises(InputError) as caught:
        read_request_file(folder)
    assert caught.value.one_line() == "folder.vfplan is a folder, not a vetfluid plan file"
    code, err = _sheet(folder, tmp_path, capsys)
    assert code == 2 and err.count(" — ") == 1 and "plan request" not in err
    other = tmp_path / "other.vfplan"
    other.write_text("[]", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        read_request_file(other)
    assert caught.value.one_line() == "other.vfplan is not a vetfluid plan file"
    broken = tmp_path / "broken.vfplan"
    broken.write_bytes(b"\xff\xfe{}")
    with pytest.raises(InputError) as caught:
        read_request_file(broken)
    assert "plan request" not in caught.value.one_line()
    code, err = _sheet(broken, tmp_path, capsys)
    assert code == 2 and err.count(" — ") == 1, err
