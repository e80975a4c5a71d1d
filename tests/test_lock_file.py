"""requirements.lock pins what pyproject.toml asks for, and the tests run on exactly that.

dev.py (both README commands) and .ci/run install from the lock with ``--require-hashes``;
these checks fail when pyproject.toml gains a dependency the lock lacks, when a pin falls
outside pyproject's range, or when the environment running the tests drifted from the lock.
"""

from __future__ import annotations

import re
import sys
import tomllib
from importlib import metadata
from pathlib import Path

from packaging.markers import Marker
from packaging.requirements import Requirement
from packaging.utils import canonicalize_name

ROOT = Path(__file__).resolve().parents[1]
PIN = re.compile(r"^([A-Za-z0-9_.-]+)==([^\s;\\]+)\s*(?:;\s*([^\\]+?))?\s*\\?$")


def locked() -> dict[str, list[tuple[str, str | None, int]]]:
    """name → its pins as (version, marker, number of hashes) from requirements.lock; a
    universal lock may pin one name twice, for different Pythons or platforms."""
    pins: dict[str, list[tuple[str, str | None, int]]] = {}
    current = None
    for line in (ROOT / "requirements.lock").read_text(encoding="utf-8").splitlines():
        if match := PIN.match(line):
            current = pins.setdefault(canonicalize_name(match[1]), [])
            current.append((match[2], match[3], 0))
        elif current and line.strip().startswith("--hash=sha256:"):
            version, marker, hashes = current[-1]
            current[-1] = (version, marker, hashes + 1)
    return pins


def applying(pins: list[tuple[str, str | None, int]]) -> list[str]:
    """The versions pinned for this interpreter and platform."""
    return [version for version, marker, _ in pins if not marker or Marker(marker).evaluate()]


def wanted() -> list[Requirement]:
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    listed = (*project["dependencies"], *project["optional-dependencies"]["test"])
    return [Requirement(r) for r in listed]


def test_every_dependency_is_pinned_within_pyprojects_range_with_hashes():
    pins = locked()
    for requirement in wanted():
        name = canonicalize_name(requirement.name)
        assert name in pins, f"{name} is in pyproject.toml but not in requirements.lock"
        for version, _, hashes in pins[name]:
            assert requirement.specifier.contains(version, prereleases=True), (name, version)
            assert hashes >= 1, f"{name} {version} has no hash in the lock"
        assert len(applying(pins[name])) == 1, f"{name}: one pin must apply here"


def test_the_tests_run_on_exactly_the_locked_versions():
    drift = {}
    for name, pins in locked().items():
        for version in applying(pins):  # pins for another platform or Python are skipped
            installed = metadata.version(name)
            if installed != version:
                drift[name] = (installed, version)
    assert drift == {}, "installed ≠ locked (run python3 dev.py test to bring .venv in line)"


def test_a_name_pinned_twice_is_read_as_two_pins(tmp_path, monkeypatch):
    """uv's universal lock splits a pin by Python version; both pins are kept and the one
    for this interpreter is the one checked."""
    lock = tmp_path / "requirements.lock"
    lock.write_text(
        "numpy==2.4.6 ; python_full_version < '3.12' \\\n    --hash=sha256:aa\n"
        "numpy==2.5.5 ; python_full_version >= '3.12' \\\n    --hash=sha256:bb\n",
        encoding="utf-8",
    )
    monkeypatch.setattr(sys.modules[__name__], "ROOT", tmp_path)
    pins = locked()["numpy"]
    assert [(v, h) for v, _, h in pins] == [("2.4.6", 1), ("2.5.5", 1)]
    here = "2.4.6" if sys.version_info < (3, 12) else "2.5.5"
    assert applying(pins) == [here]


def test_the_lock_reader_sees_pins_and_markers():
    """The reader above is not blind to the lock's shapes (uv's universal output)."""
    assert PIN.match("colorama==0.4.6 ; sys_platform == 'win32' \\").groups() == (
        "colorama", "0.4.6", "sys_platform == 'win32'",
    )  # fmt: skip
    assert PIN.match("numpy==2.4.6 \\").groups() == ("numpy", "2.4.6", None)


def test_dev_py_refuses_to_install_when_pyproject_names_what_the_lock_lacks(tmp_path, monkeypatch):
    """dev.py stops with the command to run, before installing anything, when pyproject.toml
    gained a dependency that requirements.lock does not pin."""
    monkeypatch.syspath_prepend(str(ROOT))
    import dev

    project = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    (tmp_path / "pyproject.toml").write_text(
        project.replace('"numpy>=1.26",', '"numpy>=1.26",\n    "Some_New.Package>=1",'),
        encoding="utf-8",
    )
    monkeypatch.setattr(dev, "ROOT", tmp_path)
    monkeypatch.setattr(dev, "LOCK", ROOT / "requirements.lock")
    assert dev._unlocked() == ["Some_New.Package>=1"]
    monkeypatch.setattr(dev, "ROOT", ROOT)
    assert dev._unlocked() == []
