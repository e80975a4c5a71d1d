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

pyqtgraph's package imports every item and widget it has: images, regions of interest,
colour bars, tree and table widgets, a remote-process view, and PySide6's OpenGL modules
for a viewport the window never turns on, about 10 MiB of the window's memory. While it
loads, the parts named in ``_UNUSED_PARTS`` are empty modules, and PySide6's two OpenGL
modules are stand-ins (a ``QOpenGLWidget`` class no widget is an instance of, which is
all pyqtgraph asks of them unless OpenGL is switched on). Afterwards:

* the empty parts are gone from pyqtgraph, and each part is imported for real the first
  time it or one of its names is asked for (``pyqtgraph.ImageItem``, ``pyqtgraph.imageview``,
  ``from pyqtgraph.graphicsItems import ROI``);
* pyqtgraph's names for the OpenGL widget class stand for the real one: a class built on
  them, or a widget made from them, is PySide6's own; they recognise real OpenGL widgets
  once PySide6 has loaded them (:class:`_RealClassOnUse`);
* the first view that turns OpenGL on swaps the stand-ins, wherever pyqtgraph holds
  them, for PySide6's real modules, and imports pyqtgraph's OpenGL helpers again on top
  of them (:func:`_opengl_when_switched_on`).

Should a pyqtgraph release need one of those parts to load, or keep one anywhere but in
its package, pyqtgraph is loaded whole instead: more memory, nothing missing
(``tests/test_pyqtgraph_loader.py`` checks that the window's pyqtgraph is the trimmed one,
and that the trimmed parts and OpenGL work when asked for).

Import ``pg`` from here, never ``pyqtgraph`` itself, so this runs first.
"""

from __future__ import annotations

import ast
import functools
import importlib
import importlib.abc
import importlib.machinery
import importlib.util
import sys
import types
from pathlib import Path

from PySide6 import QtCore, QtGui, QtWidgets

_MIRRORED = {"QtCore": QtCore, "QtGui": QtGui, "QtWidgets": QtWidgets}
# Bindings pyqtgraph imports if it can but the window never uses (SVG export, test helpers);
# it records them as missing and carries on. Left alone when something loaded them already.
_NOT_NEEDED = ("PySide6.QtSvg", "PySide6.QtTest")
# What pyqtgraph's package imports that no vetfluid plot uses (the window uses plots, axes,
# legends, lines and its layout widget; ``ui/`` names every ``pg.`` it takes).
_UNUSED_PARTS = tuple(
    f"pyqtgraph.{part}"
    for part in (
        "imageview",
        *(
            f"graphicsItems.{item}"
            for item in (
                "ArrowItem", "BoxplotItem", "ColorBarItem", "CurvePoint", "DateAxisItem",
                "ErrorBarItem", "FillBetweenItem", "GradientEditorItem", "GradientLegend",
                "GraphItem", "GridItem", "HistogramLUTItem", "ImageItem", "IsocurveItem",
                "LinearRegionItem", "PColorMeshItem", "ROI", "ScaleBar", "TargetItem",
                "VTickGroup",
            )
        ),
        *(
            f"widgets.{widget}"
            for widget in (
                "BusyCursor", "CheckTable", "ColorButton", "ColorMapWidget", "ComboBox",
                "DataFilterWidget", "DataTreeWidget", "DiffTreeWidget", "FeedbackButton",
                "GradientWidget", "HistogramLUTWidget", "JoystickButton", "LayoutWidget",
                "ProgressDialog", "RawImageWidget", "RemoteGraphicsView",
                "ScatterPlotWidget", "SpinBox", "TableWidget", "TreeWidget", "ValueLabel",
                "VerticalLabel",
            )
        ),
    )
)  # fmt: skip
_OPENGL = ("PySide6.QtOpenGL", "PySide6.QtOpenGLWidgets")
# Everything ``ui/`` takes from ``pg`` (tests/test_pyqtgraph_loader.py keeps this complete)
# and what :func:`qt_rectangles` changes: a trimmed pyqtgraph lacking any of it is not used.
WINDOW_USES = (
    "AxisItem", "GraphicsLayout", "GraphicsLayoutWidget", "GraphicsObject", "GraphicsWidget",
    "InfiniteLine", "ItemSample", "LegendItem", "PlotItem", "ViewBox", "mkBrush", "mkPen",
    "setConfigOptions",
)  # fmt: skip


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


class _Placeholder:
    """What a trimmed part gives a name imported from it while pyqtgraph loads; it must end
    up only in pyqtgraph's own namespace, where it is removed (:func:`_let_go_of_parts`)."""

    def __init__(self, part: str, name: str) -> None:
        self.part, self.name = part, name

    def __repr__(self) -> str:
        return f"<{self.name} of the trimmed {self.part}>"


