"""One window per data folder.

Two windows on one data folder share one draft: each autosave would replace the other's
unsaved plan, and a window starting beside a running one would offer that window's live
draft as the work of a crash. So the first window holds a lock in the data folder and
listens on a local socket; a second start hands what it was asked to open (a plan file
double-clicked in the file manager, or nothing) to that window and ends. The window comes
to the front and opens the file by File ▸ Open's own path once it is ready
(:meth:`ui.main_window.MainWindow.open_when_ready`).

The lock is Qt's :class:`QLockFile`: a lock left by a process that has died (a crash, a
power cut) is taken over at the next start, so a crash never locks vetfluid out. A lock
held on another computer (a data folder on a network share), or by a process that does
not answer, is said in words, and the user may take it over knowingly; Qt refuses while
the holder still holds it.
"""

from __future__ import annotations

import enum
import hashlib
import json
import os
import socket
import stat
import sys
import time
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import QLockFile, QObject, QStandardPaths, QTimer, Signal

if TYPE_CHECKING:
    from collections.abc import Callable

    from PySide6.QtNetwork import QLocalServer, QLocalSocket

LOCK_NAME = "window.lock"
SOCKET_NAME = "window.socket"
# a Unix socket's path has room for about 107 bytes; a longer data-folder path puts the
# socket in this user's private runtime folder instead
SOCKET_PATH_LIMIT = 100
MESSAGE_LIMIT_BYTES = 64 * 1024  # a path and a word: anything longer is not ours
OPEN_CONNECTIONS_LIMIT = 16  # more at once is not a person double-clicking files
IDLE_CONNECTION_MS = 5000  # a connection that sends no whole request is dropped after this
# how long a second start waits for the window: one that is still starting (a slow clinic
# computer builds the planner before it looks at its socket) or busy answers within this
PATIENCE_S = 20.0
RETRY_PAUSE_S = 0.25
GO_PATIENCE_S = 5.0  # once told GO, the window answers at once unless frozen
# the exchange: request → READY (or CLOSING) → GO → QUEUED
READY, GO, QUEUED, CLOSING = b"ready\n", b"go\n", b"queued\n", b"closing\n"


class Claim(enum.Enum):
    OURS = "ours"  # this process holds the lock
    HELD = "held"  # another process holds it (see :meth:`WindowLock.holder`)
    UNLOCKABLE = "unlockable"  # no lock can be made there (the folder cannot be written)


class Reached(enum.Enum):
    """What a second start's :meth:`WindowLock.hand_over` came to."""

    HANDED = "handed"  # the window took the request (QUEUED)
    OURS = "ours"  # the window closed meanwhile: the lock is this start's now
    SILENT = "silent"  # nothing answered within the patience
    CLOSING = "closing"  # the window is closing, or asking about it, all that time
    GAVE_UP = "gave up"  # the user stopped waiting before the window was asked to act
    UNSURE = "unsure"  # asked to act (GO), it did not confirm: it may open the file later
    OTHER_VERSION = "other version"  # an answer this vetfluid does not know
    FOREIGN = "foreign"  # the socket is another account's: never sent anything


@dataclass(frozen=True)
class Request:
    """A second start's request: come forward, and open ``plan_file`` when one is given."""

    plan_file: Path | None


@dataclass(frozen=True)
class Holder:
    """Who holds the lock, as the lock file says."""

    pid: int
    host: str

    @property
    def here(self) -> bool:
        return self.host in ("", socket.gethostname())

    def words(self) -> str:
        where = "on this computer" if self.here else f"on the computer {self.host}"
        return f"process {self.pid} {where}"


