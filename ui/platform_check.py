"""Say which system packages are missing before Qt's display plugin aborts the process.

Qt's xcb plugin calls abort() with a terse message when a shared library is
missing; we try to load each library first (a few milliseconds) and name the
Debian/Ubuntu package that provides it.
"""

from __future__ import annotations

import ctypes
import os
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


def display_problem() -> str | None:
    """A message for the user when the window cannot open here, else None."""
    if not sys.platform.startswith("linux"):
        return None
    platform = os.environ.get("QT_QPA_PLATFORM", "")
    if not platform and not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        return (
            "vetfluid: no display found (neither DISPLAY nor WAYLAND_DISPLAY is set). "
            "Start it from a desktop session, or set QT_QPA_PLATFORM=offscreen for headless use."
        )
    packages = missing_packages(platform or "xcb")
    if packages:
        return (
            "vetfluid: Qt cannot open a window because system libraries are missing. "
            "Install them with:\n"
            f"  sudo apt-get install {' '.join(packages)}"
        )
    return None
