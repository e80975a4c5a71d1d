"""Starting `vetfluid` where no window can open, and `vetfluid --help` (issue 17): a one-line
message and an exit code, never Qt's abort and a core dump; help is printed, not a window."""

from __future__ import annotations

import os
import socket
import subprocess
import sys
from pathlib import Path

import pytest

from ui.common import platform_check
from ui.common.platform_check import display_problem
from vetfluid import __version__

VETFLUID = str(Path(sys.executable).with_name("vetfluid"))
ROOT = Path(__file__).resolve().parents[1]
NO_SERVER = ":87"  # no X server listens on display 87 here (checked below)


def _free_display() -> bool:
    return not Path("/tmp/.X11-unix/X87").exists()


def _env(**changes: str) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items()
           if k not in ("QT_QPA_PLATFORM", "WAYLAND_DISPLAY", "DISPLAY")}  # fmt: skip
    env.update(changes)
    return env


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="X displays are Linux's here")
def test_a_display_with_no_x_server_is_one_line_and_no_abort():
    assert _free_display()
    run = subprocess.run([VETFLUID], env=_env(DISPLAY=NO_SERVER), capture_output=True,
                         text=True, timeout=60)  # fmt: skip
    assert run.returncode == 1, run.stderr  # not -6 (SIGABRT) from Qt
    assert run.stderr.count("\n") == 1, run.stderr
    assert "no display could be opened" in run.stderr and NO_SERVER in run.stderr
    assert "QT_QPA_PLATFORM=offscreen" in run.stderr and "vetfluid sheet" in run.stderr


@pytest.mark.parametrize("display", [NO_SERVER, "127.0.0.1:87", "unix:87.0", ":x"])
def test_display_problem_names_a_display_nobody_answers(monkeypatch, display):
    monkeypatch.delenv("QT_QPA_PLATFORM", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    monkeypatch.setenv("DISPLAY", display)
    problem = display_problem()
    assert problem is not None and "no display could be opened" in problem


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="abstract sockets are Linux's")
def test_a_display_whose_server_answers_passes(monkeypatch):
    server = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    server.bind("\0/tmp/.X11-unix/X87")  # where an X server on :87 listens (abstract name)
    server.listen(1)
    try:
        monkeypatch.delenv("QT_QPA_PLATFORM", raising=False)
        monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
        monkeypatch.setenv("DISPLAY", NO_SERVER)
        monkeypatch.setattr(platform_check, "missing_packages", lambda *a: [])
        assert display_problem() is None
    finally:
        server.close()


def test_help_prints_usage_and_opens_no_window():
    run = subprocess.run([VETFLUID, "--help"], env=_env(QT_QPA_PLATFORM="offscreen"),
                         capture_output=True, text=True, timeout=30)  # fmt: skip
    assert run.returncode == 0, run.stderr
    for word in ("usage: vetfluid", "sheet", "chart", "--version", "QT_QPA_PLATFORM=offscreen"):
        assert word in run.stdout


def test_version_prints_the_version_and_the_species_data_version():
    """Issue 21: the program's version and the species data's (a digest of the shipped CSV
    files, vetfluid/tables/data_version.py), so a printout, an install and a bundle can be
    told apart by what they plan from."""
    from vetfluid import __version__
    from vetfluid.tables.data_version import species_data_version

    run = subprocess.run([VETFLUID, "--version"], env=_env(QT_QPA_PLATFORM="offscreen"),
                         capture_output=True, text=True, timeout=30)  # fmt: skip
    expected = f"vetfluid {__version__} (species data {species_data_version()})\n"
    assert run.returncode == 0 and run.stdout == expected