class WindowLock(QObject):
    """The data folder's window lock, and the socket the window holding it listens on."""

    #: a second start asked for the window: the plan file to open (an absolute Path), or
    #: None to come forward only (a Path, not text: a file name need not be UTF-8)
    asked = Signal(object)

    def __init__(self, folder: Path) -> None:
        super().__init__()
        self.folder = folder.absolute()
        self.lock_path = self.folder / LOCK_NAME
        self._lock = QLockFile(str(self.lock_path))
        # never stale by age: a window open for a week still holds it; a dead holder's lock
        # is taken over by Qt's check that its process is gone
        self._lock.setStaleLockTime(0)
        self._server: QLocalServer | None = None
        # each open connection, with its request once READY was answered
        self._connections: dict[QLocalSocket, Request | None] = {}
        #: whether the window takes requests now (not while it closes)
        self.accepting: Callable[[], bool] = lambda: True

    # ---- the lock ----------------------------------------------------------------------------
    def claim(self) -> Claim:
        if self._lock.tryLock(0):
            return Claim.OURS
        if self._lock.error() == QLockFile.LockError.LockFailedError:
            return Claim.HELD
        return Claim.UNLOCKABLE  # the window says why nothing can be kept in the folder

    def holder(self) -> Holder | None:
        """Who the lock file names; None when it names no one (empty, damaged, a folder)."""
        info = self._lock.getLockInfo()  # (pid, host, program); pid 0 when there is none
        pid, host = (info[0], info[1]) if isinstance(info, tuple) and len(info) == 3 else (0, "")
        return Holder(int(pid), str(host)) if pid else None

    def take_over(self) -> bool:
        """Take the lock from a holder the user says is gone (a window on another computer
        that crashed, a process number now another program's): True when it is now ours.
        Qt removes the lock file only when no process holds it."""
        self._lock.removeStaleLockFile()
        return self._lock.tryLock(0)

    def release(self) -> None:
        """Stop listening and unlock (vetfluid is closing)."""
        if self._server is not None:
            for connection in list(self._connections):
                self._drop(connection)  # one still being answered ends here, not later
            self._server.close()
            self._server = None
        self._lock.unlock()

    # ---- the window holding it ---------------------------------------------------------------
    def serve(self) -> bool:
        """Listen for a second start (only while the lock is ours): False when no socket
        could be made, so a second start finds no one to hand its file to."""
        from PySide6.QtNetwork import QLocalServer

        name = socket_name(self.folder)
        server = QLocalServer(self)
        server.setSocketOptions(QLocalServer.SocketOption.UserAccessOption)
        if not server.listen(name):
            # a socket left by a window that died: the lock is ours, so it is no one's
            QLocalServer.removeServer(name)
            if not server.listen(name):
                return False
        server.newConnection.connect(self._take_connections)
        self._server = server
        return True

    def _take_connections(self) -> None:
        while self._server is not None and self._server.hasPendingConnections():
            connection = self._server.nextPendingConnection()
            if len(self._connections) >= OPEN_CONNECTIONS_LIMIT:
                connection.abort()
                connection.deleteLater()
                continue
            self._connections[connection] = None
            connection.readyRead.connect(self._read_sender)
            connection.disconnected.connect(self._forget_sender)
            QTimer.singleShot(IDLE_CONNECTION_MS, connection, lambda c=connection: self._drop(c))
            self._read(connection)

    def _read_sender(self) -> None:
        if self.sender() in self._connections:
            self._read(self.sender())

    def _forget_sender(self) -> None:
        """A connection that closed: forgotten and deleted later. Not aborted from inside its
        own ``disconnected`` signal (the socket is still emitting it)."""
        connection = self.sender()
        if connection in self._connections:
            self._connections.pop(connection)
            self._quiet(connection)
            connection.deleteLater()

    def _read(self, connection: QLocalSocket) -> None:
        """A request is answered READY (or CLOSING while the window closes); the window acts
        only on GO, which the second start sends once it has READY: a second start that
        gave up, or lost the answer, leaves nothing to open (else each try opened it once)."""
        while connection in self._connections and connection.canReadLine():
            line = bytes(connection.readLine(MESSAGE_LIMIT_BYTES).data())
            waiting = self._connections[connection]
            if waiting is None:
                request = read_message(line)
                if request is None:
                    self._drop(connection)
                elif not self.accepting():
                    connection.write(CLOSING)
                    self._finish(connection)
                else:
                    self._connections[connection] = request
                    connection.write(READY)
                    connection.flush()
            elif line == GO and not self.accepting():  # a close began after READY
                connection.write(CLOSING)
                self._finish(connection)
            elif line == GO:
                connection.write(QUEUED)
                self._finish(connection)
                # in the window's queue before anything else can run (a close names what
                # waits); the window opens it on a later turn, outside this socket's signal
                self.asked.emit(waiting.plan_file)
            else:
                self._drop(connection)
        if connection in self._connections and connection.bytesAvailable() > MESSAGE_LIMIT_BYTES:
            self._drop(connection)  # not ours: dropped unread

    def _finish(self, connection: QLocalSocket) -> None:
        self._connections.pop(connection, None)
        self._quiet(connection)
        connection.flush()
        connection.disconnectFromServer()  # once what was written has gone
        connection.deleteLater()

    def _drop(self, connection: QLocalSocket) -> None:
        if connection in self._connections:
            self._connections.pop(connection)
            self._quiet(connection)
            connection.abort()
            connection.deleteLater()

    def _quiet(self, connection: QLocalSocket) -> None:
        """A connection done with (each is, once) calls back into this lock no more: its last
        signals may come while it is being torn down."""
        connection.readyRead.disconnect(self._read_sender)
        connection.disconnected.disconnect(self._forget_sender)

    # ---- a second start ----------------------------------------------------------------------
    def hand_over(
        self,
        plan_file: str | None,
        patience_s: float = PATIENCE_S,
        waiting: Callable[[float], bool] | None = None,
    ) -> Reached:
        """Ask the window holding the lock to come forward and open ``plan_file`` (read from
        this process's folder), trying again until it answers, the lock is free (the window
        closed meanwhile: it is then this start's), ``patience_s`` has passed, or
        ``waiting(seconds so far)``, called every tenth of a second, returns False (the user
        gave up). Once the window is told GO, neither ends the wait: the answer to GO is
        waited for on its own (GO_PATIENCE_S), so a file is never said to be lost that the
        window is opening."""
        path = None if plan_file is None else Path(plan_file).absolute()
        holder = self.holder()
        if sys.platform == "win32" and holder is not None:
            # Windows lets a program bring its window to the front only when the program
            # the user just started allows it
            import ctypes

            ctypes.windll.user32.AllowSetForegroundWindow(holder.pid)
        start = time.monotonic()
        deadline = start + patience_s
        stopped = []

        def go_on() -> bool:
            now = time.monotonic()
            if now >= deadline or (waiting is not None and not waiting(now - start)):
                stopped.append(now < deadline)  # True: the user gave up
                return False
            return True

        name, closing = socket_name(self.folder), False
        while True:
            if self.claim() is Claim.OURS:
                return Reached.OURS
            if _foreign(name):
                return Reached.FOREIGN
            if not _ours(name):
                reached = None  # not there yet: a window still starting
            else:
                reached = _one_try(name, write_message(path), go_on)
            if reached is Reached.CLOSING:
                closing, reached = True, None
            if reached is not None:
                return reached
            if stopped or not go_on():
                if stopped[0]:
                    return Reached.GAVE_UP
                return Reached.CLOSING if closing else Reached.SILENT
            time.sleep(RETRY_PAUSE_S)


