"""Instructions per edit (edit → recompute → the open tab redrawn), counted by valgrind's
callgrind; the Timeline tab unless ``--tab plan``.

Wall-clock time on a shared machine drifts by up to 2× within an hour; the instruction
count of the same code repeats to a fraction of a percent, so compare two versions with
this and quote the wall clock from ``python3 dev.py bench``.

    .venv/bin/python scripts/edit_instructions.py [--edits 20] [--demo dehydrated_dog]
                                                  [--tab timeline|plan]

Needs valgrind (``callgrind_control``). The script runs itself under callgrind with
counting off, opens the window offscreen, warms up with 20 edits and counts only the
measured ones. Add ``--keep FILE`` to keep callgrind's profile for ``callgrind_annotate``.
"""

from __future__ import annotations

import argparse
import itertools
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
WARM_UP_EDITS = 20
TABS = {"plan": 0, "timeline": 1}  # the details tabs' places (ui/main_window.py)
# tests/test_window_benchmark.py types 24, 24.5, 25 and 23.5 kg for the 24 kg dog; other
# patients get the same steps in proportion to their own weight
WEIGHT_STEPS = tuple(kg / 24.0 for kg in (24.0, 24.5, 25.0, 23.5))


def _count(on: bool) -> None:
    subprocess.run(
        ["callgrind_control", "-i", "on" if on else "off", str(os.getpid())],
        check=True, stdout=subprocess.DEVNULL,
    )  # fmt: skip


def measured_edits(demo: str, edits: int, tab: str) -> None:
    """Inside callgrind: open the window on ``demo`` at ``tab`` and edit the weight."""
    sys.path.insert(0, str(ROOT))
    from PySide6.QtWidgets import QApplication

    app = QApplication([])
    from ui.main_window import MainWindow

    window = MainWindow()
    window.resize(1400, 900)
    window.show()
    while window.session is None:
        app.processEvents()
    window.open_demo(demo)
    window.details.setCurrentIndex(TABS[tab])
    app.processEvents()
    weight_kg = window.session.inputs["weight_kg"]
    weights = itertools.cycle([weight_kg * step for step in WEIGHT_STEPS])

    def edit() -> None:
        window.session.update(weight_kg=next(weights))
        window.session.recompute()
        app.processEvents()

    for _ in range(WARM_UP_EDITS):
        edit()
    _count(True)
    for _ in range(edits):
        edit()
    _count(False)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--edits", type=int, default=20)
    parser.add_argument("--demo", default="dehydrated_dog")
    parser.add_argument("--tab", choices=sorted(TABS), default="timeline")
    parser.add_argument("--keep", type=Path, help="keep callgrind's profile here")
    parser.add_argument("--inside", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.inside:
        measured_edits(args.demo, args.edits, args.tab)
        return 0
    if shutil.which("valgrind") is None or shutil.which("callgrind_control") is None:
        print("valgrind is not installed (Debian: apt install valgrind)", file=sys.stderr)
        return 2
    with tempfile.TemporaryDirectory() as folder:
        profile = args.keep or Path(folder, "callgrind.out")
        env = dict(os.environ, QT_QPA_PLATFORM="offscreen", VETFLUID_HOME=folder)
        run = subprocess.run(
            [
                "valgrind", "--tool=callgrind", "--instr-atstart=no",
                f"--callgrind-out-file={profile}", sys.executable, __file__,
                "--inside", "--edits", str(args.edits), "--demo", args.demo, "--tab", args.tab,
            ],
            env=env, capture_output=True, text=True,
        )  # fmt: skip
    found = re.search(r"Collected : (\d+)", run.stderr)
    if run.returncode != 0 or found is None:
        print(run.stderr[-2000:], file=sys.stderr)
        return 1
    per_edit = int(found.group(1)) / args.edits
    where = f"{args.demo}, {args.tab} tab, {args.edits} edits"
    print(f"{per_edit / 1e6:.2f} M instructions per edit ({where})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