def test_a_plan_file_given_at_start_opens_in_the_window(qtbot, tmp_path, answer):
    """Issue 21: a file association for plan files starts `vetfluid PLAN.vfplan.json`; the
    window opens with that plan, as File → Open would open it."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    answer({})  # any question or message fails the test
    request = demo("small_gerbil").request
    path = write_request_file(tmp_path / "gerbil.vfplan.json", request, {})
    window = open_window(str(path))
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None and window.session.plan is not None)
    assert window.session.plan.request == request


def test_a_plan_file_that_cannot_be_read_at_start_is_a_message(qtbot, tmp_path, answer):
    """A file association pointing at a file since moved: the window says so and stays up."""
    from ui.app import open_window

    shown = []
    answer({"Could not open gone.vfplan.json": lambda: shown.append(1)})
    window = open_window(str(tmp_path / "gone.vfplan.json"))
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: shown == [1])
    assert window.isVisible()


def test_version_without_species_data_says_so_in_one_line(tmp_path, monkeypatch, capsys):
    """A bundle or install that lost its species_data/ folder: one line naming it, exit 1,
    no traceback (here: a frozen program whose bundle folder holds no data)."""
    from ui.app import main

    monkeypatch.setattr(sys, "frozen", True, raising=False)
    monkeypatch.setattr(sys, "_MEIPASS", str(tmp_path), raising=False)
    assert main(["vetfluid", "--version"]) == 1
    captured = capsys.readouterr()
    assert captured.out == f"vetfluid {__version__}\n"  # the version, whatever the data
    assert captured.err == (
        "vetfluid: the species data could not be read: vetfluid's species_data/ folder is "
        f"missing from this bundle ({tmp_path}) — reinstall vetfluid (a bundle: copy its whole "
        "folder again); no plan can be made until then\n"
    )


@pytest.mark.parametrize(
    ("damage", "named"),
    [
        ("fluids.csv", "fluids.csv:1: missing column"),  # cut short after its first lines
        ("safety_limits.csv", "safety_limits.csv"),
        ("parameters.csv", "parameters.csv"),
    ],
)
def test_version_says_when_the_species_data_is_damaged(tmp_path, monkeypatch, capsys, damage,
                                                       named):  # fmt: skip
    """Finding (12): data whose files are all there but one is damaged still has a digest;
    `--version` loads every table as a plan would and says which file cannot be read."""
    import shutil

    from ui.app import main

    shutil.copytree(ROOT / "species_data", tmp_path / "species_data")
    broken = tmp_path / "species_data" / damage
    broken.write_text('id,"half a line\n', encoding="utf-8")
    monkeypatch.setattr(sys, "frozen", True, raising=False)
    monkeypatch.setattr(sys, "_MEIPASS", str(tmp_path), raising=False)
    assert main(["vetfluid", "--version"]) == 1
    captured = capsys.readouterr()
    assert captured.out.startswith(f"vetfluid {__version__} (species data ")
    assert captured.err.startswith("vetfluid: the species data could not be read: ")
    assert named in captured.err and captured.err.count("\n") == 1
    assert "Traceback" not in captured.err


# ---- plan files: their own extension, and names starting with "-" (issue 21) -------------
def test_a_plan_file_named_with_a_dash_opens_after_double_dash(qtbot, tmp_path, answer):
    """Finding (12): `vetfluid -- -dog.vfplan` and `vetfluid ./-dog.vfplan` name the file;
    `vetfluid -dog.vfplan` is refused in words saying how to write it."""
    from ui.app import open_window, plan_file_argument
    from vetfluid.common.errors import InputError
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    assert plan_file_argument(["--", "-dog.vfplan"]) == "-dog.vfplan"
    assert plan_file_argument(["./-dog.vfplan"]) == "./-dog.vfplan"
    assert plan_file_argument(["--", "sheet"]) == "sheet"  # a file named like a command
    assert plan_file_argument([]) is None and plan_file_argument(["--"]) is None
    with pytest.raises(InputError, match="write vetfluid -- -dog.vfplan"):
        plan_file_argument(["-dog.vfplan"])
    with pytest.raises(InputError, match="one plan file at a time"):
        plan_file_argument(["a.vfplan", "b.vfplan"])
    answer({})  # any question or message fails the test
    request = demo("small_gerbil").request
    path = write_request_file(tmp_path / "-gerbil", request, {})
    assert path.name == "-gerbil.vfplan"
    window = open_window(plan_file_argument(["--", str(path)]))
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None and window.session.plan is not None)
    assert window.session.plan.request == request


def test_a_name_starting_with_a_dash_without_double_dash_is_one_line(tmp_path):
    run = subprocess.run([VETFLUID, "-dog.vfplan"], env=_env(QT_QPA_PLATFORM="offscreen"),
                         capture_output=True, text=True, timeout=30)  # fmt: skip
    assert run.returncode == 2 and run.stdout == ""
    assert run.stderr == (
        "vetfluid: -dog.vfplan is not an option of vetfluid — to open a plan file of that "
        "name, write vetfluid -- -dog.vfplan (or vetfluid ./-dog.vfplan); vetfluid --help "
        "lists the commands\n"
    )


def test_help_says_how_to_open_a_name_starting_with_a_dash():
    from ui.app import USAGE

    assert "vetfluid -- -PLAN.vfplan" in USAGE and "./-PLAN.vfplan" in USAGE
    assert "[PLAN.vfplan]" in USAGE and "*.vfplan.json" in USAGE


def test_a_plan_file_saved_before_opens_at_start(qtbot, tmp_path, answer):
    """Plan files saved before issue 21 end in .vfplan.json: still opened by `vetfluid FILE`."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    answer({})
    request = demo("renal_cat").request
    path = write_request_file(tmp_path / "cat.vfplan.json", request, {})
    assert path.name == "cat.vfplan.json"  # as written before: kept
    window = open_window(str(path))
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None and window.session.plan is not None)
    assert window.session.plan.request == request


