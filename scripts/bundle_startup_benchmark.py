"""Start time of the clinic bundle against the source install, measured from outside.

    .venv/bin/python scripts/bundle_startup_benchmark.py [runs] [--bundle dist/vetfluid/vetfluid]
        [--compare LABEL=EXECUTABLE ...]

The bundle cannot run the in-process probe of ``scripts/startup_benchmark.py`` (it has no
Python to run it with), so both are timed the same way from outside: each run starts a fresh
process on a private X server (Xvfb) and clocks until the window named "vetfluid" is mapped
and viewable (``xwininfo``, polled every 5 ms), then ends it. The source install runs as
``python -m ui.app`` from ``.venv``. Source and bundle alternate, so a busy spell on a shared
machine hits both alike; each has its own empty data folder (``VETFLUID_HOME``). Also timed:
``--version`` to its exit. ``--compare`` adds another build to the round (e.g. one made with
pyside6-deploy). Prints the medians as JSON.

Needs ``Xvfb`` and ``xwininfo`` (Debian: ``xvfb``, ``x11-utils``) and Qt's X libraries (the
README's list). Build the bundle first: ``python3 scripts/build_bundle.py``.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PYTHON = Path(sys.executable)
TITLE = "vetfluid"  # the main window's title before a plan is on it (ui/main_window.py)


def start_x_server() -> tuple[subprocess.Popen, str]:
    """An Xvfb on the first free display number from 90."""
    for number in range(90, 120):
        if not Path(f"/tmp/.X11-unix/X{number}").exists():
            break
    else:
        raise RuntimeError("no free X display number between 90 and 119")
    server = subprocess.Popen(
        ["Xvfb", f":{number}", "-screen", "0", "1920x1080x24", "-nolisten", "tcp", "-noreset"],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )  # fmt: skip
    deadline = time.monotonic() + 10
    while not Path(f"/tmp/.X11-unix/X{number}").exists():
        if time.monotonic() > deadline or server.poll() is not None:
            raise RuntimeError("Xvfb did not start")
        time.sleep(0.02)
    return server, f":{number}"


def _viewable(display: str) -> bool:
    probe = subprocess.run(
        ["xwininfo", "-display", display, "-name", TITLE], capture_output=True, text=True
    )
    return probe.returncode == 0 and "IsViewable" in probe.stdout


def time_to_window(command: list[str], display: str) -> float:
    """Seconds from starting ``command`` until its window is viewable."""
    home = tempfile.mkdtemp(prefix="vetfluid-start-")
    env = {k: v for k, v in os.environ.items() if k not in ("QT_QPA_PLATFORM", "WAYLAND_DISPLAY")}
    env.update(DISPLAY=display, VETFLUID_HOME=home)
    start = time.perf_counter()
    child = subprocess.Popen(command, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        while not _viewable(display):
            if child.poll() is not None:
                raise RuntimeError(f"{command[0]} exited: {child.stderr.read().decode()[-500:]}")
            if time.perf_counter() - start > 60:
                raise RuntimeError(f"{command[0]} showed no window within 60 s")
            time.sleep(0.005)
        return time.perf_counter() - start
    finally:
        child.kill()
        child.wait()
        shutil.rmtree(home, ignore_errors=True)


def time_to_version(command: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run([*command, "--version"], check=True, capture_output=True)
    return time.perf_counter() - start


def measure(bundle: Path, runs: int, compare: dict[str, Path] | None = None) -> dict[str, float]:
    commands = {"source": [str(PYTHON), "-m", "ui.app"], "bundle": [str(bundle)]}
    commands.update({label: [str(path)] for label, path in (compare or {}).items()})
    server, display = start_x_server()
    try:
        for command in commands.values():  # warm the file cache
            time_to_window(command, display)
        windows: dict[str, list[float]] = {kind: [] for kind in commands}
        versions: dict[str, list[float]] = {kind: [] for kind in commands}
        for _ in range(runs):
            for kind, command in commands.items():
                windows[kind].append(time_to_window(command, display))
                versions[kind].append(time_to_version(command))
    finally:
        server.terminate()
        server.wait()
    results = {"runs": runs}
    for kind in commands:
        results[f"{kind}_window_shown_s"] = round(statistics.median(windows[kind]), 3)
        results[f"{kind}_version_s"] = round(statistics.median(versions[kind]), 3)
    for kind in commands:
        if kind != "source":
            results[f"{kind}_to_source_window"] = round(
                results[f"{kind}_window_shown_s"] / results["source_window_shown_s"], 2
            )
    return results


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("runs", nargs="?", type=int, default=9)
    parser.add_argument("--bundle", type=Path, default=ROOT / "dist" / "vetfluid" / "vetfluid")
    parser.add_argument("--compare", action="append", default=[], metavar="LABEL=EXECUTABLE")
    args = parser.parse_args()
    pairs = (entry.split("=", 1) for entry in args.compare)
    others = {label: Path(path).resolve() for label, path in pairs}
    print(json.dumps(measure(args.bundle.resolve(), args.runs, others), indent=2))
