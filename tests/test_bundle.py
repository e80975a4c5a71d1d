"""The clinic bundle (issue 21): built by scripts/build_bundle.py, copied to a folder of its own
as a clinic installs it, and started there with no Python around it, offline where the machine
allows a process without a network.

Marked ``bundle`` and skipped in the ordinary run (building takes about half a minute; the
bundle is kept and rebuilt only when its sources change). CI runs it:

    python3 dev.py test -m bundle tests/test_bundle.py
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = "dehydrated_dog"

pytestmark = [pytest.mark.bundle, pytest.mark.timeout(900)]


def _offline() -> list[str]:
    """A command prefix that runs a program without any network (a new, empty network
    namespace: unshare(1)), where this machine allows it; otherwise none."""
    try:
        probe = subprocess.run(["unshare", "-rn", "true"], capture_output=True, timeout=10)
    except (OSError, subprocess.TimeoutExpired):
        return []
    return ["unshare", "-rn"] if probe.returncode == 0 else []


@pytest.fixture(scope="module")
def installed(request, tmp_path_factory) -> Path:
    """The bundle's executable in a copy of the bundle folder away from the checkout."""
    if "bundle" not in (request.config.getoption("markexpr") or ""):
        pytest.skip("the bundle build: pytest -m bundle tests/test_bundle.py")
    build = subprocess.run(
        [sys.executable, str(ROOT / "scripts" / "build_bundle.py"), "--if-changed"],
        capture_output=True, text=True, timeout=840,
    )  # fmt: skip
    assert build.returncode == 0, build.stdout[-2000:] + build.stderr[-4000:]
    sys.path.insert(0, str(ROOT / "scripts"))
    try:
        from build_bundle import NAME, executable
    finally:
        sys.path.remove(str(ROOT / "scripts"))
    place = tmp_path_factory.mktemp("clinic") / NAME
    shutil.copytree(executable(ROOT / "dist").parent, place, symlinks=True)
    return place / executable(ROOT / "dist").name


def _env(home: Path) -> dict[str, str]:
    """What a clinic machine without Python has: no virtual environment, no PYTHONPATH."""
    home.mkdir(exist_ok=True)
    return {
        "PATH": "/usr/bin:/bin",
        "HOME": str(home),
        "LANG": "C.UTF-8",
        "QT_QPA_PLATFORM": "offscreen",
        "VETFLUID_HOME": str(home / "vetfluid-data"),
    }


def _run(
    installed: Path, *arguments: str, home: Path, offline: bool = True
) -> subprocess.CompletedProcess:
    """Run the bundle; ``offline`` False where it must reach a records server."""
    return subprocess.run(
        [*(_offline() if offline else []), str(installed), *arguments], env=_env(home),
        cwd=home, capture_output=True, text=True, timeout=120,
    )  # fmt: skip


@pytest.fixture(scope="module")
def self_check(installed, tmp_path_factory) -> tuple[subprocess.CompletedProcess, Path, Path]:
    """``vetfluid self-check FOLDER`` run once from the bundle: its result, FOLDER, and the
    data folder it was given."""
    home = tmp_path_factory.mktemp("home")
    folder = tmp_path_factory.mktemp("self-check")
    run = _run(installed, "self-check", str(folder), "--demo", DEMO, home=home)
    return run, folder, Path(_env(home)["VETFLUID_HOME"])


def test_version_names_the_program_and_the_species_data_it_carries(installed, tmp_path):
    """The version and the digest of the bundle's own species_data/ (data_version.py), equal
    to the checkout's: the bundle carries the data it was built from, all of it."""
    from vetfluid import __version__
    from vetfluid.tables.data_version import species_data_version

    run = _run(installed, "--version", home=tmp_path)
    assert run.returncode == 0, run.stderr
    expected = f"vetfluid {__version__} (species data {species_data_version()})\n"
    assert run.stdout == expected
    carried = installed.parent / "_internal" / "species_data"
    assert species_data_version(carried) == species_data_version(ROOT / "species_data")


