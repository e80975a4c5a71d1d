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
    IDLE_CONNECTION_MS,
    LOCK_NAME,
    OPEN_CONNECTIONS_LIMIT,
    SOCKET_PATH_LIMIT,
    Claim,
    Reached,
    Request,
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


def _dialog_open_over(qtbot, window) -> QMessageBox:  # noqa: ANN001 — MainWindow
    """A dialog open in ``window`` (as File ▸ Open's would be), once the window is ready."""
    qtbot.waitUntil(lambda: window.session is not None and window.waiting_files.started)
    dialog = QMessageBox(QMessageBox.Icon.Question, "vetfluid", "A dialog", parent=window)
    dialog.open()
    qtbot.waitUntil(lambda: QApplication.activeModalWidget() is dialog)
    return dialog


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

    assert another_window_open(lock, None, ask=refuse, tell=told.append, patience_s=2) == 1
    text, detail = asked[0]
    assert text == (
        f"vetfluid is already open with the data folder {vetfluid_home} (process "
        f"{silent_holder.pid} on this computer), but its window has not answered for 2 seconds."
    )
    assert "would overwrite each other's unsaved plan" in detail
    assert "offered as a draft" in detail
    assert capsys.readouterr().err == f"vetfluid: {text} Use that window.\n"
    assert told == []
    assert another_window_open(lock, None, ask=lambda *_: True, tell=told.append,
                               patience_s=1) == 1  # fmt: skip
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
        taken = another_window_open(lock, None, ask=lambda *_: True, tell=pytest.fail, patience_s=1)
        assert taken is None
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
        (write_message(Path("/home/vet/rex.vfplan")), Request(Path("/home/vet/rex.vfplan"))),
        (write_message(None), Request(None)),  # come forward, open nothing
        (write_message(Path("/tmp/Fëlix ∂.vfplan")), Request(Path("/tmp/Fëlix ∂.vfplan"))),
        # a name in the system's bytes that is not UTF-8 (Latin-1 ü) survives the trip
        (
            write_message(Path(os.fsdecode(b"/tmp/M\xfcller.vfplan"))),
            Request(Path(os.fsdecode(b"/tmp/M\xfcller.vfplan"))),
        ),  # fmt: skip
        (b'{"open": "' + b"rex.vfplan".hex().encode() + b'"}\n', None),  # relative: where?
        (b'{"open": "' + b"/a\x00b".hex().encode() + b'"}\n', None),
        (b'{"open": "/home/vet/rex.vfplan"}\n', None),  # not hexadecimal
        (b'{"open": "", "run": "x"}\n', None),
        (b'{"open": 3}\n', None),
        (b"[]\n", None),
        (b"\xff\xfe\n", None),
    ],
)
def test_requests_are_read_strictly(line, read):
    assert read_message(line) == read


def test_the_socket_lies_in_the_data_folder_where_its_path_fits(tmp_path, monkeypatch):
    """Inside the owner-only data folder only its owner can reach it; a path too long for
    a Unix socket puts it in the user's private runtime folder (Qt makes that 0700), never
    under a name another user of the shared temporary folder could take first. A relative
    data folder is made absolute (Qt would read a relative name as one in /tmp)."""
    from PySide6.QtCore import QStandardPaths

    if sys.platform == "win32":
        pytest.skip("Windows uses named pipes")
    short = tmp_path / "d"
    assert socket_name(short) == str(short / "window.socket")
    monkeypatch.chdir(tmp_path)
    assert socket_name(Path("relhome")) == str(tmp_path / "relhome" / "window.socket")
    deep = tmp_path / ("x" * SOCKET_PATH_LIMIT)
    name = socket_name(deep)
    private = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.RuntimeLocation)
    assert Path(name).parent == Path(private) and Path(name).name.startswith("vetfluid-window-")
    assert name == socket_name(deep) and socket_name(deep / "other") != name


def test_a_folder_where_no_lock_can_be_made_opens_without_one(tmp_path):
    """A data folder that cannot be written (the window says so above the planner): no
    lock can be made there, and the window opens without one."""
    (tmp_path / "file").write_text("in the way", encoding="utf-8")
    lock = WindowLock(tmp_path / "file" / "vetfluid")
    assert lock.claim() is Claim.UNLOCKABLE


