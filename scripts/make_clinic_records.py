"""Write a clinic-sized records file for the scale benchmarks: GENERATED DEMO DATA.

Every patient is invented, not a real animal: names are drawn from a list of pet names,
each patient's notes say "generated demo data", client references start with ``GEN-``,
and the file's ``meta`` table holds ``generated_by``. The plans are the demo patients'
plans (:mod:`vetfluid.planning.demos`) built again for other species of the table and other
weights, so each stored request and plan is one vetfluid really built, at its real size.

    .venv/bin/python scripts/make_clinic_records.py OUT.sqlite [--patients 50000]
        [--versions 500000] [--seed 17]
    .venv/bin/python scripts/make_clinic_records.py CLINIC.sqlite --copy-to URL

``--copy-to`` copies a file made so into an empty PostgreSQL database (the records URL,
``postgresql://user@host:port/database``, its password in libpq's password file), for the
benchmarks on the server (issue 21): the schema is vetfluid's own (:meth:`Records.open`),
the rows go in with COPY, then the server's statistics are gathered (ANALYZE).

The default is a busy hospital after some years: 50,000 patients, 500,000 plan versions
(1 to 250 per patient, most only a few), a third of the versions with 1 to 4
observations. The schema is created by :meth:`vetfluid.records.store.Records.open`, so the
file is exactly what vetfluid writes; rows then go in with ``executemany`` in large
transactions (a few minutes for the default size). An existing file is never touched.
"""

from __future__ import annotations

import argparse
import json
import random
import sqlite3
import sys
import time
from dataclasses import replace
from datetime import UTC, datetime, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:  # run from a checkout without installing
    sys.path.insert(0, str(ROOT))

from vetfluid import __version__  # noqa: E402
from vetfluid.common.errors import VetfluidError  # noqa: E402
from vetfluid.planning.demos import DEMOS  # noqa: E402
from vetfluid.planning.plan import build_plan  # noqa: E402
from vetfluid.records.serialize import plan_dict, request_to_dict  # noqa: E402
from vetfluid.records.store import SCHEMA_VERSION, Records  # noqa: E402
from vetfluid.tables.species import load_table  # noqa: E402

MARK = (
    "Generated demo data (scripts/make_clinic_records.py): an invented patient, not a real animal."
)
PET_NAMES = (
    "Bella Max Luna Charlie Lucy Cooper Daisy Milo Lola Rocky Molly Buddy Sadie Bear Maggie "
    "Tucker Chloe Oliver Sophie Toby Coco Leo Ruby Jack Rosie Duke Penny Bailey Zoe Teddy "
    "Lily Finn Nala Oscar Stella Ziggy Pepper Gizmo Mango Kiwi Pickle Biscuit Noodle Sunny "
    "Pip Hazel Olive Juniper Basil Clover Poppy Willow Maple Sage Ember Storm Comet Pebble"
).split()
INITIALS = ("AB", "CK", "DM", "EL", "FR", "GT", "HW", "JS", "KP", "LN", "MO", "RV", "")
# The demo whose plan a species' plans are built from, by the species' group.
TEMPLATE_BY_GROUP = {"reptile": "cold_bearded_dragon", "rodent": "small_gerbil"}
WEIGHT_STEPS = 12  # weights per species, across its usual adult range
# The most versions one patient gets: a patient re-planned four times a day through a
# two-month stay, or over many admissions (our assumption of a busy hospital's worst case).
MOST_VERSIONS = 250
CHUNK = 20_000  # rows per transaction


def _template_demo(table, species_id: str) -> str:  # noqa: ANN001
    groups = " ".join(table.group_names(species_id)).lower()
    for word, demo_id in TEMPLATE_BY_GROUP.items():
        if word in groups:
            return demo_id
    weight = table.value(species_id, "body_weight_kg").number
    return "renal_cat" if weight < 10 else "dehydrated_dog"


