"""The records' tables, one definition for SQLite and PostgreSQL (SQLAlchemy Core), and the
forward migrations between schema versions (Alembic's operations, run by our own counter).

A new database, whichever engine, is built at the latest schema from the same table
definitions (:func:`create_latest`); an older one is migrated forward step by step when
it is opened (Alembic is imported only then: it is no part of an ordinary start).
``tests/test_records.py`` checks that a schema-1 database migrated forward has the very
layout of a new one. The schema version is kept in ``meta`` (``schema_version``), as every
vetfluid has kept it, rather than in Alembic's own table: files written by earlier
vetfluids carry it there.

Schemas:

1. meta, patients, plan_versions (immutable: triggers refuse UPDATE and DELETE),
   observations, draft; patients indexed by name.
2. observations indexed by version (opening a version read every observation without it).
3. plan_versions.workstation: the computer a version was saved from (issue 21), beside its
   author's initials.
"""

from __future__ import annotations

from collections.abc import Callable

from sqlalchemy import (
    CheckConstraint,
    Column,
    Connection,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    Table,
    Text,
    UniqueConstraint,
    text,
)


def _tables(metadata: MetaData, *, schema_version: int) -> None:
    """The tables as they stand at ``schema_version`` (1 or the latest)."""
    Table("meta", metadata, Column("key", Text, primary_key=True),
          Column("value", Text, nullable=False))  # fmt: skip
    Table(
        "patients", metadata,
        Column("id", Integer, primary_key=True),
        Column("name", Text, nullable=False),
        Column("species_id", Text, nullable=False),
        *(Column(name, Text, nullable=False, server_default="")
          for name in ("sex", "birth_date", "age_text", "client_ref", "notes")),
        Column("created_at", Text, nullable=False),
        Index("patients_name", "name"),
    )  # fmt: skip
    later = [Column("workstation", Text, nullable=False, server_default="")]
    Table(
        "plan_versions", metadata,
        Column("id", Integer, primary_key=True),
        Column("patient_id", Integer, ForeignKey("patients.id"), nullable=False),
        Column("version", Integer, nullable=False),
        Column("request_json", Text, nullable=False),
        Column("plan_json", Text, nullable=False),
        Column("acknowledged_json", Text, nullable=False),
        Column("author", Text, nullable=False, server_default=""),
        Column("created_at", Text, nullable=False),
        Column("program_version", Text, nullable=False),
        *(later if schema_version >= 3 else ()),
        UniqueConstraint("patient_id", "version"),
    )  # fmt: skip
    Table(
        "observations", metadata,
        Column("id", Integer, primary_key=True),
        Column("plan_version_id", Integer, ForeignKey("plan_versions.id"), nullable=False),
        Column("observation_json", Text, nullable=False),
        Column("recorded_at", Text, nullable=False),
        *((Index("observations_version", "plan_version_id"),) if schema_version >= 2 else ()),
    )  # fmt: skip
    Table(
        "draft", metadata,
        Column("id", Integer, primary_key=True, autoincrement=False),
        Column("content_json", Text, nullable=False),
        Column("saved_at", Text, nullable=False),
        CheckConstraint("id = 1"),
    )  # fmt: skip


# The tables as the code reads and writes them: the latest schema.
METADATA = MetaData()
_tables(METADATA, schema_version=3)
meta, patients, plan_versions, observations, draft = (
    METADATA.tables[name] for name in ("meta", "patients", "plan_versions", "observations", "draft")
)

# Plan versions are immutable: the database itself refuses to change or delete one. A
# trigger is the one thing each engine says in its own words.
_IMMUTABLE = {
    "sqlite": (
        "CREATE TRIGGER plan_versions_no_update BEFORE UPDATE ON plan_versions "
        "BEGIN SELECT RAISE(ABORT, 'plan versions are immutable'); END",
        "CREATE TRIGGER plan_versions_no_delete BEFORE DELETE ON plan_versions "
        "BEGIN SELECT RAISE(ABORT, 'plan versions are immutable'); END",
    ),
    "postgresql": (
        "CREATE FUNCTION vetfluid_plan_versions_immutable() RETURNS trigger LANGUAGE plpgsql "
        "AS $$ BEGIN RAISE EXCEPTION 'plan versions are immutable'; END $$",
        "CREATE TRIGGER plan_versions_no_update BEFORE UPDATE OR DELETE ON plan_versions "
        "FOR EACH ROW EXECUTE FUNCTION vetfluid_plan_versions_immutable()",
    ),
}


def create_schema(connection: Connection, version: int) -> None:
    """Build schema ``version`` (1, for the migration tests, or the latest) inside the
    caller's transaction (both engines' DDL is transactional)."""
    tables = MetaData()
    _tables(tables, schema_version=version)
    tables.create_all(connection)
    for statement in _IMMUTABLE[connection.dialect.name]:
        connection.exec_driver_sql(statement)
    connection.execute(
        text("INSERT INTO meta (key, value) VALUES ('schema_version', :v)"), {"v": str(version)}
    )


def create_latest(connection: Connection) -> None:
    """A new database at :data:`SCHEMA_VERSION`."""
    create_schema(connection, SCHEMA_VERSION)


def _operations(connection: Connection):  # noqa: ANN202 — alembic.operations.Operations
    from alembic.migration import MigrationContext
    from alembic.operations import Operations

    return Operations(MigrationContext.configure(connection))


def _index_observations_by_version(connection: Connection) -> None:
    _operations(connection).create_index("observations_version", "observations",
                                         ["plan_version_id"])  # fmt: skip


def _add_workstation(connection: Connection) -> None:
    # a constant default: SQLite adds the column without copying the table
    _operations(connection).add_column(
        "plan_versions", Column("workstation", Text, nullable=False, server_default="")
    )


# MIGRATIONS[n] takes a database from schema n to n + 1, in the caller's transaction.
MIGRATIONS: dict[int, Callable[[Connection], None]] = {
    1: _index_observations_by_version,
    2: _add_workstation,
}
SCHEMA_VERSION = 1 + len(MIGRATIONS)
# The tables of schema 1 (later schemas add to them): a database lacking one is damaged.
TABLES = ("meta", "patients", "plan_versions", "observations", "draft")


def migrate(connection: Connection, version: int) -> int:
    """One step forward inside the caller's transaction; returns the new version."""
    MIGRATIONS[version](connection)
    connection.execute(
        meta.update().where(meta.c.key == "schema_version").values(value=str(version + 1))
    )
    return version + 1
