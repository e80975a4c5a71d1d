"""The window's cautions and the display-library check."""

from __future__ import annotations

from html import escape

from ui.common.platform_check import display_problem, missing_packages


def test_cautions_banner_and_help_carry_every_caution(qtbot):
    from ui.common.help_dialog import help_html
    from ui.main_window import MainWindow
    from vetfluid.common.cautions import CAUTIONS, SHORT_CAUTION

    window = MainWindow()
    qtbot.addWidget(window)
    assert SHORT_CAUTION in window.cautions.text()  # on the very first paint
    window.build_planner()
    html = help_html(window.session.table)
    for caution in CAUTIONS:
        assert escape(caution) in html


def test_offscreen_platform_has_its_libraries():
    assert missing_packages("offscreen") == []


def test_no_display_is_a_message_not_an_abort(monkeypatch):
    monkeypatch.delenv("QT_QPA_PLATFORM", raising=False)
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    assert "no display found" in display_problem()


def test_missing_xcb_libraries_name_their_packages(monkeypatch):
    import ctypes

    real = ctypes.CDLL

    def fake(name, *args, **kwargs):
        if name == "libxcb-cursor.so.0":
            raise OSError(name)
        return real(name, *args, **kwargs)

    monkeypatch.setattr(ctypes, "CDLL", fake)
    monkeypatch.setenv("QT_QPA_PLATFORM", "xcb")
    assert "libxcb-cursor0" in missing_packages("xcb")
    assert "apt-get install" in display_problem() and "libxcb-cursor0" in display_problem()
    assert "libxcb-cursor0" not in missing_packages("offscreen")


def test_unexpected_errors_are_logged_and_shown(qtbot, monkeypatch, vetfluid_home):
    from PySide6.QtWidgets import QMessageBox

    from ui.common import errors

    shown = []
    monkeypatch.setattr(QMessageBox, "critical", lambda *args: shown.append(args[2]))
    try:
        raise RuntimeError("boom")
    except RuntimeError as exc:
        errors.report_unexpected(type(exc), exc, exc.__traceback__)
    assert "boom" in shown[0] and "check it before use" in shown[0]
    logged = (vetfluid_home / "vetfluid.log").read_text(encoding="utf-8")
    assert "RuntimeError: boom" in logged and "Traceback" in logged


def test_a_window_closed_before_its_planner_is_built_builds_none(qtbot, vetfluid_home):
    """Closed at once (the planner waits for the first paint's next turn): no planner is
    built afterwards, so no records file is left open behind a closed window."""
    from ui.main_window import MainWindow

    window = MainWindow()
    qtbot.addWidget(window)
    window.show()
    assert window.close() and window.session is None
    qtbot.wait(50)  # the turn the planner would have been built on
    window.build_planner()  # and asked for directly
    assert window.session is None and not hasattr(window, "records")
