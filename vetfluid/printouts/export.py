"""The plan's schedule and the recorded observations as formula-safe CSV (cells made safe by
:mod:`vetfluid.common.csvcells`)."""

from __future__ import annotations

from datetime import datetime, timedelta

from vetfluid.common.csvcells import csv_text

SCHEDULE_COLUMNS = ("clock", "hour", "phase", "action")
OBSERVATION_COLUMNS = (
    "hour", "weight_kg", "pcv_percent", "total_solids_g_per_dl", "urine_ml", "urine_period_h",
    "other_losses_ml", "serum_na", "serum_k", "heart_rate_per_min", "respiratory_rate_per_min",
    "mucous_membranes", "crt_s", "note",
)  # fmt: skip


def schedule_csv(plan_data: dict) -> str:
    """The plan's schedule (from its JSON) as formula-safe CSV."""
    return csv_text(
        SCHEDULE_COLUMNS, ([e.get(c) for c in SCHEDULE_COLUMNS] for e in plan_data["schedule"])
    )


def observations_csv(observations, start: datetime | None = None) -> str:  # noqa: ANN001
    """Recorded observations (list[Observation]) as formula-safe CSV (a note starting with
    "=" stays text); with the plan's start, each row also gets its date and time."""

    def at(hour: float) -> str:
        return "" if start is None else (start + timedelta(hours=hour)).strftime("%Y-%m-%d %H:%M")

    return csv_text(
        ("at", *OBSERVATION_COLUMNS),
        ([at(o.hour), *(getattr(o, c) for c in OBSERVATION_COLUMNS)] for o in observations),
    )
