"""Records at a clinic's size: 50,000 patients, 500,000 plan versions (issue 17), on the
SQLite file and on a PostgreSQL server (issue 21), side by side.

Opening the records, searching patients by name, species or client reference, and opening
a patient's latest version as the window does it each take at most 100 ms median on
either engine. The records file's size per version is reported (``extra_info`` of the
opening benchmark).

Skipped in the ordinary run (`python3 dev.py bench` runs it). The data are generated demo
data, made once by ``scripts/make_clinic_records.py`` (about a minute, about 7 GB) at
``VETFLUID_CLINIC_RECORDS`` or in the temporary folder, and reused by later runs; on the
server they are copied once into the database ``vetfluid_clinic`` of the test server
(``VETFLUID_TEST_POSTGRES_URL``, see ``tests/conftest.py``), or the database
``VETFLUID_CLINIC_RECORDS_URL`` names, and reused too.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from sqlalchemy import text

from tests.conftest import (
    POSTGRES_PASSFILE,
    POSTGRES_REQUIRED,
    POSTGRES_URL,
    _admin_connection,
    _password_for,
)
from vetfluid.records.store import Records
from vetfluid.tables.species import load_table

pytestmark = pytest.mark.benchmark
ROOT = Path(__file__).resolve().parents[1]
PATIENTS, VERSIONS = 50_000, 500_000
LIMIT_S = 0.100  # issues 17 and 21: each at most 100 ms median on the development machine
CLINIC_DATABASE = "vetfluid_clinic"


@pytest.fixture(scope="module")
def clinic_file() -> Path:
    """The generated clinic file, made now if there is none yet (written under another
    name and renamed when whole, so a run cut short never leaves half a file to reuse)."""
    default = Path(tempfile.gettempdir()) / "vetfluid-clinic-records.sqlite"
    path = Path(os.environ.get("VETFLUID_CLINIC_RECORDS") or default)
    if not path.exists():
        partial = path.with_name(path.name + ".partial")
        for leftover in path.parent.glob(partial.name + "*"):
            leftover.unlink()
        subprocess.run([sys.executable, str(ROOT / "scripts" / "make_clinic_records.py"),
                        str(partial), "--patients", str(PATIENTS), "--versions", str(VERSIONS)],
                       check=True)  # fmt: skip
        os.replace(partial, path)
    return path


def _counts(db: Records) -> tuple[int, int]:
    with db._engine.connect() as conn:
        return tuple(conn.execute(text(
            "SELECT (SELECT count(*) FROM patients), (SELECT count(*) FROM plan_versions)"
        )).one())  # fmt: skip


@pytest.fixture(scope="module")
def clinic_server(clinic_file, tmp_path_factory) -> tuple[str, Path]:
    """(records URL, a data folder with its password file) of the clinic-sized server
    database: copied once from the clinic file, reused by later runs."""
    from sqlalchemy.engine import make_url

    from vetfluid.records.location import server_address, store_password

    given = os.environ.get("VETFLUID_CLINIC_RECORDS_URL")
    if not given and not POSTGRES_URL:
        message = "no PostgreSQL server for the records benchmarks (tests/conftest.py)"
        if POSTGRES_REQUIRED:
            pytest.fail(message)
        pytest.skip(message)
    home = tmp_path_factory.mktemp("clinic-home")
    url = given or make_url(POSTGRES_URL).set(database=CLINIC_DATABASE).render_as_string(False)
    if not given:
        with _admin_connection() as admin:
            found = admin.execute("SELECT 1 FROM pg_database WHERE datname = %s",
                                  (CLINIC_DATABASE,)).fetchone()  # fmt: skip
            if found is None:
                admin.execute(f"CREATE DATABASE {CLINIC_DATABASE}")
        os.environ["VETFLUID_HOME"] = str(home)
        store_password(server_address(url), _password_for(make_url(url)))
        with Records.open(url=url) as db:
            filled = _counts(db)
        if filled == (0, 0):
            subprocess.run([sys.executable, str(ROOT / "scripts" / "make_clinic_records.py"),
                            str(clinic_file), "--copy-to", url], check=True,
                           env={**os.environ, "PGPASSFILE": POSTGRES_PASSFILE})  # fmt: skip
    return url, home


@pytest.fixture(scope="module", params=["sqlite", "postgresql"])
def clinic(request, clinic_file):
    """Where the clinic's records are, on each engine: a callable opening them."""
    if request.param == "sqlite":
        return lambda: Records.open(clinic_file)
    url, home = request.getfixturevalue("clinic_server")
    return lambda: Records.open(url=url)


