"""Bring a view up to date with the plan only while it can be seen.

Views behind a tab would otherwise redo their text, tables and row heights on every
edit, and each of those relays out the whole window. A hidden view is brought up to
date the moment it is shown.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtCore import QEvent, QObject
from PySide6.QtWidgets import QWidget


class ShownPlan(QObject):
    def __init__(self, widget: QWidget, session, show: Callable[[object], None]) -> None:  # noqa: ANN001
        super().__init__(widget)
        self._widget = widget
        self._show = show
        self._plan: object = session.plan  # the plan of the moment is shown on first sight
        self._stale = True
        session.planChanged.connect(self._changed)
        widget.installEventFilter(self)

    def _changed(self, plan: object) -> None:
        self._plan = plan
        self._stale = True
        if self._widget.isVisible():
            self.flush()

    def flush(self) -> None:
        """Show the latest plan now (also called when the widget appears)."""
        if self._stale:
            self._stale = False
            self._show(self._plan)

    def eventFilter(self, watched, event) -> bool:  # noqa: N802,ANN001 (Qt override)
        if watched is self._widget and event.type() == QEvent.Type.Show:
            self.flush()
        return False
