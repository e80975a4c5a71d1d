"""Render the window and each view to PNG for a demo patient (for looking at them).

QT_QPA_PLATFORM=offscreen .venv/bin/python scripts/render_views.py [demo_id] [out_dir]
    [--diuretic DRUG:ROUTE:DOSE:HOURS]

``--diuretic furosemide:iv:2:0,8`` enters a diuretic through the planner's Diuretics
inputs, as a user would, before rendering (an infusion: ``furosemide:cri:0.66:2,10``, its
rate from the first hour to the second); it may be given more than once.

The window runs in a temporary data folder (``VETFLUID_HOME``), removed afterwards: an
edited demo leaves a draft, which must not land in the clinic's records nor be offered
back on the next run.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
from pathlib import Path

from PySide6.QtWidgets import QApplication


def settle() -> None:
    """Let the shown tab finish its layout, as it has by the time anyone looks: a plot
    view lays out on the turn after it is shown, and its plots again once they have data."""
    for _ in range(4):
        QApplication.processEvents()


def add_diuretic(window, spec: str) -> None:  # noqa: ANN001 — MainWindow
    """Type one ``DRUG:ROUTE:DOSE:HOURS`` into the Diuretics inputs and press Add."""
    drug, route, dose, hours = spec.split(":")
    view = window.settings_box.diuretics
    for box, value in ((view.drug, drug), (view.route, route)):
        index = box.findData(value)
        if index < 0:
            raise SystemExit(f"{value!r} is not offered for this patient")
        box.setCurrentIndex(index)
        box.activated.emit(index)
    view.dose.setText(dose)
    if route == "cri":
        start, end = hours.split(",")
        view.start.setText(start)
        view.end.setText(end)
    else:
        view.hours.setText(hours.replace(",", ", "))  # "0,8" would be refused as ambiguous
    view.add()
    if view.message.text():
        raise SystemExit(f"the dose was refused: {view.message.text()}")
    settle()


def render(
    demo_id: str, out: Path, diuretics: tuple[str, ...] = (), size: tuple[int, int] = (1440, 900)
) -> list[Path]:
    from ui.main_window import MainWindow

    out.mkdir(parents=True, exist_ok=True)
    window = MainWindow()
    window.resize(*size)
    window.show()
    window.open_demo(demo_id)
    QApplication.processEvents()
    QApplication.processEvents()
    for spec in diuretics:
        add_diuretic(window, spec)
    saved = []
    for index in range(window.details.count()):
        window.details.setCurrentIndex(index)
        settle()
        tab = window.details.tabText(index).replace("&", "").split(" ")[0].lower()
        path = out / f"{demo_id}-{index}-{tab}.png"
        window.grab().save(str(path))
        saved.append(path)
    # the inputs panel scrolled down to the diuretics, where the planner shows them
    panel = window.settings_box.diuretics
    scroll = window.splitter.widget(0)
    scroll.ensureWidgetVisible(panel, 0, 0)
    window.details.setCurrentIndex(0)
    settle()
    path = out / f"{demo_id}-inputs-diuretics.png"
    window.grab().save(str(path))
    saved.append(path)
    window.pages.setCurrentIndex(1)
    QApplication.processEvents()
    path = out / f"{demo_id}-species-table.png"
    window.grab().save(str(path))
    saved.append(path)
    from ui.printouts.chart_view import ChartDialog

    chart = ChartDialog(window.session.table, window.session.plan.request.species_id, window)
    chart.show()
    QApplication.processEvents()
    path = out / f"{demo_id}-chart.png"
    chart.grab().save(str(path))
    saved.append(path)
    chart.close()
    window.close()
    return saved


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("demo", nargs="?", default="dehydrated_dog")
    parser.add_argument("out", nargs="?", default="renders", type=Path)
    parser.add_argument("--diuretic", action="append", default=[],
                        help="DRUG:ROUTE:DOSE:HOURS, e.g. furosemide:iv:2:0,8")  # fmt: skip
    parser.add_argument("--size", default="1440x900", help="window size, e.g. 1280x800")
    args = parser.parse_args()
    width, height = (int(n) for n in args.size.lower().split("x"))
    home = tempfile.mkdtemp(prefix="vetfluid-render-")
    os.environ["VETFLUID_HOME"] = home
    try:
        app = QApplication.instance() or QApplication(sys.argv)
        for p in render(args.demo, args.out, tuple(args.diuretic), (width, height)):
            print(p)
    finally:
        shutil.rmtree(home, ignore_errors=True)
