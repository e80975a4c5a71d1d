"""Entry point of the window: ``vetfluid``.

Checks the display libraries first (a clear message instead of Qt's abort),
then opens the main window. Heavy modules load after the first paint.
"""

from __future__ import annotations

import sys
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from collections.abc import Callable
    from pathlib import Path

    from ui.one_window import Holder, Reached, WindowLock


def sheet_command(argv: list[str]) -> int:
    """``vetfluid sheet PLAN.json -o sheet.pdf``: the treatment sheet, rendered offscreen."""
    import argparse
    import os
    from pathlib import Path

    parser = argparse.ArgumentParser(
        prog="vetfluid sheet",
        usage="%(prog)s PLAN -o OUTPUT [--page {a4,letter}] [--patient-name NAME]\n"
        "       %(prog)s -o OUTPUT [options] -- -PLAN.vfplan",  # the plan is required
        description="Print a treatment sheet.",
        epilog="A plan file whose name starts with - is named after -- or as ./-dog.vfplan:\n"
        "  vetfluid sheet -- -dog.vfplan -o sheet.pdf\n"
        "  vetfluid sheet -o sheet.pdf -- -dog.vfplan",
        formatter_class=argparse.RawDescriptionHelpFormatter,  # the examples' lines kept
    )
    parser.add_argument(
        "plan",
        nargs="?",  # required: said below, with how to name a file starting with -
        metavar="PLAN",
        help="a plan as `vetfluid-cli plan --json` prints it, or a saved plan file "
        "(*.vfplan, or *.vfplan.json as saved before)",
    )
    parser.add_argument("-o", "--output", required=True, help="the PDF to write")
    parser.add_argument("--page", choices=("a4", "letter"), default="a4")
    parser.add_argument("--patient-name", default="")
    args, unknown = parser.parse_known_args(_plan_after_double_dash(argv))
    if args.plan is None and unknown:
        shown = printable_name(unknown[0])
        parser.error(
            f"{shown} is not an option of vetfluid sheet — to print a plan file of that name, "
            f"write vetfluid sheet -- {shown} -o sheet.pdf (or ./{shown})"
        )
    if args.plan is None:
        parser.error("the following argument is required: the plan to print")
    if unknown:
        parser.error(f"unrecognized arguments: {printable_name(' '.join(unknown))}")
    _note_data_folder("vetfluid sheet")
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # no window is shown
    from vetfluid.common.errors import VetfluidError, printable
    from vetfluid.printouts.sheet import page_mark, sheet_html

    shown = printable(args.plan)[:200]  # a file name echoed escaped, one line

    fix = (
        "give the JSON that `vetfluid-cli plan --json` prints, or a plan file the window "
        "saved (*.vfplan)"
    )
    if _same_file(Path(args.plan), Path(args.output)):
        sys.stderr.write(
            f"vetfluid sheet: the PDF would overwrite the plan it prints ({shown}) — "
            "give another name after -o\n"
        )
        return 2
    try:
        data, acknowledged = _plan_to_print(Path(args.plan))
    except VetfluidError as exc:  # missing, not a plan, or a key of the wrong kind
        why = exc.one_line()[:400] + ("" if exc.fix else f" — {fix}")  # one fix per cause
        sys.stderr.write(f"vetfluid sheet: cannot read {shown}: {why}\n")
        return 2
    except OSError as exc:  # a plan file's plan could not be built from the species data
        sys.stderr.write(f"vetfluid sheet: cannot read {shown}: {os_error_words(exc)}\n")
        return 2
    try:
        html = sheet_html(
            data,
            patient={"name": args.patient_name} if args.patient_name else None,
            acknowledged=acknowledged,
        )
        mark = page_mark(data)
    except VetfluidError as exc:  # a figure the core refuses, e.g. a weight that is NaN
        why = exc.one_line()[:400] + ("" if exc.fix else f" — {fix}")  # one fix per cause
        sys.stderr.write(f"vetfluid sheet: cannot print {shown}: {why}\n")
        return 2
    except (OSError, ValueError, KeyError, TypeError, AttributeError, IndexError) as exc:
        # a file that is missing, or JSON of another shape than a plan's
        reason = printable(" ".join(str(exc).split()))[:200]
        sys.stderr.write(f"vetfluid sheet: cannot read {shown}: {reason} — {fix}\n")
        return 2
    return _write_pdf(html, args.output, args.page, mark=mark)


