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

VETFLUID = str(Path(sys.executable).with_name("vetfluid"))
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


def test_version_prints_the_version():
    from vetfluid import __version__

    run = subprocess.run([VETFLUID, "--version"], env=_env(QT_QPA_PLATFORM="offscreen"),
                         capture_output=True, text=True, timeout=30)  # fmt: skip
    assert run.returncode == 0 and run.stdout == f"vetfluid {__version__}\n"
