"""Anything unexpected is shown in a dialog and written to the log — never swallowed.

Expected problems (bad input, a file that cannot be read) are handled where the
user acted; this hook catches the rest so the clinician sees that something went
wrong instead of a window that silently stops updating.
"""

from __future__ import annotations

import os
import sys
import traceback
from pathlib import Path
from types import TracebackType

from vetfluid.common.paths import owner_only_file, user_data_dir

LOG_NAME = "vetfluid.log"


def log_path() -> Path:
    return user_data_dir() / LOG_NAME


def write_log(text: str) -> None:
    """Append to the log, created readable by its owner only (0600) from its first byte:
    a traceback can hold what was on screen, a patient's name among it."""
    path = log_path()
    owner_only_file(path)  # a log an older vetfluid left readable to all is narrowed first
    handle = os.open(path, os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o600)
    with os.fdopen(handle, "a", encoding="utf-8") as log:
        log.write(text)


def report_unexpected(kind: type[BaseException], value: BaseException, tb: TracebackType | None):
    """Log the error with its traceback and tell the user in a dialog."""
    text = "".join(traceback.format_exception(kind, value, tb))
    try:
        write_log(text + "\n")
    except OSError:
        sys.stderr.write(text)
    from PySide6.QtWidgets import QApplication, QMessageBox

    if QApplication.instance() is not None:
        QMessageBox.critical(
            None,
            "vetfluid — unexpected error",
            f"Something unexpected went wrong: {value}\n\nThe plan on screen may be out of date: "
            f"check it before use. Details were written to {log_path()}.",
        )


def install() -> None:
    sys.excepthook = report_unexpected
