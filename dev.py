#!/usr/bin/env python3
"""Set up vetfluid in ./.venv and run it — needs only Python 3.11+.

    python3 dev.py app     # set up (first time) and open the window
    python3 dev.py test    # set up (first time) and run the whole test suite
    python3 dev.py cli ... # set up and run vetfluid-cli with the given arguments
    python3 dev.py bench   # set up and run the benchmarks

The virtual environment is rebuilt when pyproject.toml changes (a hash is kept
in .venv/vetfluid-setup.stamp), so a fresh clone and an old checkout behave alike.
"""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
import venv
from pathlib import Path

ROOT = Path(__file__).resolve().parent
VENV = ROOT / ".venv"
STAMP = VENV / "vetfluid-setup.stamp"
BIN = VENV / ("Scripts" if os.name == "nt" else "bin")
PYTHON = BIN / ("python.exe" if os.name == "nt" else "python")


def _wanted_stamp() -> str:
    return hashlib.sha256((ROOT / "pyproject.toml").read_bytes()).hexdigest()


def ensure_environment() -> None:
    """Create .venv and install vetfluid (editable, with test extras) if needed."""
    if sys.version_info < (3, 11):
        sys.exit(f"vetfluid needs Python 3.11 or newer; this is {sys.version.split()[0]}")
    wanted = _wanted_stamp()
    if PYTHON.exists() and STAMP.exists() and STAMP.read_text() == wanted:
        return
    if not PYTHON.exists():
        print("dev.py: creating .venv …", flush=True)
        venv.EnvBuilder(with_pip=True).create(VENV)
    print("dev.py: installing vetfluid and its dependencies into .venv …", flush=True)
    subprocess.run(
        [str(PYTHON), "-m", "pip", "install", "--quiet", "-e", f"{ROOT}[test]"], check=True
    )
    STAMP.write_text(wanted)


def main(argv: list[str]) -> int:
    command, rest = (argv[0], argv[1:]) if argv else ("app", [])
    if command not in {"app", "test", "cli", "bench"}:
        print(__doc__)
        return 2
    ensure_environment()
    env = dict(os.environ)
    if command == "app":
        return subprocess.call([str(BIN / "vetfluid"), *rest], env=env)
    if command == "cli":
        return subprocess.call([str(BIN / "vetfluid-cli"), *rest], env=env)
    env.setdefault("QT_QPA_PLATFORM", "offscreen")
    if command == "bench":
        args = ["-m", "benchmark", "--benchmark-enable", "--benchmark-only", *rest]
        return subprocess.call([str(PYTHON), "-m", "pytest", *args], cwd=ROOT, env=env)
    return subprocess.call([str(PYTHON), "-m", "pytest", *rest], cwd=ROOT, env=env)


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
