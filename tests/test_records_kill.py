"""Kill tests: SIGKILL a process while it writes the records, at varied moments, again and
again. After every kill the records file opens and every version (or draft, or backup) the
process confirmed is there, whole.

Covered: the first creation of the file, saves, draft writes, backups and restores; the
saves again on a PostgreSQL server (issue 21: a workstation killed mid-save), where a kill
drops the connection and the server rolls the save back. A kill stands for a power cut or
a crash at that moment: SQLite's journal, and our own
write-then-rename for backups, must leave the file as it was before the write or as it is
after it, never in between (issue 17: a kill during the first creation left a file every
later start refused).
"""

from __future__ import annotations

import random
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from vetfluid.planning.demos import DEMOS
from vetfluid.planning.plan import build_plan
from vetfluid.records.store import Records

ROOT = Path(__file__).resolve().parents[1]

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="SIGKILL is POSIX")


def _killed(script: str, *args: str, after_s: float) -> list[str]:
    """Run ``script`` in a new process; once it prints "ready", let it work for
    ``after_s`` seconds and SIGKILL it. Returns what it printed after "ready" (each line
    printed only once the step it reports was done)."""
    child = subprocess.Popen([sys.executable, "-c", textwrap.dedent(script), *args],
                             stdout=subprocess.PIPE, text=True, cwd=ROOT)  # fmt: skip
    assert child.stdout is not None
    assert child.stdout.readline().strip() == "ready"
    time.sleep(after_s)
    child.send_signal(signal.SIGKILL)
    out, _ = child.communicate()
    assert child.returncode == -signal.SIGKILL, "the writer stopped before it was killed"
    return out.split()


def _intact(path: Path) -> None:
    with sqlite3.connect(path) as raw:
        assert raw.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    raw.close()


def _versions(path: Path | str, name: str = "Kill") -> set[int]:
    with Records.open(url=path) if "://" in str(path) else Records.open(path) as db:
        [patient] = [p for p in db.find_patients(name) if p.name == name]
        return {v.version for v in db.versions(patient.id)}


def _patient_with_versions(path: Path, count: int) -> None:
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    with Records.open(path) as db:
        pid = db.add_patient(name="Kill", species_id="dog")
        for _ in range(count):
            db.save_version(patient_id=pid, plan=plan, acknowledged={"A": "b"})


CREATOR = """
    import sys
    from pathlib import Path
    from vetfluid.records.store import Records

    folder, first = Path(sys.argv[1]), int(sys.argv[2])
    print("ready", flush=True)
    for number in range(first, first + 10_000):
        Records.open(folder / f"records-{number}.sqlite").close()
        print(number, flush=True)
"""


def test_kill_during_first_creation_never_leaves_a_file_that_is_refused(tmp_path):
    """Create records files one after another and kill the process, 25 times. Every file
    it left, the one cut short included, opens as a records file and takes a save; before
    issue 17 a kill after ``PRAGMA journal_mode = WAL`` and before the schema committed
    left a 4096-byte file with no tables that every later start refused."""
    rng = random.Random(20261217)
    first, confirmed, cut_short = 0, [], 0
    for _ in range(25):
        printed = _killed(CREATOR, str(tmp_path), str(first), after_s=rng.uniform(0.0, 0.05))
        confirmed += [int(n) for n in printed]
        first += 10_000
    files = sorted(tmp_path.glob("records-*.sqlite"))
    assert {f"records-{n}.sqlite" for n in confirmed} <= {f.name for f in files}
    for path in files:
        with sqlite3.connect(path) as raw:  # what the kill left, before vetfluid opens it
            tables = raw.execute("SELECT count(*) FROM sqlite_master").fetchone()[0]
        raw.close()
        cut_short += tables == 0
        with Records.open(path) as db:
            db.add_patient(name="After", species_id="cat")
        with Records.open(path) as db:
            assert [p.name for p in db.find_patients("After")] == ["After"]
        assert path.stat().st_mode & 0o777 == 0o600
    print(f"creation: 25 kills, {len(files)} files, {cut_short} left without tables")


