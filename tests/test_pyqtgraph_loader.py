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

# The trimmed pyqtgraph: what the window's plots need is there, what they never use is not.
TRIMMED_PROBE = textwrap.dedent(
    """
    import importlib, json, re, sys
    from pathlib import Path
    from PySide6.QtWidgets import QApplication
    app = QApplication([])
    if sys.argv[1:] == ["plots-need-roi"]:  # a pyqtgraph whose plots need a trimmed part
        import importlib.abc, importlib.util

        class PlotsNeedRoi(importlib.abc.MetaPathFinder):
            def find_spec(self, name, path, target=None):
                if name != "pyqtgraph.graphicsItems.PlotItem.PlotItem":
                    return None
                sys.meta_path.remove(self)
                spec = importlib.util.find_spec(name)
                sys.meta_path.insert(0, self)
                load = spec.loader.exec_module
                def exec_module(module):  # as if PlotItem.py began "from ..ROI import ROI"
                    from pyqtgraph.graphicsItems.ROI import ROI
                    module.ROI = ROI
                    load(module)
                spec.loader.exec_module = exec_module
                return spec

        sys.meta_path.insert(0, PlotsNeedRoi())
    import ui.pyqtgraph_loader as loader
    pg = loader.pg
    from ui.main_window import MainWindow

    def draw_both_plots():  # the window is gone before Qt shuts down, as in ui.app.main
        window = MainWindow()
        window.resize(1360, 860)
        window.build_planner()
        window.open_demo("dehydrated_dog")
        for tab in (window.timeline_holder, window.course_holder):
            window.details.setCurrentWidget(tab)  # built, then drawn: axes, curves, legends
            window.grab()
        drawn = window.timeline_view is not None and window.course_view is not None
        window.close()
        return drawn

    drawn = draw_both_plots()
    QApplication.sendPostedEvents(None, 0)  # its deferred deletions, as the event loop would
    used = set()
    for source in Path("ui").glob("*.py"):
        used |= set(re.findall(r"\\bpg\\.(\\w+)", source.read_text(encoding="utf-8")))
    loaded = [n for n in loader._UNUSED_PARTS if n in sys.modules]
    opengl_loaded = [n for n in loader._OPENGL if n in sys.modules]
    names_read = loader._trimmed_names.cache_info().currsize  # before the probing below
    image_item = "ImageItem" in vars(pg)
    opengl_real = all(
        hasattr(importlib.import_module(n), attr)
        for n, attr in (("PySide6.QtOpenGL", "QOpenGLBuffer"),
                        ("PySide6.QtOpenGLWidgets", "QOpenGLWidget"))
    )
    roi = importlib.import_module("pyqtgraph.graphicsItems.ROI")
    image = importlib.import_module("pyqtgraph.graphicsItems.ImageItem")
    real_on_first_use = [  # pg.X of a trimmed part: the real thing, imported when asked for
        pg.ImageItem is image.ImageItem,
        pg.RectROI is roi.RectROI,
        pg.RemoteGraphicsView.__module__ == "pyqtgraph.widgets.RemoteGraphicsView",
        pg.ImageView.__module__ == "pyqtgraph.imageview.ImageView",
        not hasattr(pg, "NoSuchItem"),
    ]
    # the trimmed parts reached any other way work too, and OpenGL once it is switched on
    import pyqtgraph.graphicsItems as items
    from pyqtgraph.graphicsItems import GradientEditorItem as gradients
    curve = pg.PlotCurveItem(x=[0, 1, 2], y=[0, 1, 0])
    table = pg.CheckTable(["a", "b"])
    table.updateRows(["r1"])  # builds a VerticalLabel, another trimmed part
    parts_whole = [
        pg.imageview.ImageView.__module__ == "pyqtgraph.imageview.ImageView",
        gradients.GradientEditorItem is pg.GradientEditorItem,
        items.LinearRegionItem.LinearRegionItem is pg.LinearRegionItem,
        type(pg.CurveArrow(curve)).__name__ == "CurveArrow",  # CurvePoint's own ArrowItem
        len(table.rowWidgets) == 1,
        not hasattr(items, "NoSuchPart"),
    ]
    from pyqtgraph.Qt import QtWidgets as pg_widgets

    class OnPyqtgraphsName(pg_widgets.QOpenGLWidget):
        built_as = "pyqtgraph.opengl builds its 3D view: on pyqtgraph's name for the class"

    gl = importlib.import_module("PySide6.QtOpenGL")
    gl_widgets = importlib.import_module("PySide6.QtOpenGLWidgets")
    opengl_names = [  # before OpenGL is switched on
        isinstance(OnPyqtgraphsName(), gl_widgets.QOpenGLWidget),
        isinstance(gl_widgets.QOpenGLWidget(), pg_widgets.QOpenGLWidget),
        isinstance(pg_widgets.QOpenGLWidget(), gl_widgets.QOpenGLWidget),
        not isinstance(pg.QtWidgets.QWidget(), pg_widgets.QOpenGLWidget),
    ]
    view = pg.GraphicsLayoutWidget()
    view.useOpenGL(True)
    opengl_on = [
        isinstance(view.viewport(), gl_widgets.QOpenGLWidget),
        pg.Qt.QtWidgets.QOpenGLWidget is gl_widgets.QOpenGLWidget,
        pg.Qt.QtOpenGLWidgets is gl_widgets,
        sys.modules["pyqtgraph.graphicsItems.PlotCurveItem"].QtOpenGL is gl,
    ]
    print(json.dumps({
        "drawn": drawn,
        "used": sorted(used),
        "missing": sorted(n for n in used if not hasattr(pg, n)),
        "window_uses": loader.WINDOW_USES,
        "parts_loaded": loaded,
        "opengl_loaded": opengl_loaded,
        "parts_whole": parts_whole,
        "opengl_on": opengl_on,
        "opengl_names": opengl_names,
        "names_read": names_read,
        "image_item": image_item,
        "opengl_real_later": opengl_real,
        "roi_real_later": hasattr(roi, "ROI"),
        "real_on_first_use": real_on_first_use,
    }))
    """
)


