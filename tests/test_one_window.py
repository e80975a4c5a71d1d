"""One window per data folder (ui/one_window.py): two windows on one data folder share one
draft, so each autosave would replace the other's unsaved plan, and a window starting beside
a running one would offer the running one's draft as the work of a crash.

What a clinician expects of a desktop program (common practice, no source): a second start
(a plan file double-clicked while vetfluid is open) brings the open window forward with
that file, and a crash never locks the program out."""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from PySide6.QtNetwork import QLocalSocket
from PySide6.QtWidgets import QApplication, QMessageBox

from ui.one_window import (
    LOCK_NAME,
    SOCKET_PATH_LIMIT,
    Claim,
    WindowLock,
    read_message,
    socket_name,
    write_message,
)

VETFLUID = str(Path(sys.executable).with_name("vetfluid"))
ROOT = Path(__file__).resolve().parents[1]
# a process that holds the data folder's window lock and answers nothing (a window that hangs)
HOLDER = textwrap.dedent(
    """
    import sys, time
    from pathlib import Path
    from PySide6.QtCore import QCoreApplication
    from ui.one_window import WindowLock
    app = QCoreApplication([])
    lock = WindowLock(Path(sys.argv[1]))
    print(lock.claim().value, flush=True)
    time.sleep(120)
    """
)


def _env(home: Path) -> dict[str, str]:
    return {**os.environ, "VETFLUID_HOME": str(home), "QT_QPA_PLATFORM": "offscreen",
            "PYTHONPATH": str(ROOT)}  # fmt: skip


@pytest.fixture()
def silent_holder(vetfluid_home):
    """Another process holding the lock, never answering; killed at the end."""
    process = subprocess.Popen(
        [sys.executable, "-c", HOLDER, str(vetfluid_home)], env=_env(vetfluid_home),
        stdout=subprocess.PIPE, text=True,
    )  # fmt: skip
    assert process.stdout.readline().strip() == "ours"
    yield process
    process.kill()
    process.wait(timeout=30)
    process.stdout.close()


def test_the_first_window_holds_the_lock_and_a_second_claim_is_refused(vetfluid_home):
    first, second = WindowLock(vetfluid_home), WindowLock(vetfluid_home)
    assert first.claim() is Claim.OURS
    assert (vetfluid_home / LOCK_NAME).is_file()
    assert second.claim() is Claim.HELD
    holder = second.holder()
    assert holder is not None and holder.pid == os.getpid() and holder.here
    first.release()
    assert second.claim() is Claim.OURS  # closed: the next start takes it
    second.release()


def test_a_crashed_window_never_locks_vetfluid_out(silent_holder, vetfluid_home):
    """A window killed outright (a crash, a power cut) leaves its lock file; the next start
    finds its process gone and takes the lock over."""
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.HELD
    assert lock.holder().pid == silent_holder.pid
    silent_holder.kill()
    silent_holder.wait(timeout=30)
    assert (vetfluid_home / LOCK_NAME).is_file()  # left behind
    assert lock.claim() is Claim.OURS
    lock.release()


