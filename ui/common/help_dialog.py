"""Help: the cautions in full, the markers, and every source the table cites."""

from __future__ import annotations

from html import escape

from PySide6.QtCore import QUrl
from PySide6.QtGui import QTextDocument
from PySide6.QtWidgets import QDialog, QDialogButtonBox, QTextBrowser, QVBoxLayout, QWidget

from ui.common.icons import BASIS_ICONS, BASIS_WORDS, SEVERITY_ICONS, SEVERITY_WORDS, icon
from vetfluid.common.cautions import CAUTIONS
from vetfluid.tables.species import SpeciesTable

LEGEND_ICON_PX = 16


def help_html(table: SpeciesTable) -> str:
    cautions = "".join(f"<li>{escape(c)}</li>" for c in CAUTIONS)
    # the icons the window shows beside each word (images added by HelpDialog)
    severities = "".join(
        f"<li><img src='icon:{SEVERITY_ICONS[k]}'> <b>{w}</b> ({k})</li>"
        for k, w in SEVERITY_WORDS.items()
    )
    bases = "".join(
        f"<li><img src='icon:{BASIS_ICONS[k]}'> <b>{w}</b></li>" for k, w in BASIS_WORDS.items()
    )
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
        document = self.browser.document()
        for name in (*SEVERITY_ICONS.values(), *BASIS_ICONS.values()):
            pixmap = icon(name).pixmap(LEGEND_ICON_PX, LEGEND_ICON_PX)
            document.addResource(
                QTextDocument.ResourceType.ImageResource, QUrl(f"icon:{name}"), pixmap
            )
        self.browser.setHtml(help_html(table))
        layout.addWidget(self.browser)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        layout.addWidget(buttons)
        self.resize(720, 640)
