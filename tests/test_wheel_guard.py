"""The mouse wheel changes no input the user has not focused (issue 16, hazard 10).

Found by trying the window as a clinician would: scrolling the left panel with the wheel
over the Fluid box switched lactated Ringer's to 5 % dextrose, and over "Replace deficit
over" changed 24 h to 25 h, unseen. An unfocused input must let the panel scroll instead;
a focused one still answers the wheel (Qt's own behaviour, kept for whoever wants it).
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtWidgets import (
    QAbstractSlider,
    QAbstractSpinBox,
    QApplication,
    QComboBox,
    QScrollArea,
    QScrollBar,
    QWidget,
)

from vetfluid.planning.demos import DEMOS

DOWN, UP = -120, 120  # one notch of a mouse wheel, in eighths of a degree (Qt's unit)


def wheel(widget: QWidget, delta: int) -> None:
    """One wheel notch over the middle of ``widget``, as the window system would send it."""
    from PySide6.QtGui import QWheelEvent

    centre = QPointF(widget.rect().center())
    event = QWheelEvent(
        centre,
        QPointF(widget.mapToGlobal(centre.toPoint())),
        QPoint(0, 0),
        QPoint(0, delta),
        Qt.MouseButton.NoButton,
        Qt.KeyboardModifier.NoModifier,
        Qt.ScrollPhase.NoScrollPhase,
        False,
    )
    QApplication.sendEvent(widget, event)


def shown_value(widget: QWidget) -> object:
    if isinstance(widget, QComboBox):
        return widget.currentIndex(), widget.currentText()
    if isinstance(widget, QAbstractSpinBox):
        return widget.text()
    return widget.value()


@pytest.fixture()
def short_window(qtbot, planner):
    """The window too short for the whole input panel, so the panel has to scroll, with a
    demo patient's plan (lactated Ringer's, replaced over 24 h) and focus away from the
    inputs."""
    win = planner
    win.resize(1400, 420)
    win.open_demo("small_gerbil")
    qtbot.waitUntil(lambda: win.session.plan is not None)
    win.activateWindow()
    qtbot.waitUntil(win.isActiveWindow)
    win.details.setFocus()
    qtbot.waitUntil(lambda: QApplication.focusWidget() is not None)
    scroll = input_panel(win)
    qtbot.waitUntil(lambda: scroll.verticalScrollBar().maximum() > 0)
    return win


def input_panel(win) -> QScrollArea:  # noqa: ANN001 — MainWindow
    scroll = win.splitter.widget(0)
    assert isinstance(scroll, QScrollArea)
    return scroll


def test_the_wheel_over_an_unfocused_fluid_box_scrolls_the_panel_not_the_fluid(qtbot, short_window):
    win = short_window
    fluid = win.settings_box.fluid
    assert fluid.currentData() == "lactated_ringers"
    assert not fluid.hasFocus()
    bar = input_panel(win).verticalScrollBar()
    bar.setValue(0)
    for _ in range(3):
        wheel(fluid, DOWN)
    qtbot.wait(50)  # let a (wrong) recompute run, if one was started
    assert fluid.currentData() == "lactated_ringers"
    assert win.session.inputs["fluid_id"] == "lactated_ringers"
    assert win.session.plan.request.fluid_id == "lactated_ringers"
    assert bar.value() > 0  # the panel scrolled instead


def test_the_wheel_over_an_unfocused_replace_hours_box_leaves_the_hours(qtbot, short_window):
    win = short_window
    hours = win.settings_box.replace_hours
    assert hours.value() == 24  # the gerbil demo replaces its deficit over 24 h
    bar = input_panel(win).verticalScrollBar()
    bar.setValue(bar.maximum())
    wheel(hours, UP)
    qtbot.wait(50)
    assert hours.value() == 24
    assert win.session.plan.request.replace_hours == 24
    assert bar.value() < bar.maximum()  # scrolled up instead


def test_a_focused_input_still_answers_the_wheel(qtbot, short_window):
    win = short_window
    hours, fluid = win.settings_box.replace_hours, win.settings_box.fluid
    hours.setFocus(Qt.FocusReason.MouseFocusReason)
    qtbot.waitUntil(hours.hasFocus)
    wheel(hours, UP)
    assert hours.value() == 25
    qtbot.waitUntil(lambda: win.session.plan.request.replace_hours == 25)

    fluid.setFocus(Qt.FocusReason.MouseFocusReason)
    qtbot.waitUntil(fluid.hasFocus)
    wheel(fluid, DOWN)
    assert fluid.currentData() != "lactated_ringers"
    qtbot.waitUntil(lambda: win.session.plan.request.fluid_id == fluid.currentData())


def test_the_wheel_does_not_focus_an_input(qtbot, short_window):
    """Qt's default for combo and spin boxes is to take focus from the wheel (WheelFocus),
    which would let the next notch change them: every input takes focus by click or Tab
    only."""
    win = short_window
    wheel(win.settings_box.boluses, UP)
    assert not win.settings_box.boluses.hasFocus()
    assert win.settings_box.boluses.value() == 0
    for widget in guarded_inputs(win):
        assert widget.focusPolicy() != Qt.FocusPolicy.WheelFocus, widget.accessibleName()


def guarded_inputs(win) -> list[QWidget]:  # noqa: ANN001 — MainWindow
    """Every combo box, spin box, date/time edit and slider in the window (the plots, the
    course and the species table built first), not scroll bars."""
    win.details.setCurrentWidget(win.timeline_holder)
    win.details.setCurrentWidget(win.course_holder)
    win.pages.setCurrentIndex(1)
    win.pages.setCurrentIndex(0)
    win.details.setCurrentIndex(0)
    assert win.course_view is not None and win.species_view is not None
    found = [
        w
        for kind in (QComboBox, QAbstractSpinBox, QAbstractSlider)
        for w in win.findChildren(kind)
        if not isinstance(w, QScrollBar) and w.isEnabled()
    ]
    assert len(found) >= 15  # the inputs panel alone has more than this
    return found


@pytest.mark.parametrize("demo_id", ["dehydrated_dog", "cold_bearded_dragon"])
def test_no_input_in_the_window_changes_from_the_wheel_unless_focused(qtbot, short_window, demo_id):
    win = short_window
    win.open_demo(demo_id)
    qtbot.waitUntil(lambda: win.session.plan is not None)
    inputs = guarded_inputs(win)
    win.details.setFocus()
    request = win.session.plan.request
    for widget in inputs:
        assert not widget.hasFocus()
        before = shown_value(widget)
        for delta in (UP, DOWN, DOWN):
            wheel(widget, delta)
        assert shown_value(widget) == before, widget.accessibleName() or type(widget).__name__
    qtbot.wait(50)
    assert win.session.plan.request == request
    assert DEMOS[demo_id].request.species_id == request.species_id


def test_the_chart_dialogs_boxes_are_guarded_too(qtbot, short_window, monkeypatch):
    """The weight-band chart is a dialog of its own, built when asked for."""
    from ui.printouts.chart_view import ChartDialog

    shown: list[ChartDialog] = []
    # a test stand-in for the modal loop (the dialog would wait for a click)
    monkeypatch.setattr(ChartDialog, "exec", lambda dialog: shown.append(dialog) or 0)
    short_window.show_chart()
    (dialog,) = shown
    dialog.show()
    qtbot.waitExposed(dialog)
    boxes = dialog.findChildren(QComboBox)
    assert len(boxes) >= 2  # species and drop factor
    for box in boxes:
        box.clearFocus()
        before = shown_value(box)
        wheel(box, DOWN)
        assert shown_value(box) == before, box.accessibleName()
        assert box.focusPolicy() != Qt.FocusPolicy.WheelFocus
    dialog.close()
