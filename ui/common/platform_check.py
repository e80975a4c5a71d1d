"""Say which system packages are missing before Qt's display plugin aborts the process.

Qt's xcb plugin calls abort() with a terse message when a shared library is
missing; we try to load each library first (a few milliseconds) and name the
Debian/Ubuntu package that provides it.
"""

from __future__ import annotations

import ctypes
import os
import re
import socket
import sys

# shared library → Debian/Ubuntu package (Qt 6 xcb platform plugin)
XCB_LIBRARIES = {
    "libxcb-cursor.so.0": "libxcb-cursor0",
    "libxcb-icccm.so.4": "libxcb-icccm4",
    "libxcb-keysyms.so.1": "libxcb-keysyms1",
    "libxcb-image.so.0": "libxcb-image0",
    "libxcb-render-util.so.0": "libxcb-render-util0",
    "libxcb-shape.so.0": "libxcb-shape0",
    "libxcb-randr.so.0": "libxcb-randr0",
    "libxcb-xkb.so.1": "libxcb-xkb1",
    "libxkbcommon-x11.so.0": "libxkbcommon-x11-0",
    "libX11-xcb.so.1": "libx11-xcb1",
}
# needed by every platform plugin, offscreen included
CORE_LIBRARIES = {
    "libEGL.so.1": "libegl1",
    "libGL.so.1": "libgl1",
    "libfontconfig.so.1": "libfontconfig1",
    "libxkbcommon.so.0": "libxkbcommon0",
    "libdbus-1.so.3": "libdbus-1-3",
    "libglib-2.0.so.0": "libglib2.0-0",
}


def missing_packages(platform: str | None = None) -> list[str]:
    """Debian packages whose libraries cannot be loaded for the given Qt platform."""
    if not sys.platform.startswith("linux"):
        return []
    platform = platform if platform is not None else os.environ.get("QT_QPA_PLATFORM", "xcb")
    wanted = dict(CORE_LIBRARIES)
    if platform.startswith("xcb"):
        wanted.update(XCB_LIBRARIES)
    missing = []
    for library, package in wanted.items():
        try:
            ctypes.CDLL(library)
        except OSError:
            missing.append(package)
    return sorted(set(missing))


HEADLESS = (
    "to work without a window, print with `vetfluid sheet` or `vetfluid chart` (or use "
    "vetfluid-cli), or set QT_QPA_PLATFORM=offscreen"
)
X_PROBE_TIMEOUT_S = 0.5  # a remote X server that takes longer than this to accept is not used
_DISPLAY_NAME = re.compile(r"^(?P<host>[^:]*):(?P<number>\d+)(?:\.\d+)?$")


def x_server_answers(display: str) -> bool:
    """Whether an X server accepts a connection at ``display`` (``:0``, ``unix:0``,
    ``host:10.0``): the socket Xlib itself would use (the local one, abstract name first,
    or TCP port 6000 + number), only connected to, so the check costs a millisecond.
    Qt's xcb plugin aborts the process when this fails; asking first lets us say why."""
    match = _DISPLAY_NAME.match(display)
    if not match:
        return False
    number = int(match["number"])
    host = match["host"]
    if host in ("", "unix") or host.endswith("/unix"):
        path = f"/tmp/.X11-unix/X{number}"
        for address in ("\0" + path, path):
            with socket.socket(socket.AF_UNIX, socket.SOCK_STREAM) as probe:
                probe.settimeout(X_PROBE_TIMEOUT_S)
                try:
                    probe.connect(address)
                    return True
                except OSError:
                    continue
        if host:  # "unix:0" is the local socket only
            return False
        host = "localhost"  # ":0" falls back to TCP as Xlib does
    try:
        with socket.create_connection((host, 6000 + number), timeout=X_PROBE_TIMEOUT_S):
            return True
    except OSError:
        return False


def display_problem() -> str | None:
    """A message for the user when the window cannot open here, else None."""
    if not sys.platform.startswith("linux"):
        return None
    platform = os.environ.get("QT_QPA_PLATFORM", "")
    display = os.environ.get("DISPLAY", "")
    if not platform and not (display or os.environ.get("WAYLAND_DISPLAY")):
        return (
            "vetfluid: no display found (neither DISPLAY nor WAYLAND_DISPLAY is set). "
            "Start it from a desktop session, or set QT_QPA_PLATFORM=offscreen for headless use."
        )
    # Qt picks X11 by itself here; a platform chosen by hand is left to the one who chose it
    x11 = not platform and not os.environ.get("WAYLAND_DISPLAY")
    if x11 and not x_server_answers(display):
        return (
            f"vetfluid: no display could be opened at DISPLAY={display!r} (no X server answers "
            f"there); {HEADLESS}."
        )
    packages = missing_packages(platform or "xcb")
    if packages:
        return (
            "vetfluid: Qt cannot open a window because system libraries are missing. "
            "Install them with:\n"
            f"  sudo apt-get install {' '.join(packages)}"
        )
    return None
