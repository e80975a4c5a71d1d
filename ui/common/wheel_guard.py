"""The mouse wheel changes an input only once the user has focused it.

Qt's combo boxes, spin boxes, date/time edits and sliders take the wheel whenever the
pointer is over them, and take focus from it too. Scrolling the input panel therefore
changed whatever input passed under the pointer: lactated Ringer's became 5 % dextrose,
a 24 h replacement 25 h, unseen (issue 16, hazard 10). :func:`guard_wheel` gives every
such input under a widget focus by click or Tab only (``Qt.StrongFocus``) and an event
filter that hands the wheel of an unfocused input to the scroll area around it, so the
panel scrolls instead. A focused input still answers the wheel, as in any Qt program.
"""

from __future__ import annotations

from PySide6.QtCore import QCoreApplication, QEvent, QObject, Qt
from PySide6.QtGui import QWheelEvent
from PySide6.QtWidgets import (
    QAbstractScrollArea,
    QAbstractSlider,
    QAbstractSpinBox,
    QComboBox,
    QScrollBar,
    QWidget,
)

INPUT_KINDS = (QComboBox, QAbstractSpinBox, QAbstractSlider)  # spin boxes include date/time edits


class WheelGuard(QObject):
    """Event filter: a wheel event on an unfocused input scrolls the nearest scroll area
    around it (if any) and never reaches the input."""

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:  # noqa: N802 (Qt override)
        if event.type() != QEvent.Type.Wheel or not isinstance(watched, QWidget):
            return False
        if watched.hasFocus():
            return False  # the user chose this input: the wheel is theirs to use
        area = _scroll_area_around(watched)
        if area is None:
            event.ignore()  # Qt offers an ignored wheel event to the parents in turn
            return True
        viewport = area.viewport()
        centre = watched.mapTo(viewport, event.position().toPoint())
        QCoreApplication.sendEvent(viewport, _moved(event, centre))
        event.accept()  # scrolled once here: no parent is offered it again
        return True


def _scroll_area_around(widget: QWidget) -> QAbstractScrollArea | None:
    parent = widget.parentWidget()
    while parent is not None:
        if isinstance(parent, QAbstractScrollArea) and parent.viewport().isAncestorOf(widget):
            return parent
        parent = parent.parentWidget()
    return None


def _moved(event: QWheelEvent, position) -> QWheelEvent:  # noqa: ANN001 — QPoint
    """The same wheel turn, at ``position`` in the receiver's coordinates."""
    return QWheelEvent(
        position.toPointF(),
        event.globalPosition(),
        event.pixelDelta(),
        event.angleDelta(),
        event.buttons(),
        event.modifiers(),
        event.phase(),
        event.inverted(),
        event.source(),
        event.pointingDevice(),
    )


def guard_wheel(root: QWidget) -> WheelGuard:
    """Guard every combo box, spin box, date/time edit and slider under ``root`` (scroll
    bars excepted: the wheel is what they are for). Call it once a view is built; the
    guard lives as long as ``root``."""
    guard = WheelGuard(root)
    for kind in INPUT_KINDS:
        for widget in root.findChildren(kind):
            if isinstance(widget, QScrollBar):
                continue
            if widget.focusPolicy() == Qt.FocusPolicy.WheelFocus:
                widget.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
            widget.installEventFilter(guard)
    return guard
