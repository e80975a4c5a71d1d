"""One window per data folder.

Two windows on one data folder share one draft: each autosave would replace the other's
unsaved plan, and a window starting beside a running one would offer that window's live
draft as the work of a crash. So the first window holds a lock in the data folder and
listens on a local socket; a second start hands what it was asked to open (a plan file
double-clicked in the file manager, or nothing) to that window and ends. The window comes
to the front and opens the file by File ▸ Open's own path (a question about the plan on
screen comes first, and a file that cannot be read is a message).

The lock is Qt's :class:`QLockFile`: a lock left by a process that has died (a crash, a
power cut) is taken over at the next start, so a crash never locks vetfluid out. A lock
held on another computer (a data folder on a network share), or by a process that does
not answer, is said in words, and the user may take it over knowingly.
"""

from __future__ import annotations

import enum
import hashlib
import json
import os
import socket
import sys
import time
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import QLockFile, QObject, QTimer, Signal

if TYPE_CHECKING:  # QtNetwork loads when it is used: after the window's first paint
    from PySide6.QtNetwork import QLocalServer, QLocalSocket

LOCK_NAME = "window.lock"
SOCKET_NAME = "window.socket"
# a Unix socket's path has room for about 107 bytes; longer data-folder paths use a name
SOCKET_PATH_LIMIT = 100
MESSAGE_LIMIT_BYTES = 64 * 1024  # a path and a word: anything longer is not ours
ANSWER_TIMEOUT_MS = 3000  # a window busy painting a 14-day course answers well within this
# a second start a moment after the first may find the lock taken before the first listens
CONNECT_ATTEMPTS = 10
CONNECT_PAUSE_MS = 300
ANSWER = b"opened\n"


class Claim(enum.Enum):
    OURS = "ours"  # this process holds the lock
    HELD = "held"  # another live process holds it (see :meth:`WindowLock.holder`)
    UNLOCKABLE = "unlockable"  # no lock can be made there (the folder cannot be written)


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

    #: a second start asked for the window: the plan file to open (absolute), or "" for none
    asked = Signal(str)

    def __init__(self, folder: Path) -> None:
        super().__init__()
        self.folder = folder
        self._lock = QLockFile(str(folder / LOCK_NAME))
        # never stale by age: a window open for a week still holds it; a dead holder's lock
        # is taken over by Qt's check that its process is gone
        self._lock.setStaleLockTime(0)
        self._server: QLocalServer | None = None
        self.problem = ""  # why no lock could be made (Claim.UNLOCKABLE), in words

    # ---- the lock ----------------------------------------------------------------------------
    def claim(self) -> Claim:
        if self._lock.tryLock(0):
            return Claim.OURS
        if self._lock.error() == QLockFile.LockError.LockFailedError:
            return Claim.HELD
        self.problem = (
            f"no lock could be made in the data folder {self.folder}, so a second vetfluid "
            "window on it would not be noticed"
        )
        return Claim.UNLOCKABLE

    def holder(self) -> Holder | None:
        info = self._lock.getLockInfo()  # (pid, host, program); pid 0 when there is none
        pid, host = (info[0], info[1]) if isinstance(info, tuple) and len(info) == 3 else (0, "")
        return Holder(int(pid), str(host)) if pid else None

    def take_over(self) -> bool:
        """Take the lock from a holder the user says is gone (a window on another computer
        that crashed, or one that does not answer): True when it is now ours."""
        self._lock.removeStaleLockFile()
        return self._lock.tryLock(0)

    def release(self) -> None:
        """Stop listening and unlock (vetfluid is closing)."""
        if self._server is not None:
            from PySide6.QtNetwork import QLocalSocket

            for connection in self._server.findChildren(QLocalSocket):
                self._drop(connection)  # one still being answered ends here, not later
            self._server.close()
            self._server = None
        self._lock.unlock()

    # ---- the window holding it ---------------------------------------------------------------
    def serve(self) -> bool:
        """Listen for a second start (only while the lock is ours): False when no socket
        could be made, so a second start is told that this window does not answer."""
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
            connection.readyRead.connect(self._read_sender)
            self._read(connection)

    def _read_sender(self) -> None:
        from PySide6.QtNetwork import QLocalSocket

        connection = self.sender()
        if isinstance(connection, QLocalSocket):
            self._read(connection)

    def _read(self, connection: QLocalSocket) -> None:
        if not connection.canReadLine():
            if connection.bytesAvailable() > MESSAGE_LIMIT_BYTES:
                self._drop(connection)  # not ours: dropped unread
            return
        path = read_message(bytes(connection.readLine(MESSAGE_LIMIT_BYTES).data()))
        if path is None:
            self._drop(connection)
            return
        connection.write(ANSWER)
        connection.flush()
        connection.disconnectFromServer()  # once the answer is written
        connection.deleteLater()
        # the window opens the file on the next turn, not inside this socket's signal: its
        # questions run event loops of their own
        QTimer.singleShot(0, lambda: self.asked.emit(path))

    @staticmethod
    def _drop(connection: QLocalSocket) -> None:
        connection.readyRead.disconnect()
        connection.abort()
        connection.deleteLater()

    # ---- a second start ----------------------------------------------------------------------
    def hand_over(self, plan_file: str | None) -> bool:
        """Ask the window holding the lock to come forward and open ``plan_file`` (read from
        this process's folder); True once it has answered."""
        from PySide6.QtNetwork import QLocalSocket

        message = write_message(None if plan_file is None else str(Path(plan_file).absolute()))
        for attempt in range(CONNECT_ATTEMPTS):
            connection = QLocalSocket()
            connection.connectToServer(socket_name(self.folder))
            if connection.waitForConnected(ANSWER_TIMEOUT_MS):
                connection.write(message)
                connection.waitForBytesWritten(ANSWER_TIMEOUT_MS)
                answered = b""
                while len(answered) < len(ANSWER) and connection.waitForReadyRead(
                    ANSWER_TIMEOUT_MS
                ):
                    answered += bytes(connection.readAll().data())
                connection.disconnectFromServer()
                return answered == ANSWER
            if attempt + 1 < CONNECT_ATTEMPTS:
                time.sleep(CONNECT_PAUSE_MS / 1000.0)
        return False


def socket_name(folder: Path) -> str:
    """Where the window listens: a socket inside the data folder (only its owner can reach
    it) where the path fits, else a name derived from the folder (Windows' named pipes,
    long paths), kept to this user by :attr:`QLocalServer.UserAccessOption`."""
    inside = folder / SOCKET_NAME
    if sys.platform != "win32" and len(os.fsencode(inside)) <= SOCKET_PATH_LIMIT:
        return str(inside)
    digest = hashlib.sha256(os.fsencode(folder.absolute())).hexdigest()[:24]
    return f"vetfluid-window-{digest}"


def write_message(plan_file: str | None) -> bytes:
    return json.dumps({"open": plan_file or ""}, ensure_ascii=True).encode("ascii") + b"\n"


def read_message(line: bytes) -> str | None:
    """The plan file a second start asks to open ("" for none), or None when the line is
    not such a request."""
    try:
        message = json.loads(line.decode("ascii"))
    except (UnicodeDecodeError, ValueError):
        return None
    if not isinstance(message, dict) or set(message) != {"open"}:
        return None
    path = message["open"]
    if not isinstance(path, str) or "\x00" in path or (path and not Path(path).is_absolute()):
        return None
    return path