def run_probe(probe: str = PROBE, *args: str) -> dict:
    env = dict(os.environ, QT_QPA_PLATFORM="offscreen")
    out = subprocess.run(
        [sys.executable, "-c", probe, *args],
        capture_output=True, text=True, check=True, cwd=ROOT, env=env,
    )  # fmt: skip
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


def test_the_window_loads_pyqtgraph_without_the_parts_it_never_uses():
    probe = run_probe(TRIMMED_PROBE)
    # ui/ takes these from pg (a plot each for Timeline and Course was drawn with them)
    assert {"PlotItem", "AxisItem", "LegendItem", "InfiniteLine", "mkPen"} <= set(probe["used"])
    assert probe["drawn"] and probe["missing"] == []
    assert set(probe["used"]) <= set(probe["window_uses"]), "the loader checks all of them"
    # nothing of the trimmed parts was loaded or even looked up while the window worked
    assert probe["parts_loaded"] == [] and not probe["image_item"]
    assert probe["opengl_loaded"] == [] and probe["names_read"] == 0
    # afterwards the real modules import, and pg gives their names on first use
    assert probe["opengl_real_later"] and probe["roi_real_later"]
    assert all(probe["real_on_first_use"]), probe["real_on_first_use"]
    # every way of reaching a part gets the real one; OpenGL, switched on, is the real one
    assert all(probe["parts_whole"]), probe["parts_whole"]
    assert all(probe["opengl_on"]), probe["opengl_on"]
    assert all(probe["opengl_names"]), probe["opengl_names"]


def test_a_pyqtgraph_that_needs_a_trimmed_part_is_loaded_whole():
    """A pyqtgraph release whose plots import one of the trimmed parts: the loader falls
    back to the whole package, every part present, the plots drawn."""
    probe = run_probe(TRIMMED_PROBE, "plots-need-roi")
    assert probe["drawn"] and probe["missing"] == []
    assert probe["image_item"], "loaded whole: the image item is there from the start"
    assert probe["opengl_real_later"] and probe["roi_real_later"]
    assert all(probe["real_on_first_use"]), probe["real_on_first_use"]
    assert all(probe["parts_whole"]) and all(probe["opengl_on"]) and all(probe["opengl_names"])


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
