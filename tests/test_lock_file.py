"""requirements.lock pins what pyproject.toml asks for, and the tests run on exactly that.

dev.py (both README commands) and .ci/run install from the lock with ``--require-hashes``;
these checks fail when pyproject.toml gains a dependency the lock lacks, when a pin falls
outside pyproject's range, or when the environment running the tests drifted from the lock.
"""

from __future__ import annotations

import re
import tomllib
from importlib import metadata
from pathlib import Path

from packaging.markers import Marker
from packaging.requirements import Requirement
from packaging.utils import canonicalize_name

ROOT = Path(__file__).resolve().parents[1]
PIN = re.compile(r"^([A-Za-z0-9_.-]+)==([^\s;\\]+)\s*(?:;\s*([^\\]+?))?\s*\\?$")


def locked() -> dict[str, tuple[str, str | None, int]]:
    """name → (version, marker, number of hashes) from requirements.lock."""
    pins: dict[str, tuple[str, str | None, int]] = {}
    current = None
    for line in (ROOT / "requirements.lock").read_text(encoding="utf-8").splitlines():
        if match := PIN.match(line):
            current = canonicalize_name(match[1])
            pins[current] = (match[2], match[3], 0)
        elif current and line.strip().startswith("--hash=sha256:"):
            version, marker, hashes = pins[current]
            pins[current] = (version, marker, hashes + 1)
    return pins


def wanted() -> list[Requirement]:
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    listed = (*project["dependencies"], *project["optional-dependencies"]["test"])
    return [Requirement(r) for r in listed]


def test_every_dependency_is_pinned_within_pyprojects_range_with_hashes():
    pins = locked()
    for requirement in wanted():
        name = canonicalize_name(requirement.name)
        assert name in pins, f"{name} is in pyproject.toml but not in requirements.lock"
        version, _, hashes = pins[name]
        assert requirement.specifier.contains(version, prereleases=True), (name, version)
        assert hashes >= 1, f"{name} has no hash in the lock"


def test_the_tests_run_on_exactly_the_locked_versions():
    drift = {}
    for name, (version, marker, _) in locked().items():
        if marker and not Marker(marker).evaluate():
            continue  # pinned for another platform or Python
        installed = metadata.version(name)
        if installed != version:
            drift[name] = (installed, version)
    assert drift == {}, "installed ≠ locked (run python3 dev.py test to bring .venv in line)"


def test_the_lock_reader_sees_pins_and_markers():
    """The reader above is not blind to the lock's shapes (uv's universal output)."""
    assert PIN.match("colorama==0.4.6 ; sys_platform == 'win32' \\").groups() == (
        "colorama", "0.4.6", "sys_platform == 'win32'",
    )  # fmt: skip
    assert PIN.match("numpy==2.4.6 \\").groups() == ("numpy", "2.4.6", None)