def build_templates() -> dict[str, list[tuple[float, str, str]]]:
    """Per species: (weight_kg, request JSON, plan JSON) at weights across its usual range,
    each built from the demo patient of its kind. Species none of them builds for
    (a request that does not fit it) are left out."""
    table = load_table()
    templates: dict[str, list[tuple[float, str, str]]] = {}
    for species_id in table.species_ids():
        if table.species(species_id).rank != "species":
            continue
        value = table.get(species_id, "body_weight_kg")
        if value is None:
            continue
        low = value.low if value.low is not None else value.number * 0.7
        high = value.high if value.high is not None else value.number * 1.3
        demo = DEMOS[_template_demo(table, species_id)].request
        built = []
        for step in range(WEIGHT_STEPS):
            weight_kg = float(f"{low + (high - low) * step / (WEIGHT_STEPS - 1):.3g}")
            request = replace(demo, species_id=species_id, weight_kg=weight_kg)
            if not table.species(species_id).is_ectotherm:
                request = replace(request, body_temp_c=None)
            try:
                plan = build_plan(request, table)
            except VetfluidError:
                continue
            built.append((
                weight_kg,
                json.dumps(request_to_dict(request), ensure_ascii=False),
                json.dumps(plan_dict(plan), ensure_ascii=False),
            ))  # fmt: skip
        if built:
            templates[species_id] = built
    return templates


def _versions_per_patient(rng: random.Random, patients: int, versions: int) -> list[int]:
    """One version each, the rest spread with a long tail (a few long stays, most short),
    none over :data:`MOST_VERSIONS`."""
    if versions > patients * MOST_VERSIONS:
        raise SystemExit(f"at most {MOST_VERSIONS} versions per patient")
    weights = [rng.paretovariate(1.5) for _ in range(patients)]
    counts = [1] * patients
    left = versions - patients
    while left:
        for index in rng.choices(range(patients), weights=weights, k=left):
            if counts[index] < MOST_VERSIONS:
                counts[index] += 1
                left -= 1
    return counts


def generate(path: Path, *, patients: int, versions: int, seed: int) -> dict[str, float]:
    if path.exists():
        raise SystemExit(f"{path} exists; this script never writes over a file")
    if versions < patients:
        raise SystemExit("give at least one version per patient")
    started = time.perf_counter()
    rng = random.Random(seed)
    templates = build_templates()
    species = sorted(templates)
    # common species far more often than rare ones, as in a small-animal hospital
    popularity = [40.0 if s in ("dog", "cat") else 2.0 for s in species]
    Records.open(path).close()  # vetfluid's own schema, migrations and all
    db = sqlite3.connect(path, isolation_level=None)
    db.execute("PRAGMA synchronous = OFF")  # generated data: no need to survive a crash here
    db.execute("PRAGMA cache_size = -262144")
    stored = db.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()[0]
    if stored != str(SCHEMA_VERSION):
        raise SystemExit(f"schema {stored}, this script writes schema {SCHEMA_VERSION}")
    db.execute(
        "INSERT INTO meta (key, value) VALUES ('generated_by', ?)",
        (f"{MARK} {patients} patients, {versions} versions, seed {seed}",),
    )
    start = datetime(2021, 1, 4, tzinfo=UTC)
    span_s = 5 * 365 * 86400
    patient_rows, plans = [], []
    for pid, count in enumerate(_versions_per_patient(rng, patients, versions), start=1):
        sid = rng.choices(species, weights=popularity)[0]
        name = f"{rng.choice(PET_NAMES)} {rng.choice(PET_NAMES)[:1]}."
        admitted = start + timedelta(seconds=rng.randrange(span_s))
        patient_rows.append((pid, name, sid, rng.choice(("F", "M", "FN", "MN", "")), "",
                             f"{rng.randrange(1, 15)} y", f"GEN-{pid:06d}", MARK,
                             admitted.isoformat(timespec="seconds")))  # fmt: skip
        base = rng.randrange(len(templates[sid]))
        for number in range(1, count + 1):
            at = admitted + timedelta(hours=6 * number + rng.random())
            shift = rng.choice((-1, 0, 0, 1))
            template = templates[sid][min(max(base + shift, 0), len(templates[sid]) - 1)]
            plans.append((at.isoformat(timespec="seconds"), pid, number, template))
    plans.sort(key=lambda p: p[0])  # ids in the order the versions were saved
    with_observations = 0
    db.execute("BEGIN")
    db.executemany(
        "INSERT INTO patients (id, name, species_id, sex, birth_date, age_text, client_ref,"
        " notes, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
        patient_rows,
    )
    db.execute("COMMIT")
    for first in range(0, len(plans), CHUNK):
        rows, observations = [], []
        for offset, (at, pid, number, (weight_kg, request_json, plan_json)) in enumerate(
            plans[first : first + CHUNK]
        ):
            version_id = first + offset + 1
            rows.append((version_id, pid, number, request_json, plan_json, "{}",
                         rng.choice(INITIALS), at, __version__))  # fmt: skip
            if rng.random() < 1 / 3:
                with_observations += 1
                for hour in range(1, rng.randrange(2, 6)):
                    record = {"hour": float(2 * hour),
                              "weight_kg": round(weight_kg * (1 + 0.004 * hour), 4)}  # fmt: skip
                    observations.append((version_id, json.dumps(record), at))
        db.execute("BEGIN")
        db.executemany(
            "INSERT INTO plan_versions (id, patient_id, version, request_json, plan_json,"
            " acknowledged_json, author, created_at, program_version)"
            " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
            rows,
        )
        db.executemany(
            "INSERT INTO observations (plan_version_id, observation_json, recorded_at)"
            " VALUES (?, ?, ?)",
            observations,
        )
        db.execute("COMMIT")
    db.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    db.close()
    size = path.stat().st_size
    return {
        "patients": patients,
        "versions": versions,
        "versions_with_observations": with_observations,
        "species": len(species),
        "bytes": size,
        "bytes_per_version": size / versions,
        "seconds": time.perf_counter() - started,
    }


