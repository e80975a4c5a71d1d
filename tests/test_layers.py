"""The layer rule: the core never imports Qt or the front end (DEVELOPERS.md, "The map")."""

from __future__ import annotations

import subprocess
import sys
import textwrap
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_core_imports_no_qt_module():
    script = textwrap.dedent(
        """
        import importlib, pkgutil, sys
        import vetfluid
        for m in pkgutil.walk_packages(vetfluid.__path__, "vetfluid."):
            importlib.import_module(m.name)
        bad = sorted(n for n in sys.modules
                     if n.split(".")[0] in ("PySide6", "shiboken6", "pyqtgraph", "ui"))
        print(",".join(bad))
        """
    )
    out = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, check=True, cwd=ROOT
    )
    assert out.stdout.strip() == "", f"core pulled in: {out.stdout}"


def test_cli_plan_imports_neither_qt_nor_pandas():
    """The CLI must start fast: no Qt, and pandas only where a command needs it."""
    script = textwrap.dedent(
        """
        import sys, io, contextlib
        from vetfluid import cli
        with contextlib.redirect_stdout(io.StringIO()):
            cli.main(["plan", "--species", "dog", "--weight", "20 kg", "--json"])
        print(",".join(sorted(n for n in sys.modules
                               if n.split(".")[0] in ("PySide6", "pyqtgraph", "pandas", "ui"))))
        """
    )
    out = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, check=True, cwd=ROOT
    )
    assert out.stdout.strip() == ""


def test_import_linter_contract_holds():
    lint = Path(sys.executable).with_name("lint-imports")
    out = subprocess.run([str(lint)], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, out.stdout + out.stderr


def test_ruff_finds_nothing():
    ruff = Path(sys.executable).with_name("ruff")
    out = subprocess.run([str(ruff), "check", "."], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, out.stdout
