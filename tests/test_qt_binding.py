"""Regression guard for the Qt binding itself.

PySide6 6.12.0 loses one reference to ``True`` on every ``Signal.emit()`` made from
Python; after a few thousand emits the interpreter aborts ("bool_dealloc"). pyqtgraph
emits on every repaint and mouse move, so the window would die within minutes.
pyproject.toml pins the binding below 6.12; this test fails if a broken one returns.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap


def test_signal_emit_keeps_the_refcount_of_true():
    script = textwrap.dedent(
        """
        import sys
        from PySide6.QtCore import QObject, Signal

        class Source(QObject):
            fired = Signal()

        source = Source()
        before = sys.getrefcount(True)
        for _ in range(200):
            source.fired.emit()
        print(before - sys.getrefcount(True))
        """
    )
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr[-400:]
    assert abs(int(out.stdout.strip())) < 20