def test_a_plan_file_handed_over_waits_for_an_open_question(qtbot, tmp_path, vetfluid_home):
    """A question open in the window is answered first: the file opens after it, and the
    status line says it waits."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    window = open_window()
    qtbot.addWidget(window)
    request = demo("cold_bearded_dragon").request
    path = write_request_file(tmp_path / "dragon.vfplan", request, {})
    question = _dialog_open_over(qtbot, window)
    window.come_forward(path)
    qtbot.wait(700)
    assert window.session.plan is None
    waiting = "dragon.vfplan: opens when the open dialog is closed."
    assert window.statusBar().currentMessage() == waiting
    question.done(0)
    qtbot.waitUntil(lambda: window.session.plan is not None, timeout=5000)
    assert window.session.plan.request == request
    assert window.statusBar().currentMessage() != waiting  # not left behind


@pytest.mark.parametrize("listening", [True, False])  # before the 3 s, or only after them
def test_a_second_start_waits_for_a_window_that_is_slow_to_start(
    qtbot, tmp_path, answer, vetfluid_home, listening
):
    """Review finding: the first window listened only after building its planner, and a
    second start gave up within 3 s. A slow clinic computer: the lock taken, the window
    not yet up for 3 s; the second start waits, hands its file over, and it opens."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    answer({})
    request = demo("renal_cat").request
    plan = write_request_file(tmp_path / "cat.vfplan", request, {})
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    if listening:
        assert lock.serve()
    second = subprocess.Popen(
        [VETFLUID, str(plan)], env=_env(vetfluid_home),
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    )  # fmt: skip
    time.sleep(3.0)  # no event loop runs: the first start is still busy
    window = open_window()
    qtbot.addWidget(window)
    if not listening:
        assert lock.serve()  # as main() does, on the first turn of the event loop
    lock.asked.connect(window.come_forward)
    qtbot.waitUntil(lambda: second.poll() is not None, timeout=30_000)
    out, err = second.communicate()
    assert second.returncode == 0, err
    assert out.endswith("its window opens the plan file.\n")
    qtbot.waitUntil(lambda: window.session is not None and window.session.plan is not None)
    assert window.session.plan.request == request
    lock.release()


def test_a_second_start_takes_over_from_a_window_that_closes_meanwhile(tmp_path, vetfluid_home):
    """Review finding: a window closing while a second start handed its file over made the
    second say the first 'does not answer'. It now finds the lock free and opens itself."""
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    assert lock.serve()
    second = subprocess.Popen([VETFLUID], env=_env(vetfluid_home), stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True)  # fmt: skip
    try:
        time.sleep(1.0)  # it is connected and waiting: this window never answers, and closes
        lock.release()
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline and second.poll() is None:
            holder = WindowLock(vetfluid_home).holder()
            if holder is not None and holder.pid == second.pid:
                break
            time.sleep(0.1)
        assert second.poll() is None  # it opened its own window
        assert WindowLock(vetfluid_home).holder().pid == second.pid
    finally:
        second.kill()
        out, err = second.communicate(timeout=30)
    assert "does not answer" not in out + err and "not answered" not in out + err