def _one_try(name: str, message: bytes, go_on: Callable[[], bool]) -> Reached | None:
    """One connection to the window: what it came to, or None to try again (no window
    there yet, or one that dropped the line)."""
    from PySide6.QtNetwork import QLocalSocket

    connection = QLocalSocket()
    connection.connectToServer(name)
    try:
        if not connection.waitForConnected(1000):
            return None
        connection.write(message)
        connection.waitForBytesWritten(1000)
        answer = _line(connection, go_on)
        if answer in (b"", CLOSING):
            return Reached.CLOSING if answer else None
        if answer != READY:
            return Reached.OTHER_VERSION
        connection.write(GO)
        connection.waitForBytesWritten(1000)
        until = time.monotonic() + GO_PATIENCE_S
        answer = _line(connection, lambda: time.monotonic() < until)
        if answer == QUEUED:
            return Reached.HANDED
        if answer == CLOSING:
            return Reached.CLOSING
        if answer:
            return Reached.OTHER_VERSION
        if connection.state() == QLocalSocket.LocalSocketState.ConnectedState:
            return Reached.UNSURE  # told GO, silent since
        return None  # the window dropped the line (it ended): the lock tells what next
    finally:
        connection.abort()


def _line(connection: QLocalSocket, go_on: Callable[[], bool]) -> bytes:
    """One line from the window; b"" once it drops the line or ``go_on()`` says stop."""
    from PySide6.QtNetwork import QLocalSocket

    received = b""
    while not received.endswith(b"\n") and len(received) < 64:
        if not go_on():
            return b""
        if connection.waitForReadyRead(100):
            received += bytes(connection.readAll().data())
        elif connection.state() != QLocalSocket.LocalSocketState.ConnectedState:
            return b""
    return received


