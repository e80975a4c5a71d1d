"""Patient records that never lose data: SQLite in the user data folder.

* WAL journal, foreign keys on, ``synchronous=FULL``, one transaction per save, so a
  crash or power cut loses at most the save in progress, never an earlier one.
* Created in one transaction: a file with no tables at all (an empty file, or the one
  page ``PRAGMA journal_mode = WAL`` writes first, as a kill during creation leaves it)
  holds nothing of the user's and is finished as a new file, never refused for good.
* A schema version in ``meta`` with forward migrations (new files are built as schema 1
  and migrated in the same transaction, so every file has one layout); a file from a
  newer vetfluid, one whose schema version is missing or not a version, one that is not
  a vetfluid database or is damaged, is refused with a clear message and left untouched.
* Opening stays fast at a clinic's size (50,000 patients, 500,000 versions,
  ``scripts/make_clinic_records.py``, ``tests/test_records_scale_benchmark.py``): it
  checks the small tables read at once (``meta``, ``patients``, ``draft``) with
  ``PRAGMA quick_check``; the plan versions, gigabytes by then, are checked by SQLite
  as each is read (a damaged page is a RecordsError then), in full by :meth:`restore`.
* Plans are immutable versions (triggers refuse UPDATE and DELETE); saving always
  adds a version with the request, the computed plan, the findings, the reasons
  given for acknowledged warnings, the author's initials, a timestamp and the
  program version.
* The file is created readable by its owner only, before SQLite writes its first byte
  (SQLite gives its ``-wal`` and ``-shm`` files the same mode); so are backups and
  restored files. Only parameterised SQL.
* Backup and restore through SQLite's online backup (a backup is written beside its
  target and renamed onto it when whole; a restore is one transaction in the target);
  one patient with every version exports to and imports from plain JSON.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import sqlite3
import tempfile
from contextlib import closing
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

from vetfluid import __version__
from vetfluid.common.errors import InputError, VetfluidError
from vetfluid.common.paths import user_data_dir

DATABASE_NAME = "records.sqlite"
EXPORT_FORMAT = "vetfluid-patient"

_SCHEMA_1 = """
CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE patients (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    species_id TEXT NOT NULL,
    sex TEXT NOT NULL DEFAULT '',
    birth_date TEXT NOT NULL DEFAULT '',
    age_text TEXT NOT NULL DEFAULT '',
    client_ref TEXT NOT NULL DEFAULT '',
    notes TEXT NOT NULL DEFAULT '',
    created_at TEXT NOT NULL
);
CREATE TABLE plan_versions (
    id INTEGER PRIMARY KEY,
    patient_id INTEGER NOT NULL REFERENCES patients(id),
    version INTEGER NOT NULL,
    request_json TEXT NOT NULL,
    plan_json TEXT NOT NULL,
    acknowledged_json TEXT NOT NULL,
    author TEXT NOT NULL DEFAULT '',
    created_at TEXT NOT NULL,
    program_version TEXT NOT NULL,
    UNIQUE (patient_id, version)
);
CREATE TRIGGER plan_versions_no_update BEFORE UPDATE ON plan_versions
BEGIN SELECT RAISE(ABORT, 'plan versions are immutable'); END;
CREATE TRIGGER plan_versions_no_delete BEFORE DELETE ON plan_versions
BEGIN SELECT RAISE(ABORT, 'plan versions are immutable'); END;
CREATE TABLE observations (
    id INTEGER PRIMARY KEY,
    plan_version_id INTEGER NOT NULL REFERENCES plan_versions(id),
    observation_json TEXT NOT NULL,
    recorded_at TEXT NOT NULL
);
CREATE TABLE draft (
    id INTEGER PRIMARY KEY CHECK (id = 1),
    content_json TEXT NOT NULL,
    saved_at TEXT NOT NULL
);
CREATE INDEX patients_name ON patients(name);
"""
# Forward migrations: MIGRATIONS[n] takes a database from version n to n + 1; its
# statements run in one transaction with the new version number.
MIGRATIONS: dict[int, tuple[str, ...]] = {
    # 2: opening a version reads its observations by version, and without an index that
    # read scanned every observation in the file (33 ms with 500,000 versions, growing).
    1: ("CREATE INDEX observations_version ON observations(plan_version_id)",),
}
SCHEMA_VERSION = 1 + len(MIGRATIONS)
# How every vetfluid has written its schema version: a whole number from 1, in ASCII
# digits (a few more than any real version, so a newer vetfluid's is still read as newer).
_VERSION_TEXT = re.compile(r"[1-9][0-9]{0,8}")
# The tables of schema 1 (later schemas add to them): a file lacking one is damaged.
_TABLES = ("meta", "patients", "plan_versions", "observations", "draft")
# The small tables read as soon as the file opens, checked then (the others at reading).
_CHECKED_AT_OPEN = ("meta", "patients", "draft")


class RecordsError(VetfluidError):
    """The records database cannot be used as asked (the message says why and what to do)."""


class DraftSetAside(RecordsError):
    """The stored draft could not be read and was moved, as stored, to ``path``."""

    def __init__(self, message: str, *, path: Path, fix: str) -> None:
        super().__init__(message, fix=fix)
        self.path = path


def _json_or_text(text: str) -> object:
    try:
        return json.loads(text)
    except json.JSONDecodeError:
        return text


def _observation_key(record: object) -> str | None:
    """One observation however it was written (4 or 4.0, key order), or None when the
    record is not a readable observation."""
    from vetfluid.course.observations import observation_from_record, observation_record

    try:
        fields = observation_record(observation_from_record(record))
    except VetfluidError:
        return None
    numbers = {k: float(v) if type(v) is int else v for k, v in fields.items()}
    return json.dumps(numbers, sort_keys=True)


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="seconds")


def _statements(script: str) -> list[str]:
    """The statements of a schema script, one by one (a trigger's body stays whole)."""
    statements, pending = [], ""
    for line in script.splitlines(keepends=True):
        pending += line
        if sqlite3.complete_statement(pending):
            statements.append(pending.strip())
            pending = ""
    return statements


def _fsync(path: Path) -> None:
    """Make a written file, or a rename in a folder, durable (folders: not on Windows)."""
    if path.is_dir() and os.name != "posix":
        return
    descriptor = os.open(path, os.O_RDONLY)
    try:
        os.fsync(descriptor)
    finally:
        os.close(descriptor)


def _private(path: Path) -> None:
    """Make ``path`` (created empty if missing) and its SQLite side files owner-only
    before anything is written into them: a file an older vetfluid left readable to all
    is narrowed before more patient data goes in."""
    with contextlib.suppress(FileExistsError):  # an existing file is narrowed below
        os.close(os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600))
    for side in ("", "-wal", "-shm", "-journal"):
        kept = path.with_name(path.name + side)
        if kept.exists() and kept.stat().st_mode & 0o077:
            os.chmod(kept, 0o600)


