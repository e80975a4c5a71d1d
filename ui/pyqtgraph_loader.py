"""pyqtgraph, loaded without making PySide6 build every Qt class.

pyqtgraph keeps its own copies of QtCore, QtGui and QtWidgets (``pyqtgraph.Qt.QtCore`` …)
and fills them by copying every name PySide6 lists. PySide6 creates its classes lazily,
on first use; that copy makes it create all of them, with their enums, about 5 MiB more
than the window and the plots use. Here pyqtgraph is given those three modules ready
made: each looks a name up in PySide6 the first time pyqtgraph asks for it, so every
name resolves to the very same PySide6 object as before, and PySide6's name lists are
hidden while pyqtgraph loads, so there is nothing to copy.

pyqtgraph's layout widgets (plots, titles, legends, the layout) re-implement Qt's
``boundingRect`` and ``shape`` in Python, to cache what is simply the widget's own
rectangle. Qt asks for them a hundred times a redraw, each time a call into Python; here
those widgets use Qt's own, the same rectangle worked out in C++ (:func:`qt_rectangles`).

Import ``pg`` from here, never ``pyqtgraph`` itself, so this runs first.
"""

from __future__ import annotations

import importlib
import sys
import types

from PySide6 import QtCore, QtGui, QtWidgets

_MIRRORED = {"QtCore": QtCore, "QtGui": QtGui, "QtWidgets": QtWidgets}
# Bindings pyqtgraph imports if it can but the window never uses (SVG export, test helpers);
# it records them as missing and carries on. Left alone when something loaded them already.
_NOT_NEEDED = ("PySide6.QtSvg", "PySide6.QtTest")


def _lazy_mirror(name: str, source: types.ModuleType) -> types.ModuleType:
    """A module that takes each attribute from ``source`` on first use (PEP 562)."""
    mirror = types.ModuleType(name, f"PySide6's {source.__name__}, resolved name by name")

    def __getattr__(attribute: str) -> object:  # noqa: N807 (the module hook's name)
        value = getattr(source, attribute)  # a missing name raises AttributeError, as before
        setattr(mirror, attribute, value)  # resolved once; pyqtgraph may then add its own
        return value

    mirror.__getattr__ = __getattr__
    return mirror


def _nothing_to_list() -> list[str]:
    return []


def load_pyqtgraph() -> types.ModuleType:
    """Import pyqtgraph with lazily resolved Qt mirrors (see the module docstring)."""
    if "pyqtgraph" in sys.modules:
        return sys.modules["pyqtgraph"]
    listers = {}
    skipped = [name for name in _NOT_NEEDED if name not in sys.modules]
    for name in skipped:
        sys.modules[name] = None  # an import of it raises ImportError (the import system's rule)
    for name, source in _MIRRORED.items():
        sys.modules[f"pyqtgraph.Qt.{name}"] = _lazy_mirror(f"pyqtgraph.Qt.{name}", source)
        listers[name] = source.__dict__.get("__dir__")
        source.__dir__ = _nothing_to_list
    try:
        return importlib.import_module("pyqtgraph")
    finally:
        for name in skipped:
            if sys.modules.get(name, False) is None:
                del sys.modules[name]  # importable again for anyone who needs it later
        for name, source in _MIRRORED.items():
            if listers[name] is None:
                del source.__dir__
            else:
                source.__dir__ = listers[name]


def qt_rectangles(pyqtgraph: types.ModuleType) -> None:
    """Give pyqtgraph's layout widgets Qt's own bounding rectangle and shape: the widget's
    rectangle, as pyqtgraph's Python versions return it (``tests/test_pyqtgraph_loader.py``
    compares the two)."""
    widget = QtWidgets.QGraphicsWidget
    pyqtgraph.GraphicsWidget.boundingRect = widget.boundingRect
    pyqtgraph.GraphicsWidget.shape = widget.shape
    pyqtgraph.GraphicsLayout.boundingRect = widget.boundingRect
    pyqtgraph.LegendItem.boundingRect = widget.boundingRect
    # The view box's rectangle runs half a pixel past its widget (pyqtgraph's own choice)
    # and it clips the curves to its shape: keep the shape on that rectangle.
    pyqtgraph.ViewBox.shape = _rectangle_shape


def _rectangle_shape(item: QtWidgets.QGraphicsItem) -> QtGui.QPainterPath:
    path = QtGui.QPainterPath()
    path.addRect(item.boundingRect())
    return path


pg = load_pyqtgraph()
qt_rectangles(pg)
