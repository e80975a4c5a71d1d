"""The main window. For now it shows the cautions and the species table summary;
the planning views arrive with the window issue."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QMainWindow, QVBoxLayout, QWidget

from vetfluid.cautions import CAUTIONS


class MainWindow(QMainWindow):
    def __init__(self) -> None:
        super().__init__()
        self.setWindowTitle("vetfluid")
        body = QWidget(self)
        layout = QVBoxLayout(body)
        heading = QLabel("<h2>vetfluid — fluid therapy planning across species</h2>")
        cautions = QLabel("<br>".join(f"⚠ {c}" for c in CAUTIONS))
        cautions.setObjectName("cautions")
        cautions.setWordWrap(True)
        cautions.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        cautions.setAccessibleName("Cautions")
        status = QLabel(
            "The planning window is being built. Plans are available now from the command line: "
            '<code>vetfluid-cli plan --species dog --weight "20 kg" --dehydration 7</code>'
        )
        status.setWordWrap(True)
        for widget in (heading, cautions, status):
            layout.addWidget(widget)
        layout.addStretch(1)
        self.setCentralWidget(body)
        self.resize(720, 360)
