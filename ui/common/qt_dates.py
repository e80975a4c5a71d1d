"""Python datetimes to and from Qt's, for the date-and-time fields."""

from __future__ import annotations

from datetime import datetime

from PySide6.QtCore import QDate, QDateTime, QTime


def to_qt(moment: datetime) -> QDateTime:
    return QDateTime(QDate(moment.year, moment.month, moment.day),
                     QTime(moment.hour, moment.minute))  # fmt: skip


def from_qt(value: QDateTime) -> datetime:
    day, clock = value.date(), value.time()
    return datetime(day.year(), day.month(), day.day(), clock.hour(), clock.minute())