def _blank(db: sqlite3.Connection) -> bool:
    """No table, index or trigger at all: a new file, or a first creation cut short.
    Nothing the user entered can be in it."""
    return db.execute("SELECT count(*) FROM sqlite_master").fetchone()[0] == 0


def _stored_schema_version(db: sqlite3.Connection, name: str) -> int:
    """The schema version a vetfluid records file says it holds. Missing, not a whole
    number from 1, or newer than this vetfluid reads: RecordsError saying so. No
    ``meta`` table: sqlite3.DatabaseError (not a vetfluid file at all)."""
    try:
        row = db.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
    except sqlite3.OperationalError as exc:
        if "no such table" in str(exc):
            raise sqlite3.DatabaseError("no vetfluid schema") from None
        raise
    fix = "restore a backup of the records, or open another records file"
    if row is None:
        raise RecordsError(
            f"{name} does not give its schema version (the layout of the records it holds): "
            "its meta table has no schema_version; it was left untouched",
            fix=fix,
        )
    stored = row[0]
    if not (isinstance(stored, str) and _VERSION_TEXT.fullmatch(stored)):
        shown = repr(stored) if len(repr(stored)) <= 24 else repr(stored)[:20] + "…"
        raise RecordsError(
            f"{name} gives its schema version (the layout of the records it holds) as "
            f"{shown}, which no vetfluid writes (a whole number from 1); it was left untouched",
            fix=fix,
        )
    version = int(stored)
    if version > SCHEMA_VERSION:
        raise RecordsError(
            f"{name} was written by a newer vetfluid (schema {version}; this one reads up to "
            f"{SCHEMA_VERSION}); it was left untouched",
            fix="update vetfluid, or open another records file",
        )
    return version


