"""Entry point of the window: ``vetfluid``.

Checks the display libraries first (a clear message instead of Qt's abort),
then opens the main window. Heavy modules load after the first paint.
"""

from __future__ import annotations

import sys


def main(argv: list[str] | None = None) -> int:
    from ui.platform_check import display_problem

    problem = display_problem()
    if problem:
        sys.stderr.write(problem + "\n")
        return 1
    from PySide6.QtWidgets import QApplication

    from ui.main_window import MainWindow

    app = QApplication.instance() or QApplication(argv if argv is not None else sys.argv)
    app.setApplicationName("vetfluid")
    app.setOrganizationName("vetfluid")
    window = MainWindow()
    window.show()
    return app.exec()


if __name__ == "__main__":
    sys.exit(main())
