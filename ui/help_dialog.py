"""Help: the cautions in full, the markers, and every source the table cites."""

from __future__ import annotations

from html import escape

from PySide6.QtWidgets import QDialog, QDialogButtonBox, QTextBrowser, QVBoxLayout, QWidget

from ui.icons import BASIS_WORDS, SEVERITY_WORDS
from vetfluid.cautions import CAUTIONS
from vetfluid.species import SpeciesTable


def help_html(table: SpeciesTable) -> str:
    cautions = "".join(f"<li>{escape(c)}</li>" for c in CAUTIONS)
    severities = "".join(f"<li><b>{w}</b> ({k})</li>" for k, w in SEVERITY_WORDS.items())
    bases = "".join(f"<li><b>{w}</b></li>" for w in BASIS_WORDS.values())
    sources = "".join(
        f"<li><b>{escape(s.source_id)}</b>: {escape(s.citation)}"
        f"{f' ({s.year})' if s.year else ''}</li>"
        for s in table.sources.values()
    )
    return (
        f"<h2>Cautions</h2><ul>{cautions}</ul>"
        "<h2>Severities</h2><p>Notes inform; warnings need a written reason before the plan "
        "can be marked ready; hard limits block it.</p>"
        f"<ul>{severities}</ul>"
        "<h2>Where values come from</h2><p>Each species value is marked with its basis. "
        "Values recalled from memory were not checked against a publication.</p>"
        f"<ul>{bases}</ul><h2>Sources</h2><ol>{sources}</ol>"
    )


class HelpDialog(QDialog):
    def __init__(self, table: SpeciesTable, parent: QWidget | None = None):
        super().__init__(parent)
        self.setWindowTitle("vetfluid — cautions and sources")
        layout = QVBoxLayout(self)
        self.browser = QTextBrowser()
        self.browser.setAccessibleName("Cautions and sources")
        self.browser.setHtml(help_html(table))
        layout.addWidget(self.browser)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        layout.addWidget(buttons)
        self.resize(720, 640)
