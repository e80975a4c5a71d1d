"""Entry point of the window: ``vetfluid``.

Checks the display libraries first (a clear message instead of Qt's abort),
then opens the main window. Heavy modules load after the first paint.
"""

from __future__ import annotations

import sys


def sheet_command(argv: list[str]) -> int:
    """``vetfluid sheet PLAN.json -o sheet.pdf``: the treatment sheet, rendered offscreen."""
    import argparse
    import json
    import os
    from pathlib import Path

    parser = argparse.ArgumentParser(prog="vetfluid sheet", description="Print a treatment sheet.")
    parser.add_argument("plan", help="a plan as printed by `vetfluid-cli plan --json`")
    parser.add_argument("-o", "--output", required=True, help="the PDF to write")
    parser.add_argument("--page", choices=("a4", "letter"), default="a4")
    parser.add_argument("--patient-name", default="")
    args = parser.parse_args(argv)
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # no window is shown
    from vetfluid.errors import VetfluidError
    from vetfluid.sheet import page_mark, sheet_html

    fix = "give the JSON that `vetfluid-cli plan --json` prints"
    try:
        data = json.loads(Path(args.plan).read_text(encoding="utf-8"))
        if not isinstance(data, dict):
            raise ValueError(f"it holds a JSON {type(data).__name__}, not a plan")
        html = sheet_html(data, patient={"name": args.patient_name} if args.patient_name else None)
        mark = page_mark(data)
    except VetfluidError as exc:  # a figure the core refuses, e.g. a weight that is NaN
        sys.stderr.write(f"vetfluid sheet: cannot print {args.plan}: {exc.one_line()} — {fix}\n")
        return 2
    except (OSError, ValueError, KeyError, TypeError, AttributeError, IndexError) as exc:
        # a file that is missing, not JSON, or JSON of another shape than a plan's
        sys.stderr.write(f"vetfluid sheet: cannot read {args.plan}: {exc} — {fix}\n")
        return 2
    return _write_pdf(html, args.output, args.page, mark=mark)


def chart_command(argv: list[str]) -> int:
    """``vetfluid chart --species ID -o chart.pdf``: the weight-band chart, rendered offscreen."""
    import argparse
    import os

    parser = argparse.ArgumentParser(
        prog="vetfluid chart", description="Print a species' weight-band chart."
    )
    parser.add_argument("--species", required=True, help="a species id (vetfluid-cli species)")
    parser.add_argument("--drop-factor", type=float, default=20, help="drops/mL of the drip set")
    parser.add_argument("-o", "--output", required=True, help="the PDF to write")
    parser.add_argument("--page", choices=("a4", "letter"), default="a4")
    args = parser.parse_args(argv)
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from vetfluid.chart import chart
    from vetfluid.chart_sheet import chart_sheet_html
    from vetfluid.errors import VetfluidError

    try:
        html = chart_sheet_html(chart(args.species, drop_factor=args.drop_factor))
    except VetfluidError as exc:
        sys.stderr.write(f"vetfluid chart: {exc.one_line()}\n")
        return 2
    return _write_pdf(html, args.output, args.page)


def _write_pdf(html: str, output: str, page: str, *, mark: str = "") -> int:
    """Write the PDF; ``mark`` heads every page (a plan with a hard limit)."""
    from PySide6.QtWidgets import QApplication

    from ui.printing import print_sheet_to_pdf

    app = QApplication.instance() or QApplication(["vetfluid"])  # noqa: F841 (Qt needs one)
    try:
        pages = print_sheet_to_pdf(html, output, page=page, mark=mark)
    except OSError as exc:
        sys.stderr.write(f"vetfluid: cannot write {output}: {exc}\n")
        return 2
    sys.stdout.write(f"wrote {output} ({pages} page{'s' if pages != 1 else ''})\n")
    return 0


def main(argv: list[str] | None = None) -> int:
    arguments = sys.argv[1:] if argv is None else argv[1:]
    commands = {"sheet": sheet_command, "chart": chart_command}
    if arguments and arguments[0] in commands:
        return commands[arguments[0]](arguments[1:])
    from ui.platform_check import display_problem

    problem = display_problem()
    if problem:
        sys.stderr.write(problem + "\n")
        return 1
    from PySide6.QtWidgets import QApplication

    from ui import errors
    from ui.main_window import MainWindow

    errors.install()
    app = QApplication.instance() or QApplication(argv if argv is not None else sys.argv)
    app.setApplicationName("vetfluid")
    app.setOrganizationName("vetfluid")
    window = MainWindow()
    window.show()
    return app.exec()


if __name__ == "__main__":
    sys.exit(main())
