"""Plan-request files: round trip, atomic write, and clear errors for broken files."""

from __future__ import annotations

import json

import pytest

from vetfluid.demos import DEMOS
from vetfluid.errors import InputError
from vetfluid.request_file import read_request_file, write_request_file


def test_round_trip_keeps_request_and_reasons(tmp_path):
    request = DEMOS["renal_cat"].request
    path = write_request_file(tmp_path / "cat", request, {"OVERLOAD_RISK": "weighed 6-hourly"})
    assert path.name == "cat.vfplan.json"
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
        ("[]", "not a vetfluid plan request"),
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