def test_a_plan_file_given_at_start_opens_after_the_draft_left_by_a_crash(
    qtbot, planner, answer, tmp_path
):
    """Review finding (older than the lock): `vetfluid PLAN.vfplan` after a crash opened the
    file inside the draft's question and showed an internal error. The draft is offered
    first; the file opens after it, asking about the restored plan as File ▸ Open does."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    window = planner
    window.open_demo("small_gerbil")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    window.session.update(dehydration_percent=6.0)  # unsaved work
    qtbot.waitUntil(lambda: window.session.plan.request.dehydration_percent == 6.0)
    window.keeper.autosave()  # then vetfluid crashed: this window is never closed
    request = demo("dehydrated_dog").request
    plan = write_request_file(tmp_path / "dog.vfplan", request, {})
    asked = []

    def restore() -> QMessageBox.StandardButton:
        asked.append("draft")
        return QMessageBox.StandardButton.Yes

    def keep() -> str:
        asked.append("leave")
        return "Keep as draft"

    answer({"stopped unexpectedly": restore, "is not saved as a version yet": keep})
    again = open_window(str(plan))
    qtbot.addWidget(again)
    qtbot.waitUntil(lambda: again.session is not None and again.session.plan is not None)
    qtbot.waitUntil(lambda: again.session.plan.request == request, timeout=10_000)
    assert asked == ["draft", "leave"]  # the draft first, then the file, asked about in turn


def test_junk_connections_are_dropped_and_a_flood_does_not_shut_the_window_out(
    qtbot, vetfluid_home
):
    """Review finding: connections that closed before a whole request were never deleted,
    and a flood of idle ones could leave the window unreachable. Closed ones are forgotten,
    at most OPEN_CONNECTIONS_LIMIT are kept, idle ones are dropped after a few seconds,
    and a second start behind a flood still gets through."""
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    assert lock.serve()
    asked = []
    lock.asked.connect(asked.append)
    closed = []
    for _ in range(30):  # half a request, then gone
        sender = QLocalSocket()
        sender.connectToServer(socket_name(vetfluid_home))
        assert sender.waitForConnected(3000)
        sender.write(b'{"open": ')
        sender.flush()
        sender.disconnectFromServer()
        closed.append(sender)
    qtbot.waitUntil(lambda: not lock._connections)
    idle = []
    for _ in range(OPEN_CONNECTIONS_LIMIT + 4):
        sender = QLocalSocket()
        sender.connectToServer(socket_name(vetfluid_home))
        sender.waitForConnected(3000)
        idle.append(sender)
    qtbot.waitUntil(lambda: len(lock._connections) == OPEN_CONNECTIONS_LIMIT)
    qtbot.wait(IDLE_CONNECTION_MS + 500)
    assert not lock._connections  # all dropped as idle
    assert asked == []
    lock.release()


def test_coming_forward_keeps_a_maximised_window_maximised(qtbot, vetfluid_home):
    """Review finding: a maximised window, minimised, came back at its normal size."""
    from PySide6.QtCore import Qt

    from ui.app import open_window

    window = open_window()
    qtbot.addWidget(window)
    window.setWindowState(Qt.WindowState.WindowMaximized | Qt.WindowState.WindowMinimized)
    window.come_forward(None)
    assert window.windowState() & Qt.WindowState.WindowMaximized
    assert not window.windowState() & Qt.WindowState.WindowMinimized


def test_a_lock_that_names_no_one_is_said_in_words(vetfluid_home):
    """Review finding: an empty lock file was reported as 'another process' whose window
    does not answer; a folder in its place locked vetfluid out with the words for a window
    still running. Both now name the lock; Take over works for the empty one."""
    from ui.app import another_window_open

    vetfluid_home.mkdir(parents=True, exist_ok=True)
    (vetfluid_home / LOCK_NAME).write_text("", encoding="utf-8")
    lock = WindowLock(vetfluid_home)
    asked = []
    taken = another_window_open(lock, None, ask=lambda text, _: asked.append(text) or True,
                                tell=pytest.fail, patience_s=1)  # fmt: skip
    assert asked == [
        f"The data folder {vetfluid_home} is locked (window.lock), by no vetfluid window that "
        "answers."
    ]
    if taken is None:  # Qt read the empty file as a stale lock and took it at once
        assert WindowLock(vetfluid_home).holder().pid == os.getpid()
    lock.release()
    (vetfluid_home / LOCK_NAME).unlink(missing_ok=True)
    (vetfluid_home / LOCK_NAME).mkdir()
    told = []
    lock = WindowLock(vetfluid_home)
    assert another_window_open(lock, None, ask=lambda *_: True, tell=told.append,
                               patience_s=1) == 1  # fmt: skip
    assert told == [
        f"The lock {vetfluid_home / LOCK_NAME} could not be taken over. Remove it, then start "
        "vetfluid again."
    ]


def test_a_second_start_that_gave_up_leaves_nothing_to_open(qtbot, tmp_path, vetfluid_home):
    """Review finding: a second start that gave up on a frozen window still had its file
    opened when the window woke, once per try. The window now acts only on the second
    start's GO, sent once it has the window's READY."""
    import threading

    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    assert lock.serve()
    asked = []
    lock.asked.connect(asked.append)
    plan = tmp_path / "dog.vfplan"
    tried = []
    second = WindowLock(vetfluid_home)
    thread = threading.Thread(target=lambda: tried.append(second.hand_over(str(plan), 1.0)))
    thread.start()
    thread.join(timeout=30)  # this window is frozen meanwhile: no event loop runs
    assert tried == [Reached.SILENT]
    qtbot.wait(1000)  # it wakes and reads what waited in the socket
    assert asked == []
    assert not lock._connections
    handed = []
    thread = threading.Thread(target=lambda: handed.append(second.hand_over(str(plan), 10.0)))
    thread.start()
    qtbot.waitUntil(lambda: handed != [], timeout=15_000)
    thread.join(timeout=30)
    assert handed == [Reached.HANDED]
    qtbot.waitUntil(lambda: asked == [plan])  # once, for the start that stayed
    lock.release()


def test_a_closing_window_takes_no_file_and_the_second_start_opens_it_itself(qtbot, vetfluid_home):
    """Review finding: a window asked about closing took a handed-over file, said it would
    open it, and closed. It now answers 'closing'; the second start waits and, once the
    window has gone, opens its own."""
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    assert lock.serve()
    lock.accepting = lambda: False  # its close question is open
    asked = []
    lock.asked.connect(asked.append)
    second = subprocess.Popen([VETFLUID], env=_env(vetfluid_home), stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True)  # fmt: skip
    try:
        qtbot.wait(2000)  # it is told 'closing', again and again
        assert second.poll() is None and asked == []
        lock.release()  # the window has gone

        def taken() -> bool:
            holder = WindowLock(vetfluid_home).holder()
            return holder is not None and holder.pid == second.pid

        qtbot.waitUntil(taken, timeout=30_000)
        assert second.poll() is None  # its own window
    finally:
        second.kill()
        second.communicate(timeout=30)


def test_the_user_can_stop_waiting_for_a_window_that_does_not_answer(
    silent_holder, vetfluid_home, capsys
):
    """Twenty silent seconds invite more double-clicks: after a second and a half a box
    says what is waited for, and Cancel ends the wait (exit 1, said)."""
    from ui.app import another_window_open

    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.HELD
    waited = []

    def waiting(seconds: float) -> bool:
        waited.append(seconds)
        return seconds < 0.5  # Cancel pressed at half a second

    assert another_window_open(lock, None, ask=pytest.fail, tell=pytest.fail,
                               waiting=waiting) == 1  # fmt: skip
    assert 0.5 <= waited[-1] < 5
    assert capsys.readouterr().err == (
        "vetfluid: stopped waiting for the vetfluid window that is open.\n"
    )


def test_a_file_that_waited_while_another_plan_came_on_screen_asks_first(
    qtbot, tmp_path, answer, vetfluid_home
):
    """Review finding: a file double-clicked while File ▸ Open's dialog was up replaced the
    plan the clinician then picked in that dialog, unasked. It now asks, and No keeps the
    plan on screen."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    window = open_window()
    qtbot.addWidget(window)
    dragon = write_request_file(tmp_path / "dragon.vfplan", demo("cold_bearded_dragon").request, {})
    dialog = _dialog_open_over(qtbot, window)
    window.come_forward(dragon)  # double-clicked meanwhile
    window.open_demo("renal_cat")  # what the clinician picked in the dialog
    qtbot.waitUntil(lambda: window.session.plan is not None)
    asked = []
    answer({"was opened from outside vetfluid": lambda: asked.append(1)
            or QMessageBox.StandardButton.No})  # fmt: skip
    dialog.done(0)
    qtbot.waitUntil(lambda: asked == [1], timeout=5000)
    assert window.session.plan.request.species_id == "cat"
    assert window.statusBar().currentMessage() == "dragon.vfplan was not opened."