def test_a_plan_file_double_clicked_opens_in_the_window_already_open(qtbot, tmp_path, answer,
                                                                     vetfluid_home):  # fmt: skip
    """A second `vetfluid PLAN.vfplan` (a file association) hands the file to the open
    window, which opens it, and ends at once with 0, saying so; no second window."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    answer({})  # any question or message in this window fails the test
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    window = open_window()
    qtbot.addWidget(window)
    assert lock.serve()
    lock.asked.connect(window.come_forward)
    qtbot.waitUntil(lambda: window.session is not None)
    request = demo("small_gerbil").request
    write_request_file(tmp_path / "gerbil.vfplan", request, {})
    second = subprocess.Popen(
        [VETFLUID, "gerbil.vfplan"], cwd=tmp_path, env=_env(vetfluid_home),
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    )  # fmt: skip
    qtbot.waitUntil(lambda: second.poll() is not None, timeout=60_000)  # this loop answers it
    out, err = second.communicate()
    assert second.returncode == 0, err
    assert (
        out == "vetfluid is already open with this data folder: its window opens the plan file.\n"
    )
    qtbot.waitUntil(lambda: window.session.plan is not None)
    assert window.session.plan.request == request  # the relative name, found
    lock.release()


def test_two_starts_of_vetfluid_leave_one_window(tmp_path, vetfluid_home):
    """Whole programs: `vetfluid` is running; `vetfluid PLAN.vfplan` ends at once, having
    handed the file over, and the first goes on."""
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    plan = write_request_file(tmp_path / "dog.vfplan", demo("dehydrated_dog").request, {})
    first = subprocess.Popen([VETFLUID], env=_env(vetfluid_home), stderr=subprocess.PIPE)
    try:
        listening = Path(socket_name(vetfluid_home))
        deadline = time.monotonic() + 60
        while not listening.exists() and first.poll() is None and time.monotonic() < deadline:
            time.sleep(0.05)
        assert listening.exists(), "the first window never listened"
        second = subprocess.run([VETFLUID, str(plan)], env=_env(vetfluid_home),
                                capture_output=True, text=True, timeout=60)  # fmt: skip
        assert second.returncode == 0, second.stderr
        assert second.stdout.endswith("its window opens the plan file.\n")
        assert first.poll() is None  # still open
    finally:
        first.kill()
        first.wait(timeout=30)
        first.stderr.close()


def test_a_window_that_does_not_answer_is_said_and_keeps_its_lock(silent_holder, vetfluid_home,
                                                                  capsys):  # fmt: skip
    """A window that holds the lock but does not answer (hung): the user is told why two
    windows must not share the folder. Quit ends with 1; Take over is refused while that
    process still holds the lock, and the user is told to close it first."""
    from ui.app import another_window_open

    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.HELD
    asked, told = [], []

    def refuse(text: str, detail: str) -> bool:
        asked.append((text, detail))
        return False

    assert another_window_open(lock, None, ask=refuse, tell=told.append) == 1
    text, detail = asked[0]
    assert text == (
        f"vetfluid is already open with the data folder {vetfluid_home} (process "
        f"{silent_holder.pid} on this computer), but its window does not answer."
    )
    assert "would overwrite each other's unsaved plan" in detail
    assert "offered as a draft" in detail
    assert capsys.readouterr().err == f"vetfluid: {text} Use that window.\n"
    assert told == []
    assert another_window_open(lock, None, ask=lambda *_: True, tell=told.append) == 1
    assert told == [
        f"vetfluid is still running with the data folder {vetfluid_home} (process "
        f"{silent_holder.pid} on this computer), so its lock was not taken over. Close that "
        "window, or end that process, then start vetfluid again."
    ]
    assert WindowLock(vetfluid_home).holder().pid == silent_holder.pid  # still its


def test_a_lock_whose_holder_is_gone_but_looks_alive_can_be_taken_over(vetfluid_home):
    """A lock file naming a live process of the same program that no longer holds it (the
    number reused after a power cut): nothing answers; Take over takes it."""
    from ui.app import another_window_open

    made = WindowLock(vetfluid_home)
    assert made.claim() is Claim.OURS
    lines = (vetfluid_home / LOCK_NAME).read_text(encoding="utf-8").splitlines()
    made.release()
    # the same machine and boot, another live process running this very program
    program = Path(os.readlink("/proc/self/exe")).name if Path("/proc/self/exe").exists() else ""
    if not program:
        pytest.skip("the process's program is read from /proc here")
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        lines[0], lines[1] = str(sleeper.pid), program
        (vetfluid_home / LOCK_NAME).write_text("\n".join(lines) + "\n", encoding="utf-8")
        lock = WindowLock(vetfluid_home)
        assert lock.claim() is Claim.HELD
        assert another_window_open(lock, None, ask=lambda *_: True, tell=pytest.fail) is None
        assert WindowLock(vetfluid_home).holder().pid == os.getpid()
        lock.release()
    finally:
        sleeper.kill()
        sleeper.wait(timeout=30)


def test_the_window_answers_only_its_own_kind_of_request(qtbot, vetfluid_home):
    """Anything on the socket that is not a request to open an absolute path (or nothing)
    is dropped unread and asks nothing of the window."""
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    assert lock.serve()
    asked = []
    lock.asked.connect(asked.append)
    for junk in (b"rm -rf /\n", b'{"open": "relative.vfplan"}\n', b"x" * 70_000):
        sender = QLocalSocket()
        sender.connectToServer(socket_name(vetfluid_home))
        assert sender.waitForConnected(3000)
        sender.write(junk)
        sender.flush()
        qtbot.waitUntil(
            lambda s=sender: s.state() == QLocalSocket.LocalSocketState.UnconnectedState
        )
    assert asked == []
    lock.release()


@pytest.mark.parametrize(
    ("line", "read"),
    [
        (write_message("/home/vet/rex.vfplan"), "/home/vet/rex.vfplan"),
        (write_message(None), ""),  # come forward, open nothing
        (write_message("/tmp/Fëlix ∂.vfplan"), "/tmp/Fëlix ∂.vfplan"),  # sent as ASCII
        (b'{"open": "rex.vfplan"}\n', None),  # relative: to which folder?
        (b'{"open": "/a\\u0000b"}\n', None),
        (b'{"open": "/a", "run": "x"}\n', None),
        (b'{"open": 3}\n', None),
        (b"[]\n", None),
        (b"\xff\xfe\n", None),
    ],
)
def test_requests_are_read_strictly(line, read):
    assert read_message(line) == read


def test_the_socket_lies_in_the_data_folder_where_its_path_fits(tmp_path):
    """Inside the owner-only data folder only its owner can reach it; a path too long for
    a Unix socket gets a name derived from the folder instead."""
    short = tmp_path / "d"
    if sys.platform != "win32":
        assert socket_name(short) == str(short / "window.socket")
    deep = tmp_path / ("x" * SOCKET_PATH_LIMIT)
    name = socket_name(deep)
    assert name.startswith("vetfluid-window-") and name == socket_name(deep)
    assert socket_name(deep / "other") != name


def test_a_folder_where_no_lock_can_be_made_is_said(tmp_path):
    (tmp_path / "file").write_text("in the way", encoding="utf-8")
    lock = WindowLock(tmp_path / "file" / "vetfluid")
    assert lock.claim() is Claim.UNLOCKABLE
    assert "no lock could be made" in lock.problem


def test_a_plan_file_handed_over_waits_for_an_open_question(qtbot, tmp_path, vetfluid_home):
    """A question open in the window is answered first: the file opens after it, and the
    status line says it waits."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    window = open_window()
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None)
    request = demo("cold_bearded_dragon").request
    path = write_request_file(tmp_path / "dragon.vfplan", request, {})
    question = QMessageBox(QMessageBox.Icon.Question, "vetfluid", "A question", parent=window)
    question.open()
    qtbot.waitUntil(lambda: QApplication.activeModalWidget() is question)
    window.come_forward(str(path))
    qtbot.wait(700)
    assert window.session.plan is None
    assert "dragon.vfplan waits to open" in window.statusBar().currentMessage()
    question.done(0)
    qtbot.waitUntil(lambda: window.session.plan is not None, timeout=5000)
    assert window.session.plan.request == request