class _EmptyParts(importlib.abc.MetaPathFinder, importlib.abc.Loader):
    """Imports each of ``names`` as an empty package: ``from part import *`` takes nothing,
    ``from part import Name`` takes a :class:`_Placeholder`, anything below it fails."""

    def __init__(self, names: tuple[str, ...]) -> None:
        self.names = names
        self.made: list[str] = []

    def find_spec(self, name: str, path: object, target: object = None):  # noqa: ANN201
        if name in self.names:
            return importlib.machinery.ModuleSpec(name, self, is_package=True)
        return None

    def create_module(self, spec: importlib.machinery.ModuleSpec) -> None:
        return None  # the import system's default: a plain, empty module

    def exec_module(self, module: types.ModuleType) -> None:
        part = module.__name__

        def placeholder(name: str) -> _Placeholder:
            if name.startswith("_"):  # the import system's own questions get no answer
                raise AttributeError(name)
            return _Placeholder(part, name)

        module.__all__ = []
        module.__getattr__ = placeholder
        self.made.append(part)


def _opengl_stand_ins() -> dict[str, types.ModuleType]:
    """PySide6's OpenGL modules as pyqtgraph sees them with OpenGL off: one widget class,
    never instantiated, that pyqtgraph subclasses and tests drawing widgets against. Any
    other name is the real module's, imported when first asked for."""
    stand_ins = {}
    for name in _OPENGL:
        stand_in = types.ModuleType(name, "stands in for PySide6's own until OpenGL is on")
        stand_in.__getattr__ = functools.partial(_real_attribute, name)
        stand_ins[name] = stand_in
    stand_ins[_OPENGL[1]].QOpenGLWidget = type("QOpenGLWidget", (QtWidgets.QWidget,), {})
    return stand_ins


class _RealClassOnUse:
    """Stands for a PySide6 class in pyqtgraph's namespaces once pyqtgraph has loaded.
    Nothing is an instance of it until PySide6 has loaded that class's module, so the
    checks pyqtgraph makes as it paints cost nothing. Subclassing it, calling it or asking
    it for an attribute imports the real class and uses that."""

    def __init__(self, module: str, name: str) -> None:
        self._module, self._name = module, name

    def _real(self) -> type:
        return getattr(importlib.import_module(self._module), self._name)

    def _loaded(self) -> type | None:
        module = sys.modules.get(self._module)
        return getattr(module, self._name) if module is not None else None

    def __instancecheck__(self, instance: object) -> bool:
        real = self._loaded()
        return real is not None and isinstance(instance, real)

    def __subclasscheck__(self, subclass: type) -> bool:
        real = self._loaded()
        return real is not None and issubclass(subclass, real)

    def __mro_entries__(self, bases: tuple) -> tuple[type]:
        return (self._real(),)

    def __call__(self, *args: object, **kwargs: object) -> object:
        return self._real()(*args, **kwargs)

    def __getattr__(self, name: str) -> object:
        if name.startswith("__"):
            raise AttributeError(name)
        return getattr(self._real(), name)

    def __repr__(self) -> str:
        return f"<{self._module}.{self._name}, imported on first use>"


