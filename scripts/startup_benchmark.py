"""Cold start and memory of the vetfluid window against a bare PySide6 QMainWindow.

Each run is a fresh process. The parent clocks from just before it starts the
child until the child reports its first paint; the child also reports its peak
resident memory once the planner is built, again after the plots (pyqtgraph) are
opened for a demo patient, and once more with every view built (the Course tab and
the species table too).

    QT_QPA_PLATFORM=offscreen .venv/bin/python scripts/startup_benchmark.py [runs]
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time

CHILD = r"""
import sys
from PySide6.QtCore import QEvent, QObject, QTimer
from PySide6.QtWidgets import QApplication, QMainWindow

app = QApplication(sys.argv)
KIND = sys.argv[1]
if KIND == "vetfluid":
    from ui.main_window import MainWindow
    window = MainWindow()
else:
    window = QMainWindow()
    window.setWindowTitle("bare")
    window.resize(1360, 860)

class FirstPaint(QObject):
    done = False
    def eventFilter(self, obj, event):
        if obj is window and event.type() == QEvent.Type.Paint and not self.done:
            self.done = True
            print("painted", flush=True)
            QTimer.singleShot(50, finish)
        return False

def peak_kib():
    # VmHWM, not ru_maxrss: Linux carries ru_maxrss across exec from the parent
    with open("/proc/self/status") as status:
        return next(int(line.split()[1]) for line in status if line.startswith("VmHWM"))

def finish():
    if KIND == "vetfluid" and window.session is None:
        QTimer.singleShot(20, finish)  # wait for the planner (built after the first paint)
        return
    print(f"rss_kib {peak_kib()}", flush=True)
    if KIND == "vetfluid":
        window.open_demo("dehydrated_dog")
        window.details.setCurrentWidget(window.timeline_holder)  # builds the plots
        app.processEvents()
        print(f"rss_plots_kib {peak_kib()}", flush=True)
        window.details.setCurrentWidget(window.course_holder)  # the other lazy views
        window.pages.setCurrentWidget(window.species_holder)
        app.processEvents()
        print(f"rss_all_views_kib {peak_kib()}", flush=True)
    app.quit()

watcher = FirstPaint()
window.installEventFilter(watcher)
window.show()
app.exec()
"""


def one_run(kind: str) -> tuple[float, int, int, int]:
    env = dict(os.environ, QT_QPA_PLATFORM=os.environ.get("QT_QPA_PLATFORM", "offscreen"))
    # a data folder of its own: no draft from an earlier session waits with a question
    env["VETFLUID_HOME"] = tempfile.mkdtemp(prefix="vetfluid-bench-")
    start = time.perf_counter()
    painted = None
    rss = rss_plots = rss_all = 0
    with subprocess.Popen(
        [sys.executable, "-c", CHILD, kind], stdout=subprocess.PIPE, text=True, env=env
    ) as child:
        assert child.stdout is not None
        for line in child.stdout:
            if line.startswith("painted") and painted is None:
                painted = time.perf_counter() - start
            elif line.startswith("rss_kib"):
                rss = int(line.split()[1])
            elif line.startswith("rss_plots_kib"):
                rss_plots = int(line.split()[1])
            elif line.startswith("rss_all_views_kib"):
                rss_all = int(line.split()[1])
        child.wait(timeout=60)
    if painted is None or child.returncode != 0:
        raise RuntimeError(f"{kind} window did not paint (exit {child.returncode})")
    return painted, rss, rss_plots, rss_all


def measure(runs: int = 5) -> dict[str, float]:
    one_run("bare"), one_run("vetfluid")  # warm the file cache
    # bare and vetfluid alternate, so a busy spell on a shared machine hits both alike
    runs_of = {"bare": [], "vetfluid": []}
    for _ in range(runs):
        for kind in runs_of:
            runs_of[kind].append(one_run(kind))
    results = {}
    for kind, samples in runs_of.items():
        results[f"{kind}_first_paint_s"] = statistics.median(s[0] for s in samples)
        results[f"{kind}_peak_rss_mib"] = statistics.median(s[1] for s in samples) / 1024
    results["vetfluid_peak_rss_with_plots_mib"] = statistics.median(s[2] for s in samples) / 1024
    results["vetfluid_peak_rss_all_views_mib"] = statistics.median(s[3] for s in samples) / 1024
    results["start_ratio"] = results["vetfluid_first_paint_s"] / results["bare_first_paint_s"]
    results["memory_ratio"] = results["vetfluid_peak_rss_mib"] / results["bare_peak_rss_mib"]
    results["memory_ratio_with_plots"] = (
        results["vetfluid_peak_rss_with_plots_mib"] / results["bare_peak_rss_mib"]
    )
    results["memory_ratio_all_views"] = (
        results["vetfluid_peak_rss_all_views_mib"] / results["bare_peak_rss_mib"]
    )
    return results


if __name__ == "__main__":
    print(json.dumps(measure(int(sys.argv[1]) if len(sys.argv) > 1 else 5), indent=2))
