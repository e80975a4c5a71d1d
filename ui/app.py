"""Entry point of the window: ``vetfluid``.

Checks the display libraries first (a clear message instead of Qt's abort),
then opens the main window. Heavy modules load after the first paint.
"""

from __future__ import annotations

import sys


def sheet_command(argv: list[str]) -> int:
    """``vetfluid sheet PLAN.json -o sheet.pdf``: the treatment sheet, rendered offscreen."""
    import argparse
    import os
    from pathlib import Path

    parser = argparse.ArgumentParser(prog="vetfluid sheet", description="Print a treatment sheet.")
    parser.add_argument(
        "plan", help="a plan as `vetfluid-cli plan --json` prints it, or a saved *.vfplan.json"
    )
    parser.add_argument("-o", "--output", required=True, help="the PDF to write")
    parser.add_argument("--page", choices=("a4", "letter"), default="a4")
    parser.add_argument("--patient-name", default="")
    args = parser.parse_args(argv)
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # no window is shown
    from vetfluid.common.errors import VetfluidError, printable
    from vetfluid.printouts.sheet import page_mark, sheet_html

    shown = printable(args.plan)[:200]  # a file name echoed escaped, one line

    fix = (
        "give the JSON that `vetfluid-cli plan --json` prints, or a plan file the window "
        "saved (*.vfplan.json)"
    )
    if _same_file(Path(args.plan), Path(args.output)):
        sys.stderr.write(
            f"vetfluid sheet: the PDF would overwrite the plan it prints ({shown}) — "
            "give another name after -o\n"
        )
        return 2
    try:
        data, acknowledged = _plan_to_print(Path(args.plan))
    except VetfluidError as exc:  # a file that is not a plan, or a key of the wrong kind
        why = exc.one_line()[:400]
        sys.stderr.write(f"vetfluid sheet: cannot read {shown}: {why} — {fix}\n")
        return 2
    except OSError as exc:  # missing, or not ours to read
        sys.stderr.write(f"vetfluid sheet: cannot read {shown}: {exc.strerror} — {fix}\n")
        return 2
    try:
        html = sheet_html(
            data,
            patient={"name": args.patient_name} if args.patient_name else None,
            acknowledged=acknowledged,
        )
        mark = page_mark(data)
    except VetfluidError as exc:  # a figure the core refuses, e.g. a weight that is NaN
        why = exc.one_line()[:400]
        sys.stderr.write(f"vetfluid sheet: cannot print {shown}: {why} — {fix}\n")
        return 2
    except (OSError, ValueError, KeyError, TypeError, AttributeError, IndexError) as exc:
        # a file that is missing, or JSON of another shape than a plan's
        reason = printable(" ".join(str(exc).split()))[:200]
        sys.stderr.write(f"vetfluid sheet: cannot read {shown}: {reason} — {fix}\n")
        return 2
    return _write_pdf(html, args.output, args.page, mark=mark)


def _same_file(plan: object, output: object) -> bool:
    """Whether writing ``output`` would overwrite ``plan`` (the same path however spelt,
    or a link to it)."""
    import os

    try:
        return plan.resolve() == output.resolve() or (  # type: ignore[attr-defined]
            output.exists() and os.path.samefile(plan, output)  # type: ignore[attr-defined]
        )
    except OSError:
        return False


def _plan_to_print(path: object) -> tuple[dict, dict[str, str]]:
    """The plan JSON to print and the reasons given: a plan as `vetfluid-cli plan --json`
    prints it (checked, :func:`vetfluid.printouts.sheet.check_plan_json`), or a plan file the window
    saved (``*.vfplan.json``), whose plan is built from its request, with the reasons that
    still cover its warnings as they read now."""
    from vetfluid.planning.plan import build_plan
    from vetfluid.printouts.sheet import check_plan_json
    from vetfluid.records.request_file import read_json_file, request_file_from_data
    from vetfluid.records.serialize import REQUEST_FORMAT, plan_dict, request_from_dict

    data = read_json_file(path, what="a vetfluid plan", max_bytes=1_000_000)  # type: ignore[arg-type]
    if not (isinstance(data, dict) and data.get("format") == REQUEST_FORMAT):
        checked = check_plan_json(data)
        if isinstance(data.get("request"), dict):
            # print what the core plans for this request, never figures edited in the file:
            # the sheet, the window and the CLI must agree
            return check_plan_json(plan_dict(build_plan(request_from_dict(data["request"])))), {}
        return checked, {}
    opened = request_file_from_data(data, name=path.name)  # type: ignore[attr-defined]
    plan = build_plan(opened.request)
    said = {f.code: f.message for f in plan.findings}
    wording = opened.acknowledged_for
    acknowledged = {
        code: reason
        for code, reason in opened.acknowledged.items()
        if wording is None or (code in said and wording.get(code) == said[code])
    }  # a reason given for other words of a warning does not cover it (ui/planning/session.py)
    return check_plan_json(plan_dict(plan)), acknowledged