def test_self_check_opens_the_window_and_renders_the_demo_plan(self_check):
    """Each tab of the plan pictured at the window's size, and not blank: a grab of a window
    that drew nothing is one colour."""
    from PySide6.QtGui import QImage

    run, folder, _ = self_check
    assert run.returncode == 0, run.stdout + run.stderr
    assert run.stdout.rstrip().endswith("self-check passed")
    pictures = sorted(folder.glob(f"{DEMO}-*.png"))
    tabs = [p.stem.split("-")[-1] for p in pictures]
    assert tabs == ["plan", "timeline", "course", "checks", "values"]
    for picture in pictures:
        image = QImage(str(picture))
        assert (image.width(), image.height()) == (1440, 900), picture.name
        colours = {
            image.pixel(x, y) for x in range(0, 1440, 24) for y in range(0, 900, 18)
        }  # fmt: skip
        assert len(colours) > 20, f"{picture.name} is nearly blank ({len(colours)} colours)"


def test_self_check_prints_the_demo_sheet_naming_its_species(self_check, pdf_text):
    """The treatment sheet from the window's print path, read back with pypdf: it names the
    demo patient's species (vetfluid/planning/demos.py: a dog) and carries the cautions."""
    from vetfluid.planning.demos import demo
    from vetfluid.planning.plan import build_plan

    run, folder, _ = self_check
    assert run.returncode == 0, run.stdout + run.stderr
    text = pdf_text(folder / f"{DEMO}-sheet.pdf")
    species = build_plan(demo(DEMO).request).species_name
    assert species == "Dog"
    assert f"{species}, 24 kg" in text  # the demo: a 24 kg dog
    assert "Fluid treatment sheet" in text
    assert "Decision support for veterinary professionals" in text


def test_self_check_leaves_the_clinics_data_folder_alone(self_check):
    """It works in a temporary folder of its own: no records, drafts or settings written."""
    run, _, data = self_check
    assert run.returncode == 0, run.stdout + run.stderr
    assert not data.exists() or not any(data.iterdir())


def test_the_sheet_command_prints_the_saved_plan_file(installed, self_check, tmp_path, pdf_text):
    """``vetfluid sheet PLAN.vfplan -o sheet.pdf`` from the bundle, on the plan file the
    self-check saved (``.vfplan``, issue 21), and on the same file under the name plan files
    had before (``.vfplan.json``)."""
    _, folder, _ = self_check
    plan_file = folder / f"{DEMO}.vfplan"
    earlier = tmp_path / f"{DEMO}.vfplan.json"
    shutil.copyfile(plan_file, earlier)
    for given in (plan_file, earlier):
        sheet = tmp_path / f"sheet-{given.suffix.lstrip('.')}.pdf"
        run = _run(installed, "sheet", str(given), "-o", str(sheet), home=tmp_path)
        assert run.returncode == 0, run.stderr
        assert run.stdout.startswith(f"wrote {sheet}")
        assert "Dog, 24 kg" in pdf_text(sheet)


def test_self_check_opens_the_records_on_the_clinics_server(
    installed, postgres_url, vetfluid_home, tmp_path, monkeypatch
):
    """A workstation set up for the clinic's PostgreSQL server (its Records settings and
    the owner-only password file in its data folder, as the window keeps them): the bundle's
    self-check opens the records there (psycopg and its libpq are in the bundle) and says
    what they hold. Runs where the tests have a server (tests/conftest.py; CI starts one)."""
    from vetfluid.records.location import (
        PASSFILE_NAME,
        RecordsSettings,
        save_settings,
        server_address,
    )

    home = tmp_path / "home"
    data = Path(_env(home)["VETFLUID_HOME"])
    data.mkdir(mode=0o700)
    # the password as the postgres_url fixture kept it, the window's way
    shutil.copy2(vetfluid_home / PASSFILE_NAME, data / PASSFILE_NAME)
    with monkeypatch.context() as here:
        here.setenv("VETFLUID_HOME", str(data))
        save_settings(RecordsSettings(url=postgres_url, initials="AB"))
    folder = tmp_path / "check"
    # with the network: the server is on it (the test's own, on 127.0.0.1)
    run = _run(installed, "self-check", str(folder), "--demo", DEMO, home=home, offline=False)
    assert run.returncode == 0, run.stdout + run.stderr
    label = server_address(postgres_url).label
    assert f"records: the server {label} opened (0 patients, 0 plan versions)" in run.stdout
    assert run.stdout.rstrip().endswith("self-check passed")
    # psycopg's binary implementation with a libpq of its own: a clinic machine has none
    # (this one has, so the run above alone would not show it)
    assert list((installed.parent / "_internal" / "psycopg_binary").glob("pq.*"))
    assert list((installed.parent / "_internal" / "psycopg_binary.libs").glob("libpq*"))


