"""Plan files waiting to open in the window: one given at start (``vetfluid PLAN.vfplan``) or
handed over by a second start (:mod:`ui.one_window`).

A file opens only once the window is ready for it: the planner built, the draft left last
time offered (a file opened first would be replaced by the draft's answer, or asked about
inside it), and no dialog open (a question would be answered for the wrong file). Files
given meanwhile open in turn, and the status line says what waits.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from PySide6.QtCore import QObject, QTimer
from PySide6.QtWidgets import QApplication, QMessageBox, QStatusBar, QWidget

LOOK_AGAIN_MS = 300  # while a dialog is open: how often the queue looks whether it has closed


class WaitingFiles(QObject):
    """The window's queue of plan files. ``read`` opens one by File ▸ Open's path (True: it
    came on screen); ``on_screen`` tells what is on screen, to see whether another plan came
    while a file waited."""

    def __init__(
        self,
        window: QWidget,
        status: QStatusBar,
        *,
        read: Callable[[Path], bool],
        on_screen: Callable[[], object],
    ) -> None:
        super().__init__(window)
        self._window = window
        self._status = status
        self._read = read
        self._on_screen = on_screen
        # each file with what was on screen when it came (None: before the window was ready)
        self._files: list[tuple[Path, object]] = []
        self._timer = QTimer(self)  # one look again while they wait
        self._timer.setSingleShot(True)
        self._timer.setInterval(LOOK_AGAIN_MS)
        self._timer.timeout.connect(self._open_next)
        self._words = ""  # what the status line says of them while they wait
        self._started = False  # the window is ready: the draft left last time was offered
        self._closed = False
        self._opening: Path | None = None  # the file being opened now
        self._left: object = None  # the screen the queue's last opening left

    @property
    def started(self) -> bool:
        return self._started

    @property
    def waiting(self) -> list[Path]:
        return [path for path, _ in self._files]

    def add(self, path: Path) -> None:
        """Open ``path`` once the window is ready for it. A file that waited while another
        plan came on screen (opened by hand in a dialog) asks before it takes that plan's
        place; a change this queue made itself (an earlier file opening) does not count. A
        file already waiting, or being opened now, is not added again (an impatient second
        double-click); one opened before is read again (it may have been saved over with
        another patient's plan)."""
        if path == self._opening or path in self.waiting:
            return
        self._files.append((path, self._on_screen() if self._started else None))
        QTimer.singleShot(0, self, self._open_next)  # next turn; dropped if this queue is gone

    def start(self) -> None:
        """The window is ready (the draft left last time has been offered): open what waits."""
        self._started = True
        self._open_next()

    def close(self) -> list[str]:
        """The window closes: nothing more opens. The names of the files still waiting,
        for the window to say they were not opened rather than drop them unseen."""
        self._closed = True
        self._timer.stop()
        names = [path.name for path, _ in self._files]
        self._files.clear()
        return names

    def _open_next(self) -> None:
        if not self._files or self._closed:
            return
        if not self._started or QApplication.activeModalWidget() is not None:
            if self._started:  # a dialog is open: said, so nobody waits unknowingly
                names = ", ".join(path.name for path, _ in self._files)
                words = f"{names}: opens when the open dialog is closed."
                if words != self._status.currentMessage():
                    self._words = words
                    self._status.showMessage(words)
            if not self._timer.isActive():
                self._timer.start()
            return
        if self._words and self._status.currentMessage() == self._words:
            self._status.clearMessage()
        self._words = ""
        path, seen = self._files.pop(0)
        now = self._on_screen()
        ours = now == self._left  # the queue's own last opening changed it
        if seen is not None and seen != now and not ours and not self._still_wanted(path):
            self._status.showMessage(f"{path.name} was not opened.")
        else:
            self._opening = path
            try:
                if self._read(path):
                    self._left = self._on_screen()
            finally:
                self._opening = None
        QTimer.singleShot(0, self, self._open_next)  # the next, after this one's questions

    def _still_wanted(self, path: Path) -> bool:
        answer = QMessageBox.question(
            self._window, "vetfluid",
            f"{path.name} was opened from outside vetfluid while a dialog was open here, and "
            "another plan has come on screen since. Open it in place of the plan on screen?",
            QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No,
            QMessageBox.StandardButton.No,
        )  # fmt: skip
        return answer == QMessageBox.StandardButton.Yes
