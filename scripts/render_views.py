"""Render the window and each view to PNG for a demo patient (for looking at them).

QT_QPA_PLATFORM=offscreen .venv/bin/python scripts/render_views.py [demo_id] [out_dir]
"""

from __future__ import annotations

import sys
from pathlib import Path

from PySide6.QtWidgets import QApplication


def settle() -> None:
    """Let the shown tab finish its layout, as it has by the time anyone looks: a plot
    view lays out on the turn after it is shown, and its plots again once they have data."""
    for _ in range(4):
        QApplication.processEvents()


def render(demo_id: str, out: Path) -> list[Path]:
    from ui.main_window import MainWindow

    out.mkdir(parents=True, exist_ok=True)
    window = MainWindow()
    window.resize(1440, 900)
    window.show()
    window.open_demo(demo_id)
    QApplication.processEvents()
    QApplication.processEvents()
    saved = []
    for index in range(window.details.count()):
        window.details.setCurrentIndex(index)
        settle()
        tab = window.details.tabText(index).replace("&", "").split(" ")[0].lower()
        path = out / f"{demo_id}-{index}-{tab}.png"
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
    app = QApplication.instance() or QApplication(sys.argv)
    demo = sys.argv[1] if len(sys.argv) > 1 else "dehydrated_dog"
    target = Path(sys.argv[2] if len(sys.argv) > 2 else "renders")
    for p in render(demo, target):
        print(p)