def printable_name(text: str) -> str:
    """A name the user typed, echoed on one line (escaped, at most 200 characters)."""
    from vetfluid.common.errors import printable

    return printable(text)[:200]


def _plan_after_double_dash(argv: list[str]) -> list[str]:
    """``vetfluid sheet -- -dog.vfplan -o sheet.pdf``: after ``--`` the first word is the plan
    file, whatever it starts with; the sheet prints one plan, so what follows it can only be
    options, and is read as options (argparse alone took ``-o`` for a second file). Returned
    in the order argparse reads so: the options, then ``--`` and the file."""
    if "--" not in argv:
        return argv
    at = argv.index("--")
    after = argv[at + 1 :]
    return [*argv[:at], *after[1:], "--", *after[:1]]


def _note_data_folder(program: str) -> None:
    """One line on stderr when the user data folder cannot be used, saying whether the
    clinic overrides kept there are read (the sheet and the chart still print; from the
    shipped values when they are not)."""
    from vetfluid.common.paths import data_folder_problem

    problem = data_folder_problem()
    if problem:
        sys.stderr.write(f"{program}: {problem}\n")  # says if the overrides are read


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
    prints it (checked, :func:`vetfluid.printouts.sheet.check_plan_json`), or a plan file the
    window saved (``*.vfplan``, or ``*.vfplan.json`` as saved before), whose plan is built
    from its request, with the reasons that still cover its warnings as they read now."""
    from vetfluid.planning.plan import build_plan
    from vetfluid.printouts.sheet import check_plan_json
    from vetfluid.records.request_file import read_json_file, request_file_from_data
    from vetfluid.records.serialize import REQUEST_FORMAT, plan_dict, request_from_dict

    data = read_json_file(path, what="a vetfluid plan file")  # type: ignore[arg-type]
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
    _note_data_folder("vetfluid chart")
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


def self_check_command(argv: list[str]) -> int:
    """``vetfluid self-check FOLDER``: shows that this installation works, touching nothing the
    clinic keeps. In a temporary data folder (no records, drafts, overrides or window settings
    read or written), it opens the window offscreen with an invented demo patient and writes
    into FOLDER a picture of each of the plan's views, the demo as a plan file and its
    treatment sheet as a PDF (the window's own File → Print), then prints the versions and
    what it wrote. For whoever installs a bundle (README, "For clinics"); the bundle's test
    (tests/test_bundle.py) runs it too."""
    import argparse
    import os
    import shutil
    import tempfile
    from pathlib import Path

    parser = argparse.ArgumentParser(
        prog="vetfluid self-check",
        description="Check this installation: window, demo plan, pictures and a sheet PDF.",
    )
    parser.add_argument("folder", help="where to write the pictures, the plan file and the PDF")
    parser.add_argument(
        "--demo", default="dehydrated_dog", help="the demo patient (vetfluid-cli plan --demo)"
    )
    args = parser.parse_args(argv)
    from vetfluid.common.errors import VetfluidError, printable
    from vetfluid.planning.demos import demo

    try:
        demo(args.demo)
    except VetfluidError as exc:
        sys.stderr.write(f"vetfluid self-check: {exc.one_line()}\n")
        return 2
    folder = Path(args.folder)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        sys.stderr.write(
            f"vetfluid self-check: cannot make {printable(args.folder)[:200]}: {exc.strerror}\n"
        )
        return 2
    try:
        url, passfile = _records_setting()  # the clinic's, read before the folder changes
    except VetfluidError as exc:
        sys.stderr.write(f"vetfluid self-check failed: {exc.one_line()}\n")
        return 1
    os.environ["QT_QPA_PLATFORM"] = "offscreen"  # nothing appears on the clinic's screen
    home = tempfile.mkdtemp(prefix="vetfluid-self-check-")
    os.environ["VETFLUID_HOME"] = home
    if url:  # the window opens the clinic's records server, as it would
        os.environ["VETFLUID_RECORDS_URL"] = url
        if passfile is not None:  # where libpq finds the password, the data folder moved
            os.environ.setdefault("PGPASSFILE", str(passfile))
    try:
        sys.stdout.write(version_line() + "\n")
        written = _check_window(args.demo, folder)
    except (OSError, VetfluidError) as exc:  # FOLDER not writable, or the data missing
        sys.stderr.write(f"vetfluid self-check failed: {printable(str(exc))[:400]}\n")
        return 1
    except RuntimeError as exc:  # the window made no plan
        sys.stderr.write(f"vetfluid self-check failed: {exc}\n")
        return 1
    finally:
        shutil.rmtree(home, ignore_errors=True)
    for path in written:
        sys.stdout.write(f"wrote {printable(str(path))}\n")
    sys.stdout.write("self-check passed\n")
    return 0


def _records_setting() -> tuple[str, Path | None]:
    """The records setting as this user has it (``VETFLUID_RECORDS_URL``, else the Records
    settings; "" for the file on this computer) and the owner-only password file kept for
    it, if any; read without creating the user data folder."""
    import os

    from vetfluid.common.paths import user_data_path
    from vetfluid.records.location import PASSFILE_NAME, SETTINGS_NAME, URL_VARIABLE, load_settings

    folder = user_data_path()
    url = os.environ.get(URL_VARIABLE)
    if url is None:
        url = load_settings().url if (folder / SETTINGS_NAME).is_file() else ""
    passfile = folder / PASSFILE_NAME
    return url.strip(), passfile if passfile.is_file() else None


def _check_window(demo_id: str, folder: Path) -> list[Path]:
    """Open the window with ``demo_id``, picture each view of the plan, save the plan file and
    print the sheet to PDF, as :func:`self_check_command` says, and say which records the
    window opened and what they hold (a records server when one is set; otherwise a new file
    in the temporary folder). Returns the paths written; RuntimeError when no plan was made
    or the records could not be opened."""
    import time

    from PySide6.QtPrintSupport import QPrinter
    from PySide6.QtWidgets import QApplication

    from ui.main_window import MainWindow
    from vetfluid.common.paths import owner_only_file
    from vetfluid.records.request_file import SUFFIX, write_request_file

    app = QApplication.instance() or QApplication(["vetfluid"])
    window = MainWindow()
    window.resize(1440, 900)
    window.show()
    window.open_demo(demo_id)
    deadline = time.monotonic() + 60
    while window.session.plan is None:  # the plan is built on a later event-loop turn
        if time.monotonic() > deadline:
            raise RuntimeError(f"the demo {demo_id!r} made no plan within 60 s")
        app.processEvents()
        time.sleep(0.01)
    written = []
    for index in range(window.details.count()):
        window.details.setCurrentIndex(index)
        for _ in range(4):  # a plot lays out on the turn after it is shown, again with data
            app.processEvents()
        tab = window.details.tabText(index).replace("&", "").split(" ")[0].lower()
        picture = folder / f"{demo_id}-{index}-{tab}.png"
        if not window.grab().save(str(picture)):
            raise OSError(f"Qt could not save {picture.name}")
        written.append(picture)
    plan_file = folder / f"{demo_id}{SUFFIX}"
    session = window.session
    written.append(
        write_request_file(
            plan_file, session.plan.request, session.acknowledged,
            acknowledged_for=session.acknowledged_for,
        )
    )  # fmt: skip
    sheet = folder / f"{demo_id}-sheet.pdf"
    printer = QPrinter(QPrinter.PrinterMode.HighResolution)
    printer.setOutputFormat(QPrinter.OutputFormat.PdfFormat)
    printer.setOutputFileName(str(owner_only_file(sheet)))
    window.print_to(printer)  # File → Print's own path, to a PDF
    written.append(sheet)
    sys.stdout.write(_records_line(window) + "\n")
    window.hide()  # not closed: closing would keep the demo as a draft in the temporary folder
    return written


def _records_line(window) -> str:  # noqa: ANN001 — MainWindow
    """What the self-check says of the records the window opened; RuntimeError when none."""
    from vetfluid.common.errors import VetfluidError, printable
    from vetfluid.records.backups import describe_records

    records = window.records
    if records is None:
        problem = printable(window.keeper.work.problem)[:400]
        raise RuntimeError(f"the records could not be opened: {problem}")
    try:
        held = describe_records(records).words()
    except VetfluidError as exc:
        raise RuntimeError(f"the records could not be read: {exc.one_line()}") from exc
    if records.server is None:
        return f"records: a new records file opened in the temporary folder ({held})"
    return f"records: {records.where} opened ({held})"


def version_line() -> str:
    """``vetfluid 0.1.0 (species data 1a2b3c4d5e6f)``: the program's version and the digest
    of the species data it reads (:mod:`vetfluid.tables.data_version`)."""
    from vetfluid import __version__
    from vetfluid.tables.data_version import species_data_version

    return f"vetfluid {__version__} (species data {species_data_version()})"


USAGE = """\
usage: vetfluid [PLAN.vfplan]         open the planning window (with a saved plan file;
                                      *.vfplan.json, as saved before, opens too)
       vetfluid -- -PLAN.vfplan       a plan file whose name starts with - (or ./-PLAN.vfplan)
       vetfluid sheet PLAN.json -o sheet.pdf [--page a4|letter] [--patient-name NAME]
                                      print a plan's treatment sheet (no window needed)
       vetfluid sheet -- -PLAN.vfplan -o sheet.pdf
                                      the sheet of a plan file whose name starts with -
       vetfluid chart --species ID -o chart.pdf [--drop-factor N] [--page a4|letter]
                                      print a species' weight-band chart (no window needed)
       vetfluid self-check FOLDER [--demo ID]
                                      check this installation: open the window offscreen
                                      with a demo patient, write a picture of each view,
                                      the plan file and the sheet PDF into FOLDER, and open
                                      the records as set (a records server, if one is set)
       vetfluid --version             print the version and the species data's version,
                                      or why the species data could not be read
       vetfluid --help                print this help

Without a display, use `vetfluid sheet`, `vetfluid chart` or vetfluid-cli, or set
QT_QPA_PLATFORM=offscreen. `vetfluid sheet --help` and `vetfluid chart --help` say more.
"""


def version_command() -> int:
    """``vetfluid --version``: the version and the species data's digest; then every file of
    the species data is loaded as a plan loads it, so data that is missing or damaged is
    said in words, after the version, with exit 1 (rather than found at the first plan).
    The loader's own fix (restore the file, save it as UTF-8) is not repeated: the shipped
    data is not the clinic's to edit, so the one fix is to reinstall."""
    from vetfluid import __version__
    from vetfluid.common.errors import VetfluidError, printable

    try:
        line = version_line()
    except (OSError, VetfluidError) as exc:  # the files cannot even be listed or read
        sys.stdout.write(f"vetfluid {__version__}\n")
        problem: BaseException | None = exc
    else:
        sys.stdout.write(line + "\n")
        try:
            species_data_check()
            problem = None
        except (OSError, VetfluidError) as exc:  # a file missing, unreadable or malformed
            problem = exc
    if problem is None:
        return 0
    why = problem.message if isinstance(problem, VetfluidError) else os_error_words(problem)
    sys.stdout.flush()
    sys.stderr.write(
        f"vetfluid: the species data could not be read: {printable(why)[:600]} — reinstall "
        "vetfluid (a bundle: copy its whole folder again); no plan can be made until then\n"
    )
    return 1


def os_error_words(exc: BaseException) -> str:
    """An OSError in words, without Python's "[Errno 2]": ``no such file: PATH``."""
    if not isinstance(exc, OSError) or exc.strerror is None:
        return str(exc)  # raised with words of our own (vetfluid.common.paths)
    name = "" if exc.filename is None else f": {exc.filename}"
    if isinstance(exc, FileNotFoundError):
        return f"no such file{name}"
    if isinstance(exc, PermissionError):
        return f"you may not read this file{name}"
    return f"{exc.strerror.lower()}{name}"


# Every file of species_data/ that planning reads, each loaded by species_data_check()
# (tests/test_version_check.py checks this names every shipped *.csv).
SPECIES_DATA_FILES = (
    "species.csv", "parameters.csv", "parameter_definitions.csv", "sources.csv",
    "fluids.csv", "solutes.csv", "colloids.csv", "molar_masses.csv", "safety_limits.csv",
    "fluid_roles.csv", "route_limits.csv", "diuretics.csv", "dehydration_findings.csv",
    "potassium_scale.csv",
)  # fmt: skip


def species_data_check(folder: Path | None = None) -> None:
    """Load every file of the species data (:data:`SPECIES_DATA_FILES`: species and
    parameters, fluids, solutes, colloids and molar masses, safety limits, fluid roles and
    route limits, diuretics, dehydration findings, the potassium scale), as planning does,
    and check that every fluid has its roles (planning refuses one without). A missing or
    malformed file raises SpeciesDataError, InputError or OSError, naming the file."""
    from vetfluid.common.chemistry import load_molar_masses
    from vetfluid.common.errors import SpeciesDataError
    from vetfluid.common.paths import resource_dir
    from vetfluid.physiology.electrolytes import load_potassium_scale
    from vetfluid.physiology.hydration import load_findings
    from vetfluid.tables.diuretics import load_diuretics
    from vetfluid.tables.fluid_roles import load_fluid_roles, load_route_limits
    from vetfluid.tables.fluids import load_fluids
    from vetfluid.tables.limits import load_limits
    from vetfluid.tables.species import load_table

    folder = folder or resource_dir("species_data")  # named: the loaders' caches are by folder
    missing = [name for name in SPECIES_DATA_FILES if not (folder / name).is_file()]
    if missing:  # named first: some would otherwise be reported as another file's row
        raise SpeciesDataError(f"missing from {folder}", location=", ".join(missing))
    load_table(folder)
    fluids = load_fluids(folder)
    load_molar_masses(folder)
    load_limits(folder)
    roles = load_fluid_roles(folder)
    load_route_limits(folder)
    load_diuretics(folder)
    load_findings(folder)
    load_potassium_scale(folder)
    for fluid_id, fluid in fluids.items():
        if fluid_id not in roles:
            raise SpeciesDataError(
                f"{fluid.name} has no row, so its roles are unknown", location="fluid_roles.csv"
            )


def plan_file_argument(arguments: list[str]) -> str | None:
    """The plan file to open from what followed ``vetfluid`` (None: none given). A name
    starting with ``-`` is taken after ``--`` (or written ``./-dog.vfplan``). Anything else
    is an InputError saying what was not understood and how to write it."""
    from vetfluid.common.errors import InputError, printable

    if arguments[:1] == ["--"]:
        files = arguments[1:]
    else:
        options = [a for a in arguments if a.startswith("-")]
        if options:
            shown = printable(options[0])[:200]
            raise InputError(
                f"{shown} is not an option of vetfluid",
                fix=f"to open a plan file of that name, write vetfluid -- {shown} (or "
                f"vetfluid ./{shown}); vetfluid --help lists the commands",
            )
        files = arguments
    if len(files) > 1:
        raise InputError(
            f"vetfluid opens one plan file at a time ({len(files)} were given)",
            fix="give one file; put a name with spaces in quotes",
        )
    return files[0] if files else None


def main(argv: list[str] | None = None) -> int:
    arguments = sys.argv[1:] if argv is None else argv[1:]
    commands = {"sheet": sheet_command, "chart": chart_command, "self-check": self_check_command}
    if arguments and arguments[0] in commands:
        return commands[arguments[0]](arguments[1:])
    if arguments and arguments[0] in ("-h", "--help"):
        sys.stdout.write(USAGE)  # before Qt: help never opens a window
        return 0
    if arguments and arguments[0] == "--version":
        return version_command()
    from vetfluid.common.errors import InputError

    try:
        plan_file = plan_file_argument(arguments)
    except InputError as exc:
        sys.stderr.write(f"vetfluid: {exc.one_line()}\n")
        return 2
    from ui.common.platform_check import display_problem

    problem = display_problem()
    if problem:
        sys.stderr.write(problem + "\n")
        return 1
    from PySide6.QtWidgets import QApplication

    from ui.common import errors

    errors.install()
    # Qt is given the program's name only: it would take a plan file named like one of its
    # own options (-reverse, -style) for that option
    program = (argv if argv is not None else sys.argv)[:1] or ["vetfluid"]
    app = QApplication.instance() or QApplication(program)
    app.setApplicationName("vetfluid")
    app.setOrganizationName("vetfluid")
    from PySide6.QtCore import QTimer

    from ui.one_window import Claim, WindowLock
    from vetfluid.common.paths import user_data_dir

    lock = WindowLock(user_data_dir())
    claimed = lock.claim()  # unlockable: a folder nothing can be saved in, said in the window
    if claimed is Claim.HELD:
        ended = another_window_open(lock, plan_file)
        if ended is not None:
            return ended
        claimed = Claim.OURS
    window = open_window(plan_file)

    def listen() -> None:  # on the loop's first turn (Qt's network module loads after the
        # first paint); what a second start hands over waits in the window's queue
        lock.accepting = window.accepts_files
        if lock.serve():
            lock.asked.connect(window.come_forward)

    if claimed is Claim.OURS:
        QTimer.singleShot(0, listen)
    try:
        return app.exec()
    finally:
        lock.release()


def another_window_open(
    lock: WindowLock,
    plan_file: str | None,
    *,
    ask: Callable[[str, str], bool] | None = None,
    tell: Callable[[str], None] | None = None,
    patience_s: float | None = None,
    waiting: Callable[[float], bool] | None = None,
) -> int | None:
    """vetfluid is already open on this data folder: its window is asked to come forward
    and open ``plan_file``, and this start ends (0). A window that closes meanwhile leaves
    the lock to this start (None: go on). When the window cannot be asked (on another
    computer, or it does not answer) the user is told why two windows must not share the
    folder and may take the lock over: None once taken, else 1. Qt gives the lock up only
    when its holder no longer holds it (a process number now another program's, a
    computer switched off), so a window still running keeps it and the user is told to
    close that one first. ``ask(text, detail)`` puts the question and ``tell(text)`` the
    answer (message boxes by default: a double-clicked file has no terminal);
    ``patience_s``: how long the window is waited for (PATIENCE_S); ``waiting(seconds)``
    says the wait goes on (False: the user stopped it; by default a box with Cancel
    appears after a second and a half)."""
    from ui.one_window import PATIENCE_S, Reached

    patience_s = PATIENCE_S if patience_s is None else patience_s
    holder = lock.holder()
    if holder is None or holder.here:
        box = _WaitingBox(plan_file) if waiting is None else None
        reached = lock.hand_over(plan_file, patience_s, waiting or box)
        if box is not None:
            box.close()
        if reached is Reached.GAVE_UP:
            sys.stderr.write("vetfluid: stopped waiting for the vetfluid window that is open.\n")
            return 1
        if reached is Reached.HANDED:
            said = "its window opens the plan file" if plan_file else "it was brought forward"
            sys.stdout.write(f"vetfluid is already open with this data folder: {said}.\n")
            return 0
        if reached is Reached.OURS:
            return None
        said = _not_handed_over(reached, lock, holder, plan_file)
        if said:
            sys.stderr.write(f"vetfluid: {said}\n")
            (tell or _tell)(said)
            return 1
    folder = lock.folder
    if holder is None:
        text = (
            f"The data folder {folder} is locked ({lock.lock_path.name}), by no vetfluid "
            "window that answers."
        )
    elif holder.here:
        text = (
            f"vetfluid is already open with the data folder {folder} ({holder.words()}), "
            f"but its window has not answered for {patience_s:.0f} seconds."
        )
    else:
        text = f"vetfluid is already open with the data folder {folder} ({holder.words()})."
    detail = (
        "Two vetfluid windows on one data folder would overwrite each other's unsaved "
        "plan. Use the window that is open.\n\nTake over only if no vetfluid window is "
        "open there any more (it stopped, or that computer was switched off): the plan it "
        "left unsaved, if any, is then offered as a draft."
    )
    if not (ask or _ask_take_over)(text, detail):
        sys.stderr.write(f"vetfluid: {text} Use that window.\n")
        return 1
    if lock.take_over():
        return None
    if holder is None:
        still = (
            f"The lock {lock.lock_path} could not be taken over. Remove it, then start "
            "vetfluid again."
        )
    else:
        still = (
            f"vetfluid is still running with the data folder {folder} ({holder.words()}), "
            "so its lock was not taken over. Close that window, or end that process, then "
            "start vetfluid again."
        )
    sys.stderr.write(f"vetfluid: {still}\n")
    (tell or _tell)(still)
    return 1


def _not_handed_over(
    reached: Reached, lock: WindowLock, holder: Holder | None, plan_file: str | None
) -> str:
    """What to say when the window was reached but did not take the file and taking over
    cannot help ("" for a window that never answered: the take-over question follows)."""
    from pathlib import Path

    from ui.one_window import Reached

    who = f" ({holder.words()})" if holder is not None else ""
    what = Path(plan_file).name if plan_file else "the request"
    again = "open the file again" if plan_file else "start vetfluid again"
    if reached is Reached.UNSURE:
        return (
            f"The vetfluid window open with the data folder {lock.folder}{who} was asked to "
            f"open {what} but has not confirmed it: it may open it when it is free. Look at "
            f"that window before you {again}."
        )
    if reached is Reached.CLOSING:
        return (
            f"The vetfluid window open with the data folder {lock.folder}{who} is closing, or "
            f"asking about closing. Answer it there, then {again}."
        )
    if reached is Reached.OTHER_VERSION:
        return (
            f"A vetfluid window of another version is open with the data folder "
            f"{lock.folder}{who} (vetfluid was updated while it was open); it may have "
            f"taken {what}. Look at that window, and close it before you {again}."
        )
    if reached is Reached.FOREIGN:
        return (
            f"The open vetfluid window cannot be reached: the place it listens at for the "
            f"data folder {lock.folder} belongs to another account. Use that window, or ask "
            "whoever runs this computer."
        )
    return ""


class _WaitingBox:
    """After a second and a half, a box saying what this start waits for, with Cancel
    (the call says whether to go on waiting)."""

    def __init__(self, plan_file: str | None) -> None:
        self.box = None
        self.words = (
            "Waiting for the vetfluid window that is open to take the plan file…"
            if plan_file
            else "Waiting for the vetfluid window that is open to come forward…"
        )

    def __call__(self, seconds: float) -> bool:
        from PySide6.QtWidgets import QApplication, QProgressDialog

        if seconds < 1.5:
            return True
        if self.box is None:
            self.box = QProgressDialog(self.words, "Cancel", 0, 0)
            self.box.setWindowTitle("vetfluid")
            self.box.setMinimumDuration(0)
            self.box.show()
        QApplication.processEvents()
        return not self.box.wasCanceled()

    def close(self) -> None:
        if self.box is not None:
            self.box.close()


def _ask_take_over(text: str, detail: str) -> bool:
    from PySide6.QtWidgets import QMessageBox

    box = QMessageBox(QMessageBox.Icon.Warning, "vetfluid", text)
    box.setInformativeText(detail)
    leave = box.addButton("Quit", QMessageBox.ButtonRole.RejectRole)
    take = box.addButton("Take over", QMessageBox.ButtonRole.DestructiveRole)
    box.setDefaultButton(leave)
    box.setEscapeButton(leave)
    box.exec()
    return box.clickedButton() is take


def _tell(text: str) -> None:
    from PySide6.QtWidgets import QMessageBox

    QMessageBox.warning(None, "vetfluid", text)


def open_window(plan_file: str | None = None):  # noqa: ANN201 — MainWindow, imported late
    """The main window, shown. ``plan_file`` (``vetfluid PLAN.vfplan``, as a file
    association starts it) opens once the planner is built and has offered the draft left
    last time, so whatever is kept is asked about in the usual order (File → Open's path:
    a file that cannot be read is a message, not a crash)."""
    from pathlib import Path

    from ui.main_window import MainWindow

    window = MainWindow()
    window.show()
    if plan_file is not None:
        window.open_when_ready(Path(plan_file))
    return window


if __name__ == "__main__":
    sys.exit(main())
