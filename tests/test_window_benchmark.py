"""Window speed (skipped in the ordinary run; `python3 dev.py bench` runs them).

* one edit → recompute → plots redrawn: target 8 ms median (half a frame);
* cold start to the first paint and peak memory against a bare QMainWindow:
  scripts/startup_benchmark.py, run here so the figures land in the benchmark report.
"""

from __future__ import annotations

import itertools
import sys
from pathlib import Path

import pytest
from PySide6.QtWidgets import QApplication

pytestmark = pytest.mark.benchmark
ROOT = Path(__file__).resolve().parents[1]


# the three patients the tour plans: a dog, a reptile and a rodent on divided boluses
@pytest.mark.parametrize("demo", ["dehydrated_dog", "cold_bearded_dragon", "small_gerbil"])
def test_edit_recompute_redraw(qtbot, benchmark, demo):
    from ui.main_window import MainWindow

    window = MainWindow()
    qtbot.addWidget(window)
    window.resize(1400, 900)
    window.show()
    qtbot.waitUntil(lambda: window.session is not None)
    window.open_demo(demo)
    window.details.setCurrentWidget(window.timeline_holder)
    QApplication.processEvents()
    # 24, 24.5, 25 and 23.5 kg for the 24 kg dog; the same steps in proportion for the others
    # (scripts/edit_instructions.py counts the instructions of the same edits)
    entered = window.session.inputs["weight_kg"]
    weights = itertools.cycle([entered * kg / 24.0 for kg in (24.0, 24.5, 25.0, 23.5)])

    def edit() -> None:
        window.session.update(weight_kg=next(weights))
        window.session.recompute()  # what the coalescing timer does on the next turn
        QApplication.processEvents()  # the views and the plots repaint

    # many rounds after a warm-up: the first redraws build pyqtgraph's caches
    benchmark.pedantic(edit, rounds=150, warmup_rounds=20)
    benchmark.extra_info["target_median_ms"] = 8
    assert window.session.plan is not None


def test_cold_start_and_memory_against_a_bare_window(benchmark):
    sys.path.insert(0, str(ROOT / "scripts"))
    from startup_benchmark import measure

    results = benchmark.pedantic(measure, args=(5,), rounds=1, iterations=1)
    benchmark.extra_info.update(results)
    # targets: first paint within 1.3× a bare window, peak memory within 2.5×
    assert results["start_ratio"] <= 1.3, results
    assert results["memory_ratio"] <= 2.5, results
    assert results["memory_ratio_with_plots"] <= 2.5, results  # the peak, plots open
    # With every view built (six course plots and the species table too) the peak is
    # reported, not held to 2.5×: PySide6's import hook reads the source of each module
    # imported after it and linecache keeps it (about 9 MiB with numpy and pyqtgraph);
    # the only way under was to empty that cache, and vetfluid no longer patches libraries.