def test_the_window_starts_and_keeps_running(installed, tmp_path):
    """Plain ``vetfluid``, as the clinic's shortcut starts it: the window, then the planner on
    the next turn of the event loop; still running after some seconds, nothing logged as an
    unexpected error (ui/common/errors.py writes vetfluid.log in the data folder)."""
    env = _env(tmp_path)
    with subprocess.Popen(
        [*_offline(), str(installed)], env=env, cwd=tmp_path,
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    ) as window:  # fmt: skip
        time.sleep(5)
        running = window.poll() is None
        window.terminate()
        _, stderr = window.communicate(timeout=30)
    assert running, stderr
    assert "Traceback" not in stderr
    log = Path(env["VETFLUID_HOME"]) / "vetfluid.log"
    assert not log.exists() or "Traceback" not in log.read_text(encoding="utf-8")


def test_a_second_start_hands_its_plan_file_to_the_running_window(installed, tmp_path):
    """A plan file double-clicked while the bundle's window is open: the second start hands
    it to that window and ends with 0 (ui/one_window.py; Qt's local sockets are in the
    bundle); the window keeps running."""
    from ui.one_window import socket_name
    from vetfluid.planning.demos import demo
    from vetfluid.records.request_file import write_request_file

    env = _env(tmp_path)
    plan = write_request_file(tmp_path / "dog.vfplan", demo(DEMO).request, {})
    with subprocess.Popen(
        [*_offline(), str(installed)], env=env, cwd=tmp_path,
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    ) as window:  # fmt: skip
        listening = Path(socket_name(Path(env["VETFLUID_HOME"])))
        deadline = time.monotonic() + 60
        while not listening.exists() and window.poll() is None and time.monotonic() < deadline:
            time.sleep(0.1)
        second = _run(installed, str(plan), home=tmp_path)
        running = window.poll() is None
        window.terminate()
        _, stderr = window.communicate(timeout=30)
    assert listening.exists() or not running, stderr
    assert second.returncode == 0, second.stderr
    assert second.stdout == (
        "vetfluid is already open with this data folder: its window opens the plan file.\n"
    )
    assert running, stderr
    assert "Traceback" not in stderr + second.stderr


@pytest.mark.parametrize("suffix", [".ico", ".icns"])
def test_the_windows_and_macos_icons_are_drawn_from_the_svg(tmp_path, suffix):
    """PyInstaller takes no SVG for an executable's icon: the build draws icons/vetfluid.svg
    into Windows' .ico and macOS' .icns with Qt's writers (quick: runs in the ordinary run)."""
    from PySide6.QtGui import QImage

    sys.path.insert(0, str(ROOT / "scripts"))
    try:
        from build_bundle import write_icon
    finally:
        sys.path.remove(str(ROOT / "scripts"))
    image = QImage(str(write_icon(tmp_path, suffix)))
    assert (image.width(), image.height()) == (256, 256)
    drawn = {image.pixel(x, y) for x in range(0, 256, 8) for y in range(0, 256, 8)}
    assert len(drawn) > 3  # more than a transparent square