# ---- a user data folder that cannot be made (finding 11) ---------------------------------
def test_the_window_opens_and_says_the_data_folder_cannot_be_used(qtbot, tmp_path, monkeypatch,
                                                                  answer):  # fmt: skip
    """VETFLUID_HOME under a file: the window opens, says in words that settings and records
    cannot be kept there, why and what to do; a plan is still made (no traceback, no log)."""
    from ui.app import open_window

    in_the_way = tmp_path / "not-a-folder"
    in_the_way.write_text("a file", encoding="utf-8")
    monkeypatch.setenv("VETFLUID_HOME", str(in_the_way / "vetfluid"))
    answer({})  # any question or message fails the test
    window = open_window()
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None)
    notice = window.data_folder_notice
    qtbot.waitUntil(notice.isVisible)  # shown with the window, a turn or two later
    text = notice.text()
    assert "Settings and patient records cannot be kept" in text
    assert f"{in_the_way} is a file, not a folder" in text
    assert "set VETFLUID_HOME to a folder you can write to" in text
    assert window.records is None  # none could be opened; the status bar says why
    window.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    # closing asks before dropping a plan nothing could keep, as without records
    from PySide6.QtWidgets import QMessageBox

    answer({"The records file cannot be used": QMessageBox.StandardButton.Discard})
    assert window.close()


def test_the_notice_is_hidden_when_the_folder_can_be_used(qtbot, planner):
    assert not planner.data_folder_notice.isVisible()
    assert planner.data_folder_notice.text() == ""


@pytest.mark.parametrize("command", [["--version"], ["--help"], ["sheet", "--help"]])
def test_commands_do_not_fail_on_a_data_folder_that_cannot_be_made(tmp_path, command):
    blocked = tmp_path / "file"
    blocked.write_text("x", encoding="utf-8")
    run = subprocess.run([VETFLUID, *command],
                         env=_env(QT_QPA_PLATFORM="offscreen", VETFLUID_HOME=str(blocked)),
                         capture_output=True, text=True, timeout=60)  # fmt: skip
    assert run.returncode == 0, run.stderr
    assert "Traceback" not in run.stderr


def test_the_chart_command_says_the_overrides_are_not_read(tmp_path):
    """`vetfluid chart` still prints from the shipped values, and says in one line that the
    clinic overrides cannot be read from a data folder that cannot be made."""
    blocked = tmp_path / "file"
    blocked.write_text("x", encoding="utf-8")
    run = subprocess.run(
        [VETFLUID, "chart", "--species", "dog", "-o", str(tmp_path / "chart.pdf")],
        env=_env(QT_QPA_PLATFORM="offscreen", VETFLUID_HOME=str(blocked / "sub")),
        capture_output=True, text=True, timeout=60,
    )  # fmt: skip
    assert run.returncode == 0, run.stderr
    assert run.stderr.startswith("vetfluid chart: the user data folder ")
    assert f"{blocked} is a file, not a folder, so no clinic overrides are read" in run.stderr
    assert "Traceback" not in run.stderr and (tmp_path / "chart.pdf").is_file()