SAVER = """
    import sys
    from vetfluid.planning.demos import DEMOS
    from vetfluid.planning.plan import build_plan
    from vetfluid.records.store import Records

    where = sys.argv[1]
    db = Records.open(url=where) if "://" in where else Records.open(where)
    pid = db.find_patients("Kill")[0].id if db.find_patients("Kill") else db.add_patient(
        name="Kill", species_id="dog")
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    print("ready", flush=True)
    while True:
        number = db.save_version(patient_id=pid, plan=plan, acknowledged={"A": "b"})
        print(number, flush=True)
"""


@pytest.mark.parametrize("engine", ["sqlite", "postgresql"], indirect=True)
def test_kill_during_saves_never_loses_a_returned_version(tmp_path, open_records):
    """SIGKILL a process saving versions in a loop, 50 times at random moments: every
    version it confirmed is there, and the numbers run on without a gap (a save cut
    short takes no number)."""
    where = open_records.where if "://" in open_records.where else str(tmp_path / "kill.sqlite")
    rng = random.Random(20261201)
    confirmed: set[int] = set()
    runs = 50
    for _ in range(runs):
        confirmed.update(int(n) for n in _killed(SAVER, where, after_s=rng.uniform(0, 0.08)))
        if "://" not in where:
            _intact(Path(where))
    saved = _versions(where)
    assert confirmed, "no save completed in any run"
    assert confirmed <= saved
    assert saved == set(range(1, len(saved) + 1))
    print(f"saves: {runs} kills, {len(confirmed)} confirmed saves, {len(saved)} on disk")


DRAFTER = """
    import sys
    from vetfluid.records.store import Records

    db = Records.open(sys.argv[1])
    first = int(sys.argv[2])
    print("ready", flush=True)
    for number in range(first, first + 100_000):
        # about the size of a real draft (a request, reasons and observations)
        db.save_draft({"number": number, "request": {"notes": "x" * 12_000}})
        print(number, flush=True)
"""


def test_kill_during_draft_writes_leaves_the_last_confirmed_draft_or_the_next(tmp_path):
    """The draft is rewritten every two seconds while a plan is edited: killed at any
    moment, it holds the last draft written or the one being written, readable, and the
    saved versions beside it are untouched."""
    path = tmp_path / "kill.sqlite"
    _patient_with_versions(path, 3)
    rng = random.Random(20261218)
    # what the draft may hold: the last one confirmed, or one whose write began after it
    # (a write can commit and be killed before it says so); None until one is confirmed
    first, possible, confirmed = 0, {None}, 0
    for _ in range(25):
        printed = [int(n) for n in _killed(DRAFTER, str(path), str(first),
                                           after_s=rng.uniform(0, 0.05))]  # fmt: skip
        if printed:
            possible = {printed[-1], printed[-1] + 1}
            confirmed += len(printed)
        else:
            possible.add(first)
        _intact(path)
        with Records.open(path) as db:
            draft = db.draft()
        assert (draft["number"] if draft is not None else None) in possible
        assert _versions(path) == {1, 2, 3}
        first += 100_000
    assert confirmed, "no draft was confirmed in any run"


BACKER = """
    import sys
    from pathlib import Path
    from vetfluid.records.store import Records

    db = Records.open(sys.argv[1])
    folder, first = Path(sys.argv[2]), int(sys.argv[3])
    print("ready", flush=True)
    for number in range(first, first + 10_000):
        db.backup(folder / f"backup-{number}.sqlite")
        print(number, flush=True)
"""


