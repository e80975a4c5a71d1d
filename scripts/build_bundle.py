"""Build vetfluid as a standalone bundle: one folder a clinic copies and runs, no Python needed.

    python3 scripts/build_bundle.py [--dist DIR] [--work DIR] [--if-changed]

Sets up ./.venv from requirements.lock first (as dev.py does; PyInstaller is locked with the
test tools), then runs PyInstaller in one-folder mode. The result is ``dist/vetfluid/`` (the
executable ``vetfluid``, ``vetfluid.exe`` on Windows, beside ``_internal/``, which holds
Python, Qt, the code, ``species_data/`` and ``icons/``); ``build/pyinstaller/`` keeps
PyInstaller's work between runs. Both folders are git-ignored; each run replaces the bundle,
so running it twice gives the same result. ``--if-changed`` keeps the bundle when nothing it
is built from changed (a digest of those files is kept beside it, in ``vetfluid.sources``).
Why PyInstaller and one folder, and what differs on Windows and macOS: DEVELOPERS.md, "The
clinic bundle".

The bundle's executable is the window's entry point, ``ui.app.main``: ``vetfluid``,
``vetfluid sheet``, ``vetfluid chart``, ``vetfluid self-check FOLDER`` and ``vetfluid
--version`` work as from an install; the data is found by ``vetfluid.common.paths``
(``bundle_root``).
"""

from __future__ import annotations

import argparse
import hashlib
import os
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
NAME = "vetfluid"
DATA_FOLDERS = ("species_data", "icons")  # vetfluid.common.paths.RESOURCE_FOLDERS
# Never imported by the window or the core: kept out even if a library's optional import
# (pyqtgraph tries scipy) or a future one would reach them; pandas alone is 84 MiB installed.
EXCLUDED = ("pandas", "tkinter", "matplotlib", "scipy", "IPython", "pytest", "hypothesis")

STAMP = "vetfluid.sources"  # beside the bundle folder: the digest of what it was built from

LAUNCHER = '''\
"""The bundle's entry: the window's own entry point (ui/app.py)."""
import sys

from ui.app import main

sys.exit(main())
'''


def pyinstaller_command(dist: Path, work: Path, launcher: Path, python: Path) -> list[str]:
    """The PyInstaller command line for this platform."""
    command = [
        str(python), "-m", "PyInstaller", str(launcher),
        "--name", NAME, "--onedir", "--noconfirm", "--log-level", "WARN",
        "--distpath", str(dist), "--workpath", str(work), "--specpath", str(work),
        "--paths", str(ROOT),
    ]  # fmt: skip
    for folder in DATA_FOLDERS:
        command += ["--add-data", f"{ROOT / folder}{os.pathsep}{folder}"]
    for module in EXCLUDED:
        command += ["--exclude-module", module]
    if sys.platform == "win32":
        # a console program that hides its console when started from the Start menu or a
        # file association, so `vetfluid --version`, `sheet` and `self-check` still print in
        # a terminal (a --windowed program has no standard output at all)
        command += ["--hide-console", "hide-early", "--icon", str(write_icon(work, ".ico"))]
    elif sys.platform == "darwin":
        command += ["--windowed", "--icon", str(write_icon(work, ".icns"))]
        command += ["--osx-bundle-identifier", "org.vetfluid.vetfluid"]
    return command


def write_icon(work: Path, suffix: str) -> Path:
    """``icons/vetfluid.svg`` drawn at 256 px into ``work/vetfluid<suffix>`` (``.ico`` for
    Windows, ``.icns`` for macOS; PyInstaller takes no SVG) with Qt's own image writers."""
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import Qt
    from PySide6.QtGui import QGuiApplication, QImage, QPainter
    from PySide6.QtSvg import QSvgRenderer

    app = QGuiApplication.instance() or QGuiApplication([])  # noqa: F841 (Qt needs one)
    image = QImage(256, 256, QImage.Format.Format_ARGB32)
    image.fill(Qt.GlobalColor.transparent)
    painter = QPainter(image)
    QSvgRenderer(str(ROOT / "icons" / "vetfluid.svg")).render(painter)
    painter.end()
    path = work / f"vetfluid{suffix}"
    if not image.save(str(path)):
        raise RuntimeError(f"Qt could not write {path}")
    return path


def sources_digest() -> str:
    """SHA-256 (hashlib) over everything the bundle is built from: the code, the data, the
    icons, the locked dependencies, pyproject.toml and this script, each file by its path
    and bytes, and the platform."""
    digest = hashlib.sha256(sys.platform.encode())
    files = [ROOT / "pyproject.toml", ROOT / "requirements.lock", Path(__file__).resolve()]
    for folder in ("vetfluid", "ui", *DATA_FOLDERS):
        files += sorted(
            path for path in (ROOT / folder).rglob("*")
            if path.is_file() and "__pycache__" not in path.parts
        )  # fmt: skip
    for path in files:
        digest.update(path.relative_to(ROOT).as_posix().encode() + b"\0")
        digest.update(path.read_bytes() + b"\0")
    return digest.hexdigest()


def up_to_date(dist: Path) -> bool:
    """Whether ``dist`` holds a bundle built from the sources as they are now."""
    stamp = dist / STAMP
    return (
        executable(dist).is_file()
        and stamp.is_file()
        and stamp.read_text(encoding="utf-8") == sources_digest()
    )


def build(dist: Path, work: Path) -> Path:
    """Build the bundle into ``dist / NAME`` (run by .venv's Python); returns the executable."""
    work.mkdir(parents=True, exist_ok=True)
    (dist / STAMP).unlink(missing_ok=True)  # a build that fails leaves no stamp behind
    digest = sources_digest()  # before building: an edit meanwhile makes the next run rebuild
    launcher = work / f"{NAME}_launcher.py"
    if not launcher.is_file() or launcher.read_text(encoding="utf-8") != LAUNCHER:
        launcher.write_text(LAUNCHER, encoding="utf-8")
    env = dict(os.environ, PYTHONHASHSEED="0")  # the same bytes for the same sources
    command = pyinstaller_command(dist, work, launcher, Path(sys.executable))
    subprocess.run(command, check=True, env=env)
    (dist / STAMP).write_text(digest, encoding="utf-8")
    return executable(dist)


def executable(dist: Path) -> Path:
    """The bundle's executable in ``dist``."""
    return dist / NAME / (f"{NAME}.exe" if sys.platform == "win32" else NAME)


def main(argv: list[str]) -> int:
    sys.path.insert(0, str(ROOT))
    from dev import PYTHON, VENV, ensure_environment

    ensure_environment()
    if Path(sys.prefix).resolve() != VENV.resolve():  # run again by .venv's Python
        return subprocess.call([str(PYTHON), str(Path(__file__).resolve()), *argv])
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dist", type=Path, default=ROOT / "dist", help="where the bundle goes")
    parser.add_argument(
        "--work", type=Path, default=ROOT / "build" / "pyinstaller", help="PyInstaller's cache"
    )
    parser.add_argument(
        "--if-changed", action="store_true", help="keep the bundle if its sources did not change"
    )
    args = parser.parse_args(argv)
    dist = args.dist.resolve()
    if args.if_changed and up_to_date(dist):
        print(f"{executable(dist)} is up to date")
        return 0
    started = time.perf_counter()
    program = build(dist, args.work.resolve())
    print(f"built {program} in {time.perf_counter() - started:.0f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
