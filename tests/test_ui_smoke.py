"""The window opens offscreen, carries the cautions, and renders to a non-blank picture."""

from __future__ import annotations

from ui.platform_check import missing_packages


def test_main_window_shows_cautions(qtbot, tmp_path):
    from PySide6.QtWidgets import QLabel

    from ui.main_window import MainWindow
    from vetfluid.cautions import CAUTIONS

    window = MainWindow()
    qtbot.addWidget(window)
    window.show()
    assert window.windowTitle().startswith("vetfluid")
    text = window.findChild(QLabel, "cautions").text()
    for caution in CAUTIONS:
        assert caution in text
    picture = window.grab().toImage()
    path = tmp_path / "main_window.png"
    assert picture.save(str(path))
    colours = {picture.pixel(x, y) for x in range(0, picture.width(), 7)
               for y in range(0, picture.height(), 7)}  # fmt: skip
    assert len(colours) > 2, "rendered window is blank"


def test_offscreen_platform_has_its_libraries():
    assert missing_packages("offscreen") == []
