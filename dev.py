#!/usr/bin/env python3
"""Set up vetfluid in ./.venv and run it — needs only Python 3.11+.

    python3 dev.py app     # set up (first time) and open the window
    python3 dev.py test    # set up (first time) and run the whole test suite
    python3 dev.py cli ... # set up and run vetfluid-cli with the given arguments
    python3 dev.py bench   # set up and run the benchmarks
    python3 dev.py lock    # refresh requirements.lock to the newest releases pyproject allows

Every install comes from requirements.lock: exact versions with their hashes, for every
platform (made with uv's universal resolver), so a fresh machine gets exactly the versions
the tests passed with. The virtual environment is brought up to date when pyproject.toml
or the lock changes (a hash of both is kept in .venv/vetfluid-setup.stamp), so a fresh
clone and an old checkout behave alike. After `lock`, run the tests before committing it.
"""

from __future__ import annotations

import hashlib
import os
import re
import subprocess
import sys
import tempfile
import tomllib
import venv
from pathlib import Path

ROOT = Path(__file__).resolve().parent
VENV = ROOT / ".venv"
STAMP = VENV / "vetfluid-setup.stamp"
LOCK = ROOT / "requirements.lock"
BIN = VENV / ("Scripts" if os.name == "nt" else "bin")
PYTHON = BIN / ("python.exe" if os.name == "nt" else "python")


def _wanted_stamp() -> str:
    return hashlib.sha256((ROOT / "pyproject.toml").read_bytes() + LOCK.read_bytes()).hexdigest()


def _name(requirement: str) -> str:
    """A requirement's project name, normalised as PyPI compares them (PEP 503)."""
    found = re.match(r"\s*([A-Za-z0-9][A-Za-z0-9._-]*)", requirement)
    return re.sub(r"[-_.]+", "-", found[1]).lower() if found else requirement


def _unlocked() -> list[str]:
    """What pyproject.toml asks for that requirements.lock does not pin."""
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    wanted = [*project["dependencies"], *project["optional-dependencies"]["test"]]
    pinned = {_name(line) for line in LOCK.read_text(encoding="utf-8").splitlines() if "==" in line}
    return [r for r in wanted if _name(r) not in pinned]


def ensure_environment() -> None:
    """Create .venv and install the locked dependencies, then vetfluid itself (editable)."""
    if sys.version_info < (3, 11):
        sys.exit(f"vetfluid needs Python 3.11 or newer; this is {sys.version.split()[0]}")
    wanted = _wanted_stamp()
    if PYTHON.exists() and STAMP.exists() and STAMP.read_text() == wanted:
        return
    if missing := _unlocked():
        sys.exit(
            f"dev.py: pyproject.toml asks for {', '.join(missing)}, which requirements.lock "
            "does not pin: run `python3 dev.py lock`, then the tests, and commit both files"
        )
    if not PYTHON.exists():
        print("dev.py: creating .venv …", flush=True)
        venv.EnvBuilder(with_pip=True).create(VENV)
    print("dev.py: installing the locked dependencies into .venv …", flush=True)
    pip = [str(PYTHON), "-m", "pip", "install", "--quiet"]
    subprocess.run([*pip, "--require-hashes", "-r", str(LOCK)], check=True)
    # the project itself, built by the locked hatchling (no download, nothing unlocked)
    subprocess.run([*pip, "--no-deps", "--no-build-isolation", "-e", str(ROOT)], check=True)
    STAMP.write_text(wanted)


def refresh_lock() -> int:
    """Resolve pyproject.toml afresh (newest allowed releases) into requirements.lock, with
    uv in a throwaway environment so .venv keeps only what the lock names."""
    with tempfile.TemporaryDirectory(prefix="vetfluid-lock-") as folder:
        tool = Path(folder) / "venv"
        venv.EnvBuilder(with_pip=True).create(tool)
        tool_bin = tool / BIN.name
        subprocess.run(
            [str(tool_bin / PYTHON.name), "-m", "pip", "install", "--quiet", "uv"], check=True
        )
        return subprocess.call(
            [
                str(tool_bin / ("uv.exe" if os.name == "nt" else "uv")),
                "pip", "compile", "pyproject.toml", "--extra", "test", "--universal",
                "--generate-hashes", "--python-version", "3.11", "--upgrade",
                "--custom-compile-command", "python3 dev.py lock", "-o", str(LOCK),
            ],
            cwd=ROOT,
        )  # fmt: skip


def main(argv: list[str]) -> int:
    command, rest = (argv[0], argv[1:]) if argv else ("app", [])
    if command not in {"app", "test", "cli", "bench", "lock"}:
        print(__doc__)
        return 2
    if command == "lock":
        return refresh_lock()
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