@pytest.mark.skipif(sys.platform == "win32", reason="named pipes on Windows")
def test_a_socket_another_account_made_is_never_sent_a_file_name(tmp_path):
    """Review finding: where the socket's name lies in a shared folder, another account
    could listen there first and read the names of the files handed over (a patient's and
    an owner's names). A second start sends only to a socket file this account owns."""
    import socket as sockets

    from ui.one_window import _ours

    path = tmp_path / "window.socket"
    assert not _ours(str(path))  # not there (yet)
    path.write_text("not a socket", encoding="utf-8")
    assert not _ours(str(path))
    path.unlink()
    listening = sockets.socket(sockets.AF_UNIX, sockets.SOCK_STREAM)
    try:
        listening.bind(str(path))
        assert _ours(str(path))
        if os.geteuid() == 0:  # give it to another account, as a squatter's would be
            os.chown(path, 54321, 54321)
            assert not _ours(str(path))
    finally:
        listening.close()


class _FakeWindow:
    """A socket where the window listens that answers as told: ``first`` to a request,
    ``then`` (None: nothing) to the GO after it. Counts the requests it reads."""

    def __init__(self, name: str, first: bytes, then: bytes | None = None) -> None:
        import socket as sockets
        import threading

        self.requests: list[bytes] = []
        self.server = sockets.socket(sockets.AF_UNIX, sockets.SOCK_STREAM)
        self.server.bind(name)
        self.server.listen(8)
        self.server.settimeout(0.2)
        self.first, self.then, self.done = first, then, threading.Event()
        self.thread = threading.Thread(target=self._serve, daemon=True)
        self.thread.start()

    def _serve(self) -> None:
        held = []
        while not self.done.is_set():
            try:
                connection, _ = self.server.accept()
            except OSError:
                continue
            held.append(connection)  # never closed while the test runs: silence, not an end
            connection.settimeout(5)
            with __import__("contextlib").suppress(OSError):
                self.requests.append(connection.recv(4096))
                connection.sendall(self.first)
                if self.first == b"ready\n" and connection.recv(16) == b"go\n" and self.then:
                    connection.sendall(self.then)
        for connection in held:
            connection.close()

    def close(self) -> None:
        self.done.set()
        self.thread.join(timeout=10)
        self.server.close()