def _real_attribute(module: str, name: str) -> object:
    if name.startswith("__"):  # the import system's own questions get no answer
        raise AttributeError(name)
    return getattr(importlib.import_module(module), name)


def _import_trimmed() -> types.ModuleType:
    """pyqtgraph without ``_UNUSED_PARTS`` and with OpenGL stand-ins; afterwards the real
    modules are importable again and pyqtgraph loads each part on first use
    (:func:`_load_on_first_use`). On failure nothing of pyqtgraph stays loaded."""
    parts = _EmptyParts(_UNUSED_PARTS)
    stand_ins = {n: m for n, m in _opengl_stand_ins().items() if n not in sys.modules}
    sys.modules.update(stand_ins)
    sys.meta_path.insert(0, parts)
    try:
        pyqtgraph = importlib.import_module("pyqtgraph")
        _let_go_of_parts(parts.made)
        lacking = [name for name in WINDOW_USES if not hasattr(pyqtgraph, name)]
        if lacking:
            raise ImportError(f"trimmed pyqtgraph lacks {', '.join(lacking)}")
        pyqtgraph.__getattr__ = _load_on_first_use
        for package in {part.rpartition(".")[0] for part in parts.made} - {"pyqtgraph"}:
            sys.modules[package].__getattr__ = _parts_on_first_use(package)
        if _OPENGL[1] in stand_ins:  # pyqtgraph's names for the widget class: the real one
            widgets = stand_ins[_OPENGL[1]]
            real_on_use = _RealClassOnUse(_OPENGL[1], "QOpenGLWidget")
            _rebind({id(widgets.QOpenGLWidget): real_on_use})
            widgets.QOpenGLWidget = real_on_use
        _opengl_when_switched_on(pyqtgraph.GraphicsView, stand_ins)
        return pyqtgraph
    except Exception:
        for name in [n for n in sys.modules if n == "pyqtgraph" or n.startswith("pyqtgraph.")]:
            if not name.startswith("pyqtgraph.Qt.Qt"):  # our mirrors, used again
                del sys.modules[name]
        raise
    finally:
        sys.meta_path.remove(parts)
        for name in parts.made:
            sys.modules.pop(name, None)  # a later import loads the real one
        for name, stand_in in stand_ins.items():
            if sys.modules.get(name) is stand_in:
                del sys.modules[name]


def _pyqtgraph_modules() -> list[types.ModuleType]:
    return [m for n, m in sys.modules.items() if n.partition(".")[0] == "pyqtgraph" and m]


def _let_go_of_parts(made: list[str]) -> None:
    """Take the empty parts out of pyqtgraph: each is deleted from its package, where the
    import system bound it, and a name taken from one is deleted from pyqtgraph's own
    namespace, so that the next use of either imports the real part. Raises ImportError
    when any other pyqtgraph module holds an empty part or one of its names."""
    empty = {id(sys.modules[name]): name for name in made}
    for module in _pyqtgraph_modules():
        for attribute, value in list(vars(module).items()):
            part = empty.get(id(value))
            if part == f"{module.__name__}.{attribute}" or (
                isinstance(value, _Placeholder) and module.__name__ == "pyqtgraph"
            ):
                delattr(module, attribute)
            elif part is not None or isinstance(value, _Placeholder):
                raise ImportError(f"{module.__name__}.{attribute} is taken from a trimmed part")


def _parts_on_first_use(package: str):  # noqa: ANN202 — a module's __getattr__
    """A package's ``__getattr__``: a trimmed part of it is imported when first asked for,
    as ``pyqtgraph.graphicsItems.ROI`` is in the whole pyqtgraph."""

    def __getattr__(name: str) -> types.ModuleType:  # noqa: N807 (the module hook's name)
        if f"{package}.{name}" not in _UNUSED_PARTS:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        return importlib.import_module(f"{package}.{name}")  # also binds it in the package

    return __getattr__