def socket_name(folder: Path) -> str:
    """Where the window listens: a socket inside the data folder (only its owner can reach
    it) where the path fits; else one in this user's private runtime folder; on Windows a
    named pipe named after the folder, kept to this user by UserAccessOption."""
    folder = folder.absolute()
    digest = hashlib.sha256(os.fsencode(folder)).hexdigest()[:24]
    name = f"vetfluid-window-{digest}"
    if sys.platform == "win32":
        return name
    inside = folder / SOCKET_NAME
    if len(os.fsencode(inside)) <= SOCKET_PATH_LIMIT:
        return str(inside)
    # Qt makes this folder the user's own (0700) and refuses one another user made
    private = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.RuntimeLocation)
    if private and len(os.fsencode(Path(private) / name)) <= SOCKET_PATH_LIMIT:
        return str(Path(private) / name)
    return name  # the shared temporary folder: the last resort


def _socket_path(name: str) -> Path:
    from PySide6.QtCore import QDir

    return Path(name) if Path(name).is_absolute() else Path(QDir.tempPath()) / name


def _ours(name: str) -> bool:
    """Whether the socket ``name`` may be this user's window: on Windows (a named pipe kept
    to its user) always; elsewhere only a socket file this user owns, so a name another
    account made first in a shared folder is never sent a patient's file name."""
    if sys.platform == "win32":
        return True
    try:
        found = _socket_path(name).lstat()
    except OSError:
        return False  # not there yet: a window still starting
    return stat.S_ISSOCK(found.st_mode) and found.st_uid == os.getuid()


def _foreign(name: str) -> bool:
    """Whether something of another account's stands where the window's socket goes."""
    if sys.platform == "win32":
        return False
    try:
        return _socket_path(name).lstat().st_uid != os.getuid()
    except OSError:
        return False


def write_message(plan_file: Path | None) -> bytes:
    """A request: the file's name as the system's bytes, in hexadecimal (a name need not
    be UTF-8); empty for none."""
    encoded = b"" if plan_file is None else os.fsencode(plan_file)
    return json.dumps({"open": encoded.hex()}).encode("ascii") + b"\n"


def read_message(line: bytes) -> Request | None:
    """The request a line holds, or None when it is not one (not ours: dropped)."""
    try:
        message = json.loads(line.decode("ascii"))
    except (UnicodeDecodeError, ValueError):
        return None
    if not isinstance(message, dict) or set(message) != {"open"}:
        return None
    text = message["open"]
    if not isinstance(text, str):
        return None
    try:
        encoded = bytes.fromhex(text)
    except ValueError:
        return None
    if not encoded:
        return Request(None)
    path = Path(os.fsdecode(encoded))
    if b"\x00" in encoded or not path.is_absolute():
        return None  # a relative name: relative to which folder?
    return Request(path)
