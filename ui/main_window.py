"""The main window: patient on the left, the plan and its checks on the right, the
species table on its own page, the cautions always in view.

pyqtgraph and the species table are built after the first paint so the window
appears quickly.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, NamedTuple

from PySide6.QtCore import QDateTime, QEvent, QSettings, QTimer
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
from vetfluid.common.cautions import SHORT_CAUTION
from vetfluid.common.errors import VetfluidError
from vetfluid.common.paths import user_data_dir, write_owner_only_text

if TYPE_CHECKING:
    from PySide6.QtGui import QCloseEvent

    from vetfluid.planning.plan import PlanRequest

FILE_FILTER = "vetfluid plan request (*.vfplan.json)"


class VersionBehind(NamedTuple):
    """The saved version a draft holds observations for, which it could not take."""

    patient_id: int
    number: int
    patient_name: str


@dataclass(frozen=True, kw_only=True)
class SavedVersion:
    """The saved version on screen: while the plan keeps these inputs and reasons, what is
    recorded on it is written to that version rather than to the draft."""

    row_id: int
    request: PlanRequest
    acknowledged: dict[str, str]


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
        self.timeline_view = None
        self.course_view = None
        self.species_view = None
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
            QTimer.singleShot(0, self.build_planner)
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
        self._open_records()
        self.session.recompute()
        self._page_opened(self.pages.currentIndex())

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
        file_menu.addAction(
            self._action("&Open plan request…", self.open_file, QKeySequence.StandardKey.Open)
        )
        file_menu.addAction(
            self._action("&Save plan request…", self.save_file, QKeySequence.StandardKey.Save)
        )
        file_menu.addAction(
            self._action("Open &patient…", self.open_patient, "Ctrl+Shift+O",
                         tip="Find a patient in the records and open a plan version")
        )  # fmt: skip
        file_menu.addAction(
            self._action("Save as new &version", lambda: self.save_version(), "Ctrl+Shift+S",
                         tip="Save this plan as the patient's next version (never overwritten)")
        )  # fmt: skip
        self.demo_menu = file_menu.addMenu("&Demo patients")  # filled with the planner
        file_menu.addSeparator()
        file_menu.addAction(
            self._action("&Print plan…", self.print_plan, QKeySequence.StandardKey.Print)
        )
        file_menu.addAction(self._action("Print pre&view…", self.print_preview))
        export = file_menu.addMenu("&Export")
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

    # ---- records ----------------------------------------------------------------------------
    def _open_records(self) -> None:
        """Open the records database; if it cannot be used the planner still works."""
        from vetfluid.records.store import Records, RecordsError

        self.current_patient: int | None = None
        self._saved_version: SavedVersion | None = None
        self._opened: tuple[object, dict[str, str]] = (None, {})  # request and reasons opened
        self._opening = False  # the next plan built is the one opened
        self._next_is_unsaved = False  # the next plan opened is saved nowhere (a draft, a re-plan)
        self._opened_unsaved = False  # the plan opened is saved nowhere until saved as a version
        self._opened_request = None  # what was opened: the draft's plan while none can be built
        self._last_valid: tuple[object, bool] | None = None  # request, on the saved version
        self._write_error = ""  # why the work is written nowhere; empty once a write succeeds
        self._observations_exported: tuple = ()  # with no records file: exported as CSV
        # why the observations are not yet in the saved version (the draft holds them)
        self._version_behind = ""
        self._plan_tag = ""  # marks the drafts this plan wrote
        self._closing = False  # asking whether to close: drafts written meanwhile are closed
        self._plans_opened = 0
        self.session.inputsReplaced.connect(self._plan_replaced)
        self.session.planChanged.connect(self._plan_opened)
        for changed in (self.session.planChanged, self.session.readinessChanged):
            changed.connect(self._remember_valid)
        self._records_problem = ""  # why the records cannot be used, when they cannot
        try:
            self.records = Records.open()
        except RecordsError as exc:
            self.records = None
            self._records_problem = exc.one_line()
            self.statusBar().showMessage(f"Records unavailable: {exc.one_line()}")
            return
        self._draft_timer = QTimer(self)
        self._draft_timer.setSingleShot(True)
        self._draft_timer.setInterval(2000)  # a crash loses at most a few seconds of typing
        self._draft_timer.timeout.connect(self._save_draft)
        for changed in (  # the plan, what was recorded on it, the reasons given
            self.session.planChanged, self.session.observationsChanged,
            self.session.readinessChanged,
        ):  # fmt: skip
            changed.connect(self._draft_timer.start)
        QTimer.singleShot(0, self.offer_draft)

    def _plan_replaced(self, _request: object) -> None:
        """A new patient, a demo, a file, a version or a re-plan: a saved version is named
        again by whoever opened it; the plan built next is the yardstick for unsaved work."""
        self._saved_version = None
        self._version_behind = ""  # the draft holds what that version lacks
        self._observations_exported = ()  # with no records file: what was exported as CSV
        self._last_valid = None
        self._opening = True
        self._opened_request = _request
        self._opened_unsaved, self._next_is_unsaved = self._next_is_unsaved, False
        self._plans_opened += 1
        self._plan_tag = f"{id(self):x}-{QDateTime.currentMSecsSinceEpoch()}-{self._plans_opened}"

    def _plan_opened(self, plan) -> None:  # noqa: ANN001 — Plan | None
        if self._opening:  # built from what was opened, reasons already checked against it
            self._opening = False
            opened = plan.request if plan and not self._opened_unsaved else None
            self._opened = (opened, self.session.acknowledged if opened else {})

    def _remember_valid(self, *_: object) -> None:
        """The last valid plan and whether it was the saved version: where observations
        go while the plan cannot be built (a weight being retyped). Meanwhile a measurement
        removed or added changes its outputs: it stays the saved version only while they
        still follow from what is recorded."""
        if self.session.plan is not None:
            self._last_valid = (self.session.plan.request, self._on_saved_version())
        elif self._last_valid is not None and self._last_valid[1]:
            request = self._last_valid[0]
            self._last_valid = (request, self._outputs_still_follow(request))

    def _outputs_still_follow(self, request) -> bool:  # noqa: ANN001 — PlanRequest
        """Whether ``request`` with the ins-and-outs outputs as they now stand is still what
        reopening the saved version builds."""
        from dataclasses import replace

        from vetfluid.course.observations import follows_saved_request

        inputs = self.session.inputs
        try:
            now = replace(
                request,
                ins_and_outs_period_h=inputs.get("ins_and_outs_period_h"),
                measured_outputs=tuple(inputs.get("measured_outputs") or ()),
            )
        except VetfluidError:
            return False
        saved = self._saved_version
        return saved is not None and follows_saved_request(
            now, saved.request, self.session.observations
        )

    def _on_saved_version(self) -> bool:
        """Whether the plan on screen is a saved version, unchanged since it was saved: the
        same inputs and reasons, its measured outputs following from the observations
        recorded on it (what reopening it would build)."""
        from vetfluid.course.observations import follows_saved_request

        plan, saved = self.session.plan, self._saved_version
        return (
            saved is not None
            and plan is not None
            and self.session.acknowledged == saved.acknowledged
            and follows_saved_request(plan.request, saved.request, self.session.observations)
        )

    def _has_unsaved_work(self) -> bool:
        """Observations, or a plan changed since it was opened, not in a saved version; a
        plan opened from a draft or made by a re-plan, until it is saved; a write that
        failed. With no records file, whatever is not in a plan file or an export."""
        if self._write_error or self._version_behind:
            return True
        self._remember_valid()
        last = self._last_valid
        if last is not None and last[1]:  # the saved version, unchanged: written to it
            return False
        observed = tuple(self.session.observations)
        if self.records is None and observed == self._observations_exported:
            observed = ()  # exported as CSV: kept outside vetfluid
        if observed or self._opened_unsaved:
            return True
        return last is not None and (last[0], self.session.acknowledged) != self._opened

    def _may_leave(self) -> bool:
        """Before another plan replaces this one: unsaved work is saved as a version (Yes),
        left in the draft (No: offered at the next start, until another plan is changed),
        or the command is cancelled. False when the work could not be kept either way."""
        if not self._has_unsaved_work():
            return True
        if self.records is None:
            return self._lose_unkept_work("Leave it")
        answer = QMessageBox.question(
            self, "vetfluid",
            "This plan, or what was recorded on it, is not saved as a version. Save it "
            "first?\n\nNo leaves it in the draft, offered when vetfluid next starts, "
            "until another plan is changed.",
            QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No
            | QMessageBox.StandardButton.Cancel,
        )  # fmt: skip
        if answer == QMessageBox.StandardButton.Yes:
            return self.save_version() is not None
        if answer != QMessageBox.StandardButton.No:
            return False
        self._save_draft(closed=True)  # left on purpose: offered back as left, not crashed
        if self._write_error:
            QMessageBox.warning(
                self, "vetfluid",
                f"The plan could not be kept in the draft: {self._write_error}\n\nIt stays "
                "open. Save it as a version, or try again once the problem is fixed.",
            )  # fmt: skip
            return False
        return True

    def _keep_edits(self) -> None:
        """Write what is waiting for the draft timer now (before the screen is replaced)."""
        if self.records is not None and self._draft_timer.isActive():
            self._draft_timer.stop()
            self._save_draft()

    def _draft_is_ours(self) -> bool:
        """Whether the stored draft is this plan's; one that cannot be read is nobody's (it
        is set aside here, or when a draft is next saved, :meth:`Records.save_draft`)."""
        from vetfluid.records.store import DraftSetAside, RecordsError

        try:
            draft = self.records.draft()
        except DraftSetAside as exc:
            self._say_set_aside(exc.path)
            return False
        except RecordsError as exc:  # stays where it is: said, and tried again later
            self.statusBar().showMessage(f"The draft left last time: {exc.one_line()}")
            return False
        return bool(draft) and draft.get("tag") == self._plan_tag

    def _save_draft(self, *, closed: bool = False) -> None:
        """Keep what is being edited; ``closed`` marks a normal close rather than a crash.

        Observations recorded on an unchanged saved version are written to that version;
        unsaved work goes into the draft, with the last valid plan while the plan cannot
        be built. A draft another plan left is replaced only by unsaved work; a write
        that fails is tried again and counts as unsaved work until it succeeds."""
        from vetfluid.records.store import RecordsError

        if self.records is None:
            return
        closed = closed or self._closing
        self._remember_valid()
        # while no plan has been built, what was opened (or, for a new patient, nothing)
        request, on_saved = self._last_valid or (self._opened_request, False)
        try:
            if on_saved:
                self._write_to_version(request, closed=closed)
            elif self._has_unsaved_work():
                self.records.save_draft(self._draft(request, closed=closed))
            elif self._draft_is_ours():
                self.records.clear_draft()
            self._write_error = ""
            if self.records.last_set_aside is not None:
                kept, self.records.last_set_aside = self.records.last_set_aside, None
                self._say_set_aside(kept)
        except RecordsError as exc:
            self._write_error = exc.one_line()
            self.statusBar().showMessage(f"Not saved (trying again): {exc.one_line()}")
            self._draft_timer.start()

    def _write_to_version(self, request, *, closed: bool) -> None:  # noqa: ANN001 — PlanRequest
        """Observations recorded on the saved version go into it. While they cannot, the
        draft keeps them and the write is tried again; raises RecordsError when neither
        the version nor the draft can be written."""
        from vetfluid.records.store import RecordsError

        try:
            written = self.records.keep_observations(
                version_id=self._saved_version.row_id, observations=self._observation_records()
            )
        except RecordsError as exc:
            self._version_behind = exc.one_line()
            row_id = self._saved_version.row_id
            try:  # what it holds: the user's removals can then be told from later additions
                held = self.records.observations(row_id)
            except RecordsError:
                held = None
            self.records.save_draft(
                {**self._draft(request, closed=closed, for_version=row_id), "version_had": held}
            )
            self.statusBar().showMessage(
                "Observations kept in the draft; not yet in the saved version (trying again): "
                + exc.one_line()
            )  # fmt: skip
            self._draft_timer.start()
            return
        self._version_behind = ""
        if written:
            self.statusBar().showMessage("Observations saved with the plan version.")
        if self._draft_is_ours():
            self.records.clear_draft()  # its edits were undone, or it held what is written now

    def _draft(self, request, *, closed: bool, for_version: int | None = None) -> dict:  # noqa: ANN001
        """What the draft keeps; ``for_version``: the saved version (its row) that could not
        take the observations, offered back as such."""
        from vetfluid.records.serialize import request_to_dict

        return {
            "for_version": for_version,
            "request": request_to_dict(request) if request is not None else None,
            "acknowledged": self.session.acknowledged,
            "acknowledged_for": self.session.acknowledged_for,
            "observations": self._observation_records(),
            "patient_id": self.current_patient,
            "closed": closed,
            "tag": self._plan_tag,
        }

    def offer_draft(self) -> bool:
        """Offer back the plan that was being edited when vetfluid last stopped, or the
        observations a saved version could not take. A draft that cannot be restored is
        set aside in a file, never dropped."""
        from vetfluid.records.store import DraftSetAside, RecordsError

        try:
            draft = self.records.draft() if self.records is not None else None
        except DraftSetAside as exc:  # unreadable: in a file now, nothing to restore
            self._say_set_aside(exc.path)
            return False
        except RecordsError as exc:  # unreadable and still in place
            QMessageBox.warning(self, "vetfluid", f"The plan last worked on: {exc.one_line()}.")
            return False
        if not draft:
            return False
        self._keep_edits()
        try:
            request, observations = self._draft_contents(draft)
        except (VetfluidError, KeyError, TypeError, ValueError) as exc:
            self._set_draft_aside(f"could not be restored ({exc})")
            return False
        version = self._version_behind_in(draft)
        if version is not None:
            question = (
                f"Observations recorded on version {version.number} of {version.patient_name} "
                "could not be written to it when vetfluid last ran; the draft kept them. Write "
                "them to that version now? No discards them."
            )
        elif draft.get("closed"):
            question = (
                "The plan last worked on was left, or vetfluid was closed, before it was saved "
                "as a version. Restore it?"
            )
        else:
            question = (
                "vetfluid stopped unexpectedly while a plan was being edited. Restore it? "
                "The last few seconds of typing may be missing."
            )
        answer = QMessageBox.question(self, "vetfluid", question)
        if self.records is None:  # the window was closed while the question was open
            return False
        if answer != QMessageBox.StandardButton.Yes:
            try:
                self.records.clear_draft()
            except RecordsError as exc:  # declined all the same: offered again next start
                self.statusBar().showMessage(f"The draft could not be cleared: {exc.one_line()}")
            return False
        if version is not None:
            return self._into_version(draft, version, observations)
        wording = draft.get("acknowledged_for")
        self._next_is_unsaved = True  # a draft is unsaved work until it is saved
        self.session.replace_request(
            request,
            draft.get("acknowledged") or {},
            wording if isinstance(wording, dict) else None,  # older drafts have none
        )
        self.current_patient = draft.get("patient_id")
        unreadable = self._restore_observations(observations)
        try:  # the restored plan owns the draft now: saving it as a version clears it
            self.records.save_draft({**draft, "tag": self._plan_tag})
        except RecordsError:
            pass  # the draft stays as it was, offered again at the next start
        self.statusBar().showMessage("Restored the plan that was being edited." + unreadable)
        return True

    def _into_version(self, draft: dict, version: VersionBehind, observations: list) -> bool:
        """Write the observations a saved version could not take into it, straight away
        (whether or not it still builds), then open it; the draft stays when they cannot
        be written."""
        from vetfluid.records.store import RecordsError

        row_id, held = draft["for_version"], draft.get("version_had")
        try:
            added = self.records.merge_observations(
                version_id=row_id, observations=observations,
                based_on=held if isinstance(held, list) else None,
            )  # fmt: skip
            self.records.clear_draft()
        except RecordsError as exc:
            QMessageBox.warning(
                self, "vetfluid",
                f"The observations could not be written to version {version.number}: "
                f"{exc.one_line()}\n\nThe draft keeps them; they are offered again at the "
                "next start.",
            )  # fmt: skip
            return False
        unreadable = self.load_version(version.patient_id, version.number) or ""
        self.statusBar().showMessage(
            f"Wrote {added} observation(s) to version {version.number} of "
            f"{version.patient_name}.{unreadable}"
        )
        return True

    @staticmethod
    def _draft_contents(draft: dict) -> tuple[PlanRequest | None, list]:
        """The draft's request (None: observations recorded before any plan) and its
        observations; raises when they are not what a draft holds."""
        from vetfluid.records.serialize import request_from_dict

        request = None if draft["request"] is None else request_from_dict(draft["request"])
        observations = draft.get("observations") or []
        if not isinstance(observations, list):
            raise TypeError("its observations are not a list")
        return request, observations

    def _version_behind_in(self, draft: dict) -> VersionBehind | None:
        """The saved version the draft holds observations for, which it could not take,
        while that version is still in the records."""
        from vetfluid.records.store import RecordsError

        row_id, patient_id = draft.get("for_version"), draft.get("patient_id")
        if not isinstance(row_id, int) or not isinstance(patient_id, int):
            return None
        try:
            version = next((v for v in self.records.versions(patient_id) if v.id == row_id), None)
            name = self.records.patient(patient_id).name if version else ""
        except (RecordsError, LookupError):
            return None
        return None if version is None else VersionBehind(patient_id, version.version, name)

    def _say_set_aside(self, kept: Path) -> None:
        QMessageBox.warning(
            self, "vetfluid",
            f"The draft left last time could not be read; it was set aside as {kept}. "
            "Nothing was restored from it.",
        )  # fmt: skip

    def _set_draft_aside(self, why: str) -> None:
        from vetfluid.records.store import RecordsError

        try:
            kept = self.records.set_aside_draft()
        except RecordsError as exc:
            QMessageBox.warning(
                self, "vetfluid", f"The plan last worked on {why}: {exc.one_line()}."
            )
            return
        QMessageBox.warning(
            self, "vetfluid",
            f"The plan last worked on {why}; it was set aside as {kept}. Nothing was restored.",
        )  # fmt: skip

    def save_version(
        self,
        *,
        name: str | None = None,
        client_ref: str = "",
        author: str = "",
        with_observations: bool = True,
    ) -> int | None:
        """Save the plan as the patient's next version (asks for the patient the first time),
        with the observations on it unless they are kept with another version already."""
        from ui.records.records_view import NewPatientDialog
        from vetfluid.records.store import RecordsError

        self.build_planner()
        plan = self.session.plan
        if self.records is None:
            QMessageBox.information(self, "vetfluid", "No records file is open.")
            return None
        if plan is None:
            QMessageBox.information(
                self, "vetfluid",
                "The plan cannot be saved until it can be built: "
                f"{self.session.problem or 'choose a species and a weight'}.",
            )  # fmt: skip
            return None
        try:
            if self.current_patient is None:
                if name is None:
                    dialog = NewPatientDialog(plan.request.species_id, self)
                    if not dialog.exec() or not dialog.name.text().strip():
                        return None
                    name, client_ref = dialog.name.text(), dialog.client.text()
                    author = dialog.initials.text()
                self.current_patient = self.records.add_patient(
                    name=name, species_id=plan.request.species_id, client_ref=client_ref
                )
            number = self.records.save_version(
                patient_id=self.current_patient, plan=plan,
                acknowledged=self.session.acknowledged, author=author,
                observations=self._observation_records() if with_observations else [],
            )  # fmt: skip
        except (RecordsError, VetfluidError) as exc:
            QMessageBox.warning(self, "vetfluid", f"Not saved: {exc}")
            return None
        self._draft_timer.stop()  # what was being edited is now saved, observations and all
        self._write_error = self._version_behind = ""
        self._opened_unsaved = False
        saved = next(v for v in self.records.versions(self.current_patient) if v.version == number)
        self._saved_version = SavedVersion(
            row_id=saved.id, request=plan.request, acknowledged=self.session.acknowledged
        )
        self._remember_valid()
        try:
            if self._draft_is_ours():  # now saved; a draft another plan left stays
                self.records.clear_draft()
        except RecordsError:
            pass  # the saved version holds it all; the stale draft is offered at the next start
        self.statusBar().showMessage(f"Saved as version {number}; earlier versions are kept.")
        return number

    def open_patient(self) -> None:
        from ui.records.records_view import OpenPatientDialog

        self.build_planner()
        if self.records is None:
            QMessageBox.information(self, "vetfluid", "No records file is open.")
            return
        dialog = OpenPatientDialog(self.records, self)
        if dialog.exec() and dialog.chosen():
            self.load_version(*dialog.chosen())

    def load_version(self, patient_id: int, version: int) -> str | None:
        """Open a saved version with its observations; returns the note on any stored
        observation that could not be read ("" when none), None when the user stayed."""
        from vetfluid.common.errors import InputError
        from vetfluid.records.serialize import request_from_dict

        chosen = next(v for v in self.records.versions(patient_id) if v.version == version)
        try:  # before leaving the plan on screen: a version that cannot be read changes nothing
            request_from_dict(chosen.request)
        except InputError as exc:
            QMessageBox.warning(
                self, "vetfluid",
                f"Version {version} cannot be opened as it was saved: {exc.one_line()}.\n\n"
                "It stays in the records unchanged; start a new version from the patient's "
                "current findings.",
            )  # fmt: skip
            return None
        if not self._leave_plan():
            return None
        # what each warning said when the version was saved: its reason covers that only
        said = {f.get("code"): f.get("message") for f in chosen.plan.get("findings", ())}
        wording = {code: said[code] for code in chosen.acknowledged if code in said}
        stored = request_from_dict(chosen.request)
        self.session.replace_request(stored, chosen.acknowledged, wording)
        # what the version stores, even when it no longer builds (a clinic override since)
        self._saved_version = SavedVersion(
            row_id=chosen.id, request=stored, acknowledged=self.session.acknowledged
        )
        self._remember_valid()
        if self._last_valid is None:  # it does not build now: still the version it was
            self._last_valid = (stored, True)
        unreadable = self._restore_observations(self.records.observations(chosen.id))
        self.current_patient = patient_id
        patient = self.records.patient(patient_id)
        self.statusBar().showMessage(f"Opened {patient.name}, version {version}.{unreadable}")
        return unreadable

    def _before_replan(self) -> bool:
        """The plan being replaced is in the records first, with its observations, so the
        patient's record shows what was given: saved now if it is not a saved version.
        False (nothing re-planned) when it is not saved."""
        if self.session.plan is None:
            return True  # nothing to re-plan from: the Course tab says so
        if self.records is None:
            QMessageBox.warning(
                self, "vetfluid",
                "A re-plan keeps the plan it replaces, with its observations, in the "
                f"patient's record, and the records file cannot be used: "
                f"{self._records_problem}.\n\nNothing was re-planned.",
            )  # fmt: skip
            return False
        self._keep_edits()
        on_saved = self._on_saved_version()
        # an ins-and-outs version whose outputs have moved on with the measurements: the
        # records hold it as saved, so the plan as it now stands is saved before it goes
        moved = on_saved and self.session.plan.request != self._saved_version.request
        if on_saved and (self._version_behind or self._write_error):
            QMessageBox.warning(
                self, "vetfluid",
                "The observations could not be written to the saved version: "
                f"{self._version_behind or self._write_error}\n\nvetfluid keeps trying; "
                "re-plan once they are saved.",
            )  # fmt: skip
            return False
        if not on_saved or moved:
            why = (
                "The plan being replaced has moved on from its saved version with the outputs "
                "measured since. A re-plan keeps it in the patient's record as it stands (its "
                "observations stay with the version they were recorded on)."
                if moved
                else "The plan being replaced has not been saved as a version. A re-plan keeps "
                "it in the patient's record, with its observations."
            )
            answer = QMessageBox.question(
                self, "vetfluid", f"{why} Save it now?",
                QMessageBox.StandardButton.Save | QMessageBox.StandardButton.Cancel,
            )  # fmt: skip
            if (
                answer != QMessageBox.StandardButton.Save
                or self.save_version(with_observations=not moved) is None
            ):
                return False
        self._next_is_unsaved = True  # the re-plan itself is saved nowhere yet
        return True

    def _observation_records(self) -> list[dict]:
        from vetfluid.course.observations import observation_record

        return [observation_record(o) for o in self.session.observations]

    def _restore_observations(self, records: list) -> str:
        """Put stored observations back on the Course tab; one that cannot be read is
        left out and counted in the returned note (the rest are kept)."""
        from vetfluid.course.observations import observation_from_record

        kept, unreadable = [], 0
        for record in records:
            try:
                kept.append(observation_from_record(record))
            except VetfluidError:
                unreadable += 1
        self.session.restore_observations(kept)
        return f" {unreadable} stored observation(s) could not be read." if unreadable else ""

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

            self.course_view = CourseView(self.session, before_replan=self._before_replan)
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
    def _leave_plan(self) -> bool:
        """Before another plan replaces this one: keep its edits, offer to save unsaved
        work; False when the user cancels."""
        self._keep_edits()
        if not self._may_leave():
            return False
        self.current_patient = None
        return True

    def new_patient(self) -> None:
        self.build_planner()
        if not self._leave_plan():
            return
        self.session.replace_request(None)
        self.patient.species_box.setFocus()

    def open_demo(self, demo_id: str) -> None:
        from vetfluid.planning.demos import demo

        self.build_planner()
        chosen = demo(demo_id)
        if not self._leave_plan():
            return
        self.session.replace_request(chosen.request)
        self.statusBar().showMessage(chosen.story)

    def find_species(self) -> None:
        self.build_planner()
        if self.pages.currentIndex() == 1 and self.species_view is not None:
            self.species_view.filter_edit.setFocus()
            self.species_view.filter_edit.selectAll()
            return
        self.pages.setCurrentIndex(0)
        self.patient.species_box.setFocus()
        self.patient.species_box.lineEdit().selectAll()

    def save_file(self) -> None:
        self.build_planner()
        if self.session.plan is None:
            QMessageBox.information(self, "vetfluid", "There is no valid plan to save yet.")
            return
        dialog = QFileDialog(self, "Save plan request", str(user_data_dir()), FILE_FILTER)
        dialog.setAcceptMode(QFileDialog.AcceptMode.AcceptSave)
        dialog.setDefaultSuffix("vfplan.json")  # so the overwrite question sees the real name
        if dialog.exec() and dialog.selectedFiles():
            self.write_request(Path(dialog.selectedFiles()[0]))

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
        if self.records is None:  # kept in the file: no longer a plan that would be lost
            self._opened = (plan.request, self.session.acknowledged)
        self.statusBar().showMessage(f"Saved {written}")
        return True

    def open_file(self) -> None:
        name, _ = QFileDialog.getOpenFileName(
            self, "Open plan request", str(user_data_dir()), FILE_FILTER
        )
        if name:
            self.read_request(Path(name))

    def read_request(self, path: Path) -> bool:
        from vetfluid.records.request_file import read_request_file

        self.build_planner()
        try:
            opened = read_request_file(path)
        except (OSError, VetfluidError) as exc:
            QMessageBox.warning(self, "vetfluid", f"Could not open {path.name}:\n{exc}")
            return False
        if not self._leave_plan():
            return False
        self.session.replace_request(opened.request, opened.acknowledged, opened.acknowledged_for)
        self.statusBar().showMessage(f"Opened {path}")
        return True

    def _printable(self) -> bool:
        self.build_planner()
        if self.session.plan is None:
            QMessageBox.information(self, "vetfluid", "There is no valid plan to print yet.")
            return False
        return True

    def print_plan(self) -> None:
        from ui.printouts.printing import choose_printer_and_print

        if self._printable():
            choose_printer_and_print(self, self.print_to)

    def print_to(self, printer) -> None:  # noqa: ANN001 — QPrinter
        from ui.printouts.printing import print_sheet
        from vetfluid.printouts.sheet import BLOCKED_MARK, plan_sheet_html

        plan = self.session.plan
        html = plan_sheet_html(
            plan, acknowledged=self.session.acknowledged, ready=self.session.ready
        )
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
            self._observations_exported = tuple(self.session.observations)
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

    def _lose_unkept_work(self, action: str) -> bool:
        """With no records file nothing can be kept: True when the user lets it go."""
        answer = QMessageBox.warning(
            self, "vetfluid",
            "The records file cannot be used, so this plan and what was recorded on it "
            f"cannot be kept: {self._records_problem}.\n\n{action} and lose them? To keep "
            "them, choose Cancel: File ▸ Save plan request keeps the plan; File ▸ Export ▸ "
            "Observations as CSV keeps the observations.",
            QMessageBox.StandardButton.Discard | QMessageBox.StandardButton.Cancel,
            QMessageBox.StandardButton.Cancel,
        )  # fmt: skip
        return answer == QMessageBox.StandardButton.Discard

    def _close_losing_work(self) -> bool:
        """Asked when closing and the work can be written nowhere; True closes anyway."""
        self._draft_timer.stop()
        self._closing = True  # a retry while asking (an edit restarts it) writes it as closed
        answer = QMessageBox.question(
            self, "vetfluid",
            f"What is not saved as a version could not be written: {self._write_error}\n\n"
            "Close anyway and lose it? No keeps vetfluid open and keeps trying.",
            QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No,
            QMessageBox.StandardButton.No,
        )  # fmt: skip
        self._closing = False
        if answer == QMessageBox.StandardButton.Yes:
            return True
        self._draft_timer.start()  # kept open: keep trying
        return False

    def closeEvent(self, event: QCloseEvent) -> None:  # noqa: N802 (Qt override)
        settings = self._settings()
        settings.setValue("geometry", self.saveGeometry())
        settings.setValue("size", self.size())
        if self.session is not None:
            settings.setValue("splitter", self.splitter.saveState())
            if self._records_problem and self._has_unsaved_work():
                if not self._lose_unkept_work("Close"):
                    event.ignore()
                    return
            elif self.records is not None:
                self._draft_timer.stop()
                self._save_draft(closed=True)  # unsaved work is offered back at the next start
                if self._write_error and not self._close_losing_work():
                    event.ignore()
                    return
                self._draft_timer.stop()
                self.records.close()
                self.records = None
        settings.sync()
        self._closed = True
        super().closeEvent(event)
