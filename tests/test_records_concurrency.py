"""Several workstations saving at once (issue 21): on the SQLite file and on a PostgreSQL
server (``tests/conftest.py``), every version a save confirmed is there, each patient's
numbers run 1, 2, 3 … without a gap or a repeat, each version says who saved it and from
which workstation, and a save that did not know of a version saved meanwhile is told.

The behaviour is the project's own specification (issue 21, "Shared records for a
hospital"): no outside source applies.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap
from collections import Counter
from pathlib import Path

import pytest

from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import build_plan

ROOT = Path(__file__).resolve().parents[1]
WORKSTATIONS = 6  # processes saving at once
PATIENTS = 3  # the same patients for all of them
SAVES = 12  # versions of each patient per process
TIME_LIMIT_S = 120  # the whole run, bounded: a deadlock fails instead of hanging

SAVER = """
    import os, sys
    from vetfluid.planning.demos import DEMOS
    from vetfluid.planning.plan import build_plan
    from vetfluid.records.store import Records

    where, patients, saves = sys.argv[1], sys.argv[2].split(","), int(sys.argv[3])
    db = Records.open(url=where) if "://" in where else Records.open(where)
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    initials = os.environ["VETFLUID_WORKSTATION"][-2:]
    print("ready", flush=True)
    sys.stdin.readline()  # all start together
    for _ in range(saves):
        for pid in patients:
            number = db.save_version(patient_id=int(pid), plan=plan, acknowledged={},
                                     author=initials)
            print(pid, number, flush=True)  # only once the save returned
    db.close()
"""


def test_workstations_saving_the_same_patients_at_once_keep_every_version(
    open_records, monkeypatch
):
    with open_records() as db:
        patients = [db.add_patient(name=f"Busy {i}", species_id="dog") for i in range(PATIENTS)]
    where = open_records.where  # the SQLite file, or the server's URL
    children = []
    for n in range(WORKSTATIONS):
        monkeypatch.setenv("VETFLUID_WORKSTATION", f"WS-{n:02d}")
        children.append(
            subprocess.Popen(
                [sys.executable, "-c", textwrap.dedent(SAVER), where,
                 ",".join(map(str, patients)), str(SAVES)],
                stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True, cwd=ROOT,
            )
        )  # fmt: skip
    for child in children:
        assert child.stdout.readline().strip() == "ready"
    for child in children:
        child.stdin.write("go\n")
        child.stdin.flush()
    confirmed: dict[str, list[tuple[int, int]]] = {}
    for n, child in enumerate(children):
        out, _ = child.communicate(timeout=TIME_LIMIT_S)
        assert child.returncode == 0, f"workstation {n} failed"
        confirmed[f"WS-{n:02d}"] = [tuple(map(int, line.split())) for line in out.splitlines()]
    with open_records() as db:
        for pid in patients:
            versions = db.versions(pid)
            numbers = [v.version for v in versions]
            assert numbers == list(range(1, WORKSTATIONS * SAVES + 1))  # no gap, no repeat
            # every confirmed save is there, saved from the workstation that confirmed it
            by_number = {v.version: (v.workstation, v.author) for v in versions}
            for station, saves in confirmed.items():
                mine = [number for p, number in saves if p == pid]
                assert len(mine) == SAVES
                assert all(by_number[number] == (station, station[-2:]) for number in mine)
            counts = Counter(number for saves in confirmed.values()
                             for p, number in saves if p == pid)  # fmt: skip
            assert max(counts.values()) == 1  # no number confirmed to two workstations


def test_the_second_of_two_saves_within_the_same_second_is_told_and_both_are_kept(
    open_records, monkeypatch
):
    """Two clinicians open version 1 of Rex; both save a new version at once. Both are
    kept (2 and 3), and the second is told that version 2 was saved meanwhile, by whom and
    from where, to compare them."""
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    with open_records() as first:
        pid = first.add_patient(name="Rex", species_id="dog")
        first.save_version(patient_id=pid, plan=plan, acknowledged={}, author="AB")
    monkeypatch.setenv("VETFLUID_WORKSTATION", "ward-1")
    ward = open_records()
    monkeypatch.setenv("VETFLUID_WORKSTATION", "icu-2")
    icu = open_records()
    try:
        known = ward.latest_version(pid)
        assert known == icu.latest_version(pid) == 1
        saved_ward = ward.save_new_version(patient_id=pid, plan=plan, acknowledged={},
                                           author="CK", known_latest=known)  # fmt: skip
        saved_icu = icu.save_new_version(patient_id=pid, plan=plan, acknowledged={},
                                         author="DM", known_latest=known)  # fmt: skip
    finally:
        ward.close()
        icu.close()
    assert (saved_ward.number, saved_ward.meanwhile) == (2, ())
    assert saved_icu.number == 3
    [other] = saved_icu.meanwhile
    assert (other.version, other.author, other.workstation) == (2, "CK", "ward-1")
    with open_records() as db:
        rows = [(v.version, v.author, v.workstation) for v in db.versions(pid)]
    assert rows == [(1, "AB", "test-workstation"), (2, "CK", "ward-1"), (3, "DM", "icu-2")]


@pytest.mark.parametrize("engine", ["postgresql"], indirect=True)
def test_observations_written_on_two_workstations_at_once_are_both_kept(open_records):
    """Two workstations add an observation each to the same version, each from what it read
    before: merged by what each added (``based_on``), neither overwrites the other."""
    a, b = {"hour": 1.0, "weight_kg": 24.1}, {"hour": 2.0, "weight_kg": 24.3}
    with open_records() as first, open_records() as second:
        pid = first.add_patient(name="Rex", species_id="dog")
        first.save_version(patient_id=pid, plan=build_plan(DEMOS["dehydrated_dog"].request),
                           acknowledged={})  # fmt: skip
        vid = first.versions(pid)[0].id
        held = first.observations(vid)
        first.merge_observations(version_id=vid, observations=[a], based_on=held)
        second.merge_observations(version_id=vid, observations=[b], based_on=held)
        assert sorted(map(str, second.observations(vid))) == sorted(map(str, [a, b]))
