"""The main window: patient on the left, the plan and its checks on the right, the
species table on its own page, the cautions always in view.

pyqtgraph and the species table are built after the first paint so the window
appears quickly.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import QEvent, QSettings, QTimer
from PySide6.QtGui import QAction, QIcon, QKeySequence
from PySide6.QtWidgets import (
    QFileDialog,
    QLabel,
    QMainWindow,
    QMessageBox,
    QScrollArea,
    QSplitter,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from ui.common.icons import icon
from ui.waiting_files import WaitingFiles
from vetfluid.common.cautions import SHORT_CAUTION
from vetfluid.common.errors import VetfluidError
from vetfluid.common.paths import user_data_dir, write_owner_only_text

if TYPE_CHECKING:
    from PySide6.QtGui import QCloseEvent

    from vetfluid.records.store import Records
    from vetfluid.records.work_session import Opening

# plan files: saved as *.vfplan; those saved before as *.vfplan.json open too
OPEN_FILTER = "vetfluid plan file (*.vfplan *.vfplan.json)"
SAVE_FILTER = "vetfluid plan file (*.vfplan)"


def _placeholder(text: str) -> QWidget:
    holder = QWidget()
    QVBoxLayout(holder).addWidget(QLabel(text))
    return holder


class MainWindow(QMainWindow):
    """Built in three steps so it appears at once: the frame (cautions, menus) paints
    first; the planner follows on the next event-loop turn; the plots (pyqtgraph) and
    the species table are built the first time their tab is opened."""

    def __init__(self) -> None:
        super().__init__()
        self.session = None  # created with the planner, right after the first paint
        self.keeper = None  # keeps the work in the records; created with the planner
        self.print_patient: dict | None = None  # whose sheet is printed: saved, or asked
        self.timeline_view = None
        self.course_view = None
        self.species_view = None
        self._closing = False  # a close has begun (its question may be open)
        self.setWindowIcon(icon("vetfluid"))
        self.setWindowTitle("vetfluid")

        body = QWidget()
        outer = QVBoxLayout(body)
        outer.setContentsMargins(6, 6, 6, 6)
        self.cautions = QLabel(f"⚠ {SHORT_CAUTION} — <a href='help'>read in full (F1)</a>")
        self.cautions.setObjectName("cautions")
        self.cautions.setWordWrap(True)
        self.cautions.setAccessibleName("Cautions")
        self.cautions.linkActivated.connect(self.show_help)
        self.cautions.setStyleSheet(
            "QLabel#cautions { border: 1px solid palette(mid); padding: 4px; font-weight: 600; }"
        )
        outer.addWidget(self.cautions)
        self.pages = QTabWidget()
        self.pages.setAccessibleName("Pages")
        self.planner_holder = _placeholder("Opening the planner…")
        self.species_holder = _placeholder("Opening the species table…")
        self.pages.addTab(self.planner_holder, "Planner")
        self.pages.addTab(self.species_holder, "Species table")
        outer.addWidget(self.pages, 1)
        self.setCentralWidget(body)

        self._build_menus()
        # Opaque: a new message (one per edit) repaints the bar only, not the window behind it.
        self.statusBar().setAutoFillBackground(True)
        self.statusBar().showMessage("Choose a species and enter a weight to start.")
        self.waiting_files = WaitingFiles(
            self, self.statusBar(), read=self.read_request, on_screen=self._on_screen
        )
        self._restore_geometry()
        self._painted = False
        self._closed = False
        self._tab_labels: dict[QWidget, tuple[str, str | None]] = {}  # page: (words, severity)
        self.installEventFilter(self)

    def eventFilter(self, watched, event) -> bool:  # noqa: N802,ANN001 (Qt override)
        """After the first paint, build the planner on the next event-loop turn."""
        if watched is self and event.type() == QEvent.Type.Paint and not self._painted:
            self._painted = True
            self.removeEventFilter(self)
            QTimer.singleShot(0, self, self.build_planner)  # not once the window is gone
        return super().eventFilter(watched, event)

    def build_planner(self) -> None:
        """The planner page: inputs on the left, results on the right (idempotent; not
        once the window is closed, which may come before the first paint's turn)."""
        if self.session is not None or self._closed:
            return
        # Qt's namespace of enums takes PySide6 30–45 ms to build: after the first paint.
        from PySide6.QtCore import Qt

        from ui.common.wheel_guard import guard_wheel
        from ui.planning.findings_view import FindingsView
        from ui.planning.patient_view import LabsView, PatientView
        from ui.planning.plan_view import PlanSettings, PlanSummary
        from ui.planning.provenance_view import ProvenanceView
        from ui.planning.session import PlanSession
        from ui.records.work_keeper import WorkKeeper
        from vetfluid.planning.demos import DEMOS

        self.session = PlanSession(parent=self)
        # clinic overrides the core left out (file:line, what applies): under the cautions
        self.table_notice = QLabel()
        self.table_notice.setTextFormat(Qt.TextFormat.PlainText)  # the text comes from a file
        self.table_notice.setWordWrap(True)
        self.table_notice.setAccessibleName("Clinic overrides not used")
        self.centralWidget().layout().insertWidget(1, self.table_notice)
        self.session.tableNoticeChanged.connect(self._show_table_notice)
        self._show_table_notice(self.session.table_notice)
        self._show_data_folder_problem(Qt.TextFormat.PlainText)
        self.patient = PatientView(self.session)
        self.settings_box = PlanSettings(self.session)
        # the optional labs last, after how the fluid is given (built in this order, so
        # the tab order follows what is on screen)
        self.labs = LabsView(self.session)
        inputs = QWidget()
        inputs_layout = QVBoxLayout(inputs)
        inputs_layout.setContentsMargins(0, 0, 0, 0)
        inputs_layout.addWidget(self.patient)
        inputs_layout.addWidget(self.settings_box)
        inputs_layout.addWidget(self.labs)
        inputs_layout.addStretch(1)
        guard_wheel(inputs)  # scrolling the panel must not change the inputs it passes over
        scroll = QScrollArea()
        scroll.setWidget(inputs)
        scroll.setWidgetResizable(True)
        scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        # never narrower than the form: with no horizontal scrollbar it would be clipped
        scroll.setMinimumWidth(
            inputs.minimumSizeHint().width()
            + scroll.verticalScrollBar().sizeHint().width()
            + 2 * scroll.frameWidth()
        )
        scroll.setAccessibleName("Patient and plan inputs")

        self.summary = PlanSummary(self.session)
        # In a scroll area of its own: the totals wrap, and new text on every edit would
        # otherwise lay out the whole window again, the input panel and all.
        summary_page = QScrollArea()
        summary_page.setWidget(self.summary)
        summary_page.setWidgetResizable(True)
        summary_page.setFrameShape(QScrollArea.Shape.NoFrame)
        self.details = QTabWidget()
        self.details.setAccessibleName("Plan details")
        self.details.addTab(summary_page, "&Plan and schedule")
        self.timeline_holder = _placeholder("Drawing the timeline…")
        self.details.addTab(self.timeline_holder, "&Timeline")
        self.course_holder = _placeholder("Modelling the course…")
        self.details.addTab(self.course_holder, "Co&urse")
        self.findings = FindingsView(self.session)
        self.details.addTab(self.findings, "&Checks")
        self.provenance = ProvenanceView(self.session)
        self.details.addTab(self.provenance, "&Values used")
        self.details.currentChanged.connect(self._detail_opened)

        self.splitter = QSplitter(Qt.Orientation.Horizontal)
        self.splitter.addWidget(scroll)
        self.splitter.addWidget(self.details)
        self.splitter.setStretchFactor(1, 1)
        self.splitter.setSizes([470, 900])
        splitter_state = self._settings().value("splitter")
        if splitter_state is not None:
            self.splitter.restoreState(splitter_state)
        self._swap(self.planner_holder, self.splitter)
        self.pages.currentChanged.connect(self._page_opened)

        for demo in DEMOS.values():
            action = self._action(
                demo.title, lambda _=False, d=demo.demo_id: self.open_demo(d), tip=demo.story
            )
            self.demo_menu.addAction(action)
        self.session.planChanged.connect(self._plan_changed)
        self.session.readinessChanged.connect(self._update_check_tab)
        for changed in (self.session.planChanged, self.session.observationsChanged):
            changed.connect(self._update_course_tab)
        # a question that asks to save first saves through this window's own command
        self.keeper = WorkKeeper(
            self.session, self, save_version=lambda **kw: self.save_version(**kw)
        )
        QTimer.singleShot(0, self, self._offer_draft_at_start)
        self.session.recompute()
        self._page_opened(self.pages.currentIndex())

    def _show_data_folder_problem(self, plain_text: object) -> None:
        """Say, above everything, when settings and records cannot be kept: the user data
        folder cannot be made or written (a file in its way, no permission). Nothing is
        saved there until it is fixed; plans can still be made, printed and exported."""
        from vetfluid.common.paths import data_folder_problem

        problem = data_folder_problem()
        self.data_folder_notice = QLabel()
        self.data_folder_notice.setObjectName("dataFolderNotice")
        self.data_folder_notice.setTextFormat(plain_text)  # the path is the user's
        self.data_folder_notice.setWordWrap(True)
        self.data_folder_notice.setAccessibleName("Settings and records cannot be kept")
        self.data_folder_notice.setStyleSheet(
            "QLabel#dataFolderNotice { border: 2px solid #b00020; padding: 4px; }"
        )
        if problem:
            self.data_folder_notice.setText(
                "⚠ Settings and patient records cannot be kept on this computer now: "
                f"{problem}.\nPlans can still be made, printed and exported to a file, but "
                "nothing is saved in the records, and the window's settings are not kept."
            )
        self.data_folder_notice.setVisible(bool(problem))
        self.centralWidget().layout().insertWidget(1, self.data_folder_notice)

    def _show_table_notice(self, text: str) -> None:
        """Say which clinic overrides are not used, or nothing when all are."""
        self.table_notice.setText(f"⚠ Clinic overrides not used:\n{text}" if text else "")
        self.table_notice.setVisible(bool(text))

    # ---- building -------------------------------------------------------------------------
    def _action(self, text: str, slot, shortcut=None, tip: str = "") -> QAction:  # noqa: ANN001
        action = QAction(text, self)
        if shortcut is not None:
            # the list form: setShortcut's overloads make PySide6 build Qt's whole enum
            # namespace (30–45 ms) before the first paint
            action.setShortcuts([QKeySequence(shortcut)])
        action.setToolTip(tip or text.replace("&", ""))
        action.setStatusTip(tip or text.replace("&", ""))
        action.triggered.connect(slot)
        self.addAction(action)
        return action

    def _build_menus(self) -> None:
        bar = self.menuBar()
        file_menu = bar.addMenu("&File")
        file_menu.addAction(
            self._action("&New patient", self.new_patient, QKeySequence.StandardKey.New)
        )
        # one save: a version in the patient's record; a plan file is imported or exported
        file_menu.addAction(
            self._action("&Open patient…", self.open_patient, QKeySequence.StandardKey.Open,
                         tip="Find a patient in the records and open a plan version")
        )  # fmt: skip
        file_menu.addAction(
            self._action("&Save", lambda: self.save_version(), QKeySequence.StandardKey.Save,
                         tip="Save this plan in the patient's record as its next version "
                             "(earlier versions are never overwritten)")
        )  # fmt: skip
        file_menu.addAction(
            self._action("&Import plan file…", self.open_file, "Ctrl+I",
                         tip="Read a plan file (from another workstation)")
        )  # fmt: skip
        self.demo_menu = file_menu.addMenu("&Demo patients")  # filled with the planner
        file_menu.addAction(
            self._action("&Records settings…", self.records_settings,
                         tip="Where the records are kept (this computer or the clinic's "
                             "server), this workstation's name and your initials")
        )  # fmt: skip
        file_menu.addAction(
            self._action("&Back up records…", lambda: self.back_up_records(),
                         tip="Write a copy of every patient and plan version to a file "
                             "(the records stay as they are)")
        )  # fmt: skip
        file_menu.addAction(
            self._action("Res&tore records from a backup…", lambda: self.restore_records(),
                         tip="Replace the records with a backup (asks first; the records "
                             "as they are now are kept in a backup of their own)")
        )  # fmt: skip
        file_menu.addSeparator()
        file_menu.addAction(
            self._action("&Print plan…", self.print_plan, QKeySequence.StandardKey.Print)
        )
        file_menu.addAction(self._action("Print pre&view…", self.print_preview))
        export = file_menu.addMenu("&Export")
        export.addAction(self._action("&Plan file…", self.save_file, "Ctrl+E",
                                      tip="Write this plan's request to a file"))  # fmt: skip
        export.addAction(self._action("&Schedule as CSV…", lambda: self.export_csv("schedule")))
        export.addAction(
            self._action("&Observations as CSV…", lambda: self.export_csv("observations"))
        )
        file_menu.addSeparator()
        # some desktops bind no key to the standard Quit; Ctrl+Q is what users expect
        quit_keys = QKeySequence.keyBindings(QKeySequence.StandardKey.Quit) or [
            QKeySequence("Ctrl+Q")
        ]
        quit_action = self._action("&Quit", self.close)
        quit_action.setShortcuts(quit_keys)
        file_menu.addAction(quit_action)

        self.edit_menu = bar.addMenu("&Edit")  # undo/redo of table edits join once it is built
        self.find_action = self._action(
            "&Find species", self.find_species, QKeySequence.StandardKey.Find
        )
        self.edit_menu.addAction(self.find_action)

        view = bar.addMenu("&View")
        view.addAction(self._action("&Weight-band chart…", self.show_chart, "Ctrl+Shift+W"))
        view.addAction(self._action("&Planner", lambda: self.pages.setCurrentIndex(0), "Ctrl+1"))
        view.addAction(
            self._action("&Species table", lambda: self.pages.setCurrentIndex(1), "Ctrl+2")
        )

        help_menu = bar.addMenu("&Help")
        help_menu.addAction(
            self._action(
                "&Cautions and sources", self.show_help, QKeySequence.StandardKey.HelpContents
            )
        )
        help_menu.addAction(self._action("&How to plan a patient", lambda: self._guide("how_to")))
        help_menu.addAction(self._action("&About vetfluid", lambda: self._guide("about")))

    # ---- records ----------------------------------------------------------------------------
    @property
    def records(self) -> Records | None:
        """The records file (None when it cannot be used, or once closed). Not an attribute
        until the planner is built: a window closed before then opened none."""
        if self.keeper is None:
            raise AttributeError("records")
        return self.keeper.records

    def save_version(
        self,
        *,
        name: str | None = None,
        client_ref: str = "",
        author: str = "",
        with_observations: bool = True,
    ) -> int | None:
        """Save the plan as the patient's next version (asks for the patient the first time)."""
        self.build_planner()
        return self.keeper.save_version(
            name=name, client_ref=client_ref, author=author, with_observations=with_observations
        )

    def records_settings(self) -> bool:
        """The records settings dialog; True when they were saved."""
        from ui.records.records_settings import RecordsSettingsDialog

        dialog = RecordsSettingsDialog(self)
        self.records_settings_dialog = dialog  # reachable while open (tests)
        if not dialog.exec():
            return False
        if self.keeper is not None:  # applied now (before the planner: opened with it)
            self.keeper.reopen_records()
        return True

    def back_up_records(self, target: Path | None = None) -> Path | None:
        """File ▸ Back up records… (ui/records/backup_dialogs.py); the file written."""
        from ui.records.backup_dialogs import back_up_records

        return back_up_records(self, target)

    def restore_records(self, backup: Path | None = None) -> bool:
        """File ▸ Restore records from a backup… (ui/records/backup_dialogs.py)."""
        from ui.records.backup_dialogs import restore_from_backup

        return restore_from_backup(self, backup)

    def open_patient(self) -> None:
        """Find a patient in the records and open one of its saved versions."""
        self.build_planner()
        self.keeper.open_patient()

    def load_version(self, patient_id: int, version: int) -> str | None:
        """Open a saved version with its observations; its status line, or None when the
        plan on screen stayed."""
        self.build_planner()
        return self.keeper.open_version(patient_id, version)

    def _detail_opened(self, index: int) -> None:
        """The plots are built the first time the Timeline tab is opened (pyqtgraph is big)."""
        if self.details.widget(index) is self.timeline_holder and self.timeline_view is None:
            from ui.course.timeline_view import TimelineView
            from ui.planning.shown_plan import ShownPlan

            self.timeline_view = TimelineView()
            self._swap(self.timeline_holder, self.timeline_view)
            self.timeline_shown = ShownPlan(self.timeline_view, self.session, self._plot)
            self._plot(self.session.plan)

        if self.details.widget(index) is self.course_holder and self.course_view is None:
            from ui.common.wheel_guard import guard_wheel
            from ui.course.course_view import CourseView

            self.course_view = CourseView(self.session, before_replan=self.keeper.before_replan)
            guard_wheel(self.course_view)
            self._swap(self.course_holder, self.course_view)
            self.course_view.oliguria.valueChanged.connect(self._update_course_tab)

    def _page_opened(self, index: int) -> None:
        """The species table is built the first time its page is opened."""
        if self.pages.widget(index) is self.species_holder and self.species_view is None:
            from ui.common.wheel_guard import guard_wheel
            from ui.tables.species_view import SpeciesTableView

            self.species_view = SpeciesTableView()
            guard_wheel(self.species_view)
            self._swap(self.species_holder, self.species_view)
            self.species_view.tableChanged.connect(self.session.reload_table)
            self.edit_menu.insertActions(
                self.find_action, [self.species_view.undo_action, self.species_view.redo_action]
            )

    def _plot(self, plan) -> None:  # noqa: ANN001 — Plan | None
        """Draw the plan; with no valid plan the timeline is hidden behind a message."""
        if self.timeline_view is None:
            return
        self.timeline_view.setEnabled(plan is not None)
        if plan is not None:
            self.timeline_view.set_plan(plan)

    @staticmethod
    def _swap(holder: QWidget, widget: QWidget) -> None:
        layout = holder.layout()
        while layout.count():
            old = layout.takeAt(0).widget()
            if old is not None:
                old.hide()  # deleted on the next turn of the loop; unseen till then
                old.deleteLater()
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(widget)

    # ---- reacting to the plan ------------------------------------------------------------------
    def _plan_changed(self, plan) -> None:  # noqa: ANN001 — Plan | None
        if plan is None:
            self.setWindowTitle("vetfluid")
            self.statusBar().showMessage(self.session.problem or "No plan yet.")
        else:
            from vetfluid.common.formatting import format_quantity
            from vetfluid.common.units import weight_text
            from vetfluid.physiology.ins_and_outs import planned_so_far

            weight = weight_text(plan.request.weight_kg, plan.weight_unit)  # 65 g, not 0.065 kg
            self.setWindowTitle(f"vetfluid — {plan.species_name}, {weight}")
            total = format_quantity(plan.total_ml_first_24h, "mL")
            covers = planned_so_far(plan.end_h, plan.request.ins_and_outs_period_h)
            span = f"over {covers}" if covers else "in the first 24 h"
            blocked = " Blocked by a hard limit: see Checks." if plan.has_hard_limit else ""
            self.statusBar().showMessage(f"Plan updated: {total} {span}.{blocked}")
        self._update_check_tab()

    def _update_check_tab(self) -> None:
        """The Checks tab says what needs attention, in words and by icon."""
        plan = self.session.plan
        label, severity = "&Checks", None
        if plan is not None:
            hard = sum(f.severity == "hard" for f in plan.findings)
            soft = sum(1 for f in self.session.blockers() if f.severity == "soft")
            if hard:
                label += f" — {hard} hard limit{'s' if hard > 1 else ''}"
            elif soft:
                label += f" — {soft} to acknowledge"
            elif self.session.ready:
                label += " — ready"
            severity = "hard" if hard else ("soft" if soft else "info")
        self._label_tab(self.findings, label, severity)

    def _update_course_tab(self, *_: object) -> None:
        """The Course tab says how many alerts the observations raise, in words and by
        icon, whether or not it has been opened (the model takes well under a millisecond;
        with nothing observed there is nothing to work out)."""
        from vetfluid.common.findings import SEVERITIES

        plan, observed = self.session.plan, self.session.observations
        found = []
        if plan is not None and observed:
            from vetfluid.course.model import observed_course

            view = self.course_view
            threshold = (view.oliguria.value() or None) if view is not None else None
            try:
                _, found = observed_course(
                    plan, observed, oliguria_ml_per_kg_h=threshold, table=self.session.table
                )
            except VetfluidError:
                found = []  # the Course view says what is wrong when it is opened
        label, severity = "Co&urse", None
        if found:
            label += f" — {len(found)} alert{'s' if len(found) > 1 else ''}"
            severity = next(s for s in reversed(SEVERITIES) if any(f.severity == s for f in found))
        self._label_tab(self.course_holder, label, severity)

    def _label_tab(self, page: QWidget, label: str, severity: str | None) -> None:
        """A details tab's words and severity icon, set only when they change: relabelling
        a tab relays out the whole window."""
        if self._tab_labels.get(page) == (label, severity):
            return
        self._tab_labels[page] = (label, severity)
        index = self.details.indexOf(page)
        self.details.setTabText(index, label)
        self.details.setTabIcon(index, icon(f"severity-{severity}") if severity else QIcon())

    # ---- commands ----------------------------------------------------------------------------
    def _leave_plan(self, opening: Opening) -> bool:
        """Put ``opening`` on screen if the work kept for the plan now there allows it (the
        keeper asks what the work session says to ask); False when the plan stays. A plan
        other than a saved version or a re-plan forgets the records patient."""
        return self.keeper.leave_for(opening)

    def new_patient(self) -> None:
        from vetfluid.records.work_session import Opening

        self.build_planner()
        if self._leave_plan(Opening()):
            self.patient.focus_species()  # the panel scrolled to the top, the cursor there

    def open_demo(self, demo_id: str) -> None:
        from vetfluid.planning.demos import demo
        from vetfluid.records.work_session import Opening

        self.build_planner()
        chosen = demo(demo_id)
        self._leave_plan(Opening(request=chosen.request, status=chosen.story))

    def find_species(self) -> None:
        self.build_planner()
        if self.pages.currentIndex() == 1 and self.species_view is not None:
            self.species_view.filter_edit.setFocus()
            self.species_view.filter_edit.selectAll()
            return
        self.pages.setCurrentIndex(0)
        self.patient.focus_species()

    def save_file(self) -> None:
        self.build_planner()
        if self.session.plan is None:
            QMessageBox.information(self, "vetfluid", "There is no valid plan to save yet.")
            return
        from vetfluid.records.request_file import with_suffix

        dialog = QFileDialog(self, "Export plan file", self._file_folder(), SAVE_FILTER)
        dialog.setAcceptMode(QFileDialog.AcceptMode.AcceptSave)
        dialog.setDefaultSuffix("vfplan")  # so the overwrite question sees the real name
        if not (dialog.exec() and dialog.selectedFiles()):
            return
        chosen = Path(dialog.selectedFiles()[0])
        target = with_suffix(chosen)
        # A name with a dot of its own ("Rex.Smith") gets no default suffix from the dialog,
        # so its overwrite question was about another file than the one written: ask here.
        if target != chosen and target.exists() and not self._replace_file(target):
            return
        self.write_request(target)

    def _replace_file(self, path: Path) -> bool:
        """Whether to write over ``path``, which exists (asked as the file dialog asks)."""
        asked = QMessageBox.question(
            self, "vetfluid",
            f"{path.name} already exists in {path.parent}.\nDo you want to replace it?",
            QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No,
            QMessageBox.StandardButton.No,
        )  # fmt: skip
        return asked == QMessageBox.StandardButton.Yes

    @staticmethod
    def _file_folder() -> str:
        """Where the plan-file dialogs start: the user data folder, or the home folder when
        that cannot be used (the window says why at start)."""
        from vetfluid.common.paths import data_folder_problem

        return str(Path.home() if data_folder_problem() else user_data_dir())

    def write_request(self, path: Path) -> bool:
        """Save the inputs and acknowledgements; a failure is a message, never a crash."""
        from vetfluid.records.request_file import write_request_file

        plan = self.session.plan
        if plan is None:
            return False
        try:
            written = write_request_file(
                path, plan.request, self.session.acknowledged,
                acknowledged_for=self.session.acknowledged_for,
            )  # fmt: skip
        except OSError as exc:
            QMessageBox.warning(self, "vetfluid", f"Could not save {path.name}:\n{exc}")
            return False
        self.keeper.file_written()  # with no records file, the file keeps the plan
        self.statusBar().showMessage(f"Saved {written}")
        return True

    def open_file(self) -> None:
        name, _ = QFileDialog.getOpenFileName(
            self, "Import plan file", self._file_folder(), OPEN_FILTER
        )
        if name:
            self.read_request(Path(name))

    def _offer_draft_at_start(self) -> None:
        """The draft left last time is offered before any plan file opens: a file opened
        first would be replaced by the draft's answer, or asked about inside it."""
        if self._closed:
            return
        self.keeper.offer_draft()
        self.waiting_files.start()

    def come_forward(self, plan_file: Path | None) -> None:
        """A second start asked for this window (:mod:`ui.one_window`): to the front, and
        its plan file (None: none) opens as :meth:`open_when_ready` says."""
        from PySide6.QtCore import Qt

        self.setWindowState(self.windowState() & ~Qt.WindowState.WindowMinimized)
        self.show()
        self.raise_()
        self.activateWindow()
        if plan_file is not None:
            self.open_when_ready(plan_file)

    def open_when_ready(self, path: Path) -> None:
        """Open a plan file by File ▸ Open's path once the window is ready for it
        (:class:`ui.waiting_files.WaitingFiles`)."""
        self.waiting_files.add(path)

    def accepts_files(self) -> bool:
        """Whether a second start's file is taken now: not once closing has begun (that
        start then opens the file itself, when this window has gone)."""
        return not (self._closing or self._closed)

    def _on_screen(self) -> object:
        """What is on screen, to tell whether another plan came meanwhile."""
        patient = self.keeper.work.patient_id if self.keeper is not None else None
        inputs = self.session.inputs if self.session is not None else None
        return (patient, inputs)

    def read_request(self, path: Path) -> bool:
        from vetfluid.records.request_file import read_request_file
        from vetfluid.records.work_session import Opening

        self.build_planner()
        try:
            opened = read_request_file(path)
        except (OSError, VetfluidError) as exc:
            QMessageBox.warning(self, "vetfluid", f"Could not open {path.name}:\n{exc}")
            return False
        return self._leave_plan(
            Opening(
                request=opened.request, acknowledged=opened.acknowledged,
                acknowledged_for=opened.acknowledged_for, status=f"Opened {path}",
            )
        )  # fmt: skip

    def _printable(self) -> bool:
        self.build_planner()
        if self.session.plan is None:
            QMessageBox.information(self, "vetfluid", "There is no valid plan to print yet.")
            return False
        from ui.printouts.printing import patient_to_print

        self.print_patient = patient_to_print(self, self.keeper)  # None: cancelled
        return self.print_patient is not None

    def print_plan(self) -> None:
        from ui.printouts.printing import choose_printer_and_print, proposed_sheet_path

        if self._printable():
            path = proposed_sheet_path(self.session.plan, self.print_patient)
            choose_printer_and_print(self, self.print_to, file_path=path)

    def print_to(self, printer) -> None:  # noqa: ANN001 — QPrinter
        from ui.printouts.printing import print_sheet, saved_patient
        from vetfluid.printouts.sheet import BLOCKED_MARK, plan_sheet_html

        plan = self.session.plan
        html = plan_sheet_html(
            plan, acknowledged=self.session.acknowledged, ready=self.session.ready,
            patient=self.print_patient or saved_patient(self.keeper),
        )  # fmt: skip
        print_sheet(html, printer, mark=BLOCKED_MARK if plan.has_hard_limit else "")

    def print_preview(self) -> None:
        from ui.printouts.printing import show_print_preview

        if self._printable():
            show_print_preview(self, self.print_to)

    def export_csv(self, what: str, path: Path | None = None) -> bool:
        """Write the schedule or the observations as formula-safe CSV."""
        from vetfluid.printouts.export import observations_csv, schedule_csv
        from vetfluid.records.serialize import plan_dict

        self.build_planner()
        if self.session.plan is None:
            QMessageBox.information(self, "vetfluid", "There is no valid plan to export yet.")
            return False
        if path is None:
            name, _ = QFileDialog.getSaveFileName(self, f"Export {what}", "", "CSV (*.csv)")
            if not name:
                return False
            path = Path(name)
        text = (
            schedule_csv(plan_dict(self.session.plan))
            if what == "schedule"
            else observations_csv(self.session.observations, self.session.plan.start_moment)
        )
        try:
            write_owner_only_text(path, text)  # patient data: owner-only from the first byte
        except OSError as exc:
            QMessageBox.warning(self, "vetfluid", f"Could not write {path.name}:\n{exc}")
            return False
        if what == "observations":
            self.keeper.observations_exported()  # with no records file, the CSV keeps them
        self.statusBar().showMessage(f"Exported the {what} to {path}")
        return True

    def show_chart(self) -> None:
        from ui.common.wheel_guard import guard_wheel
        from ui.printouts.chart_view import ChartDialog

        self.build_planner()
        species = self.session.inputs.get("species_id") or "dog"
        dialog = ChartDialog(self.session.table, species, self)
        guard_wheel(dialog)
        dialog.exec()

    def show_help(self, *_: object) -> None:
        from ui.common.help_dialog import HelpDialog

        self.build_planner()
        HelpDialog(self.session.table, self).exec()

    def _guide(self, page: str) -> None:
        from ui.common.guide_dialogs import show_guide

        self.build_planner()
        show_guide(page, self)

    # ---- window state ------------------------------------------------------------------------
    def _settings(self) -> QSettings:
        return QSettings(str(user_data_dir() / "window.ini"), QSettings.Format.IniFormat)

    def _restore_geometry(self) -> None:
        settings = self._settings()
        geometry = settings.value("geometry")
        if geometry is not None:
            self.restoreGeometry(geometry)
        size = settings.value("size")
        if size is not None and not self.isMaximized():
            self.resize(size)  # the geometry may be clamped to a screen that has since changed
        elif geometry is None:
            self.resize(1360, 860)

    def closeEvent(self, event: QCloseEvent) -> None:  # noqa: N802 (Qt override)
        settings = self._settings()
        settings.setValue("geometry", self.saveGeometry())
        settings.setValue("size", self.size())
        self._closing = True
        if self.session is not None:
            settings.setValue("splitter", self.splitter.saveState())
            if not self.keeper.close():  # asked, and kept open: nothing is lost
                self._closing = False
                event.ignore()
                return
        settings.sync()
        self._closed = True
        left = self.waiting_files.close()
        if left:  # handed over earlier, still waiting: said, not dropped unseen
            QMessageBox.information(
                self, "vetfluid", f"Not opened, as vetfluid closes: {', '.join(left)}."
            )
        super().closeEvent(event)
