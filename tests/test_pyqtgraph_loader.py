"""pyqtgraph loaded through ui/pyqtgraph_loader.py sees exactly PySide6's Qt, built lazily."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

# A fresh process: in this one another test may already have imported pyqtgraph.
PROBE = textwrap.dedent(
    """
    import json, sys
    from PySide6 import QtCore, QtGui, QtWidgets
    from PySide6.QtWidgets import QApplication
    app = QApplication([])
    from ui.pyqtgraph_loader import pg
    plot = pg.PlotWidget()
    plot.plot([0, 1, 2], [1, 3, 2])
    plot.grab()
    names = ("QGraphicsView", "QGraphicsObject", "QApplication", "QSizePolicy")
    try:
        pg.QtWidgets.NoSuchQtClass
        missing = "resolved"
    except AttributeError:
        missing = "AttributeError"
    print(json.dumps({
        "same_widgets": all(getattr(pg.QtWidgets, n) is getattr(QtWidgets, n) for n in names),
        "same_core": pg.QtCore.Signal is QtCore.Signal and pg.QtCore.Qt is QtCore.Qt,
        "same_gui": pg.QtGui.QPainterPath is QtGui.QPainterPath,
        "pyqtgraph_additions": pg.QtGui.QFileSystemModel is QtWidgets.QFileSystemModel,
        "missing_name": missing,
        "dir_restored": len(dir(QtWidgets)) > 150 and "QGraphicsView" in dir(QtWidgets),
        "widgets_built": len(QtWidgets.__dict__),
        "widgets_listed": len(dir(QtWidgets)),
        "unused_bindings_loaded": [m for m in ("PySide6.QtSvg", "PySide6.QtTest")
                                   if m in sys.modules],
        "svg_importable_later": __import__("importlib").import_module("PySide6.QtSvg") is not None,
    }))
    """
)


def run_probe() -> dict:
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen")
    out = subprocess.run(
        [sys.executable, "-c", PROBE], capture_output=True, text=True, check=True, cwd=ROOT, env=env
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_pyqtgraph_mirrors_resolve_to_pyside6_and_stay_lazy():
    probe = run_probe()
    assert probe["same_widgets"] and probe["same_core"] and probe["same_gui"]
    assert probe["pyqtgraph_additions"], "pyqtgraph's own shims still land in its mirrors"
    assert probe["missing_name"] == "AttributeError"
    assert probe["dir_restored"], "PySide6 lists its names again once pyqtgraph has loaded"
    # a plot drawn, menus and all, and still a quarter of QtWidgets never built (pyqtgraph's
    # own copy of the module builds every class: built == listed)
    assert probe["widgets_built"] < 0.75 * probe["widgets_listed"], probe
    # SVG export and test helpers are left unloaded, yet anyone may import them afterwards
    assert probe["unused_bindings_loaded"] == [] and probe["svg_importable_later"]


def test_layout_widgets_report_the_rectangle_pyqtgraph_would(qtbot):
    """Qt's own boundingRect and shape stand in for pyqtgraph's Python ones: for every
    plot, title, legend, view box and the layout itself, the same rectangle as pyqtgraph's
    formula (its geometry mapped into the widget), in a laid-out window and after a resize."""
    from PySide6.QtCore import QRectF

    from ui.pyqtgraph_loader import pg
    from ui.timeline_view import TimelineView

    view = TimelineView()
    qtbot.addWidget(view)
    view.resize(900, 650)
    view.show()
    qtbot.waitExposed(view)
    kinds = (pg.PlotItem, pg.LabelItem, pg.LegendItem, pg.ViewBox, pg.GraphicsLayout)
    widgets = [item for item in view.graphics.scene().items() if isinstance(item, kinds)]
    assert {type(w) for w in widgets} == set(kinds)

    def pyqtgraphs_rectangle(widget) -> QRectF:
        return widget.mapRectFromParent(widget.geometry()).normalized()

    for size in ((900, 650), (700, 900)):
        view.resize(*size)
        qtbot.wait(20)
        for widget in widgets:
            expected = pyqtgraphs_rectangle(widget)
            if isinstance(widget, pg.ViewBox):
                expected = expected.adjusted(0, 0, 0.5, 0.5)  # the view box's own margin
            assert widget.boundingRect() == expected, type(widget).__name__
            assert widget.shape().boundingRect() == widget.boundingRect(), type(widget).__name__