@pytest.fixture(autouse=True)
def _clinic_home(request, monkeypatch):
    """On the server, the data folder holding its password file (and the local drafts)."""
    if "clinic" in request.fixturenames and request.node.callspec.params.get("clinic") == (
        "postgresql"
    ):
        _url, home = request.getfixturevalue("clinic_server")
        monkeypatch.setenv("VETFLUID_HOME", str(home))


@pytest.fixture()
def records(clinic):
    with clinic() as db:  # brought up to this vetfluid's schema, once
        counts = _counts(db)
        assert counts == (PATIENTS, VERSIONS), f"{db.where} is not the clinic-sized one: {counts}"
        yield db


def _median_within_limit(benchmark) -> None:  # noqa: ANN001
    assert benchmark.stats["median"] <= LIMIT_S, f"median {benchmark.stats['median']:.3f} s"


def test_open_the_records(benchmark, clinic, records, clinic_file):
    benchmark(lambda: clinic().close())
    if records.engine == "sqlite":
        size = clinic_file.stat().st_size
        benchmark.extra_info.update(file_bytes=size, bytes_per_version=round(size / VERSIONS))
        print(f"\n{clinic_file}: {size / 1e9:.2f} GB, {size / VERSIONS:,.0f} bytes per version")
    _median_within_limit(benchmark)


@pytest.mark.parametrize(
    ("what", "text_"),
    [
        ("a common name", "Bella"),
        ("a name nobody has", "Quentin"),  # every patient is read: the slowest search
        ("a species", "bearded dragon"),
        ("a group of species", "reptile"),
        ("a client reference", "GEN-031415"),
    ],
)
def test_search_patients(benchmark, records, what, text_):
    found = benchmark(records.find_patients, text_)
    if what == "a name nobody has":
        assert found == []
    elif what == "a client reference":
        assert [p.client_ref for p in found] == [text_]
    elif what == "a common name":
        assert found and all(text_ in p.name for p in found)
    elif what == "a species":
        assert found and {p.species_id for p in found} == {"bearded_dragon"}
    else:  # species.csv: the reptiles' common group
        table = load_table()
        assert found and all("reptiles" in table.group_names(p.species_id) for p in found)
    _median_within_limit(benchmark)


def _patient_with(records: Records, which: str) -> tuple[int, int]:
    """(patient id, versions) of the patient with the most versions, or of one with the
    median number of versions."""
    with records._engine.connect() as conn:
        counts = conn.execute(text(
            "SELECT patient_id, count(*) AS n FROM plan_versions GROUP BY patient_id "
            "ORDER BY n, patient_id"
        )).fetchall()  # fmt: skip
    return tuple(counts[-1] if which == "the most versions" else counts[len(counts) // 2])


@pytest.mark.parametrize("which", ["the median number of versions", "the most versions"])
def test_open_a_patients_latest_version(benchmark, records, which):
    """As the window does it: the patient's versions (listed in the open dialog), the
    latest one's plan and request, its observations and the patient."""
    patient_id, count = _patient_with(records, which)

    def open_latest() -> tuple:
        latest = records.versions(patient_id)[-1]
        return latest, records.observations(latest.id), records.patient(patient_id)

    latest, _observations, patient = benchmark(open_latest)
    assert latest.version == count and patient.id == patient_id and latest.plan["phases"]
    benchmark.extra_info.update(versions_of_the_patient=count)
    _median_within_limit(benchmark)