def _read_only_for_a_clinician(monkeypatch, home: Path) -> None:
    """``os.access`` answered for ``home`` as for a clinician whose folder is read-only (as
    root here every folder is writable; a read-only mount answers so for root too)."""
    real = os.access

    def access(path, mode, *args, **kwargs):  # noqa: ANN001, ANN202
        if os.fspath(path) == str(home):
            return not mode & os.W_OK
        return real(path, mode, *args, **kwargs)

    monkeypatch.setattr(os, "access", access)


def test_sheet_and_chart_say_a_read_only_folders_overrides_are_read(
    tmp_path, monkeypatch, capsys, vetfluid_home
):
    """Finding (review of 66a3521, 1): a read-only data folder's clinic overrides are read and
    used, so `vetfluid chart` and `vetfluid sheet` say only that nothing can be saved there."""
    from ui.app import main
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file
    from vetfluid.tables.overrides import set_override

    set_override(species_id="dog", parameter="bolus_minutes", value=25)
    plan = write_request_file(tmp_path / "dog", demo("dehydrated_dog").request, {})
    _read_only_for_a_clinician(monkeypatch, vetfluid_home)
    said = (
        f"the user data folder {vetfluid_home} (set by VETFLUID_HOME) is read-only for you: the "
        "clinic overrides in it are read, but nothing can be saved there — set VETFLUID_HOME "
        "to a folder you can write to, or make it writable for you, then start vetfluid again"
    )
    chart = ["chart", "--species", "dog", "-o", str(tmp_path / "chart.pdf")]
    assert main(["vetfluid", *chart]) == 0
    assert capsys.readouterr().err == f"vetfluid chart: {said}\n"
    assert main(["vetfluid", "sheet", str(plan), "-o", str(tmp_path / "sheet.pdf")]) == 0
    assert capsys.readouterr().err == f"vetfluid sheet: {said}\n"


def test_the_window_says_a_read_only_folders_overrides_are_read(qtbot, monkeypatch, answer,
                                                                vetfluid_home):  # fmt: skip
    """The window's notice words a read-only folder as the command lines do."""
    from ui.app import open_window
    from vetfluid.common.paths import data_folder_problem

    _read_only_for_a_clinician(monkeypatch, vetfluid_home)
    answer({})
    window = open_window()
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None)
    text = window.data_folder_notice.text()
    qtbot.waitUntil(window.data_folder_notice.isVisible)
    assert data_folder_problem() in text
    assert "the clinic overrides in it are read, but nothing can be saved there" in text
    assert "not read" not in text


def test_self_check_writes_the_views_the_plan_file_and_the_sheet(tmp_path, vetfluid_home):
    """Issue 21: `vetfluid self-check FOLDER` from the source install (the bundle's test runs
    it from the bundle): a picture per tab, the demo's plan file and its sheet, and nothing
    in the data folder it was started with."""
    folder = tmp_path / "check"
    run = subprocess.run([VETFLUID, "self-check", str(folder)], env=_env(), capture_output=True,
                         text=True, timeout=120)  # fmt: skip
    assert run.returncode == 0, run.stderr
    assert run.stdout.splitlines()[-1] == "self-check passed"
    written = sorted(p.name for p in folder.iterdir())
    assert written == [
        "dehydrated_dog-0-plan.png", "dehydrated_dog-1-timeline.png",
        "dehydrated_dog-2-course.png", "dehydrated_dog-3-checks.png",
        "dehydrated_dog-4-values.png", "dehydrated_dog-sheet.pdf",
        "dehydrated_dog.vfplan",
    ]  # fmt: skip
    assert not any(vetfluid_home.iterdir())


def test_self_check_refuses_an_unknown_demo_in_one_line(tmp_path):
    run = subprocess.run([VETFLUID, "self-check", str(tmp_path), "--demo", "unicorn"],
                         env=_env(), capture_output=True, text=True, timeout=60)  # fmt: skip
    assert run.returncode == 2
    assert run.stderr.count("\n") == 1 and "unknown demo 'unicorn'" in run.stderr