def chart_command(argv: list[str]) -> int:
    """``vetfluid chart --species ID -o chart.pdf``: the weight-band chart, rendered offscreen."""
    import argparse
    import os

    parser = argparse.ArgumentParser(
        prog="vetfluid chart", description="Print a species' weight-band chart."
    )
    parser.add_argument("--species", required=True, help="a species id (vetfluid-cli species)")
    parser.add_argument("--drop-factor", default="20", help="drops/mL of the drip set")
    parser.add_argument("-o", "--output", required=True, help="the PDF to write")
    parser.add_argument("--page", choices=("a4", "letter"), default="a4")
    args = parser.parse_args(argv)
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from vetfluid.common.errors import VetfluidError
    from vetfluid.common.units import read_number
    from vetfluid.printouts.chart import chart
    from vetfluid.printouts.chart_sheet import chart_sheet_html

    try:
        drop_factor = read_number(args.drop_factor, field="--drop-factor")  # digits 0–9 only
        html = chart_sheet_html(chart(args.species, drop_factor=drop_factor))
    except VetfluidError as exc:
        sys.stderr.write(f"vetfluid chart: {exc.one_line()}\n")
        return 2
    return _write_pdf(html, args.output, args.page)


def _write_pdf(html: str, output: str, page: str, *, mark: str = "") -> int:
    """Write the PDF; ``mark`` heads every page (a plan with a hard limit)."""
    from PySide6.QtWidgets import QApplication

    from ui.printouts.printing import print_sheet_to_pdf
    from vetfluid.common.errors import printable

    app = QApplication.instance() or QApplication(["vetfluid"])  # noqa: F841 (Qt needs one)
    try:
        pages = print_sheet_to_pdf(html, output, page=page, mark=mark)
    except OSError as exc:
        sys.stderr.write(f"vetfluid: cannot write {printable(output)[:200]}: {exc.strerror}\n")
        return 2
    sys.stdout.write(f"wrote {printable(output)} ({pages} page{'s' if pages != 1 else ''})\n")
    return 0


USAGE = """\
usage: vetfluid                       open the planning window
       vetfluid sheet PLAN.json -o sheet.pdf [--page a4|letter] [--patient-name NAME]
                                      print a plan's treatment sheet (no window needed)
       vetfluid chart --species ID -o chart.pdf [--drop-factor N] [--page a4|letter]
                                      print a species' weight-band chart (no window needed)
       vetfluid --version             print the version
       vetfluid --help                print this help

Without a display, use `vetfluid sheet`, `vetfluid chart` or vetfluid-cli, or set
QT_QPA_PLATFORM=offscreen. `vetfluid sheet --help` and `vetfluid chart --help` say more.
"""


def main(argv: list[str] | None = None) -> int:
    arguments = sys.argv[1:] if argv is None else argv[1:]
    commands = {"sheet": sheet_command, "chart": chart_command}
    if arguments and arguments[0] in commands:
        return commands[arguments[0]](arguments[1:])
    if arguments and arguments[0] in ("-h", "--help"):
        sys.stdout.write(USAGE)  # before Qt: help never opens a window
        return 0
    if arguments and arguments[0] == "--version":
        from vetfluid import __version__

        sys.stdout.write(f"vetfluid {__version__}\n")
        return 0
    from ui.common.platform_check import display_problem

    problem = display_problem()
    if problem:
        sys.stderr.write(problem + "\n")
        return 1
    from PySide6.QtWidgets import QApplication

    from ui.common import errors
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
