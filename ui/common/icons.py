"""One locator for vetfluid's SVG icons (``icons/``); QIcons are built on first use."""

from __future__ import annotations

from functools import cache

from PySide6.QtGui import QIcon

from vetfluid.common.errors import InputError
from vetfluid.common.paths import resource_dir

SEVERITY_ICONS = {"info": "severity-info", "soft": "severity-soft", "hard": "severity-hard"}
BASIS_ICONS = {
    "published": "basis-published",
    "memory": "basis-memory",
    "derived": "basis-derived",
    "override": "basis-override",
}
# Words shown beside every icon: severity and basis are never told by colour alone.
SEVERITY_WORDS = {"info": "Note", "soft": "Warning", "hard": "Hard limit"}
BASIS_WORDS = {
    "published": "published",
    "memory": "memory — unverified",
    "derived": "derived",
    "override": "clinic override",
}


def known_icons() -> list[str]:
    return sorted(p.stem for p in resource_dir("icons").glob("*.svg"))


@cache
def icon(name: str) -> QIcon:
    """The icon ``icons/<name>.svg``; an unknown name lists the known ones."""
    path = resource_dir("icons") / f"{name}.svg"
    if not path.is_file():
        raise InputError(
            f"no icon {name!r}", field="icon", value=name, fix=f"known: {', '.join(known_icons())}"
        )
    return QIcon(str(path))