def test_kill_during_backups_never_leaves_a_partial_backup(tmp_path):
    """Backups one after another, killed 25 times: every backup file there is whole
    (all 60 versions), those confirmed included, and the records are untouched. Before
    issue 17 a backup cut short was a file SQLite rolled back to nothing, which opened
    as an empty records file: a backup that lost everything."""
    path = tmp_path / "kill.sqlite"
    _patient_with_versions(path, 60)  # a few megabytes: a backup takes a while
    backups = tmp_path / "backups"
    backups.mkdir()
    rng = random.Random(20261219)
    first, confirmed = 0, []
    for _ in range(25):
        printed = _killed(BACKER, str(path), str(backups), str(first),
                          after_s=rng.uniform(0, 0.05))  # fmt: skip
        confirmed += [int(n) for n in printed]
        first += 10_000
        assert _versions(path) == set(range(1, 61))
    written = sorted(backups.glob("backup-*.sqlite"))
    assert confirmed and {f"backup-{n}.sqlite" for n in confirmed} <= {p.name for p in written}
    for copy in written:
        _intact(copy)
        assert _versions(copy) == set(range(1, 61)), copy.name
    for left in backups.glob(".backup-*.partial"):  # what a kill left mid-copy: never read
        assert left.stat().st_mode & 0o777 == 0o600


RESTORER = """
    import sys
    from vetfluid.records.store import Records

    older, newer, target = sys.argv[1:4]
    print("ready", flush=True)
    while True:
        Records.restore(older, target)
        print("older", flush=True)
        Records.restore(newer, target)
        print("newer", flush=True)
"""


def test_kill_during_restores_leaves_one_backup_whole(tmp_path):
    """Two backups restored in turn over the same records file, killed 25 times: the file
    always opens and holds exactly one of the two backups, the one last confirmed or the
    one being restored."""
    source = tmp_path / "kill.sqlite"
    _patient_with_versions(source, 30)
    with Records.open(source) as db:
        older = db.backup(tmp_path / "older.sqlite")
    plan = build_plan(DEMOS["dehydrated_dog"].request)
    with Records.open(source) as db:
        pid = db.find_patients("Kill")[0].id
        for _ in range(30):
            db.save_version(patient_id=pid, plan=plan, acknowledged={})
        newer = db.backup(tmp_path / "newer.sqlite")
    target = tmp_path / "restored.sqlite"
    Records.restore(older, target)
    contents = {"older": set(range(1, 31)), "newer": set(range(1, 61))}
    rng = random.Random(20261220)
    restored = 0
    for _ in range(25):
        printed = _killed(RESTORER, str(older), str(newer), str(target),
                          after_s=rng.uniform(0, 0.05))  # fmt: skip
        _intact(target)
        restored += len(printed)
        assert _versions(target) in contents.values()  # never a mixture, never nothing
        assert target.stat().st_mode & 0o777 == 0o600
    assert restored, "no restore completed in any run"


SERVER_CREATOR = """
    import sys, time
    from vetfluid.records.store import Records

    print("ready", flush=True)
    Records.open(url=sys.argv[1]).close()
    print("created", flush=True)
    time.sleep(600)  # done: waits for the kill
"""


def test_kill_during_first_creation_on_the_server_never_leaves_it_refused(postgres_url):
    """Build the tables of an empty server database and kill the process, 10 times at
    varied moments: the database always opens as records and takes a save (PostgreSQL's
    DDL is transactional: the schema is there whole or not at all)."""
    import psycopg

    from tests.conftest import POSTGRES_PASSFILE

    rng = random.Random(20261221)
    created = 0
    for _ in range(10):
        with psycopg.connect(postgres_url, passfile=POSTGRES_PASSFILE, autocommit=True) as raw:
            raw.execute("DROP SCHEMA public CASCADE")
            raw.execute("CREATE SCHEMA public")
        created += len(_killed(SERVER_CREATOR, postgres_url, after_s=rng.uniform(0.0, 0.75)))
        with Records.open(url=postgres_url) as db:
            db.add_patient(name="After", species_id="cat")
        with Records.open(url=postgres_url) as db:
            assert [p.name for p in db.find_patients("After")] == ["After"]
    print(f"server creation: 10 kills, {created} finished before the kill")