@pytest.fixture()
def fake_window(silent_holder, vetfluid_home):
    made = []

    def make(first: bytes, then: bytes | None = None) -> _FakeWindow:
        made.append(_FakeWindow(socket_name(vetfluid_home), first, then))
        return made[-1]

    yield make
    for window in made:
        window.close()


@pytest.mark.skipif(sys.platform == "win32", reason="a Unix socket stands in for the window")
def test_a_window_of_another_version_is_asked_once_and_said(fake_window, vetfluid_home):
    """Review finding: a newer second start talking to an older window (vetfluid updated
    while open) read its one-word answer as a failure and asked again every quarter
    second: the old window opened the file 80 times. An answer it does not know now ends
    the wait at once, in words."""
    from ui.app import another_window_open

    window = fake_window(b"opened\n")  # what the older window answered
    told = []
    lock = WindowLock(vetfluid_home)
    assert another_window_open(lock, "/tmp/dog.vfplan", ask=pytest.fail, tell=told.append,
                               waiting=lambda _: True) == 1  # fmt: skip
    assert len(window.requests) == 1
    assert told and told[0].startswith("A vetfluid window of another version is open")


@pytest.mark.skipif(sys.platform == "win32", reason="a Unix socket stands in for the window")
def test_a_window_told_go_that_does_not_confirm_is_not_called_a_failure(fake_window,
                                                                        vetfluid_home):  # fmt: skip
    """Review finding: a second start that gave up after telling the window GO reported a
    failure, and the window opened the file later anyway. Once GO is sent the user's Cancel
    no longer ends the wait, and a window that does not confirm is said to be maybe opening
    it: the user is told to look there before trying again."""
    from ui.app import another_window_open

    window = fake_window(b"ready\n")  # then silent: frozen right after READY
    told = []
    started = time.monotonic()
    assert another_window_open(WindowLock(vetfluid_home), "/tmp/dog.vfplan", ask=pytest.fail,
                               tell=told.append, waiting=lambda s: s < 1.0) == 1  # fmt: skip
    assert time.monotonic() - started >= 4.5  # waited for the answer to GO regardless
    assert len(window.requests) == 1
    assert "has not confirmed it: it may open it when it is free" in told[0]


