"""Keeping the work on screen: drafts, saved versions, observations not yet written, what
is offered back at start, what leaving, re-planning and closing ask.

A :class:`WorkSession` holds the records file, the draft and where the plan on screen
stands; it reads the screen (the window's plan session, or anything with the same
attributes: :class:`Screen`) and never shows anything. Each event (a method: ``opened``,
``changed``, ``autosave``, ``leave``, ``replan``, ``close``, ``answer``…) is looked up in
:data:`TABLE`, a list of rows (state, event, condition, next state, what is written): the
first row whose state and event match and whose condition holds is taken. The window
carries out the :class:`Reply`: it asks the question, if any, and feeds the answer back
with :meth:`WorkSession.answer`; shows the messages and the status line; starts or stops
its two-second autosave timer; saves a version when a question asked for one (it asks for
the patient); opens what the reply says to open.

Every command (leave, re-plan, look at the draft, close) first writes what is waiting
for the autosave, so its decision is taken on what the records hold. Nothing recorded is
lost: observations on an unchanged saved version go into it; unsaved work goes into the
draft, with the last plan that could be built while an input is retyped; a draft
another plan left is replaced only by unsaved work, and observations it keeps for a saved
version are written into that version first; observations a saved version refuses (a
locked file) are kept in the draft for it, retried, and offered back into it at the next
start. Leaving unsaved work asks Save as a version / Keep as draft / Cancel; a re-plan
keeps the plan it replaces in the records (saved first); closing asks only when nothing
could be written. With no usable records file, leaving or closing asks before dropping work
no plan file or CSV export keeps, and a re-plan is refused.

Several workstations on the same records (issue 21): observations go into a saved version
by what this screen added or removed since it last read the version
(:meth:`Records.merge_observations` with ``based_on``), so what another workstation
recorded stands; the same observation recorded here and there meanwhile is kept once (one
reading entered twice) and this workstation is told, in words, to record it again if it
was a second measurement; back in focus (REFRESH) what others recorded on the version on
screen is added to it; a save that finds versions of the patient saved meanwhile elsewhere
says by whom and where, and offers to compare them.

A server that cannot be reached at the start leaves the records open on this
workstation's drafts (:attr:`Records.unreachable`): the work is autosaved there, the start
says so once (where the draft is, that versions wait for the server, what to check), and
once the server answers the records are as usual (:meth:`WorkSession.reconnect`). A draft
remembers the database (its ``database_id``) and the patient (name, species, when added)
its patient id belongs to: after a restore, or in other records, it never binds to
whoever has that id now, and the user is told. A changed records setting applies at once
(:meth:`WorkSession.switch_records`): what waits is written first, unsaved work moves into
the new records' draft (never over a draft of another plan they keep, which is offered
first), and records that cannot be opened leave the old ones in use, saying why.

The states (``working`` below means AS_OPENED, ON_VERSION, UNSAVED, VERSION_REFUSED and
NOT_WRITTEN; ``asking`` means OFFERING, ASKING_LEAVE, SAVING_TO_LEAVE, ASKING_REPLAN,
SAVING_TO_REPLAN, ASKING_CLOSE, ASKING_LOSE_ON_LEAVE and ASKING_LOSE_ON_CLOSE):

- OPENING: a plan replaced the screen; the first plan built from it is the yardstick.
- AS_OPENED: the plan as opened (a new patient, a demo, a plan file), nothing recorded.
- ON_VERSION: a saved version, unchanged: what is recorded on it is written into it.
- UNSAVED: work in no saved version (changed, restored, re-planned, observed).
- VERSION_REFUSED: observations a saved version refused, kept in the draft for it.
- NOT_WRITTEN: work neither a version nor the draft could take; retried.
- OFFERING … ASKING_LOSE_ON_CLOSE: a question is open (SAVING_…: the save it asked for).
- CLOSED: the records file is closed; later events change nothing.

Next state: ``stays``; ``back`` (to the state before the question); ``by the screen`` (AS_OPENED,
ON_VERSION or UNSAVED, from what the screen holds); ``by the write`` (the outcome of
writing: a working state); ``as LEAVE`` (what leaving for that version reaches).

The table, built from :data:`TABLE` (docs/work_keeping.md holds it as Markdown;
``tests/test_work_session.py`` checks both):

- CLOSED + CLOSE → stays. Written: —. Window: goes on.
- CLOSED + any other → stays. Written: —. Window: —.
- working + OPENED → OPENING. Written: a restored draft is made this plan's. Window: —.
- OPENING + BUILT → by the screen. Written: —. Window: the plan built is the yardstick;
  autosave started.
- OPENING + CHANGED → stays. Written: —. Window: —.
- AS_OPENED, ON_VERSION, UNSAVED + BUILT, CHANGED → by the screen. Written: —. Window:
  autosave started.
- VERSION_REFUSED, NOT_WRITTEN, asking + BUILT, CHANGED → stays. Written: —. Window:
  autosave started.
- working, asking + AUTOSAVE [no records file] → stays. Written: —. Window: —.
- working + AUTOSAVE → by the write. Written: observations into the unchanged saved version
  (refused: into the draft, for it); else unsaved work into the draft; else this plan's own
  draft cleared. Window: status; refused or not written: autosave restarted (a retry).
- asking + AUTOSAVE → stays. Written: as above (marked left while the close question is
  open). Window: as above.
- working, SAVING_TO_LEAVE, SAVING_TO_REPLAN + SAVE [no records file] → stays. Written: —.
  Window: message: no records file.
- working, SAVING_TO_LEAVE, SAVING_TO_REPLAN + SAVE [no plan builds] → stays. Written: —.
  Window: message: cannot be saved until it builds.
- working, SAVING_TO_LEAVE, SAVING_TO_REPLAN + SAVE [no patient yet, none named] → stays.
  Written: —. Window: asks for the patient.
- working + SAVE → ON_VERSION or stays or UNSAVED or NOT_WRITTEN. Written: the version with
  its observations (a new patient first); this plan's draft cleared (the records replaced
  meanwhile: nothing by id; the work into the draft). Window: status; autosave stopped
  (another version saved meanwhile: message offering to compare them; refused: message,
  stays; the records replaced: message, UNSAVED (the draft refused too: NOT_WRITTEN),
  autosave restarted, asks for the patient).
- SAVING_TO_LEAVE, SAVING_TO_REPLAN + SAVE → stays. Written: as above. Window: as above; the
  question returns to the state reached.
- working + LEAVE [nothing unsaved] → stays. Written: —. Window: goes on: opens it.
- working + LEAVE [no records file] → ASKING_LOSE_ON_LEAVE. Written: —. Window: asks Discard
  / Cancel.
- working + LEAVE → ASKING_LEAVE. Written: —. Window: asks Save as a version… / Keep as
  draft / Cancel.
- ASKING_LEAVE + YES → SAVING_TO_LEAVE. Written: —. Window: save first (the window asks for
  the patient).
- ASKING_LEAVE + NO → by the write. Written: the draft, marked left. Window: goes on (not
  written: message, stays).
- ASKING_LEAVE + CANCEL → back. Written: —. Window: —.
- SAVING_TO_LEAVE + SAVE_DONE → back. Written: —. Window: goes on: opens it.
- SAVING_TO_LEAVE + SAVE_FAILED → back. Written: —. Window: —.
- ASKING_LOSE_ON_LEAVE + DISCARD → back. Written: —. Window: goes on: opens it, the work
  dropped.
- ASKING_LOSE_ON_LEAVE + CANCEL → back. Written: —. Window: —.
- working + REPLAN [no plan builds] → stays. Written: —. Window: goes on (nothing to re-plan
  from).
- working + REPLAN [no records file] → stays. Written: —. Window: message: nothing
  re-planned.
- working + REPLAN [on the saved version, its observations not written] → stays. Written: —.
  Window: message: re-plan once they are written.
- working + REPLAN [not the saved version] → ASKING_REPLAN. Written: —. Window: asks Save /
  Cancel.
- working + REPLAN [its measured outputs moved on from the version] → ASKING_REPLAN.
  Written: —. Window: asks Save it as it stands / Cancel.
- working + REPLAN → stays. Written: —. Window: goes on: the next plan is the re-plan.
- ASKING_REPLAN + SAVE_ANSWER → SAVING_TO_REPLAN. Written: —. Window: save first (moved on:
  without its observations).
- ASKING_REPLAN + CANCEL → back. Written: —. Window: —.
- SAVING_TO_REPLAN + SAVE_DONE → back. Written: —. Window: goes on: the next plan is the
  re-plan.
- SAVING_TO_REPLAN + SAVE_FAILED → back. Written: —. Window: —.
- ASKING_CLOSE, ASKING_LOSE_ON_CLOSE + CLOSE → stays. Written: —. Window: the question about
  closing stays open.
- working, asking + CLOSE [no records file, unsaved work] → ASKING_LOSE_ON_CLOSE. Written:
  —. Window: asks Discard / Cancel (an open question lapses).
- working, asking + CLOSE [no records file] → CLOSED. Written: —. Window: closes.
- working, asking + CLOSE → CLOSED or ASKING_CLOSE. Written: what waits, marked left; the
  records file closed. Window: closes (nothing could be written: autosave stopped, asks
  Close anyway? Yes / No).
- ASKING_CLOSE + YES → CLOSED. Written: the records file closed. Window: closes.
- ASKING_CLOSE + NO → back. Written: —. Window: stays open; autosave restarted.
- ASKING_LOSE_ON_CLOSE + DISCARD → CLOSED. Written: —. Window: closes.
- ASKING_LOSE_ON_CLOSE + CANCEL → back. Written: —. Window: —.
- ON_VERSION + REFRESH → ON_VERSION or by the write. Written: what waits, first. Window:
  adds the observations other workstations recorded on the version.
- working, asking + REFRESH → stays. Written: —. Window: —.
- working + LOOK_AT_DRAFT [no records file] → stays. Written: —. Window: —.
- working + LOOK_AT_DRAFT [nothing could be written] → stays. Written: —. Window: status:
  offered at the next start.
- working + LOOK_AT_DRAFT → stays or OFFERING. Written: a draft that cannot be read or
  restored: moved to a file beside the records. Window: asks Restore it? or Write them to
  that version? (Yes / No).
- OFFERING + YES [observations kept for a saved version] → as LEAVE. Written: the
  observations into their version; the draft cleared. Window: opens that version (not
  written: message).
- OFFERING + YES → back. Written: —. Window: opens the draft's plan, unsaved.
- OFFERING + NO → back. Written: the draft cleared. Window: —.
- working + FILE_WRITTEN [no records file] → by the screen. Written: —. Window: the plan
  file is the yardstick.
- working + EXPORTED [no records file] → by the screen. Written: —. Window: the observations
  count as kept.
- working + FILE_WRITTEN, EXPORTED → stays. Written: —. Window: —.
- working + any answer → stays. Written: —. Window: —.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from enum import Enum
from pathlib import Path
from typing import TYPE_CHECKING, Any, NamedTuple, Protocol

from vetfluid.common.errors import InputError, VetfluidError
from vetfluid.records.store import (
    DraftSetAside,
    Merged,
    Records,
    RecordsError,
    RecordsReplaced,
    RecordsUnreachable,
)

if TYPE_CHECKING:
    from vetfluid.course.observations import Observation
    from vetfluid.planning.plan import Plan, PlanRequest
    from vetfluid.records.location import ServerAddress


class WorkSessionError(RuntimeError):
    """An event no row of :data:`TABLE` takes in the current state: a programming error."""


class State(Enum):
    OPENING = "a plan replaced the screen"
    AS_OPENED = "the plan as opened, nothing recorded"
    ON_VERSION = "an unchanged saved version"
    UNSAVED = "work in no saved version"
    VERSION_REFUSED = "observations a version refused, in the draft"
    NOT_WRITTEN = "work nothing could take"
    OFFERING = "asking: take back the draft left last time?"
    ASKING_LEAVE = "asking: save first, leave it in the draft, or cancel?"
    SAVING_TO_LEAVE = "saving the version asked for, then leaving"
    ASKING_REPLAN = "asking: save the plan being replaced first?"
    SAVING_TO_REPLAN = "saving the version asked for, then re-planning"
    ASKING_CLOSE = "asking: close and lose what could not be written?"
    ASKING_LOSE_ON_LEAVE = "asking (no records): leave and lose it?"
    ASKING_LOSE_ON_CLOSE = "asking (no records): close and lose it?"
    CLOSED = "closed"


class Event(Enum):
    OPENED = "a plan replaces the one on screen"
    BUILT = "the plan is built again (or cannot be)"
    CHANGED = "observations or reasons change"
    AUTOSAVE = "the autosave (two seconds after a change; every command first)"
    LOOK_AT_DRAFT = "at start: look at the draft left last time"
    LEAVE = "New patient, a demo, a plan file or a saved version asked for"
    REPLAN = "Re-plan"
    SAVE = "Save (the patient's next version)"
    SAVE_DONE = "the save a question asked for was made"
    SAVE_FAILED = "the save a question asked for was not made"
    CLOSE = "Quit"
    REFRESH = "the window comes back into focus: look for what other workstations recorded"
    FILE_WRITTEN = "the plan written to a plan file"
    EXPORTED = "the observations exported as CSV"
    YES = "answered Yes"
    NO = "answered No"
    SAVE_ANSWER = "answered Save"
    CANCEL = "answered Cancel"
    DISCARD = "answered Discard"


class Answer(Enum):
    YES = "Yes"
    NO = "No"
    SAVE = "Save"
    CANCEL = "Cancel"
    DISCARD = "Discard"


_ANSWERED = {
    Answer.YES: Event.YES,
    Answer.NO: Event.NO,
    Answer.SAVE: Event.SAVE_ANSWER,
    Answer.CANCEL: Event.CANCEL,
    Answer.DISCARD: Event.DISCARD,
}
ANSWERS = frozenset(_ANSWERED.values())


class Asked(Enum):
    """Which question (the words are in :attr:`Question.text`)."""

    RESTORE_CRASHED = "restore the plan being edited when vetfluid stopped"
    RESTORE_LEFT = "restore the plan left unsaved"
    WRITE_BACK = "write observations a version refused into it"
    SAVE_OR_LEAVE = "save first, or leave it in the draft"
    SAVE_BEFORE_REPLAN = "save the plan being replaced"
    SAVE_MOVED_BEFORE_REPLAN = "save the plan its measured outputs moved on"
    CLOSE_LOSING_WORK = "close and lose what could not be written"
    LOSE_UNKEPT_ON_LEAVE = "leave and lose what no file keeps"
    LOSE_UNKEPT_ON_CLOSE = "close and lose what no file keeps"


@dataclass(frozen=True, kw_only=True)
class Question:
    asked: Asked
    text: str
    answers: tuple[Answer, ...]
    escape: Answer  # what closing the question without an answer means
    default: Answer | None = None  # the button Enter presses (None: the toolkit's own)
    warning: bool = False  # something may be lost: shown as a warning
    about: str = ""  # the pending thing it is about (a draft's or a plan's tag)
    # the words on each answer's button, naming what it does (empty: the toolkit's own words)
    buttons: tuple[tuple[Answer, str], ...] = ()


@dataclass(frozen=True, kw_only=True)
class Message:
    text: str
    warning: bool = True  # False: for information only
    # (patient id, version, version): the two versions the message offers to compare
    compare: tuple[int, int, int] | None = None


class Kind(Enum):
    KEPT = "kept elsewhere (a new patient, a demo, a plan file)"
    VERSION = "a saved version"
    DRAFT = "a restored draft (unsaved until saved)"
    REPLAN = "a re-plan (unsaved until saved)"


@dataclass(frozen=True, kw_only=True)
class Opening:
    """A plan to put on screen: the window replaces the inputs with ``request``, its reasons
    and their wording, then puts back ``observations`` (when not None), then shows
    ``status``."""

    kind: Kind = Kind.KEPT
    request: PlanRequest | None = None
    acknowledged: Mapping[str, str] | None = None
    acknowledged_for: Mapping[str, str] | None = None
    observations: tuple[Observation, ...] | None = None
    patient_id: int | None = None
    version_id: int | None = None
    status: str = ""
    known_latest: int | None = None  # the patient's latest version when this was read
    # which patient ``patient_id`` is, in which database (a draft checks it when restored)
    patient_mark: Mapping[str, str] | None = None
    database_id: str | None = None
    restoring: bool = False  # no plan opens: the records are restored from a backup


@dataclass(frozen=True, kw_only=True)
class NewPatient:
    name: str
    client_ref: str = ""


@dataclass(frozen=True, kw_only=True)
class SaveFirst:
    """Save the plan as a version now (asking for the patient if none), then call
    :meth:`WorkSession.save_finished`."""

    with_observations: bool = True


class Autosave(Enum):
    START = "start"
    STOP = "stop"


@dataclass(frozen=True, kw_only=True)
class Reply:
    """What the window does after an event, in this order: start or stop the autosave,
    show the messages and the status, save first (then say how it went), ask the question
    (then feed the answer back), open what is to be opened."""

    question: Question | None = None
    messages: tuple[Message, ...] = ()
    status: str = ""
    autosave: Autosave | None = None
    go: bool = False  # the command goes on
    open: Opening | None = None
    save_first: SaveFirst | None = None
    ask_patient: bool = False  # save: name the patient, then save again
    saved_number: int | None = None
    # observations other workstations recorded on the version on screen, to add to it
    refreshed: tuple[Observation, ...] = ()


@dataclass(frozen=True, kw_only=True)
class SavedVersion:
    """The saved version on screen: while the plan keeps its inputs and reasons, what is
    recorded on it is written into it rather than into the draft."""

    row_id: int
    request: PlanRequest
    acknowledged: Mapping[str, str]


class Screen(Protocol):
    """What the work session reads from the screen (the window's ``PlanSession``)."""

    plan: Plan | None
    problem: str  # why no plan can be built
    observations: list[Observation]

    @property
    def acknowledged(self) -> dict[str, str]: ...

    @property
    def acknowledged_for(self) -> dict[str, str]: ...

    @property
    def inputs(self) -> dict[str, Any]: ...


class _LastValid(NamedTuple):
    """The last plan that could be built, and whether it was the saved version."""

    request: PlanRequest
    on_version: bool


class _VersionBehind(NamedTuple):
    """The saved version a draft holds observations for, which it could not take."""

    patient_id: int
    number: int
    patient_name: str


@dataclass(frozen=True)
class _Offer:
    draft: dict
    request: PlanRequest | None
    observations: list
    version: _VersionBehind | None


class _Out:
    """What an event makes the window do, gathered while the rows run."""

    def __init__(self, messages: list[Message] | None = None) -> None:
        self.messages: list[Message] = list(messages or ())
        self.status = ""
        self.autosave: Autosave | None = None
        self.question: Question | None = None
        self.go = False
        self.open: Opening | None = None
        self.save_first: SaveFirst | None = None
        self.ask_patient = False
        self.saved_number: int | None = None
        self.refreshed: tuple = ()

    def message(
        self, text: str, *, warning: bool = True, compare: tuple[int, int, int] | None = None
    ) -> None:
        self.messages.append(Message(text=text, warning=warning, compare=compare))

    def reply(self) -> Reply:
        return Reply(
            question=self.question, messages=tuple(self.messages), status=self.status,
            autosave=self.autosave, go=self.go, open=self.open, save_first=self.save_first,
            ask_patient=self.ask_patient, saved_number=self.saved_number,
            refreshed=self.refreshed,
        )  # fmt: skip


def _meanwhile_words(saved: Any) -> str:
    """Who saved which version while this one was being worked on (a store.Saved)."""
    others = "; ".join(
        f"version {o.version} by {o.author or 'no initials'} at "
        f"{o.workstation or 'an unnamed workstation'} ({o.created_at})"
        for o in saved.meanwhile
    )
    return (
        f"Saved as version {saved.number}. Meanwhile another version of this patient was "
        f"saved on another workstation: {others}. Both are kept; compare them before going "
        "on."
    )


def readable_observations(records: list) -> tuple[list[Observation], str]:
    """Stored observations read back; one that cannot be read is left out and counted in
    the returned note ("" when all are read)."""
    from vetfluid.course.observations import observation_from_record

    kept, unreadable = [], 0
    for record in records:
        try:
            kept.append(observation_from_record(record))
        except VetfluidError:
            unreadable += 1
    return kept, f" {unreadable} stored observation(s) could not be read." if unreadable else ""


def draft_contents(draft: dict) -> tuple[PlanRequest | None, list]:
    """A draft's request (None: observations recorded before any plan) and observations;
    raises (KeyError, TypeError, VetfluidError) when they are not what a draft holds."""
    from vetfluid.records.serialize import request_from_dict

    request = None if draft["request"] is None else request_from_dict(draft["request"])
    observations = draft.get("observations") or []
    if not isinstance(observations, list):
        raise TypeError("its observations are not a list")
    reasons = draft.get("acknowledged") or {}
    if not isinstance(reasons, dict) or not all(
        isinstance(k, str) and isinstance(v, str) for k, v in reasons.items()
    ):
        raise TypeError("its reasons are not words given for warnings")
    return request, observations


_OBSERVED_WORDS = (
    ("weight_kg", "weight", " kg"), ("pcv_percent", "PCV", " %"),
    ("total_solids_g_per_dl", "total solids", " g/dL"), ("urine_ml", "urine", " mL"),
    ("urine_period_h", "collected over", " h"), ("other_losses_ml", "other losses", " mL"),
    ("serum_na", "sodium", " mmol/L"), ("serum_k", "potassium", " mmol/L"),
    ("usg", "urine specific gravity", ""), ("urine_osmolality", "urine osmolality", " mOsm/kg"),
    ("heart_rate_per_min", "heart rate", "/min"),
    ("respiratory_rate_per_min", "respiratory rate", "/min"),
    ("mucous_membranes", "mucous membranes", ""), ("crt_s", "capillary refill", " s"),
    ("note", "note", ""),
)  # fmt: skip


def observation_words(record: Mapping) -> str:
    """One observation as the user entered it: "hour 4: weight 24.5 kg, heart rate 120/min"."""
    said = [
        f"{label} {value:g}{unit}" if isinstance(value, float | int) else f"{label} {value}{unit}"
        for key, label, unit in _OBSERVED_WORDS
        if (value := record.get(key)) not in (None, "")
    ]
    return f"hour {record.get('hour', 0):g}: " + (", ".join(said) or "nothing measured")


def kept_once_words(merged: Merged, where: str) -> str:
    """What to tell a workstation whose observations another had meanwhile recorded alike."""
    readings = "; ".join(observation_words(r) for r in merged.kept_once)
    return (
        f"Another workstation recorded the same observation on {where} meanwhile ({readings}). "
        "It is kept once, as one reading entered twice. If it was a second, separate "
        "measurement, record it again."
    )


def _patient_mark(row: Any) -> dict[str, str]:
    """What tells one patient from another that had the same id: name, species, when added."""
    return {"name": row.name, "species_id": row.species_id, "created_at": row.created_at}


def set_aside_words(kept: Path) -> str:
    return (
        f"The draft left last time could not be read; it was set aside as {kept}. "
        "Nothing was restored from it."
    )


NO_RECORDS_FILE = "No records file is open."
WORKING = frozenset(
    {State.AS_OPENED, State.ON_VERSION, State.UNSAVED, State.VERSION_REFUSED, State.NOT_WRITTEN}
)
CLEAR = frozenset({State.AS_OPENED, State.ON_VERSION, State.UNSAVED})
TROUBLE = frozenset({State.VERSION_REFUSED, State.NOT_WRITTEN})
ASKING = frozenset(
    {
        State.OFFERING, State.ASKING_LEAVE, State.SAVING_TO_LEAVE, State.ASKING_REPLAN,
        State.SAVING_TO_REPLAN, State.ASKING_CLOSE, State.ASKING_LOSE_ON_LEAVE,
        State.ASKING_LOSE_ON_CLOSE,
    }
)  # fmt: skip
SAVING = frozenset({State.SAVING_TO_LEAVE, State.SAVING_TO_REPLAN})
COMMANDS = frozenset({Event.LEAVE, Event.REPLAN, Event.LOOK_AT_DRAFT, Event.CLOSE})


class Next(Enum):
    """Targets worked out when the row is taken."""

    STAY = "stays"
    BACK = "back"
    STANDING = "by the screen"
    WRITTEN = "by the write"
    AS_LEAVE = "as LEAVE"


_ALLOWED_BY = {
    Next.STANDING: CLEAR,
    Next.WRITTEN: WORKING,
    Next.AS_LEAVE: frozenset(State),
}


class WorkSession:
    """Where the work on screen stands with respect to the records; see the module text."""

    def __init__(self, screen: Screen, records: Records | None, *, problem: str = "") -> None:
        self.screen = screen
        self.records = records
        self.problem = problem  # why there is no records file, when there is none
        self.state = State.AS_OPENED  # a blank planner
        self.patient_id: int | None = None  # the records patient of the plan on screen
        # the patient's latest version this screen knew of (None: not known): a save told
        # of those saved meanwhile on other workstations
        self.known_latest: int | None = None
        self._version_held: list | None = None  # what the saved version held, as last read
        self.saved: SavedVersion | None = None
        self.tag = self._new_tag()  # marks the drafts this plan writes
        self._back = State.AS_OPENED  # where a question returns to
        self._question: Question | None = None
        self._opening = Opening()  # what is being opened (OPENING)
        self._next: Opening | None = None  # what a command that went on opens next
        self._retag: dict | None = None  # a restored draft, made this plan's once it opens
        self._opened_request: PlanRequest | None = None  # what was opened (no plan yet)
        self._opened_unsaved = False  # a restored draft or a re-plan, until saved
        self._yardstick: tuple = (None, {})  # the plan and reasons opened
        self._last_valid: _LastValid | None = None
        self._unwritten = False  # a change waits for the autosave
        self._trouble = ""  # why the work is not where it belongs (VERSION_REFUSED, NOT_WRITTEN)
        self._exported: tuple = ()  # with no records file: observations exported as CSV
        self._offer: _Offer | None = None
        self._leaving: Opening | None = None  # what a leave question waits to open
        self._moved = False  # re-plan: the version's measured outputs moved on
        self._pending: list[Message] = []  # said while answering a query: given next
        # the patient's identity and the database its id belongs to (see Opening)
        self._patient_mark: Mapping[str, str] | None = None
        self._database_id: str | None = None
        self._kept_elsewhere: tuple = ()  # observations kept in records used before
        # said when the records open: given with the look at the draft (the start)
        self._notices: list[Message] = self._records_notices(records)

    def _records_notices(self, records: Records | None) -> list[Message]:
        if records is None:
            return []
        said = [Message(text=n, warning=False) for n in records.notices]
        if records.unreachable is not None:
            said.append(Message(text=self.unreachable_words()))
        return said

    def unreachable_words(self) -> str:
        """The one message for a records server that cannot be reached ("" when it answers
        or the records are a file): why, where the draft is kept, what waits, what to check."""
        records = self.records
        if records is None or records.unreachable is None:
            return ""
        said = records.unreachable.message
        return (
            f"{said[:1].upper()}{said[1:]}.\n\n"
            f"Your work is kept as the draft on this computer, in {records.drafts_path}, "
            "and saved there as you go. Plan versions cannot be saved or opened until the "
            "server answers; vetfluid keeps trying.\n\nCheck that this computer is on the "
            "clinic's network, that the server is running, and the server address and "
            "password in File ▸ Records settings."
        )

    def records_label(self) -> str:
        """Where the work is kept, in a few words (for the window's status bar)."""
        if self.records is None:
            return "No records"
        if self.records.unreachable is not None:
            return "Records server not reachable: the draft is kept on this computer"
        return ""

    @classmethod
    def open(
        cls, screen: Screen, path: Path | None = None, *, server: ServerAddress | None = None
    ) -> WorkSession:
        """On the records file ``path`` or the server ``server`` (else those the setting
        names: the user's file, or its server); an unusable one leaves the session without
        records, saying why in :attr:`problem`. A server that cannot be reached leaves the
        drafts on this computer in use (said at the start)."""
        from vetfluid.records.store import remove_restore_leftovers

        try:
            records = Records.open(path, server=server, allow_unreachable=True)
        except RecordsError as exc:
            remove_restore_leftovers(path)
            return cls(screen, None, problem=exc.one_line())
        remove_restore_leftovers(records.path)  # what a restore killed midway left
        return cls(screen, records)

    @staticmethod
    def _new_tag() -> str:
        return os.urandom(16).hex()  # unique per plan opened; no module to import for it

    # ---- events --------------------------------------------------------------------------
    def opened(self, request: PlanRequest | None) -> Reply:
        """The screen's inputs were replaced (by ``request``; None: a new patient)."""
        return self._run(Event.OPENED, request=request)

    def built(self) -> Reply:
        return self._run(Event.BUILT)

    def changed(self) -> Reply:
        return self._run(Event.CHANGED)

    def autosave(self) -> Reply:
        return self._run(Event.AUTOSAVE)

    def look_at_draft(self, *, only: frozenset[str] | None = None) -> Reply:
        """At the start: what the records said on opening, then the draft left last time.
        ``only``: offered only when it is one of these plans' (their tags): after a restore
        that failed, the draft this window kept for it, never another window's."""
        notices, self._notices = self._notices, []
        out = _Out(self._take_pending() + notices)
        return self._run(Event.LOOK_AT_DRAFT, out=out, only=only)

    def reconnect(self) -> Reply:
        """Try a records server that could not be reached; the status says when it answers."""
        out = _Out(self._take_pending())
        if self.records is not None and self.records.unreachable is not None:
            if self.records.reach():
                out.status = self._answers_again()
        return out.reply()

    def _answers_again(self) -> str:
        return (
            f"The records server answers again ({self.records.where}): plan versions can be "
            "saved; the draft stays on this computer as always."
        )

    def leave(self, opening: Opening) -> Reply:
        """Another plan (``opening``) is to replace this one."""
        return self._run(Event.LEAVE, opening=opening)

    def open_version(self, patient_id: int, number: int) -> Reply:
        """Open a saved version: checked before anything is left, then as :meth:`leave`."""
        out = _Out(self._take_pending())
        opening = self._version_opening(out, patient_id, number)
        if opening is None:
            return out.reply()
        return self._run(Event.LEAVE, out=out, opening=opening)

    def replan(self) -> Reply:
        """Before a re-plan replaces the plan; ``go``: the next plan opened is the re-plan."""
        return self._run(Event.REPLAN)

    def save_version(
        self,
        *,
        patient: NewPatient | None = None,
        author: str = "",
        with_observations: bool = True,
    ) -> Reply:
        """Save the plan on screen as its patient's next version (``patient`` names a new
        one; with none named and none known, the reply asks for one)."""
        return self._run(
            Event.SAVE, patient=patient, author=author, with_observations=with_observations
        )

    def save_finished(self, *, saved: bool) -> Reply:
        return self._run(Event.SAVE_DONE if saved else Event.SAVE_FAILED)

    def answer(self, answer: Answer) -> Reply:
        """The answer to the open question; one it did not offer counts as its escape."""
        question = self._question
        if question is not None and answer not in question.answers:
            answer = question.escape
        return self._run(_ANSWERED[answer])

    def close(self) -> Reply:
        return self._run(Event.CLOSE)

    def refresh(self) -> Reply:
        """The window is back in focus: what other workstations recorded on the saved
        version on screen comes onto it."""
        return self._run(Event.REFRESH)

    def file_written(self) -> Reply:
        return self._run(Event.FILE_WRITTEN)

    def observations_exported(self) -> Reply:
        return self._run(Event.EXPORTED)

    def switch_records(self) -> Reply:
        """The records setting changed (File ▸ Records settings): the records it names
        replace these now. What waits is written into these first; unsaved work moves into
        the new records' draft, unless they keep a draft of another plan (offered first,
        never overwritten unseen; the work stays as these records' draft, said where).
        What these records keep (a saved version, an untouched plan) stays theirs: the plan
        on screen is no patient's in the new ones. New records that cannot be opened (or a
        server not reached while these work) leave these in use, saying why."""
        out = _Out(self._take_pending())
        old = self.records
        if self.state not in WORKING:
            out.message("The records cannot change while a question is open.")
            return out.reply()
        if self._waiting_to_be_written():  # written first, as every command does
            self._dispatch(Event.AUTOSAVE, out, {})
        try:
            new = Records.open(allow_unreachable=True)
        except RecordsError as exc:
            out.message(self._stays_words(old, exc.one_line()))
            return out.reply()
        same_records = old is not None and new.drafts_path == old.drafts_path
        if same_records and new.server == old.server:  # the whole address, options and all
            new.close()  # the same records: the password may have changed
            if old.unreachable is not None and old.reach():
                out.status = self._answers_again()
            return out.reply()
        if new.unreachable is not None and old is not None and old.unreachable is None:
            words = new.unreachable.message  # its draft would be kept here: not the new one's
            new.close()
            out.message(self._stays_words(old, words))
            return out.reply()
        if same_records:
            # the same database and drafts reached another way (TLS, an option, a spelling):
            # the work stays bound to it; a database replaced meanwhile is caught at the
            # next write (its identity is read again there)
            self.records = new
            old.close()
            out.status = f"Records now: {new.where}, reached as the setting now says."
            return out.reply()
        outcome = self._write_work(out, closed=True) if old is not None else self.state
        ours_in_old = old is not None and self._draft_is_ours(_Out())
        # observations kept in the draft for a saved version: they belong to that version,
        # so the draft stays with its records (moved, they would be no version's)
        for_version = outcome is State.VERSION_REFUSED and ours_in_old
        unsaved = not for_version and (outcome in TROUBLE or outcome is State.UNSAVED)
        waiting = self._waiting_words(old) if for_version else ""
        try:
            theirs = new.draft()
        except DraftSetAside as exc:
            out.message(set_aside_words(exc.path))
            theirs = None
        except RecordsError:
            theirs = {"unreadable": True}  # never written over
        if theirs is not None and theirs.get("tag") == self.tag and not theirs.get("for_version"):
            theirs = None  # this plan's own: offered only when it waits for a version
        if unsaved and theirs is not None and not ours_in_old:
            new.close()  # the work is on screen only: the other draft would be offered over it
            out.message(self._stays_words(old, (
                "the plan on screen could not be kept in them, and the new records keep a "
                "draft of another plan; save the plan as a version or export it, then change "
                "the records again"
            )))  # fmt: skip
            return out.reply()
        self._leave_records(old, new, unsaved=unsaved)
        out.status = f"Records now: {new.where}."
        out.messages += self._records_notices(new)
        if unsaved and theirs is None:
            self.state = self._write_work(out, closed=False)
            if self.state is State.UNSAVED and ours_in_old:
                try:
                    old.clear_draft()  # moved, not copied: one draft
                except RecordsError:
                    pass  # kept in both: nothing lost
        elif for_version:
            out.message(waiting)
        elif ours_in_old:
            out.message(
                f"The plan on screen stays kept as the draft of the records used until now "
                f"({old.drafts_path}), offered when they are used again: the new records "
                "keep a draft of another plan, offered now."
            )
        if old is not None:
            old.close()
        if theirs is not None:
            self._dispatch(Event.LOOK_AT_DRAFT, out, {})
        return out.reply()

    def _waiting_words(self, old: Records) -> str:
        """Where observations waiting for their saved version stay on a change of records."""
        number = self.known_latest
        which = f"version {number}" if number else "the saved version"
        return (
            f"The observations recorded on {which} of {self._who(self._patient_mark)} "
            f"could not yet be written into it ({self._trouble or 'it refused them'}). They "
            f"stay kept for it in the draft of the records used until now "
            f"({old.drafts_path}), and are written into it when those records are used "
            "again (vetfluid asks first). In the new records the plan on screen is no "
            "patient's."
        )

    def _stays_words(self, old: Records | None, why: str) -> str:
        kept = (
            f"The records in use stay {old.where}; your work stays with them."
            if old is not None else "No records are open."
        )  # fmt: skip
        return (
            f"The new records setting cannot be used now: {why}.\n\n{kept}\n\nThe setting "
            "is saved: vetfluid uses it when it next starts, or when you save the settings "
            "again."
        )

    def _leave_records(self, old: Records | None, new: Records, *, unsaved: bool) -> None:
        """The screen's plan, no patient's in the new records: unsaved work stays unsaved,
        what the old records keep counts as kept."""
        self.records, self.problem = new, ""
        self.patient_id, self.known_latest, self.saved, self._version_held = None, None, None, None
        self._patient_mark = self._database_id = None
        self._trouble, self._exported, self._unwritten = "", (), False
        plan = self.screen.plan
        if self._last_valid is not None:
            self._last_valid = _LastValid(self._last_valid.request, False)
        self._opened_unsaved = unsaved
        self._yardstick = (plan.request, self.screen.acknowledged) if plan else (None, {})
        self._kept_elsewhere = () if unsaved else tuple(self.screen.observations)
        self.state = State.UNSAVED if unsaved else self._standing()

    # ---- queries ---------------------------------------------------------------------------
    def has_unsaved_work(self) -> bool:
        """Work not where it belongs: changed since opened, restored or re-planned and not
        saved, observations on no saved version, anything a write could not place. With no
        records file: what no plan file or CSV export keeps."""
        resting = self._back if self.state in ASKING else self.state
        return resting in TROUBLE or self._standing() is State.UNSAVED

    def on_saved_version(self) -> bool:
        """Whether the plan on screen is the saved version, unchanged: the same inputs and
        reasons, its measured outputs following from the observations recorded on it
        (what reopening it would build)."""
        from vetfluid.course.observations import follows_saved_request

        plan, saved = self.screen.plan, self.saved
        return (
            saved is not None
            and plan is not None
            and self.screen.acknowledged == saved.acknowledged
            and follows_saved_request(plan.request, saved.request, self.screen.observations)
        )

    def draft_is_ours(self) -> bool:
        """Whether the stored draft was written by the plan on screen."""
        out = _Out()
        ours = self._draft_is_ours(out)
        self._pending += out.messages
        return ours

    # ---- the machine -------------------------------------------------------------------------
    def _take_pending(self) -> list[Message]:
        pending, self._pending = self._pending, []
        return pending

    def _run(self, event: Event, *, out: _Out | None = None, **data: Any) -> Reply:
        out = out or _Out(self._take_pending())
        away = self.records is not None and self.records.unreachable is not None
        try:
            self._run_event(event, out, data)
        finally:
            if away and self.records is not None and self.records.unreachable is None:
                out.status = out.status or self._answers_again()
        return out.reply()

    def _run_event(self, event: Event, out: _Out, data: dict) -> None:
        if event in COMMANDS:
            self._next = None  # a command that went on and was not followed through
            if self._waiting_to_be_written() and event is not Event.CLOSE:
                self._dispatch(Event.AUTOSAVE, out, {})
        self._dispatch(event, out, data)

    def _waiting_to_be_written(self) -> bool:
        return (
            self.records is not None
            and self.state in WORKING
            and (self._unwritten or self.state in TROUBLE)
        )

    def _dispatch(self, event: Event, out: _Out, data: dict) -> None:
        for row in TABLE:
            if self.state in row.states and event in row.events and row.when.holds(self, data):
                before = self.state
                reached = row.action(self, out, **data) if row.action is not None else None
                self._arrive(row, before, reached)
                return
        raise WorkSessionError(f"no row of the table takes {event.name} in {self.state.name}")

    def _arrive(self, row: Row, before: State, reached: State | None) -> None:
        if reached is None:
            if len(row.to) != 1 or row.to[0] in (Next.WRITTEN, Next.AS_LEAVE):
                raise WorkSessionError(f"the row {row.describe()} needs its action's outcome")
            reached = self._resolve(row.to[0], before)
        elif reached not in self._allowed(row, before):
            raise WorkSessionError(f"the row {row.describe()} cannot reach {reached.name}")
        if reached not in ASKING:
            self._question = None
        self.state = reached

    def _resolve(self, target: State | Next, before: State) -> State:
        if isinstance(target, State):
            return target
        if target is Next.STAY:
            return before
        if target is Next.BACK:
            return self._back
        return self._standing()  # Next.STANDING

    def _allowed(self, row: Row, before: State) -> frozenset[State]:
        allowed: set[State] = set()
        for target in row.to:
            if isinstance(target, State):
                allowed.add(target)
            elif target in _ALLOWED_BY:
                allowed |= _ALLOWED_BY[target]
            else:
                allowed.add(self._resolve(target, before))
        return frozenset(allowed)

    def _ask(self, out: _Out, question: Question, *, back: State) -> None:
        self._back = back
        self._question = out.question = question

    # ---- where the screen stands ----------------------------------------------------------------
    def _standing(self) -> State:
        """AS_OPENED, ON_VERSION or UNSAVED, from what the screen holds."""
        self._remember_valid()
        last = self._last_valid
        if last is not None and last.on_version:
            return State.ON_VERSION
        observed = tuple(self.screen.observations)
        if self.records is None and observed == self._exported:
            observed = ()  # exported as CSV: kept outside vetfluid
        if observed and observed == self._kept_elsewhere:
            observed = ()  # kept in the records used before a change of records
        if observed or self._opened_unsaved:
            return State.UNSAVED
        if last is not None and (last.request, self.screen.acknowledged) != self._yardstick:
            return State.UNSAVED
        return State.AS_OPENED

    def _remember_valid(self) -> None:
        """The last valid plan and whether it was the saved version: where observations
        go while the plan cannot be built (a weight being retyped). Meanwhile a measurement
        removed or added changes its outputs: it stays the saved version only while they
        still follow from what is recorded."""
        if self.screen.plan is not None:
            self._last_valid = _LastValid(self.screen.plan.request, self.on_saved_version())
        elif self._last_valid is not None and self._last_valid.on_version:
            request = self._last_valid.request
            self._last_valid = _LastValid(request, self._outputs_still_follow(request))

    def _outputs_still_follow(self, request: PlanRequest) -> bool:
        """Whether ``request`` with the ins-and-outs outputs as they now stand is still what
        reopening the saved version builds."""
        from vetfluid.course.observations import follows_saved_request

        inputs = self.screen.inputs
        try:
            now = replace(
                request,
                ins_and_outs_period_h=inputs.get("ins_and_outs_period_h"),
                measured_outputs=tuple(inputs.get("measured_outputs") or ()),
            )
        except VetfluidError:
            return False
        saved = self.saved
        return saved is not None and follows_saved_request(
            now, saved.request, self.screen.observations
        )

    def _observation_records(self) -> list[dict]:
        from vetfluid.course.observations import observation_record

        return [observation_record(o) for o in self.screen.observations]

    # ---- actions: what the screen shows ----------------------------------------------------------
    def _begin_opening(self, out: _Out, *, request: PlanRequest | None) -> None:
        """A plan replaced the screen: what was announced for it, or (a plan put straight
        into the inputs) a plan kept elsewhere, of the same patient."""
        announced = self._next
        self._next = None
        if announced is None or not (announced.kind is Kind.REPLAN or announced.request is request):
            announced = Opening(request=request, patient_id=self.patient_id)
        self._opening = announced
        if announced.kind is not Kind.REPLAN:
            if announced.patient_id != self.patient_id or announced.kind is not Kind.KEPT:
                self.known_latest = announced.known_latest
            if announced.patient_id != self.patient_id or announced.patient_mark is not None:
                self._patient_mark = announced.patient_mark
                self._database_id = announced.database_id
            self.patient_id = announced.patient_id
        self._version_held = None
        self._kept_elsewhere = ()
        self.saved, self._last_valid, self._exported, self._trouble = None, None, (), ""
        self._opened_request = request
        self._opened_unsaved = announced.kind in (Kind.DRAFT, Kind.REPLAN)
        self.tag = self._new_tag()
        restored, self._retag = self._retag, None
        if restored is not None and announced.kind is Kind.DRAFT:
            try:  # the restored plan owns the draft now: saving it as a version clears it
                self.records.save_draft({**restored, "tag": self.tag})
            except RecordsError:
                pass  # the draft stays as it was, offered again at the next start

    def _take_yardstick(self, out: _Out) -> None:
        """The first plan built from what was opened, and its reasons, are what unsaved
        work is measured against; a saved version is named with what it stores."""
        opening, plan, reasons = self._opening, self.screen.plan, self.screen.acknowledged
        if opening.kind is Kind.VERSION:
            from vetfluid.course.observations import observation_record

            self.saved = SavedVersion(
                row_id=opening.version_id, request=opening.request, acknowledged=reasons
            )
            self._version_held = [observation_record(o) for o in opening.observations or ()]
        opened = plan.request if plan is not None and not self._opened_unsaved else None
        self._yardstick = (opened, reasons if opened is not None else {})
        self._remember_valid()
        if opening.kind is Kind.VERSION and self._last_valid is None:
            self._last_valid = _LastValid(opening.request, True)  # it does not build now
        self._note_change(out)

    def _note_change(self, out: _Out) -> None:
        self._remember_valid()
        if self.records is not None:
            self._unwritten = True
            out.autosave = Autosave.START  # written two seconds after the last change

    # ---- actions: writing ------------------------------------------------------------------------
    def _write(self, out: _Out) -> State:
        return self._write_work(out, closed=False)

    def _write_while_asking(self, out: _Out) -> None:
        """The autosave while a question is open writes as usual (marked closed while the
        close question is open); the question returns to what it reached."""
        self._back = self._write_work(out, closed=self.state is State.ASKING_CLOSE)

    def _write_work(self, out: _Out, *, closed: bool) -> State:
        """Observations on the unchanged saved version go into it; unsaved work into the
        draft (with the last plan that could be built); otherwise this plan's own draft is
        cleared. A write that fails is retried and leaves NOT_WRITTEN."""
        self._unwritten = False
        self._remember_valid()
        last = self._last_valid
        request, on_version = (
            (last.request, last.on_version) if last else (self._opened_request, False)
        )
        try:
            if on_version:
                outcome = self._write_to_version(out, request, closed=closed)
            elif self._standing() is State.UNSAVED:
                self._save_draft(out, self._draft(request, closed=closed))
                outcome = State.UNSAVED
            else:
                if self._draft_is_ours(out):
                    self.records.clear_draft()
                outcome = State.AS_OPENED
        except RecordsError as exc:
            self._trouble = exc.one_line()
            out.status = f"Not saved (trying again): {self._trouble}"
            out.autosave = Autosave.START
            return State.NOT_WRITTEN
        if outcome is not State.VERSION_REFUSED:
            self._trouble = ""
        if self.records.last_set_aside is not None:
            kept, self.records.last_set_aside = self.records.last_set_aside, None
            out.message(set_aside_words(kept))
        return outcome

    def _write_to_version(self, out: _Out, request: PlanRequest, *, closed: bool) -> State:
        """Observations recorded on the saved version go into it; while it refuses them the
        draft keeps them for it (with what it held, so the user's removals can be told
        from later additions) and they are retried. Raises RecordsError when the draft
        cannot take them either."""
        row_id = self.saved.row_id
        screen = self._observation_records()
        try:
            written = self._held_differs(screen)
            # only this screen's additions and removals: other workstations' stand
            merged = self.records.merge_observations(
                version_id=row_id, observations=screen, based_on=self._version_held,
                database_id=self._bound_database(),
            )  # fmt: skip
            self._version_held = screen
        except RecordsReplaced:
            self._records_replaced(out)
            self._save_draft(out, self._draft(request, closed=closed))
            return State.UNSAVED
        except RecordsError as exc:
            self._trouble = exc.one_line()
            try:
                held = self.records.observations(row_id)
            except RecordsError:
                held = None
            content = self._draft(request, closed=closed, for_version=row_id)
            self._save_draft(out, {**content, "version_had": held})
            out.status = (
                "Observations kept in the draft; not yet in the saved version (trying "
                f"again): {self._trouble}"
            )
            out.autosave = Autosave.START
            return State.VERSION_REFUSED
        if written:
            out.status = "Observations saved with the plan version."
        if merged.kept_once:
            out.message(kept_once_words(merged, "this plan version"))
        if self._draft_is_ours(out):
            self.records.clear_draft()  # its edits were undone, or it held what is written now
        return State.ON_VERSION

    def _held_differs(self, screen: list[dict]) -> bool:
        """Whether the screen's observations differ from what the version held as last
        read (unknown: they may)."""
        from collections import Counter

        from vetfluid.records.store import observation_key

        if self._version_held is None:
            return True
        return Counter(map(observation_key, screen)) != Counter(
            map(observation_key, self._version_held)
        )

    def _save_draft(self, out: _Out, content: dict) -> None:
        """Replace the draft. Observations another plan's draft keeps for a saved version
        are written into that version first: replacing the draft would lose them."""
        self._write_back_left(out)
        self.records.save_draft(content)

    def _write_back_left(self, out: _Out) -> None:
        try:
            stored = self.records.draft()
        except DraftSetAside as exc:
            out.message(set_aside_words(exc.path))
            return
        except RecordsError:
            return  # unreadable and still in place: save_draft refuses to replace it
        if not stored or stored.get("tag") == self.tag:
            return
        try:
            version = self._version_behind_in(stored)
        except RecordsError as exc:
            raise RecordsError(
                "the draft keeps observations for a saved version that cannot be read now, "
                f"so it is not replaced: {exc.one_line()}"
            ) from exc
        observations = stored.get("observations")
        if version is None or not isinstance(observations, list):
            return
        held = stored.get("version_had")
        try:
            merged = self.records.merge_observations(
                version_id=stored["for_version"], observations=observations,
                based_on=held if isinstance(held, list) else None,
            )  # fmt: skip
        except RecordsError as exc:
            raise RecordsError(
                f"the observations kept for version {version.number} of "
                f"{version.patient_name} could not be written to it, and the draft keeps "
                f"them: {exc.one_line()}"
            ) from exc
        out.status = (
            f"Wrote {merged.added} observation(s) kept for version {version.number} of "
            f"{version.patient_name} into it."
        )
        if merged.kept_once:
            out.message(kept_once_words(
                merged, f"version {version.number} of {version.patient_name}"))  # fmt: skip

    def _draft(
        self, request: PlanRequest | None, *, closed: bool, for_version: int | None = None
    ) -> dict:
        """What the draft keeps; ``closed``: left on purpose (not a crash); ``for_version``:
        the saved version (its row) that could not take the observations."""
        from vetfluid.records.serialize import request_to_dict

        return {
            "for_version": for_version,
            "request": request_to_dict(request) if request is not None else None,
            "acknowledged": self.screen.acknowledged,
            "acknowledged_for": self.screen.acknowledged_for,
            "observations": self._observation_records(),
            "patient_id": self.patient_id,
            "patient": self._patient_mark if self.patient_id is not None else None,
            "database_id": self._database_id if self.patient_id is not None else None,
            "known_latest": self.known_latest,
            "closed": closed,
            "tag": self.tag,
        }

    def _draft_is_ours(self, out: _Out) -> bool:
        """Whether the stored draft is this plan's; one that cannot be read is nobody's (it
        is set aside here, or when a draft is next saved, :meth:`Records.save_draft`)."""
        try:
            draft = self.records.draft()
        except DraftSetAside as exc:
            out.message(set_aside_words(exc.path))
            return False
        except RecordsError as exc:  # stays where it is: said, and tried again later
            out.status = f"The draft left last time: {exc.one_line()}"
            return False
        return bool(draft) and draft.get("tag") == self.tag

    def _version_behind_in(self, draft: dict) -> _VersionBehind | None:
        """The saved version the draft holds observations for, while it is in the records."""
        row_id, patient_id = draft.get("for_version"), draft.get("patient_id")
        if type(row_id) is not int or type(patient_id) is not int:
            return None
        if self._binds(draft) is False:
            return None  # its ids are another database's: offered as a plan, not written
        try:
            version = next((v for v in self.records.versions(patient_id) if v.id == row_id), None)
            name = self.records.patient(patient_id).name if version else ""
        except RecordsError:
            raise  # cannot tell (a damaged page): the caller keeps the draft as it is
        except (LookupError, VetfluidError):
            return None
        return None if version is None else _VersionBehind(patient_id, version.version, name)

    # ---- actions: saving -----------------------------------------------------------------------
    def _say_no_records(self, out: _Out, **_: Any) -> None:
        out.message(NO_RECORDS_FILE, warning=False)

    def _say_no_plan(self, out: _Out, **_: Any) -> None:
        out.message(
            "The plan cannot be saved until it can be built: "
            f"{self.screen.problem or 'choose a species and a weight'}.",
            warning=False,
        )

    def _ask_for_patient(self, out: _Out, **_: Any) -> None:
        out.ask_patient = True

    def _save(
        self, out: _Out, *, patient: NewPatient | None, author: str, with_observations: bool
    ) -> State | None:
        """The plan as the patient's next version, with the observations on it (one
        transaction); this plan's draft is cleared (another plan's stays). The state the
        work reached: ON_VERSION when saved; None when refused (it stays where it was); the
        records replaced meanwhile: the ids dropped and the work kept as the draft, so
        UNSAVED (NOT_WRITTEN when the draft cannot take it, retried)."""
        plan, reasons = self.screen.plan, self.screen.acknowledged
        kept = self._observation_records() if with_observations else []
        self.records.reach()  # a server that could not be reached: tried now, as asked
        if self.patient_id is not None and patient is None and not self._still_our_patient(out):
            return None
        try:
            if self.patient_id is None:
                self.records.read_identity()  # the new patient's database, as it is now
                self.patient_id = self.records.add_patient(
                    name=patient.name, species_id=plan.request.species_id,
                    client_ref=patient.client_ref,
                )  # fmt: skip
                self.known_latest = 0
                self._bind(self.records.patient(self.patient_id))
            saved = self.records.save_new_version(
                patient_id=self.patient_id, plan=plan, acknowledged=reasons, author=author,
                observations=kept, known_latest=self.known_latest,
                database_id=self._bound_database(),
            )  # fmt: skip
        except RecordsReplaced:
            self._records_replaced(out)
            out.ask_patient = True
            out.autosave = Autosave.START
            try:
                self._save_draft(out, self._draft(plan.request, closed=False))
            except RecordsError as exc:
                self._trouble = exc.one_line()
                out.message(f"The draft could not keep it: {exc}; the plan stays on screen.")
                out.status = f"Not saved (trying again): {self._trouble}"
                return State.NOT_WRITTEN
            self._unwritten, self._trouble = False, ""
            return State.UNSAVED
        except (RecordsError, VetfluidError) as exc:
            out.message(f"Not saved: {exc}")
            return None
        number, self.known_latest, self._version_held = saved.number, saved.number, kept
        if saved.meanwhile:
            out.message(_meanwhile_words(saved), warning=False,
                        compare=(self.patient_id, saved.meanwhile[-1].version, number))  # fmt: skip
        out.autosave = Autosave.STOP  # what was being edited is saved, observations and all
        self._unwritten, self._trouble, self._opened_unsaved = False, "", False
        try:
            row = next(v for v in self.records.versions(self.patient_id) if v.version == number)
            self.saved = SavedVersion(row_id=row.id, request=plan.request, acknowledged=reasons)
        except (RecordsError, StopIteration):
            self.saved = None  # saved, but not read back: what is recorded goes to the draft
        self._remember_valid()
        try:
            if self._draft_is_ours(out):
                self.records.clear_draft()
        except RecordsError:
            pass  # the version holds it all; the stale draft is offered at the next start
        out.status = f"Saved as version {number}; earlier versions are kept."
        out.saved_number = number
        return State.ON_VERSION

    def _save_now(self, out: _Out, **data: Any) -> State:
        return self._save(out, **data) or self.state

    def _save_asked_for(self, out: _Out, **data: Any) -> None:
        reached = self._save(out, **data)
        if reached is not None:  # what the question returns to
            self._back = reached

    def _refresh(self, out: _Out) -> State:
        """Bring onto the screen what other workstations recorded on the saved version
        since it was last read (what this screen waits to write goes first)."""
        from collections import Counter

        from vetfluid.records.store import observation_key

        if self._unwritten:
            reached = self._write_work(out, closed=False)
            if reached is not State.ON_VERSION:
                return reached
        try:
            stored = self.records.observations(self.saved.row_id)
        except RecordsError as exc:
            out.status = f"Could not look for observations from other workstations: {exc}"
            return self.state
        readable, _ = readable_observations(stored)
        from vetfluid.course.observations import observation_record

        screen = Counter(map(observation_key, self._observation_records()))
        new = []
        for observation in readable:
            key = observation_key(observation_record(observation))
            if screen[key]:
                screen[key] -= 1
            else:
                new.append(observation)
        if new:
            out.refreshed = tuple(new)
            out.status = f"{len(new)} observation(s) recorded on another workstation were added."
            self._version_held = self._observation_records() + [observation_record(o) for o in new]
        return State.ON_VERSION

    # ---- actions: leaving ------------------------------------------------------------------------
    def _go(self, out: _Out, opening: Opening) -> None:
        """The command goes on: the window opens ``opening`` (a version with the
        observations it now holds)."""
        if opening.kind is Kind.VERSION:
            try:
                stored = self.records.observations(opening.version_id)
            except RecordsError as exc:
                out.message(f"The version could not be opened: {exc.one_line()}")
                return
            kept, unreadable = readable_observations(stored)
            opening = replace(opening, observations=tuple(kept), status=opening.status + unreadable)
        out.go, out.open, self._next = True, opening, opening

    def _go_to(self, out: _Out, *, opening: Opening) -> None:
        self._go(out, opening)

    def _go_to_waiting(self, out: _Out) -> None:
        opening, self._leaving = self._leaving, None
        self._go(out, opening)

    def _ask_to_leave(self, out: _Out, *, opening: Opening) -> None:
        self._leaving = opening
        if opening.restoring:
            text = (
                "This plan, or what was recorded on it, is not saved as a version yet.\n\n"
                "Save as a version: it goes into the patient's record (you name the patient "
                "if it has none), then the records are restored from the backup; the "
                "version is in the copy of the records kept before the restore.\n\n"
                "Keep as draft: the records are restored now; this plan waits as the draft "
                "in the restored records, and vetfluid offers it back once they open.\n\n"
                "Cancel: stay on this plan; nothing is restored."
            )
        else:
            text = (
                "This plan, or what was recorded on it, is not saved as a version yet.\n\n"
                "Save as a version: it goes into the patient's record (you name the patient "
                "if it has none), then the other plan opens.\n\n"
                "Keep as draft: the other plan opens now; this one waits as the draft, and "
                "vetfluid offers it back when it next starts. Only one draft is kept: once "
                "you change another plan without saving it, that plan becomes the draft.\n\n"
                "Cancel: stay on this plan."
            )
        self._ask(out, Question(
            asked=Asked.SAVE_OR_LEAVE,
            text=text,
            answers=(Answer.YES, Answer.NO, Answer.CANCEL), escape=Answer.CANCEL, about=self.tag,
            buttons=((Answer.YES, "Save as a version…"), (Answer.NO, "Keep as draft"),
                     (Answer.CANCEL, "Cancel")),
        ), back=self.state)  # fmt: skip

    def _lose_unkept(self, action: str) -> str:
        return (
            "The records file cannot be used, so this plan and what was recorded on it "
            f"cannot be kept: {self.problem}.\n\n{action} and lose them? To keep them, choose "
            "Cancel: File ▸ Export ▸ Plan file keeps the plan; File ▸ Export ▸ Observations "
            "as CSV keeps the observations."
        )

    def _ask_to_lose_on_leave(self, out: _Out, *, opening: Opening) -> None:
        self._leaving = opening
        self._ask(out, Question(
            asked=Asked.LOSE_UNKEPT_ON_LEAVE, text=self._lose_unkept("Leave it"),
            answers=(Answer.DISCARD, Answer.CANCEL), escape=Answer.CANCEL,
            default=Answer.CANCEL, warning=True, about=self.tag,
        ), back=self.state)  # fmt: skip

    def _save_first_to_leave(self, out: _Out) -> None:
        out.save_first = SaveFirst(with_observations=True)

    def _leave_in_draft(self, out: _Out) -> State:
        """Left on purpose: the draft is written marked as left (offered back as left, not
        as a crash); the plan stays open when it cannot be written."""
        outcome = self._write_work(out, closed=True)
        if outcome is State.NOT_WRITTEN:
            self._leaving = None
            out.message(
                f"The plan could not be kept in the draft: {self._trouble}\n\nIt stays "
                "open. Save it as a version, or try again once the problem is fixed."
            )
            return outcome
        self._go_to_waiting(out)
        return outcome

    def _stay(self, out: _Out) -> None:
        self._leaving = None

    # ---- actions: re-planning --------------------------------------------------------------------
    def _go_on(self, out: _Out, **_: Any) -> None:
        out.go = True

    def _refuse_replan(self, out: _Out) -> None:
        out.message(
            "A re-plan keeps the plan it replaces, with its observations, in the patient's "
            f"record, and the records file cannot be used: {self.problem}.\n\nNothing was "
            "re-planned."
        )

    def _wait_for_version(self, out: _Out) -> None:
        out.message(
            "The observations could not be written to the saved version: "
            f"{self._trouble}\n\nvetfluid keeps trying; re-plan once they are saved."
        )

    def _ask_to_save_before_replan(self, out: _Out, *, moved: bool = False) -> None:
        self._moved = moved
        why = (
            "The plan being replaced has moved on from its saved version with the outputs "
            "measured since. A re-plan keeps it in the patient's record as it stands (its "
            "observations stay with the version they were recorded on)."
            if moved
            else "The plan being replaced has not been saved as a version. A re-plan keeps "
            "it in the patient's record, with its observations."
        )
        self._ask(out, Question(
            asked=Asked.SAVE_MOVED_BEFORE_REPLAN if moved else Asked.SAVE_BEFORE_REPLAN,
            text=f"{why} Save it now?", answers=(Answer.SAVE, Answer.CANCEL),
            escape=Answer.CANCEL, about=self.tag,
        ), back=self.state)  # fmt: skip

    def _ask_to_save_moved(self, out: _Out) -> None:
        self._ask_to_save_before_replan(out, moved=True)

    def _save_first_to_replan(self, out: _Out) -> None:
        out.save_first = SaveFirst(with_observations=not self._moved)

    def _go_replan(self, out: _Out) -> None:
        out.go, self._next = True, Opening(kind=Kind.REPLAN)

    # ---- actions: closing ------------------------------------------------------------------------
    def _close(self, out: _Out) -> State:
        """Write what waits, marked as left; ask only when nothing could take it."""
        self._drop_question()
        out.autosave = Autosave.STOP
        outcome = self._write_work(out, closed=True)
        if outcome is not State.NOT_WRITTEN:
            self._shut(out)
            return State.CLOSED
        out.autosave = Autosave.STOP  # no retry while the question is read
        self._ask(out, Question(
            asked=Asked.CLOSE_LOSING_WORK,
            text=f"What is not saved as a version could not be written: {self._trouble}\n\n"
            "Close anyway and lose it? No keeps vetfluid open and keeps trying.",
            answers=(Answer.YES, Answer.NO), escape=Answer.NO, default=Answer.NO,
            about=self.tag,
        ), back=outcome)  # fmt: skip
        return State.ASKING_CLOSE

    def _ask_to_lose_on_close(self, out: _Out) -> None:
        self._ask(out, Question(
            asked=Asked.LOSE_UNKEPT_ON_CLOSE, text=self._lose_unkept("Close"),
            answers=(Answer.DISCARD, Answer.CANCEL), escape=Answer.CANCEL,
            default=Answer.CANCEL, warning=True, about=self.tag,
        ), back=self._drop_question())  # fmt: skip

    def _drop_question(self) -> State:
        """Closing while a question is open (a logout): the question lapses, its late
        answer changes nothing, and an offer stays for the next start. Returns the state
        the work stands in."""
        if self.state in ASKING:
            self.state, self._offer, self._next = self._back, None, None
        return self.state

    def _shut(self, out: _Out) -> None:
        if self.records is not None:
            self.records.close()
            self.records = None
        out.go, out.autosave = True, Autosave.STOP

    def _keep_trying(self, out: _Out) -> None:
        out.autosave = Autosave.START

    # ---- actions: the draft left last time -------------------------------------------------------
    def _look(self, out: _Out, *, only: frozenset[str] | None = None) -> State:
        """Offer back the plan that was being edited when vetfluid last stopped, or the
        observations a saved version could not take. A draft that cannot be restored is
        set aside in a file, never dropped. ``only``: a draft of other plans stays, not
        offered now (offered at the next start)."""
        try:
            draft = self.records.draft()
        except DraftSetAside as exc:  # unreadable: in a file now, nothing to restore
            out.message(set_aside_words(exc.path))
            return self.state
        except RecordsError as exc:  # unreadable and still in place
            out.message(f"The plan last worked on: {exc.one_line()}.")
            return self.state
        if not draft or (only is not None and draft.get("tag") not in only):
            return self.state
        try:
            request, observations = draft_contents(draft)
        except (VetfluidError, KeyError, TypeError, ValueError) as exc:
            self._set_draft_aside(out, f"could not be restored ({exc})")
            return self.state
        try:
            version = self._version_behind_in(draft)
        except RecordsUnreachable:  # said at the start: not again
            version = None
            out.message(
                "The draft keeps observations for a saved version, which cannot be read while "
                "the records server cannot be reached: it is offered as a plan, with them.",
                warning=False,
            )
        except RecordsError as exc:  # offered as a plan to restore: nothing is dropped
            version = None
            out.message(f"The version the draft's observations belong to: {exc.one_line()}.")
        self._offer = _Offer(draft, request, observations, version)
        if version is not None:
            asked, text = (
                Asked.WRITE_BACK,
                (
                    f"Observations recorded on version {version.number} of {version.patient_name} "
                    "could not be written to it when vetfluid last ran; the draft kept them. "
                    "Write them to that version now? No discards them."
                ),
            )
        elif draft.get("closed"):
            asked, text = (
                Asked.RESTORE_LEFT,
                (
                    "The plan last worked on was left, or vetfluid was closed, before it was "
                    f"saved as a version{self._which_plan(draft, request)}. Restore it? No "
                    "discards it."
                ),
            )
        else:
            asked, text = (
                Asked.RESTORE_CRASHED,
                (
                    "vetfluid stopped unexpectedly while a plan was being edited"
                    f"{self._which_plan(draft, request)}. Restore it? The last few seconds "
                    "of typing may be missing. No discards it."
                ),
            )
        # Esc (or closing the box) restores: only an explicit No throws the work away
        self._ask(out, Question(
            asked=asked, text=text, answers=(Answer.YES, Answer.NO), escape=Answer.YES,
            about=str(draft.get("tag")),
        ), back=self.state)  # fmt: skip
        return State.OFFERING

    def _which_plan(self, draft: Mapping, request: PlanRequest | None) -> str:
        """The plan a draft holds, as asked about: ": Rex (Dog), 24.0 kg" ("" when it
        holds no plan yet)."""
        from vetfluid.tables.species import load_table

        mark = draft.get("patient")
        parts = [self._who(mark)] if isinstance(mark, Mapping) else []
        if request is not None:
            if not parts:
                kind = load_table().species_by_id.get(request.species_id)
                parts.append(kind.common_name if kind else request.species_id)
            parts.append(f"{request.weight_kg:g} kg")
        return f": {', '.join(parts)}" if parts else ""

    def _set_draft_aside(self, out: _Out, why: str) -> None:
        try:
            kept = self.records.set_aside_draft()
        except RecordsError as exc:
            out.message(f"The plan last worked on {why}: {exc.one_line()}.")
            return
        out.message(
            f"The plan last worked on {why}; it was set aside as {kept}. Nothing was restored."
        )

    def _say_offered_later(self, out: _Out, **_: Any) -> None:
        out.status = (
            "The draft left last time is offered at the next start: this plan's work "
            "could not be written yet."
        )

    def _restore(self, out: _Out) -> None:
        """The draft's plan, reasons and observations go back on screen, unsaved until
        saved; the draft becomes this plan's when it opens."""
        offer, self._offer = self._offer, None
        draft = offer.draft
        kept, unreadable = readable_observations(offer.observations)
        wording, patient = draft.get("acknowledged_for"), draft.get("patient_id")
        mark, database = draft.get("patient"), draft.get("database_id")
        if type(patient) is int and self._binds(draft) is False:
            out.message(self._other_records_words(mark, database=database))
            patient, mark, database = None, None, None
        self._retag = draft
        opening = Opening(
            kind=Kind.DRAFT, request=offer.request,
            acknowledged=draft.get("acknowledged") or {},
            acknowledged_for=wording if isinstance(wording, dict) else None,  # older drafts
            observations=tuple(kept), patient_id=patient if type(patient) is int else None,
            status="Restored the plan that was being edited." + unreadable,
            known_latest=known if type(known := draft.get("known_latest")) is int else None,
            patient_mark=mark if isinstance(mark, dict) else None,
            database_id=database if isinstance(database, str) else None,
        )  # fmt: skip
        out.go, out.open, self._next = True, opening, opening

    def _write_back(self, out: _Out) -> State:
        """The observations a saved version could not take go into it at once (whether or
        not it still builds), then that version is opened as by LEAVE; the draft stays
        when they cannot be written."""
        offer, self._offer = self._offer, None
        draft, version = offer.draft, offer.version
        held = draft.get("version_had")
        try:
            merged = self.records.merge_observations(
                version_id=draft["for_version"], observations=offer.observations,
                based_on=held if isinstance(held, list) else None,
                database_id=self.records.database_id,  # as checked when it was offered
            )  # fmt: skip
            self.records.clear_draft()
        except RecordsError as exc:
            out.message(
                f"The observations could not be written to version {version.number}: "
                f"{exc.one_line()}\n\nThe draft keeps them; they are offered again at the "
                "next start."
            )
            return self._back
        self.state = self._back
        status = (
            f"Wrote {merged.added} observation(s) to version {version.number} of "
            f"{version.patient_name}."
        )
        out.status = status
        if merged.kept_once:
            out.message(kept_once_words(
                merged, f"version {version.number} of {version.patient_name}"))  # fmt: skip
        opening = self._version_opening(out, version.patient_id, version.number, status=status)
        if opening is not None:
            self._dispatch(Event.LEAVE, out, {"opening": opening})
        return self.state

    def _decline(self, out: _Out) -> None:
        self._offer = None
        try:
            self.records.clear_draft()
        except RecordsError as exc:  # declined all the same: offered again next start
            out.status = f"The draft could not be cleared: {exc.one_line()}"

    def _version_opening(
        self, out: _Out, patient_id: int, number: int, *, status: str | None = None
    ) -> Opening | None:
        """A saved version to open, checked before anything is left: one that cannot be
        read as it was saved changes nothing."""
        from vetfluid.records.serialize import request_from_dict

        if self.records is None:
            out.message(NO_RECORDS_FILE, warning=False)
            return None
        try:
            versions = self.records.versions(patient_id)
            chosen = next((v for v in versions if v.version == number), None)
            latest = versions[-1].version if versions else 0
            row = self.records.patient(patient_id)
            name = row.name
        except VetfluidError as exc:  # a damaged page, a patient no longer there
            out.message(f"Version {number} could not be read from the records: {exc}")
            return None
        if chosen is None:
            out.message(f"There is no version {number} of {name} in the records.")
            return None
        try:
            stored = request_from_dict(chosen.request)
        except InputError as exc:
            out.message(
                f"Version {number} cannot be opened as it was saved: {exc.one_line()}.\n\n"
                "It stays in the records unchanged; start a new version from the patient's "
                "current findings."
            )
            return None
        # what each warning said when the version was saved: its reason covers that only
        said = {f.get("code"): f.get("message") for f in chosen.plan.get("findings", ())}
        wording = {code: said[code] for code in chosen.acknowledged if code in said}
        return Opening(
            kind=Kind.VERSION, request=stored, acknowledged=chosen.acknowledged,
            acknowledged_for=wording, patient_id=patient_id, version_id=chosen.id,
            status=status or f"Opened {name}, version {number}.", known_latest=latest,
            patient_mark=_patient_mark(row), database_id=self.records.database_id,
        )  # fmt: skip

    # ---- the patient a draft's id belongs to -----------------------------------------------------
    def _bind(self, row: Any) -> None:
        self._patient_mark, self._database_id = _patient_mark(row), self.records.database_id

    def _binds(self, draft: Mapping) -> bool | None:
        """Whether the patient id a draft (or this screen) holds is that patient in these
        records: the same database, or (other records, restored from a backup since, or no
        database named: a draft an earlier vetfluid wrote) a patient with the same name,
        species and time of adding; an id alone never binds. None: cannot tell now (the
        server is not reached)."""
        database, mark = draft.get("database_id"), draft.get("patient")
        if self.records.database_id is None:
            return None
        if database == self.records.database_id:
            return True
        try:
            row = self.records.patient(draft.get("patient_id"))
        except InputError:
            return False  # no such patient here
        except RecordsError:
            return None
        return isinstance(mark, Mapping) and _patient_mark(row) == dict(mark)

    @staticmethod
    def _who(mark: object) -> str:
        """The patient a mark names, in words: "Rex (Dog)"."""
        from vetfluid.tables.species import load_table

        if not isinstance(mark, Mapping):
            return "a patient"
        kind = load_table().species_by_id.get(mark.get("species_id"))
        return f"{mark.get('name')} ({kind.common_name if kind else mark.get('species_id')})"

    def _other_records_words(self, mark: object, *, database: object = "") -> str:
        """Why a draft's (or the screen's) patient id is dropped; ``database`` None: it
        never named its records (an earlier vetfluid's draft)."""
        who = self._who(mark)
        if database is None:
            return (
                f"This draft was written for {who} by an earlier vetfluid, which did not note "
                "which records the patient was in, and the patient with that number here "
                "cannot be told to be the same one. It is restored without a patient: saving "
                "it asks which patient it is."
            )
        return (
            f"This draft was written for {who} in other records: a database restored from a "
            "backup since, or another one. Patient numbers there belong to other patients "
            "here, so it is restored without a patient: saving it asks which patient it is."
        )

    def _still_our_patient(self, out: _Out) -> bool:
        """Before a save: the patient on screen is still the one its id names in these
        records (else the id is dropped, the user told and asked for the patient)."""
        binds = self._binds({"database_id": self._database_id, "patient": self._patient_mark,
                             "patient_id": self.patient_id})  # fmt: skip
        if binds is not False:
            if binds:  # the same database, or the same patient in it after a restore
                self._database_id = self.records.database_id
            return True
        self._pending.append(Message(text=self._other_records_words(
            self._patient_mark, database=self._database_id)))  # fmt: skip
        self.patient_id, self.known_latest = None, None
        self._patient_mark = self._database_id = None
        out.ask_patient = True
        return False

    def _bound_database(self) -> str | None:
        """The database the screen's patient and version ids were read in (checked again by
        each write that uses them)."""
        return self._database_id or self.records.database_id

    def _records_replaced(self, out: _Out) -> None:
        """The records were replaced under the screen (a backup restored into them): its
        patient and version ids may now be other patients', so they are dropped, as for a
        draft from other records; the work stays on screen, unsaved, kept by the caller in
        the draft, and saving it asks which patient it is."""
        who = self._who(self._patient_mark)
        self.patient_id, self.known_latest, self.saved, self._version_held = None, None, None, None
        self._patient_mark = self._database_id = None
        self._opened_unsaved, self._kept_elsewhere = True, ()
        if self._last_valid is not None:
            self._last_valid = _LastValid(self._last_valid.request, False)
        out.message(
            f"The records were replaced while this plan of {who} was open: a backup was "
            f"restored into {self.records.where}, or they are other records now. Their "
            "patient and version numbers may now belong to other patients, so nothing was "
            "written to them.\n\nThe work on screen is kept as a draft; saving it asks which "
            "patient it is."
        )

    # ---- actions: with no records file -----------------------------------------------------------
    def _kept_in_file(self, out: _Out) -> None:
        """Kept in a plan file: no longer a plan that would be lost."""
        plan = self.screen.plan
        if plan is not None:
            self._yardstick = (plan.request, self.screen.acknowledged)

    def _kept_in_csv(self, out: _Out) -> None:
        self._exported = tuple(self.screen.observations)


# ---- the table ---------------------------------------------------------------------------------
@dataclass(frozen=True)
class Guard:
    words: str
    test: Callable[[WorkSession, dict], bool]

    def holds(self, work: WorkSession, data: dict) -> bool:
        return self.test(work, data)


@dataclass(frozen=True)
class Row:
    states: frozenset[State]
    events: frozenset[Event]
    to: tuple[State | Next, ...]
    action: Callable[..., State | None] | None = None
    when: Guard = Guard("", lambda _w, _d: True)
    written: str = ""  # what is written to the records, in words
    says: str = ""  # what the window is told to do, in words

    def describe(self) -> str:
        return f"({_states_words(self.states)}, {_events_words(self.events)})"


def _row(states, events, to, action=None, when=None, *, written="", says="") -> Row:  # noqa: ANN001
    def as_set(given):  # noqa: ANN001, ANN202
        return frozenset(given) if isinstance(given, (set, frozenset)) else frozenset({given})

    targets = to if isinstance(to, tuple) else (to,)
    return Row(as_set(states), as_set(events), targets, action, when or Row.when, written, says)


NO_RECORDS = Guard("no records file", lambda w, _: w.records is None)
NO_PLAN = Guard("no plan builds", lambda w, _: w.screen.plan is None)
NOTHING_UNSAVED = Guard("nothing unsaved", lambda w, _: not w.has_unsaved_work())
UNSAVED_NO_RECORDS = Guard(
    "no records file, unsaved work", lambda w, _: w.records is None and w.has_unsaved_work()
)
NO_PATIENT = Guard(
    "no patient yet, none named", lambda w, d: w.patient_id is None and d["patient"] is None
)
VERSION_NOT_WRITTEN = Guard(
    "on the saved version, its observations not written",
    lambda w, _: w.state in TROUBLE and w.on_saved_version(),
)
NOT_THE_VERSION = Guard("not the saved version", lambda w, _: not w.on_saved_version())
OUTPUTS_MOVED = Guard(
    "its measured outputs moved on from the version",
    lambda w, _: w.screen.plan.request != w.saved.request,
)
NOTHING_WRITTEN = Guard("nothing could be written", lambda w, _: w.state is State.NOT_WRITTEN)
FOR_A_VERSION = Guard(
    "observations kept for a saved version", lambda w, _: w._offer.version is not None
)

E, S, N = Event, State, Next
W = WorkSession
TABLE: tuple[Row, ...] = (
    # closed: nothing changes any more
    _row(S.CLOSED, E.CLOSE, N.STAY, W._go_on, says="goes on"),
    _row(S.CLOSED, frozenset(Event) - {E.CLOSE}, N.STAY),
    # what the screen shows
    _row(WORKING, E.OPENED, S.OPENING, W._begin_opening,
         written="a restored draft is made this plan's"),
    _row(S.OPENING, E.BUILT, N.STANDING, W._take_yardstick,
         says="the plan built is the yardstick; autosave started"),
    _row(S.OPENING, E.CHANGED, N.STAY),
    _row(CLEAR, {E.BUILT, E.CHANGED}, N.STANDING, W._note_change, says="autosave started"),
    _row(TROUBLE | ASKING, {E.BUILT, E.CHANGED}, N.STAY, W._note_change,
         says="autosave started"),
    # the autosave
    _row(WORKING | ASKING, E.AUTOSAVE, N.STAY, when=NO_RECORDS),
    _row(WORKING, E.AUTOSAVE, N.WRITTEN, W._write,
         written="observations into the unchanged saved version (refused: into the draft, "
         "for it); else unsaved work into the draft; else this plan's own draft cleared",
         says="status; refused or not written: autosave restarted (a retry)"),
    _row(ASKING, E.AUTOSAVE, N.STAY, W._write_while_asking,
         written="as above (marked left while the close question is open)",
         says="as above"),
    # saving a version
    _row(WORKING | SAVING, E.SAVE, N.STAY, W._say_no_records, NO_RECORDS,
         says="message: no records file"),
    _row(WORKING | SAVING, E.SAVE, N.STAY, W._say_no_plan, NO_PLAN,
         says="message: cannot be saved until it builds"),
    _row(WORKING | SAVING, E.SAVE, N.STAY, W._ask_for_patient, NO_PATIENT,
         says="asks for the patient"),
    _row(WORKING, E.SAVE, (S.ON_VERSION, N.STAY, S.UNSAVED, S.NOT_WRITTEN), W._save_now,
         written="the version with its observations (a new patient first); this plan's "
         "draft cleared (the records replaced meanwhile: nothing by id; the work into the "
         "draft)", says="status; autosave stopped (another version saved meanwhile: "
         "message offering to compare them; refused: message, stays; the records replaced: "
         "message, UNSAVED (the draft refused too: NOT_WRITTEN), autosave restarted, asks "
         "for the patient)"),
    _row(SAVING, E.SAVE, N.STAY, W._save_asked_for, written="as above",
         says="as above; the question returns to the state reached"),
    # leaving for another plan
    _row(WORKING, E.LEAVE, N.STAY, W._go_to, NOTHING_UNSAVED, says="goes on: opens it"),
    _row(WORKING, E.LEAVE, S.ASKING_LOSE_ON_LEAVE, W._ask_to_lose_on_leave, NO_RECORDS,
         says="asks Discard / Cancel"),
    _row(WORKING, E.LEAVE, S.ASKING_LEAVE, W._ask_to_leave,
         says="asks Save as a version… / Keep as draft / Cancel"),
    _row(S.ASKING_LEAVE, E.YES, S.SAVING_TO_LEAVE, W._save_first_to_leave,
         says="save first (the window asks for the patient)"),
    _row(S.ASKING_LEAVE, E.NO, N.WRITTEN, W._leave_in_draft,
         written="the draft, marked left", says="goes on (not written: message, stays)"),
    _row(S.ASKING_LEAVE, E.CANCEL, N.BACK, W._stay),
    _row(S.SAVING_TO_LEAVE, E.SAVE_DONE, N.BACK, W._go_to_waiting, says="goes on: opens it"),
    _row(S.SAVING_TO_LEAVE, E.SAVE_FAILED, N.BACK, W._stay),
    _row(S.ASKING_LOSE_ON_LEAVE, E.DISCARD, N.BACK, W._go_to_waiting,
         says="goes on: opens it, the work dropped"),
    _row(S.ASKING_LOSE_ON_LEAVE, E.CANCEL, N.BACK, W._stay),
    # re-planning
    _row(WORKING, E.REPLAN, N.STAY, W._go_on, NO_PLAN, says="goes on (nothing to re-plan from)"),
    _row(WORKING, E.REPLAN, N.STAY, W._refuse_replan, NO_RECORDS,
         says="message: nothing re-planned"),
    _row(WORKING, E.REPLAN, N.STAY, W._wait_for_version, VERSION_NOT_WRITTEN,
         says="message: re-plan once they are written"),
    _row(WORKING, E.REPLAN, S.ASKING_REPLAN, W._ask_to_save_before_replan, NOT_THE_VERSION,
         says="asks Save / Cancel"),
    _row(WORKING, E.REPLAN, S.ASKING_REPLAN, W._ask_to_save_moved, OUTPUTS_MOVED,
         says="asks Save it as it stands / Cancel"),
    _row(WORKING, E.REPLAN, N.STAY, W._go_replan, says="goes on: the next plan is the re-plan"),
    _row(S.ASKING_REPLAN, E.SAVE_ANSWER, S.SAVING_TO_REPLAN, W._save_first_to_replan,
         says="save first (moved on: without its observations)"),
    _row(S.ASKING_REPLAN, E.CANCEL, N.BACK),
    _row(S.SAVING_TO_REPLAN, E.SAVE_DONE, N.BACK, W._go_replan,
         says="goes on: the next plan is the re-plan"),
    _row(S.SAVING_TO_REPLAN, E.SAVE_FAILED, N.BACK),
    # closing
    _row({S.ASKING_CLOSE, S.ASKING_LOSE_ON_CLOSE}, E.CLOSE, N.STAY,
         says="the question about closing stays open"),
    _row(WORKING | ASKING, E.CLOSE, S.ASKING_LOSE_ON_CLOSE, W._ask_to_lose_on_close,
         UNSAVED_NO_RECORDS, says="asks Discard / Cancel (an open question lapses)"),
    _row(WORKING | ASKING, E.CLOSE, S.CLOSED, W._shut, NO_RECORDS, says="closes"),
    _row(WORKING | ASKING, E.CLOSE, (S.CLOSED, S.ASKING_CLOSE), W._close,
         written="what waits, marked left; the records file closed",
         says="closes (nothing could be written: autosave stopped, asks Close anyway? Yes / No)"),
    _row(S.ASKING_CLOSE, E.YES, S.CLOSED, W._shut, written="the records file closed",
         says="closes"),
    _row(S.ASKING_CLOSE, E.NO, N.BACK, W._keep_trying, says="stays open; autosave restarted"),
    _row(S.ASKING_LOSE_ON_CLOSE, E.DISCARD, S.CLOSED, W._shut, says="closes"),
    _row(S.ASKING_LOSE_ON_CLOSE, E.CANCEL, N.BACK),
    # other workstations
    _row(S.ON_VERSION, E.REFRESH, (S.ON_VERSION, N.WRITTEN), W._refresh,
         written="what waits, first", says="adds the observations other workstations "
         "recorded on the version"),
    _row(WORKING | ASKING, E.REFRESH, N.STAY),
    # the draft left last time
    _row(WORKING, E.LOOK_AT_DRAFT, N.STAY, when=NO_RECORDS),
    _row(WORKING, E.LOOK_AT_DRAFT, N.STAY, W._say_offered_later, NOTHING_WRITTEN,
         says="status: offered at the next start"),
    _row(WORKING, E.LOOK_AT_DRAFT, (N.STAY, S.OFFERING), W._look,
         written="a draft that cannot be read or restored: moved to a file beside the "
         "records", says="asks Restore it? or Write them to that version? (Yes / No)"),
    _row(S.OFFERING, E.YES, N.AS_LEAVE, W._write_back, FOR_A_VERSION,
         written="the observations into their version; the draft cleared",
         says="opens that version (not written: message)"),
    _row(S.OFFERING, E.YES, N.BACK, W._restore, says="opens the draft's plan, unsaved"),
    _row(S.OFFERING, E.NO, N.BACK, W._decline, written="the draft cleared"),
    # kept outside the records (they matter with no records file)
    _row(WORKING, E.FILE_WRITTEN, N.STANDING, W._kept_in_file, NO_RECORDS,
         says="the plan file is the yardstick"),
    _row(WORKING, E.EXPORTED, N.STANDING, W._kept_in_csv, NO_RECORDS,
         says="the observations count as kept"),
    _row(WORKING, {E.FILE_WRITTEN, E.EXPORTED}, N.STAY),
    # an answer to a question no longer open (the window closed meanwhile)
    _row(WORKING, ANSWERS, N.STAY),
)  # fmt: skip
del E, S, N, W

_GROUPS = {
    WORKING: "working",
    ASKING: "asking",
    TROUBLE | ASKING: "VERSION_REFUSED, NOT_WRITTEN, asking",
    WORKING | ASKING: "working, asking",
    frozenset(Event) - {Event.CLOSE}: "any other",
}


def _states_words(states: frozenset) -> str:
    if states in _GROUPS:
        return _GROUPS[states]
    if WORKING < states:
        rest = ", ".join(s.name for s in State if s in states - WORKING)
        return f"working, {rest}"
    return ", ".join(s.name for s in State if s in states)


def _events_words(events: frozenset) -> str:
    if events in _GROUPS:
        return _GROUPS[events]
    if events == ANSWERS:
        return "any answer"
    return ", ".join(e.name for e in Event if e in events)


def _targets_words(targets: tuple) -> str:
    return " or ".join(t.name if isinstance(t, State) else t.value for t in targets)


def table_text(width: int = 92) -> str:
    """The transition table as wrapped text, one row a paragraph (the module text)."""
    import textwrap

    paragraphs = []
    for row in TABLE:
        when = f" [{row.when.words}]" if row.when.words else ""
        line = (
            f"{_states_words(row.states)} + {_events_words(row.events)}{when} → "
            f"{_targets_words(row.to)}. Written: {row.written or '—'}. "
            f"Window: {row.says or '—'}."
        )
        paragraphs.append(
            textwrap.fill(
                line, width, initial_indent="- ", subsequent_indent="  ", break_on_hyphens=False
            )
        )
    return "\n".join(paragraphs)


def table_markdown() -> str:
    """The transition table as a Markdown table (the module text and docs/work_keeping.md
    hold it; a test checks)."""
    lines = [
        "| state | event | when | next state | what is written | the window |",
        "|---|---|---|---|---|---|",
    ]
    for row in TABLE:
        lines.append(
            f"| {_states_words(row.states)} | {_events_words(row.events)} | {row.when.words} "
            f"| {_targets_words(row.to)} | {row.written or '—'} | {row.says or '—'} |"
        )
    return "\n".join(lines)
