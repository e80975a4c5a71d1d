"""Help ▸ How to plan a patient, and Help ▸ About vetfluid.

The keys listed are read from the window's own actions when the page opens, so the page
names only keys the window has. The About page names vetfluid's version, the species
data's version (a digest of its files: :mod:`vetfluid.tables.data_version`) and the
records file the window has open.
"""

from __future__ import annotations

from html import escape

from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import (
    QDialog,
    QDialogButtonBox,
    QMainWindow,
    QTextBrowser,
    QVBoxLayout,
)

STEPS = (
    "<b>Patient</b>: choose the species (type part of its common or scientific name, or a "
    "group such as “reptiles”), then the weight, with its unit beside it.",
    "<b>Hydration</b>: type the dehydration in %, or tick what you find on examination and "
    "use the estimate; add ongoing losses if there are any.",
    "<b>How to give it</b>: the hours to replace the deficit, resuscitation boluses, the "
    "fluid, the route and the delivery. Laboratory values (Na, K, …) are optional and "
    "change the plan when entered.",
    "<b>Check it</b>: <i>Plan and schedule</i> shows the totals, phases and the schedule on "
    "the clock; on <i>Checks</i> a hard limit blocks the plan and a warning needs a "
    "written reason before the plan can be marked ready; <i>Values used</i> says where "
    "each species value comes from.",
    "<b>Keep and give it</b>: save it as a version in the patient's record and print the "
    "treatment sheet. During treatment, record what you measure on the <i>Course</i> tab "
    "and re-plan from there.",
)


def window_keys(window: QMainWindow) -> list[tuple[str, str]]:
    """(what, keys) for every action of ``window`` that has keys, in menu order."""
    rows = []
    for action in window.actions():
        keys = [k.toString(QKeySequence.SequenceFormat.NativeText) for k in action.shortcuts()]
        if keys:
            rows.append((action.text().replace("&", ""), " or ".join(keys)))
    return rows


def how_to_html(window: QMainWindow) -> str:
    steps = "".join(f"<li>{step}</li>" for step in STEPS)
    keys = "".join(
        f"<tr><td>{escape(what)}</td><td><b>{escape(keys)}</b></td></tr>"
        for what, keys in window_keys(window)
    )
    return (
        "<h2>Plan a patient in five steps</h2>"
        f"<ol>{steps}</ol>"
        "<p>Every figure is computed by vetfluid's core from the species table; verify it "
        "before giving (Help ▸ Cautions and sources).</p>"
        "<h2>Keys</h2>"
        f"<table cellpadding='3'>{keys}</table>"
        "<p>Alt with the underlined letter of a menu, a tab or a field goes there; Tab "
        "moves on to the next field.</p>"
    )


def _records_words(window: QMainWindow) -> str:
    """Where the records are kept: the file the window has open, or why there is none."""
    from vetfluid.common.paths import user_data_dir
    from vetfluid.records.store import DATABASE_NAME

    keeper = getattr(window, "keeper", None)
    records = keeper.records if keeper is not None else None
    if records is not None:
        return f"Patient records are kept in <b>{escape(records.where)}</b>."
    problem = keeper.work.problem if keeper is not None else ""
    path = user_data_dir() / DATABASE_NAME
    why = f" ({escape(problem)})" if problem else ""
    return f"Patient records belong in <b>{escape(str(path))}</b>; it is not open now{why}."


def about_html(window: QMainWindow) -> str:
    import vetfluid
    from vetfluid.common.paths import user_data_dir
    from vetfluid.tables.data_version import species_data_version

    return (
        "<h2>vetfluid</h2>"
        "<p>Fluid-therapy planning for veterinary patients, offline. Decision support "
        "only: verify before giving.</p>"
        f"<p>Version <b>{escape(vetfluid.__version__)}</b><br>"
        f"Species data <b>{species_data_version()}</b> (a digest of the shipped data files: "
        "two installations showing the same figure use the same values)</p>"
        f"<p>{_records_words(window)}<br>"
        f"Clinic overrides and window settings are kept in "
        f"<b>{escape(str(user_data_dir()))}</b>.</p>"
    )


PAGES = {
    "how_to": ("vetfluid — how to plan a patient", how_to_html),
    "about": ("vetfluid — about", about_html),
}


class GuideDialog(QDialog):
    def __init__(self, title: str, html: str, parent: QMainWindow | None = None):
        super().__init__(parent)
        self.setWindowTitle(title)
        layout = QVBoxLayout(self)
        self.browser = QTextBrowser()
        self.browser.setAccessibleName(title.split("— ")[-1].capitalize())
        self.browser.setHtml(html)
        layout.addWidget(self.browser)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        layout.addWidget(buttons)
        self.resize(640, 560)


def show_guide(page: str, window: QMainWindow) -> None:
    """Open the help page ``page`` (``how_to`` or ``about``) over ``window``."""
    title, html = PAGES[page]
    GuideDialog(title, html(window), window).exec()