def copy_to_server(path: Path, url: str) -> dict[str, float]:
    """Copy every patient, version and observation of the generated file ``path`` into the
    empty server database ``url`` (schema built by vetfluid), then ANALYZE."""
    import psycopg

    started = time.perf_counter()
    with Records.open(url=url) as records:  # the schema, as vetfluid builds it
        address, holds = records.server, records.find_patients("", limit=1)
    if holds:
        raise SystemExit(f"{address.label} already holds records; this script copies into an "
                         "empty database only")  # fmt: skip
    source = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
    args = address.connect_args()
    conninfo = (f"host={address.host} port={address.port} dbname={address.database} "
                f"user={address.user}")  # fmt: skip
    tables = {
        "patients": "id, name, species_id, sex, birth_date, age_text, client_ref, notes, "
        "created_at",
        "plan_versions": "id, patient_id, version, request_json, plan_json, acknowledged_json, "
        "author, created_at, program_version",
        "observations": "id, plan_version_id, observation_json, recorded_at",
    }
    with psycopg.connect(conninfo, **args) as server, server.cursor() as cursor:
        generated = source.execute("SELECT value FROM meta WHERE key = 'generated_by'").fetchone()
        cursor.execute("INSERT INTO meta (key, value) VALUES ('generated_by', %s)", generated)
        for table, columns in tables.items():
            with cursor.copy(f"COPY {table} ({columns}) FROM STDIN") as copy:
                for row in source.execute(f"SELECT {columns} FROM {table} ORDER BY id"):
                    copy.write_row(row)
            cursor.execute(f"SELECT setval(pg_get_serial_sequence('{table}', 'id'), "
                           f"(SELECT max(id) FROM {table}))")  # fmt: skip
        server.commit()
        server.autocommit = True
        cursor.execute("VACUUM ANALYZE")
    source.close()
    return {"seconds": time.perf_counter() - started}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("path", type=Path)
    parser.add_argument("--patients", type=int, default=50_000)
    parser.add_argument("--versions", type=int, default=500_000)
    parser.add_argument("--seed", type=int, default=17)
    parser.add_argument("--copy-to", metavar="URL", help="copy PATH into this server database")
    args = parser.parse_args(argv)
    if args.copy_to:
        print(json.dumps(copy_to_server(args.path, args.copy_to), indent=2))
        return 0
    figures = generate(args.path, patients=args.patients, versions=args.versions, seed=args.seed)
    print(json.dumps(figures, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