@pytest.mark.skipif(sys.platform == "win32", reason="a Unix socket stands in for the window")
def test_a_window_that_stays_closing_is_said_so(fake_window, vetfluid_home):
    """A window whose close question stays open: the second start says to answer it there,
    not that the window does not answer (Take over could not help)."""
    from ui.app import another_window_open

    fake_window(b"closing\n")
    told = []
    assert another_window_open(WindowLock(vetfluid_home), "/tmp/dog.vfplan", ask=pytest.fail,
                               tell=told.append, waiting=lambda _: True,
                               patience_s=1) == 1  # fmt: skip
    assert "is closing, or asking about closing. Answer it there" in told[0]


def test_a_go_that_comes_after_the_close_began_is_refused(qtbot, vetfluid_home):
    """Review finding: the window checked that it was not closing only when the request
    came, so a GO during the close question queued a file that was then named nowhere."""
    lock = WindowLock(vetfluid_home)
    assert lock.claim() is Claim.OURS
    assert lock.serve()
    asked = []
    lock.asked.connect(asked.append)
    sender = QLocalSocket()
    sender.connectToServer(socket_name(vetfluid_home))
    assert sender.waitForConnected(3000)
    sender.write(write_message(Path("/tmp/dog.vfplan")))
    sender.flush()
    qtbot.waitUntil(lambda: sender.bytesAvailable() > 0)
    assert bytes(sender.readAll().data()) == b"ready\n"
    lock.accepting = lambda: False  # the close question came up meanwhile
    sender.write(b"go\n")
    sender.flush()
    qtbot.waitUntil(lambda: sender.bytesAvailable() > 0)
    assert bytes(sender.readAll().data()) == b"closing\n"
    qtbot.wait(100)
    assert asked == []
    lock.release()


def test_a_file_double_clicked_twice_opens_once_and_asks_nothing(qtbot, tmp_path, answer):
    """Review finding: the impatient second double-click was asked about as if another plan
    had come on screen (the first click's file had), with No as its default."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    answer({})  # any question fails the test
    window = open_window()
    qtbot.addWidget(window)
    request = demo("dehydrated_dog").request
    dog = write_request_file(tmp_path / "dog.vfplan", request, {})
    dialog = _dialog_open_over(qtbot, window)
    window.come_forward(dog)
    window.come_forward(dog)
    dialog.done(0)
    qtbot.waitUntil(lambda: window.session.plan is not None)
    window.come_forward(dog)  # a third click, after it opened
    qtbot.wait(500)
    assert window.session.plan.request == request
    assert window.waiting_files.waiting == []


def test_a_file_saved_over_is_read_again_when_double_clicked_again(qtbot, tmp_path, answer):
    """Review finding (patient safety): a file already opened once was not read again when
    double-clicked again, though another patient's plan had been saved over it; the old
    plan stayed on screen under the file's name."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    answer({})
    window = open_window()
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None and window.waiting_files.started)
    path = write_request_file(tmp_path / "patient.vfplan", demo("dehydrated_dog").request, {})
    window.come_forward(path)
    qtbot.waitUntil(lambda: window.session.plan is not None)
    cat = demo("renal_cat").request
    write_request_file(path, cat, {})  # saved over, under the same name
    window.come_forward(path)
    qtbot.waitUntil(lambda: window.session.plan.request == cat, timeout=5000)


def test_a_second_click_while_the_first_is_being_asked_about_is_not_asked_again(
    qtbot, tmp_path, answer, vetfluid_home
):
    """Review finding: the same file double-clicked again while its own question (the plan
    on screen is not saved) was open came back with the same question after Cancel."""
    from ui.app import open_window
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    window = open_window()
    qtbot.addWidget(window)
    qtbot.waitUntil(lambda: window.session is not None and window.waiting_files.started)
    window.open_demo("renal_cat")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    window.session.update(dehydration_percent=9.0)  # unsaved work on screen
    qtbot.waitUntil(lambda: window.session.plan.request.dehydration_percent == 9.0)
    dog = write_request_file(tmp_path / "dog.vfplan", demo("dehydrated_dog").request, {})
    asked = []

    def cancel() -> str:
        asked.append(1)
        window.come_forward(dog)  # clicked again while this question is open
        return "Cancel"

    answer({"is not saved as a version yet": cancel})
    window.come_forward(dog)
    qtbot.waitUntil(lambda: asked == [1], timeout=5000)
    qtbot.wait(800)
    assert asked == [1] and window.waiting_files.waiting == []
    assert window.session.plan.request.species_id == "cat"  # kept, as Cancel said