@dataclass(frozen=True, kw_only=True)
class PatientRow:
    id: int
    name: str
    species_id: str
    sex: str
    birth_date: str
    age_text: str
    client_ref: str
    notes: str
    created_at: str


@dataclass(frozen=True, kw_only=True)
class VersionRow:
    id: int
    patient_id: int
    version: int
    request: dict
    plan: dict
    acknowledged: dict
    author: str
    created_at: str
    program_version: str


class Records:
    """One records database; open it with :meth:`open`."""

    def __init__(self, connection: sqlite3.Connection, path: Path) -> None:
        self._db = connection
        self.path = path
        self._unreadable_draft = False  # the stored draft could be neither read nor set aside
        self.last_set_aside: Path | None = None  # where save_draft moved such a draft at last

    # ---- opening ---------------------------------------------------------------------------
    @classmethod
    def open(cls, path: Path | None = None) -> Records:
        """Open (or create) the database; a newer, foreign or damaged file is refused."""
        path = Path(path) if path is not None else user_data_dir() / DATABASE_NAME
        if not path.exists():
            try:
                # created owner-only before SQLite writes anything into it
                os.close(os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600))
            except FileExistsError:
                pass  # another vetfluid created it meanwhile: opened as it finds it
            except OSError as exc:
                raise RecordsError(
                    f"cannot create the records file {path}: {exc.strerror}",
                    fix="choose a folder you can write to, or free some disk space",
                ) from exc
        connection = None
        try:
            connection = sqlite3.connect(path, timeout=10, isolation_level=None)
            connection.execute("PRAGMA foreign_keys = ON")
            connection.execute("PRAGMA synchronous = FULL")
            records = cls(connection, path)
            records._prepare()
        except sqlite3.DatabaseError as exc:
            if connection is not None:
                connection.close()
            raise RecordsError(
                f"{path.name} is not a usable vetfluid records file ({exc}); it was left untouched",
                fix="open another file or restore a backup",
            ) from exc
        except RecordsError:
            connection.close()
            raise
        return records

    def _prepare(self) -> None:
        """Finish a file with no tables, refuse one that is not ours or is damaged, bring
        an older schema up to date."""
        if _blank(self._db) and self._create():
            return
        version = _stored_schema_version(self._db, self.path.name)
        tables = {r[0] for r in self._db.execute("SELECT name FROM sqlite_master")}
        missing = [t for t in _TABLES if t not in tables]
        if missing:
            raise sqlite3.DatabaseError(f"its table {', '.join(missing)} is missing")
        for table in _CHECKED_AT_OPEN:  # never an unknown name: that would check everything
            check = self._db.execute(f"PRAGMA quick_check({table})").fetchone()[0]
            if check != "ok":
                raise sqlite3.DatabaseError(f"integrity check failed: {check}")
        while version < SCHEMA_VERSION:
            try:
                with self._transaction():
                    # read again under the write lock: another vetfluid may have done it
                    version = _stored_schema_version(self._db, self.path.name)
                    if version < SCHEMA_VERSION:
                        version = self._migrate(version)
            except sqlite3.OperationalError as exc:
                raise RecordsError(
                    f"{self.path.name} holds records in an older layout (schema {version}) "
                    f"that could not be brought up to date ({exc}); it was left as it was",
                    fix="check that the file and its folder are writable and the disk has "
                    "space, then start vetfluid again",
                ) from exc

    def _create(self) -> bool:
        """Build the whole schema in one transaction: killed before it commits, the file
        is left with no tables and finished at the next start. False when another
        vetfluid built it meanwhile."""
        self._db.execute("PRAGMA journal_mode = WAL")  # only ever on a file with no tables
        with self._transaction():
            if not _blank(self._db):
                return False
            for statement in _statements(_SCHEMA_1):
                self._db.execute(statement)
            self._db.execute("INSERT INTO meta (key, value) VALUES ('schema_version', '1')")
            version = 1
            while version < SCHEMA_VERSION:
                version = self._migrate(version)
        return True

    def _migrate(self, version: int) -> int:
        """One step forward, inside the caller's transaction; returns the new version."""
        for statement in MIGRATIONS[version]:
            self._db.execute(statement)
        self._db.execute(
            "UPDATE meta SET value = ? WHERE key = 'schema_version'", (str(version + 1),)
        )
        return version + 1

    def close(self) -> None:
        self._db.close()

    def __enter__(self) -> Records:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    class _Transaction:
        def __init__(self, db: sqlite3.Connection) -> None:
            self.db = db

        def __enter__(self) -> None:
            self.db.execute("BEGIN IMMEDIATE")

        def __exit__(self, kind, value, traceback) -> None:  # noqa: ANN001
            if kind is None:
                self.db.execute("COMMIT")
            elif self.db.in_transaction:  # SQLite may already have rolled back (e.g. disk full)
                self.db.execute("ROLLBACK")

    def _transaction(self) -> Records._Transaction:
        return Records._Transaction(self._db)

    def _write(self, sql: str, params: tuple) -> int:
        """One statement in its own transaction; disk errors become a clear message."""
        try:
            with self._transaction():
                return self._db.execute(sql, params).lastrowid or 0
        except sqlite3.OperationalError as exc:
            raise RecordsError(
                f"could not save to {self.path.name}: {exc}",
                fix="check that the disk has space and the folder is writable; nothing was lost",
            ) from exc

    # ---- patients --------------------------------------------------------------------------
    def add_patient(
        self,
        *,
        name: str,
        species_id: str,
        sex: str = "",
        birth_date: str = "",
        age_text: str = "",
        client_ref: str = "",
        notes: str = "",
    ) -> int:
        if not name.strip():
            raise InputError("a patient needs a name", field="name", value=name)
        if not species_id.strip():
            raise InputError("a patient needs a species", field="species_id", value=species_id)
        return self._write(
            "INSERT INTO patients (name, species_id, sex, birth_date, age_text, client_ref, notes,"
            " created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
            (name.strip(), species_id, sex, birth_date, age_text, client_ref, notes, _now()),
        )

    def patient(self, patient_id: int) -> PatientRow:
        row = self._db.execute(
            "SELECT id, name, species_id, sex, birth_date, age_text, client_ref, notes, created_at"
            " FROM patients WHERE id = ?",
            (patient_id,),
        ).fetchone()
        if row is None:
            raise InputError(f"no patient {patient_id}", field="patient", value=patient_id)
        return PatientRow(**dict(zip(PatientRow.__dataclass_fields__, row, strict=True)))

    def find_patients(self, text: str = "", *, limit: int = 50) -> list[PatientRow]:
        """Recent patients whose name, species or client reference contains ``text``. The
        species matches by the words people use, as the species search does
        (:meth:`vetfluid.tables.species.SpeciesTable.search`: common or scientific name, the groups
        it belongs to: "bearded dragon", "reptile"), or by its id (a clinic's species since
        removed from the table)."""
        from vetfluid.tables.species import load_table

        words = text.strip()
        like = f"%{words}%"
        species = [s.id for s in load_table().search(words)] if words else []
        named = f" OR species_id IN ({', '.join('?' * len(species))})" if species else ""
        rows = self._db.execute(
            "SELECT id, name, species_id, sex, birth_date, age_text, client_ref, notes, created_at"
            " FROM patients WHERE name LIKE ? OR species_id LIKE ? OR client_ref LIKE ?"
            f"{named} ORDER BY id DESC LIMIT ?",
            (like, like, like, *species, limit),
        ).fetchall()
        return [
            PatientRow(**dict(zip(PatientRow.__dataclass_fields__, r, strict=True))) for r in rows
        ]

    # ---- plan versions ---------------------------------------------------------------------
    def save_version(
        self,
        *,
        patient_id: int,
        plan,  # noqa: ANN001 — vetfluid.planning.plan.Plan
        acknowledged: dict[str, str],
        author: str = "",
        observations: list[dict] | tuple[dict, ...] = (),
    ) -> int:
        """Save the plan as the patient's next version with the observations recorded on
        it so far (one transaction: all or nothing); returns its number."""
        from vetfluid.records.serialize import plan_dict, request_to_dict

        self.patient(patient_id)
        request_json = json.dumps(request_to_dict(plan.request), ensure_ascii=False)
        plan_json = json.dumps(plan_dict(plan), ensure_ascii=False)
        ack_json = json.dumps(dict(acknowledged), ensure_ascii=False)
        try:
            with self._transaction():
                row = self._db.execute(
                    "SELECT COALESCE(MAX(version), 0) + 1 FROM plan_versions WHERE patient_id = ?",
                    (patient_id,),
                ).fetchone()
                number = int(row[0])
                cursor = self._db.execute(
                    "INSERT INTO plan_versions (patient_id, version, request_json, plan_json,"
                    " acknowledged_json, author, created_at, program_version)"
                    " VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                    (patient_id, number, request_json, plan_json, ack_json, author, _now(),
                     __version__),
                )  # fmt: skip
                self._db.executemany(
                    "INSERT INTO observations (plan_version_id, observation_json, recorded_at)"
                    " VALUES (?, ?, ?)",
                    [(cursor.lastrowid, json.dumps(o, ensure_ascii=False), _now())
                     for o in observations],
                )  # fmt: skip
        except sqlite3.OperationalError as exc:
            raise RecordsError(
                f"could not save the plan to {self.path.name}: {exc}",
                fix="check the disk and the folder; the plan on screen is unchanged",
            ) from exc
        return number

    def versions(self, patient_id: int) -> list[VersionRow]:
        """The patient's versions, oldest first. A damaged page among them (the versions
        are not checked when the file opens: gigabytes at a clinic's size) is a
        RecordsError."""
        try:
            rows = self._db.execute(
                "SELECT id, patient_id, version, request_json, plan_json, acknowledged_json,"
                " author, created_at, program_version FROM plan_versions WHERE patient_id = ?"
                " ORDER BY version",
                (patient_id,),
            ).fetchall()
        except sqlite3.DatabaseError as exc:
            raise RecordsError(
                f"could not read the plan versions in {self.path.name}: {exc}",
                fix="restore a backup; the versions of other patients may still be read",
            ) from exc
        versions = []
        for r in rows:
            try:
                request, plan, acknowledged = (json.loads(r[3]), json.loads(r[4]),
                                               json.loads(r[5]))  # fmt: skip
            except (TypeError, ValueError) as exc:  # a damaged row: said, never a traceback
                raise RecordsError(
                    f"version {r[2]} of patient {patient_id} in {self.path.name} cannot be "
                    f"read ({exc})",
                    fix="restore a backup; the other patients' versions may still be read",
                ) from exc
            versions.append(
                VersionRow(id=r[0], patient_id=r[1], version=r[2], request=request, plan=plan,
                           acknowledged=acknowledged, author=r[6], created_at=r[7],
                           program_version=r[8])
            )  # fmt: skip
        return versions

    def add_observation(self, *, version_id: int, observation: dict) -> int:
        return self._write(
            "INSERT INTO observations (plan_version_id, observation_json, recorded_at)"
            " VALUES (?, ?, ?)",
            (version_id, json.dumps(observation, ensure_ascii=False), _now()),
        )

    def observations(self, version_id: int) -> list:
        """The observations recorded on a version, oldest first. A row whose text is not
        readable is returned as that text, for the caller to count as unreadable."""
        try:
            rows = self._db.execute(
                "SELECT observation_json FROM observations WHERE plan_version_id = ? ORDER BY id",
                (version_id,),
            ).fetchall()
        except sqlite3.DatabaseError as exc:
            raise RecordsError(
                f"could not read the observations in {self.path.name}: {exc}"
            ) from exc
        return [_json_or_text(r[0]) for r in rows]

    def merge_observations(
        self, *, version_id: int, observations: list, based_on: list | None = None
    ) -> int:
        """Bring into a version the observations kept for it (in a draft) while it could not
        take them. With ``based_on`` (what it held when they were kept): those added since
        then that it still lacks are added, and those removed since then are removed, so
        what was recorded on it or removed from it meanwhile stands. Without ``based_on``:
        those it lacks are added and nothing is removed. An item that cannot be read is
        stored as it is, for the reader to count. Returns how many were added."""
        from collections import Counter

        def counted(records: list) -> Counter:
            return Counter(k for r in records if (k := _observation_key(r)) is not None)

        current = [r for r in self.observations(version_id) if _observation_key(r) is not None]
        ours, now = counted(observations), counted(current)
        if based_on is None:
            removed, added = Counter(), ours - now
        else:
            before = counted(based_on)
            removed = before - ours
            wanted = Counter({k: n - max(before[k], now[k]) for k, n in ours.items()})
            added = +wanted  # the unary plus keeps the positive counts only
        given = {_observation_key(r): r for r in observations}
        kept = []
        for record in current:
            key = _observation_key(record)
            if removed[key]:
                removed[key] -= 1
            else:
                kept.append(record)
        kept += [given[k] for k in added.elements()]
        unreadable = [r for r in observations if _observation_key(r) is None]
        self.keep_observations(version_id=version_id, observations=kept + unreadable)
        return sum(added.values())

    def keep_observations(self, *, version_id: int, observations: list[dict]) -> bool:
        """Make the version's stored observations the ones given (one transaction).

        Rows already stored keep their time of recording; only the ones the user added or
        removed change. A stored row that cannot be read as an observation is never
        touched: the user never saw it, so never removed it. Returns whether anything
        was written."""
        stored = self._db.execute(
            "SELECT id, observation_json FROM observations WHERE plan_version_id = ?",
            (version_id,),
        ).fetchall()
        unmatched = [(_observation_key(o), o) for o in observations]
        removed = []
        for row_id, text in stored:
            key = _observation_key(_json_or_text(text))
            if key is None:
                continue  # unreadable: left as it is
            match = next((i for i, (k, _) in enumerate(unmatched) if k == key), None)
            if match is None:
                removed.append((row_id,))
            else:
                del unmatched[match]
        if not removed and not unmatched:
            return False
        try:
            with self._transaction():
                self._db.executemany("DELETE FROM observations WHERE id = ?", removed)
                self._db.executemany(
                    "INSERT INTO observations (plan_version_id, observation_json, recorded_at)"
                    " VALUES (?, ?, ?)",
                    [(version_id, json.dumps(o, ensure_ascii=False), _now()) for _, o in unmatched],
                )
        except sqlite3.DatabaseError as exc:
            raise RecordsError(
                f"could not save the observations to {self.path.name}: {exc}",
                fix="check the disk and the folder; the observations on screen are unchanged",
            ) from exc
        return True

    # ---- the draft being edited ------------------------------------------------------------
    def save_draft(self, content: dict) -> None:
        """Replace the draft; refused while the stored one can be neither read nor set
        aside (:meth:`draft`), so that it is never overwritten unseen."""
        if self._unreadable_draft:  # try the copy again first; still refused if it fails
            self.last_set_aside = self.set_aside_draft()
        self._write(
            "INSERT INTO draft (id, content_json, saved_at) VALUES (1, ?, ?)"
            " ON CONFLICT(id) DO UPDATE SET content_json = excluded.content_json,"
            " saved_at = excluded.saved_at",
            (json.dumps(content, ensure_ascii=False), _now()),
        )

    def draft(self) -> dict | None:
        """The plan last being edited, or None. A stored draft that cannot be read as one
        (cut short, not UTF-8, not an object) is set aside in a file beside the records,
        never offered and never overwritten unseen; RecordsError says where it went. While
        it cannot be set aside it stays, and :meth:`save_draft` refuses to replace it."""
        try:
            row = self._db.execute(
                "SELECT CAST(content_json AS BLOB) FROM draft WHERE id = 1"
            ).fetchone()
        except sqlite3.DatabaseError as exc:
            raise RecordsError(
                f"the draft in {self.path.name} cannot be read: {exc}",
                fix="nothing was restored from it",
            ) from exc
        if row is None:
            return None
        stored = bytes(row[0])
        try:
            content = json.loads(stored.decode("utf-8"))
        except ValueError:  # cut short, or not UTF-8 at all
            content = None
        if isinstance(content, dict):
            return content
        kept = self._move_aside(stored)
        raise DraftSetAside(
            f"the draft in {self.path.name} could not be read; it was set aside as {kept}",
            path=kept,
            fix="nothing was restored from it; the file holds what was stored",
        )

    def set_aside_draft(self) -> Path | None:
        """Move the stored draft, byte for byte, into a new file beside the records: one
        that reads but cannot be restored. None when there is no draft."""
        try:
            row = self._db.execute(
                "SELECT CAST(content_json AS BLOB) FROM draft WHERE id = 1"
            ).fetchone()
        except sqlite3.DatabaseError as exc:
            raise RecordsError(f"the draft in {self.path.name} cannot be read: {exc}") from exc
        return None if row is None else self._move_aside(bytes(row[0]))

    def _move_aside(self, stored: bytes) -> Path:
        kept = self._set_aside(stored)
        self._unreadable_draft = False
        self.clear_draft()
        return kept

    def _set_aside(self, stored: bytes) -> Path:
        """Write an unreadable draft, byte for byte, to a new owner-only file beside the
        records; RecordsError (and the draft kept in place) when it cannot be written."""
        stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%S")
        for attempt in range(100):
            suffix = f"-{attempt}" if attempt else ""
            kept = self.path.with_name(f"{self.path.stem}-unreadable-draft-{stamp}{suffix}.txt")
            try:
                handle = os.open(kept, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600)
            except FileExistsError:
                continue
            except OSError as exc:
                raise self._not_set_aside(kept, exc) from exc
            try:
                with os.fdopen(handle, "wb") as out:
                    out.write(stored)
            except OSError as exc:  # created but not written (a full disk): no half copy
                kept.unlink(missing_ok=True)
                raise self._not_set_aside(kept, exc) from exc
            return kept
        self._unreadable_draft = True
        raise RecordsError(f"the draft in {self.path.name} cannot be read, nor copied aside")

    def _not_set_aside(self, kept: Path, exc: OSError) -> RecordsError:
        self._unreadable_draft = True
        return RecordsError(
            f"the draft in {self.path.name} cannot be read, nor copied to {kept.name}: "
            f"{exc.strerror}",
            fix="free some disk space; the draft stays in the records until then",
        )

    def clear_draft(self) -> None:
        self._write("DELETE FROM draft WHERE id = ?", (1,))

    # ---- backup, export ----------------------------------------------------------------------
    def backup(self, target: Path) -> Path:
        """A consistent copy through SQLite's online backup (safe while the file is in use).

        It is written into a new owner-only file beside ``target`` and renamed onto it
        once whole and on disk, so ``target`` holds the previous copy or the whole new
        one, never part of one (a file SQLite finds cut short reads as empty)."""
        target = Path(target)
        try:
            handle, name = tempfile.mkstemp(  # owner-only (0600) from its first byte
                dir=target.parent, prefix=f".{target.name}.", suffix=".partial"
            )
        except OSError as exc:
            raise RecordsError(
                f"cannot write a backup in {target.parent}: {exc.strerror}",
                fix="choose a folder you can write to; the records are unchanged",
            ) from exc
        os.close(handle)
        staging = Path(name)
        try:
            with closing(sqlite3.connect(staging)) as copy:
                self._db.backup(copy)
            _fsync(staging)
            os.replace(staging, target)
            _fsync(target.parent)
        except (OSError, sqlite3.Error) as exc:
            raise RecordsError(
                f"could not write the backup {target.name}: {exc}",
                fix="check the disk has space and the folder is writable; the records are "
                "unchanged",
            ) from exc
        finally:
            staging.unlink(missing_ok=True)
        return target

    @staticmethod
    def restore(backup: Path, target: Path) -> None:
        """Copy a backup over ``target`` through SQLite's online backup: one transaction in
        the target, so it holds what it held or the whole backup, even if cut short.

        The backup is checked first (whole file, and a vetfluid records file this
        vetfluid reads); ``target`` is owner-only before anything is written into it."""
        backup, target = Path(backup), Path(target)
        if not backup.is_file():  # SQLite would create it, and restore an empty file
            raise RecordsError(f"there is no backup {backup}; nothing was restored")
        uri = f"{backup.resolve().as_uri()}?mode=ro"
        try:
            with closing(sqlite3.connect(uri, uri=True)) as source:
                if source.execute("PRAGMA integrity_check").fetchone()[0] != "ok":
                    raise RecordsError(f"{backup.name} is damaged; nothing was restored")
                try:
                    _stored_schema_version(source, backup.name)
                except RecordsError as exc:
                    raise RecordsError(
                        f"{exc.message}; nothing was restored", fix="choose another backup"
                    ) from exc
                _private(target)
                with closing(sqlite3.connect(target, timeout=10)) as copy:
                    source.backup(copy)
        except (OSError, sqlite3.Error) as exc:
            raise RecordsError(
                f"could not restore {backup.name} to {target.name}: {exc}",
                fix="check that the backup is a vetfluid records file and the folder is "
                f"writable; {target.name} holds what it held",
            ) from exc

    def export_patient(self, patient_id: int) -> dict:
        patient = self.patient(patient_id)
        return {
            "format": EXPORT_FORMAT,
            "version": 1,
            "patient": {k: getattr(patient, k) for k in PatientRow.__dataclass_fields__},
            "plan_versions": [
                {
                    "version": v.version,
                    "request": v.request,
                    "plan": v.plan,
                    "acknowledged": v.acknowledged,
                    "author": v.author,
                    "created_at": v.created_at,
                    "program_version": v.program_version,
                    "observations": self.observations(v.id),
                }
                for v in self.versions(patient_id)
            ],
        }

    def import_patient(self, data: dict) -> int:
        """Import an exported patient as a new patient with all its versions (one transaction)."""
        if not isinstance(data, dict) or data.get("format") != EXPORT_FORMAT:
            raise InputError("not a vetfluid patient export", field="file")
        patient = data.get("patient") or {}
        try:
            with self._transaction():
                cursor = self._db.execute(
                    "INSERT INTO patients (name, species_id, sex, birth_date, age_text, client_ref,"
                    " notes, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                    tuple(str(patient.get(k, "")) for k in ("name", "species_id", "sex",
                          "birth_date", "age_text", "client_ref", "notes")) + (_now(),),
                )  # fmt: skip
                new_id = cursor.lastrowid
                for v in data.get("plan_versions", []):
                    version_id = self._db.execute(
                        "INSERT INTO plan_versions (patient_id, version, request_json, plan_json,"
                        " acknowledged_json, author, created_at, program_version)"
                        " VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                        (new_id, int(v["version"]), json.dumps(v["request"]), json.dumps(v["plan"]),
                         json.dumps(v.get("acknowledged", {})), str(v.get("author", "")),
                         str(v.get("created_at", _now())), str(v.get("program_version", ""))),
                    ).lastrowid  # fmt: skip
                    for obs in v.get("observations", []):
                        self._db.execute(
                            "INSERT INTO observations (plan_version_id, observation_json,"
                            " recorded_at) VALUES (?, ?, ?)",
                            (version_id, json.dumps(obs, ensure_ascii=False), _now()),
                        )
        except (KeyError, TypeError, ValueError) as exc:
            raise InputError(f"the patient export is incomplete: {exc}", field="file") from None
        return int(new_id)


