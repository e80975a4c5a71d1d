"""vetfluid uses its libraries as published: nothing in the project replaces a method,
installs an import hook, or swaps a cache inside pyqtgraph, PySide6, numpy or Python.

A window is opened in a fresh process with every view built (planner, timeline, course,
species table), and then the libraries are inspected: every function on a pyqtgraph class
comes from pyqtgraph's own source, the import machinery holds only finders that Python
and the installed packages put there, and ``linecache`` keeps its own plain dict."""

from __future__ import annotations

import ast
import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

_INSPECT_AFTER_EVERY_VIEW = textwrap.dedent(
    """
    import inspect, json, linecache, sys
    from PySide6.QtWidgets import QApplication
    app = QApplication([])
    from ui.main_window import MainWindow
    window = MainWindow()
    window.resize(1400, 900)
    window.show()
    while window.session is None:
        app.processEvents()
    for index in range(window.details.count()):
        window.details.setCurrentIndex(index)
        app.processEvents()
    for index in range(window.pages.count()):
        window.pages.setCurrentIndex(index)
        app.processEvents()
    import pyqtgraph

    foreign = []
    for name, cls in vars(pyqtgraph).items():
        if not inspect.isclass(cls) or not cls.__module__.startswith("pyqtgraph"):
            continue
        for attribute, value in vars(cls).items():
            function = getattr(value, "__func__", value)
            module = getattr(function, "__module__", None)
            if inspect.isfunction(function) and not (module or "").startswith("pyqtgraph"):
                foreign.append(f"{name}.{attribute} from {module}")
    finders = [type(f).__module__ for f in sys.meta_path]
    print(json.dumps({
        "timeline_built": window.timeline_view is not None,
        "course_built": window.course_view is not None,
        "foreign": foreign,
        "finders": finders,
        "linecache": type(linecache.cache).__name__,
        "stand_ins": sorted(n for n, m in sys.modules.items()
                            if n.startswith(("pyqtgraph", "PySide6")) and m is None),
    }))
    """
)


def test_the_window_leaves_pyqtgraph_and_the_import_system_as_published():
    out = subprocess.run(
        [sys.executable, "-c", _INSPECT_AFTER_EVERY_VIEW],
        capture_output=True, text=True, cwd=ROOT, timeout=120,
        env={**os.environ, "QT_QPA_PLATFORM": "offscreen"},
    )  # fmt: skip
    assert out.returncode == 0, out.stderr[-2000:]
    seen = json.loads(out.stdout.strip().splitlines()[-1])
    assert seen["timeline_built"] and seen["course_built"], "every plot view was built"
    assert seen["foreign"] == [], "a pyqtgraph method was replaced"
    ours = [f for f in seen["finders"] if f.split(".")[0] in ("ui", "vetfluid")]
    assert ours == [], "vetfluid installed an import hook"
    assert seen["linecache"] == "dict"
    assert seen["stand_ins"] == [], "a module was hidden from the import system"


# Settings a library documents for an application to set are not patches.
DOCUMENTED_SETTINGS = {"sys.excepthook"}  # Python: "the handler may be customised" (sys docs)


def _assignments_into_other_packages(path: Path) -> list[str]:
    """``module.attribute = …`` or ``Class.method = …`` where the name was imported from a
    package outside the project: the shape every patch of a library takes."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    imported = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                imported[alias.asname or alias.name.split(".")[0]] = alias.name
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            for alias in node.names:
                imported[alias.asname or alias.name] = node.module
    found = []
    for node in ast.walk(tree):
        targets = node.targets if isinstance(node, ast.Assign) else []
        if isinstance(node, ast.AugAssign | ast.AnnAssign):
            targets = [node.target]
        for target in targets:
            root = target
            while isinstance(root, ast.Attribute):
                root = root.value
            if (
                isinstance(target, ast.Attribute)
                and isinstance(root, ast.Name)
                and root.id in imported
                and imported[root.id].split(".")[0] not in ("ui", "vetfluid")
                and ast.unparse(target) not in DOCUMENTED_SETTINGS
            ):
                found.append(f"{path.name}:{node.lineno} {ast.unparse(target)}")
    return found


def test_no_project_module_assigns_into_a_library():
    """A static check over every module of the core and the window (tests may patch what
    they test; the product may not)."""
    modules = [*ROOT.joinpath("vetfluid").rglob("*.py"), *ROOT.joinpath("ui").rglob("*.py")]
    found = [hit for path in modules for hit in _assignments_into_other_packages(path)]
    assert found == []


def test_the_static_check_sees_a_patch(tmp_path):
    """The check above is not blind: it finds the two shapes a patch takes."""
    probe = tmp_path / "probe.py"
    probe.write_text(
        "import linecache\nimport pyqtgraph as pg\nlinecache.cache = {}\npg.ViewBox.shape = None\n",
        encoding="utf-8",
    )
    found = _assignments_into_other_packages(probe)
    assert [hit.split(" ", 1)[1] for hit in found] == ["linecache.cache", "pg.ViewBox.shape"]