def _load_on_first_use(name: str) -> object:
    """Any name of a trimmed part (``ImageItem``, ``ROI`` …), or a trimmed part itself
    (``imageview``): the part is imported for real the first time it or one of its names
    is asked for, and the name kept in pyqtgraph."""
    if f"pyqtgraph.{name}" in _UNUSED_PARTS:
        return importlib.import_module(f"pyqtgraph.{name}")
    part = _trimmed_names().get(name)
    if part is None:  # not ours: ``from pyqtgraph import submodule`` goes on to import it
        raise AttributeError(f"module 'pyqtgraph' has no attribute {name!r}")
    value = getattr(importlib.import_module(part), name)
    setattr(sys.modules["pyqtgraph"], name, value)
    return value


@functools.cache
def _trimmed_names() -> dict[str, str]:
    """Each name a trimmed part gives pyqtgraph, and the part, read from the parts' source
    (importing them to find out would import them all)."""
    names = {}
    for part in _UNUSED_PARTS:
        spec = importlib.util.find_spec(part)
        if spec is None or spec.origin is None:
            continue
        tree = ast.parse(Path(spec.origin).read_bytes())
        for name in _exported(tree):
            names.setdefault(name, part)
    return names


def _exported(tree: ast.Module) -> list[str]:
    """What ``from module import *`` takes: ``__all__`` when the module lists it, else its
    public top-level names."""
    defined = []
    for node in tree.body:
        if isinstance(node, ast.Assign) and any(
            isinstance(t, ast.Name) and t.id == "__all__" for t in node.targets
        ):
            return [str(v) for v in ast.literal_eval(node.value)]
        if isinstance(node, ast.ClassDef | ast.FunctionDef):
            defined.append(node.name)
        elif isinstance(node, ast.Assign):
            defined += [t.id for t in node.targets if isinstance(t, ast.Name)]
        elif isinstance(node, ast.Import | ast.ImportFrom):
            defined += [(a.asname or a.name).split(".")[0] for a in node.names]
    return [name for name in defined if not name.startswith("_") and name != "*"]


def _opengl_when_switched_on(view: type, stand_ins: dict[str, types.ModuleType]) -> None:
    """The first ``view.useOpenGL(True)`` (pyqtgraph's one switch, which its
    ``useOpenGL`` option also goes through) first puts PySide6's real OpenGL modules and
    widget class wherever pyqtgraph holds a stand-in, and imports pyqtgraph's OpenGL
    helpers again, so that its OpenGL viewport is built on the real widget."""
    if not stand_ins:
        return
    switch = view.useOpenGL

    @functools.wraps(switch)
    def use_opengl(self: object, b: bool = True) -> None:  # noqa: FBT001, FBT002 (pyqtgraph's)
        if b and view.useOpenGL is use_opengl:
            view.useOpenGL = switch
            real = {name: importlib.import_module(name) for name in stand_ins}
            swaps = {id(stand_ins[name]): module for name, module in real.items()}
            if _OPENGL[1] in stand_ins:
                swaps[id(stand_ins[_OPENGL[1]].QOpenGLWidget)] = real[_OPENGL[1]].QOpenGLWidget
            _rebind(swaps)
            helpers = sys.modules.pop("pyqtgraph.Qt.OpenGLHelpers", None)
            if helpers is not None:
                _rebind({id(helpers): importlib.import_module("pyqtgraph.Qt.OpenGLHelpers")})
        return switch(self, b)

    view.useOpenGL = use_opengl


def _rebind(swaps: dict[int, object]) -> None:
    """Every name in pyqtgraph's modules bound to an object whose id is in ``swaps`` is
    bound to its replacement instead."""
    for module in _pyqtgraph_modules():
        for attribute, value in list(vars(module).items()):
            if id(value) in swaps:
                setattr(module, attribute, swaps[id(value)])


def load_pyqtgraph() -> types.ModuleType:
    """Import pyqtgraph with lazily resolved Qt mirrors, without the parts the window never
    uses (see the module docstring)."""
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
        try:
            return _import_trimmed()
        except Exception:  # a release that needs a part: whole, or its own error again
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