COMPARED = (
    ("weight_kg", "Weight", "kg"),
    ("dehydration_percent", "Dehydration", "%"),
    ("deficit_ml", "Deficit", "mL"),
    ("total_ml_first_24h", "First 24 h", "mL"),
)


def compare_versions(a: dict, b: dict) -> list[tuple[str, str, str, bool]]:
    """What differs between two saved plans (their JSON): (what, in a, in b, differs).
    Divided doses are compared as drawn up (:func:`vetfluid.physiology.delivery.drawn_up_dose`)."""
    from vetfluid.common.formatting import format_quantity
    from vetfluid.physiology.delivery import drawn_up_dose
    from vetfluid.planning.schedule import spread_text

    def quantity(value: object, unit: str) -> str:
        return "—" if value is None else format_quantity(float(value), unit)

    rows = [
        (label, quantity(a.get(key), unit), quantity(b.get(key), unit))
        for key, label, unit in COMPARED
    ]
    rows.append(("Fluid", a["fluid"]["name"], b["fluid"]["name"]))
    rows.append(("Route", f"{a['route']} ({a['device']})", f"{b['route']} ({b['device']})"))

    def phase(data: dict, i: int) -> str:
        if i >= len(data["phases"]):
            return "—"
        p = data["phases"][i]
        if p["mode"] == "continuous":
            rate = quantity(p.get("rate_ml_per_h"), "mL/h")
        else:  # as drawn up, the figures the schedule and the sheet give
            drawn = drawn_up_dose(ml_per_site=p.get("ml_per_site"), sites=p.get("sites_per_dose"))
            rate = (
                f"{format_quantity(drawn.dose_ml, 'mL', decimals=2)} every "
                f"{p.get('interval_h'):g} h, {spread_text(p.get('route', ''), drawn)}"
            )
        return f"{p['kind']} h {p['start_h']:g}–{p['end_h']:g}: {rate}"

    for i in range(max(len(a["phases"]), len(b["phases"]))):
        rows.append((f"Phase {i + 1}", phase(a, i), phase(b, i)))
    codes_a = {f["code"] for f in a["findings"]}
    codes_b = {f["code"] for f in b["findings"]}
    rows.append(("Findings", ", ".join(sorted(codes_a)) or "—", ", ".join(sorted(codes_b)) or "—"))
    return [(what, left, right, left != right) for what, left, right in rows]
