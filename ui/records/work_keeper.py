"""The window's side of keeping the work: it tells the work session
(:mod:`vetfluid.records.work_session`) what the plan session does, asks the questions the
work session returns, shows its messages and runs its two-second autosave timer.

No rule about drafts, versions or questions lives here: which question is asked, and
when, is the work session's (docs/work_keeping.md). This module only turns its replies into
message boxes, a timer, the new-patient dialog and the plan session's calls.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from PySide6.QtCore import QEvent, QObject, QTimer
from PySide6.QtWidgets import QLabel, QMainWindow, QMessageBox

from vetfluid.common.errors import VetfluidError
from vetfluid.records.store import RecordsError
from vetfluid.records.work_session import (
    NO_RECORDS_FILE,
    Answer,
    Autosave,
    Message,
    NewPatient,
    Opening,
    Question,
    Reply,
    State,
    WorkSession,
)

if TYPE_CHECKING:
    from pathlib import Path

    from ui.planning.session import PlanSession
    from vetfluid.records.location import ServerAddress
    from vetfluid.records.store import Records

AUTOSAVE_MS = 2000  # two seconds after the last change
# steady changes (an observation every second) would keep postponing it: at the latest this
# long after the first change still unwritten, the autosave runs anyway
AUTOSAVE_LONGEST_WAIT_MS = 10_000
# a records server that could not be reached is tried again this often (and on each command)
RECONNECT_MS = 30_000

_BUTTONS = {
    Answer.YES: QMessageBox.StandardButton.Yes,
    Answer.NO: QMessageBox.StandardButton.No,
    Answer.SAVE: QMessageBox.StandardButton.Save,
    Answer.CANCEL: QMessageBox.StandardButton.Cancel,
    Answer.DISCARD: QMessageBox.StandardButton.Discard,
}
_ANSWERS = {button: answer for answer, button in _BUTTONS.items()}


class WorkKeeper(QObject):
    """Keeps the work of ``session`` in the records through a :class:`WorkSession`.

    ``save_version`` is the window's own command (it asks for the patient the first time):
    a question that asks to save first calls it, looked up at that moment."""

    def __init__(
        self,
        session: PlanSession,
        window: QMainWindow,
        *,
        save_version: Callable[..., int | None],
    ) -> None:
        super().__init__(window)
        self.session = session
        self.window = window
        self._save_first = save_version
        self._start_work()
        self.timer = QTimer(self)
        self.timer.setSingleShot(True)
        self.timer.setInterval(AUTOSAVE_MS)
        self.timer.timeout.connect(self.autosave)
        self.longest_wait = QTimer(self)
        self.longest_wait.setSingleShot(True)
        self.longest_wait.setInterval(AUTOSAVE_LONGEST_WAIT_MS)
        self.longest_wait.timeout.connect(self.autosave)
        self.reconnect_timer = QTimer(self)
        self.reconnect_timer.setInterval(RECONNECT_MS)
        self.reconnect_timer.timeout.connect(lambda: self.follow(self.work.reconnect()))
        # where the work is kept, while that is not the records as usual (a server down)
        self.records_state = QLabel()
        self.records_state.setAccessibleName("Records")
        window.statusBar().addPermanentWidget(self.records_state)
        self._show_records_state()
        session.inputsReplaced.connect(lambda request: self.follow(self.work.opened(request)))
        session.planChanged.connect(lambda _plan: self.follow(self.work.built()))
        for changed in (session.observationsChanged, session.readinessChanged):
            changed.connect(lambda *_: self.follow(self.work.changed()))
        # back in focus: what other workstations recorded on the version on screen
        window.installEventFilter(self)

    def eventFilter(self, watched, event) -> bool:  # noqa: N802, ANN001 (Qt override)
        if watched is self.window and event.type() == QEvent.Type.WindowActivate:
            self.refresh()
        return False

    @property
    def records(self) -> Records | None:
        return self.work.records

    # ---- carrying out what the work session says ------------------------------------------
    def follow(self, reply: Reply) -> Reply:
        """Start or stop the autosave, show the messages and the status, save first or ask
        as told (feeding back how it went), then open what the last reply says."""
        while True:
            if reply.autosave is Autosave.START:
                self.timer.start()
                if not self.longest_wait.isActive():  # not postponed by later changes
                    self.longest_wait.start()
            elif reply.autosave is Autosave.STOP:
                self.timer.stop()
                self.longest_wait.stop()
            for message in reply.messages:
                self._show(message)
            if reply.status:
                self._status(reply.status)
            if reply.save_first is not None:
                number = self._save_first(with_observations=reply.save_first.with_observations)
                reply = self.work.save_finished(saved=number is not None)
                continue
            if reply.question is None:
                break
            reply = self.work.answer(self.ask(reply.question))
        if reply.open is not None:
            self._open(reply.open)
        for observation in reply.refreshed:  # recorded on another workstation
            self.session.add_observation(observation)
        self._show_records_state()
        return reply

    def _show_records_state(self) -> None:
        """The status bar's records label, and the retry timer while the server is down."""
        label = self.work.records_label()
        self.records_state.setText(f"⚠ {label}" if label else "")
        self.records_state.setToolTip(self.work.unreachable_words() or self.work.problem)
        self.records_state.setVisible(bool(label))
        away = self.records is not None and self.records.unreachable is not None
        if away and not self.reconnect_timer.isActive():
            self.reconnect_timer.start()
        elif not away:
            self.reconnect_timer.stop()

    def ask(self, question: Question) -> Answer:
        """The question in a message box with its buttons; closed without a button, its
        escape answer."""
        if question.buttons or (
            question.answers == (Answer.YES, Answer.NO) and question.escape is Answer.YES
        ):  # Esc in a Yes/No box is Qt's No, and No discards a draft: its escape is set here
            return self._ask_with_named_buttons(question)
        show = QMessageBox.warning if question.warning else QMessageBox.question
        shown = [self.window, "vetfluid", question.text]
        if question.answers != (Answer.YES, Answer.NO) or question.default is not None:
            buttons = QMessageBox.StandardButton.NoButton
            for answer in question.answers:
                buttons |= _BUTTONS[answer]
            shown.append(buttons)
            if question.default is not None:
                shown.append(_BUTTONS[question.default])
        return _ANSWERS.get(show(*shown), question.escape)

    def _ask_with_named_buttons(self, question: Question) -> Answer:
        """A question whose buttons say what each does ("Keep as draft", not "No"): the
        standard buttons, relabelled, so Enter, Esc and the platform's order still apply;
        or with their own words and the question's escape on Esc."""
        kind = QMessageBox.Icon.Warning if question.warning else QMessageBox.Icon.Question
        box = QMessageBox(kind, "vetfluid", question.text, parent=self.window)
        for answer, words in question.buttons or [(a, "") for a in question.answers]:
            button = box.addButton(_BUTTONS[answer])
            if words:
                button.setText(words)
        if question.default is not None:
            box.setDefaultButton(_BUTTONS[question.default])
        box.setEscapeButton(_BUTTONS[question.escape])
        pressed = QMessageBox.StandardButton(box.exec())
        return _ANSWERS.get(pressed, question.escape)

    def _show(self, message: Message) -> None:
        if message.compare is not None:
            self._offer_to_compare(message)
            return
        show = QMessageBox.warning if message.warning else QMessageBox.information
        show(self.window, "vetfluid", message.text)

    def _offer_to_compare(self, message: Message) -> None:
        """Another version was saved meanwhile: say so, with a button that shows the two
        side by side."""
        from ui.records.records_view import CompareDialog

        box = QMessageBox(QMessageBox.Icon.Information, "vetfluid", message.text,
                          parent=self.window)  # fmt: skip
        box.addButton(QMessageBox.StandardButton.Yes).setText("Compare them")
        box.addButton(QMessageBox.StandardButton.Ok)
        box.setEscapeButton(QMessageBox.StandardButton.Ok)
        if QMessageBox.StandardButton(box.exec()) is not QMessageBox.StandardButton.Yes:
            return
        patient_id, theirs, ours = message.compare
        try:
            by_number = {v.version: v for v in self.records.versions(patient_id)}
            dialog = CompareDialog(by_number[theirs], by_number[ours], self.window)
        except (VetfluidError, KeyError) as exc:
            self._show(Message(text=f"These versions cannot be compared: {exc}"))
            return
        dialog.show()
        self.compared = dialog  # kept open (and reachable by tests) after this returns

    def _status(self, text: str) -> None:
        self.window.statusBar().showMessage(text)

    def _open(self, opening: Opening) -> None:
        def plain(mapping: object) -> dict | None:
            return None if mapping is None else dict(mapping)

        self.session.replace_request(
            opening.request, plain(opening.acknowledged), plain(opening.acknowledged_for)
        )
        if opening.observations is not None:
            self.session.restore_observations(list(opening.observations))
        if opening.status:
            self._status(opening.status)

    # ---- the commands -------------------------------------------------------------------------
    def autosave(self) -> None:
        self.timer.stop()
        self.longest_wait.stop()
        self.follow(self.work.autosave())

    def refresh(self) -> None:
        """Add what other workstations recorded on the saved version on screen."""
        if self.work.records is not None:
            self.follow(self.work.refresh())

    def offer_draft(self, *, only: frozenset[str] | None = None) -> bool:
        """Offer back what the records' draft holds (``only``: when it is one of these
        plans'); True when something was opened."""
        return self.follow(self.work.look_at_draft(only=only)).go

    def leave_for(self, opening: Opening) -> bool:
        """Replace the plan with ``opening`` if the work session lets it (it asks first
        what it must); False when the plan stays."""
        return self.follow(self.work.leave(opening)).go

    def open_version(self, patient_id: int, number: int) -> str | None:
        """Open a saved version: its status line, or None when nothing was opened."""
        reply = self.follow(self.work.open_version(patient_id, number))
        return reply.open.status if reply.open is not None else None

    def open_patient(self) -> None:
        """The patient dialog: a version chosen is opened as :meth:`open_version` opens it."""
        from ui.records.records_view import OpenPatientDialog

        if self.records is None:
            self._show(Message(text=NO_RECORDS_FILE, warning=False))
            return
        self.follow(self.work.reconnect())  # a server that was down: tried now, as asked
        if self.records.unreachable is not None:
            self._show(Message(text=self.work.unreachable_words()))
            return
        try:
            dialog = OpenPatientDialog(self.records, self.window)
        except RecordsError as exc:  # lost since: said once, in words
            self._show(Message(text=f"The patients cannot be listed: {exc.one_line()}"))
            self._show_records_state()
            return
        if dialog.exec() and dialog.chosen():
            self.open_version(*dialog.chosen())

    def before_replan(self) -> bool:
        """Whether a re-plan may go on (the plan it replaces is in the records first)."""
        return self.follow(self.work.replan()).go

    def save_version(
        self, *, name: str | None, client_ref: str, author: str, with_observations: bool
    ) -> int | None:
        """Save the plan as its patient's next version, asking for the patient (the
        new-patient dialog) when none is known and none is named."""
        from ui.records.records_view import NewPatientDialog

        patient = None if name is None else NewPatient(name=name, client_ref=client_ref)
        author = author or self._initials()
        reply = self.work.save_version(
            patient=patient, author=author, with_observations=with_observations
        )
        if reply.ask_patient:
            # what the first reply says (why the patient is asked: the records replaced)
            # comes before the dialog, and is shown even if the dialog is cancelled
            self.follow(reply)
            dialog = NewPatientDialog(self.session.plan.request.species_id, self.window)
            dialog.initials.setText(author)
            if not dialog.exec() or not dialog.name.text().strip():
                return None
            reply = self.work.save_version(
                patient=NewPatient(name=dialog.name.text(), client_ref=dialog.client.text()),
                author=dialog.initials.text(), with_observations=with_observations,
            )  # fmt: skip
        self.follow(reply)
        return reply.saved_number

    @staticmethod
    def _initials() -> str:
        """The clinician's initials from the records settings ("" when none are set)."""
        from vetfluid.common.errors import InputError
        from vetfluid.records.location import load_settings

        try:
            return load_settings().initials
        except InputError:
            return ""

    def _start_work(self, path: Path | None = None, server: ServerAddress | None = None) -> None:
        """A new work session on the records the setting names (at the start), or on those
        given (after a restore: the ones it replaced); records that cannot be opened are
        said in the status line."""
        self.work = WorkSession.open(self.session, path, server=server)
        if self.work.problem:
            self._status(f"Records unavailable: {self.work.problem}")

    def reopen_records(
        self,
        *,
        path: Path | None = None,
        server: ServerAddress | None = None,
        only: frozenset[str] | None = None,
    ) -> None:
        """Open the records the setting names now (or, after a restore, the records it
        replaced: ``path`` or ``server``, those the window had open): the one way the
        window does it, after the records settings were saved and after a restore.

        Records in use (settings saved): the work session switches to the ones named
        (what waits written first; records that cannot be opened leave these in use, said
        why). Records closed (a restore closed them: the work session CLOSED): a new work
        session on the records as they are now, their draft offered as at a start (``only``:
        when it is one of these plans', as after a restore that failed). Either
        way the records label, the retry timer and the look on coming back into focus
        (all read from :attr:`work`) follow the records now in use."""
        if self.work.state is not State.CLOSED:
            self.follow(self.work.switch_records())
            return
        self.timer.stop()  # nothing of the closed session waits to be written
        self.longest_wait.stop()
        self._start_work(path, server)
        self.offer_draft(only=only)  # shows the records label and starts or stops the retry timer

    def close(self) -> bool:
        """Whether the window may close (asked first when work would be lost)."""
        return self.follow(self.work.close()).go

    def file_written(self) -> None:
        self.follow(self.work.file_written())

    def observations_exported(self) -> None:
        self.follow(self.work.observations_exported())
