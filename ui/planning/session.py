"""The one composition point of the window: the current inputs, the current plan.

Views write what the user entered into the session; the session rebuilds the
request and the plan once per event-loop turn (edits are coalesced with a
zero-delay single-shot timer) and tells every view. No clinical arithmetic
happens here: the plan comes from :func:`vetfluid.planning.plan.build_plan`.
"""

from __future__ import annotations

import re
from dataclasses import MISSING, fields, replace
from typing import Any

from PySide6.QtCore import QObject, QTimer, Signal

from vetfluid.common.errors import InputError, VetfluidError
from vetfluid.common.findings import Finding
from vetfluid.planning.plan import Plan, PlanRequest, build_plan
from vetfluid.tables.species import SpeciesTable, load_table

REQUEST_FIELDS = frozenset(f.name for f in fields(PlanRequest))
# A new patient: nothing chosen yet (no silent default species or weight).
BLANK_INPUTS: dict[str, Any] = {
    f.name: (None if f.default is MISSING else f.default) for f in fields(PlanRequest)
}


# The request's fields as the form names them, for messages (the ids are for files and logs)
FIELD_WORDS = {
    "species_id": "Species", "species": "Species", "weight_kg": "Weight", "weight": "Weight",
    "dehydration_percent": "Dehydration", "dehydration": "Dehydration",
    "dehydration_findings": "Examination findings", "replace_hours": "Replace deficit over",
    "losses_ml_per_day": "Ongoing losses", "maintenance_method": "Maintenance method",
    "fluid_id": "Fluid", "fluid": "Fluid", "bolus_fluid_id": "Bolus fluid", "route": "Route",
    "device": "Delivery", "drop_factor": "Drop factor",
    "resuscitation_boluses": "Resuscitation boluses", "body_temp_c": "Body temperature",
    "serum_na": "Serum Na", "serum_k": "Serum K", "usg": "USG",
    "urine_osmolality": "Urine osmolality", "kcl_mmol_per_l": "KCl added",
    "dextrose_percent": "Dextrose added", "start_time": "Start time", "start_date": "Start date",
    "max_na_change_per_h": "Max Na change", "syringe_size_ml": "Syringe size",
    "pcv_percent": "PCV", "total_solids_g_per_dl": "Total solids",
    "ins_and_outs_period_h": "Ins-and-outs period", "measured_outputs": "Measured outputs",
    "diuretics": "Diuretic", "diuretic": "Diuretic", "diuretic route": "Diuretic route",
    "loss_type": "Type of ongoing losses", "renal_output": "Urine output",
    "serum_hco3": "Serum bicarbonate", "bag_size_ml": "Bag size",
    "dose_interval_h": "Dose every", "max_sites_per_dose": "Sites per dose",
    "soaks_per_day": "Soaks a day", "age_weeks": "Age",
}  # fmt: skip

# what a reason opened from a file was given for, when its warning was not in the plan
WORDING_NOT_KNOWN = "(not among the warnings when this plan was opened)"


class PlanSession(QObject):
    """Holds the inputs, the plan built from them and the acknowledged warnings."""

    #: the new plan, or None while an input is invalid
    planChanged = Signal(object)
    #: a one-line message about the inputs ("" when all is well)
    problemChanged = Signal(str)
    #: the inputs were replaced as a whole (new patient, demo, file): views reload
    inputsReplaced = Signal(object)
    #: acknowledgements or readiness changed
    readinessChanged = Signal()
    #: observations were recorded or removed, or a new plan version began
    observationsChanged = Signal()
    #: the clinic overrides left out of the species table, one line each ("" when none)
    tableNoticeChanged = Signal(str)

    def __init__(self, request: PlanRequest | None = None, parent: QObject | None = None):
        super().__init__(parent)
        self._inputs: dict[str, Any] = (
            {f: getattr(request, f) for f in REQUEST_FIELDS} if request else dict(BLANK_INPUTS)
        )
        self._field_errors: dict[str, str] = {}
        self._acknowledged: dict[str, str] = {}
        # what each warning said when its reason was given: a reason covers that, no more
        self._acknowledged_for: dict[str, str] = {}
        #: reasons that lapsed because their warning changed: code → (reason, what it said)
        self.lapsed: dict[str, tuple[str, str]] = {}
        self._adopt_wording = False  # reasons opened without their wording: see replace_request
        self._ready = False
        self.observations: list = []  # vetfluid.course.observations.Observation, for this version
        self.versions: list[tuple[PlanRequest, tuple]] = []  # earlier (request, observations)
        self._saved_outputs: tuple[float | None, tuple] = (
            (request.ins_and_outs_period_h, request.measured_outputs) if request else (None, ())
        )
        self.plan: Plan | None = None
        self.problem = ""
        self.table: SpeciesTable = load_table()
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self.recompute)

    # ---- inputs ----------------------------------------------------------------------------
    @property
    def inputs(self) -> dict[str, Any]:
        return dict(self._inputs)

    def update(self, **changes: Any) -> None:
        """Change some inputs; the plan is rebuilt on the next event-loop turn."""
        unknown = set(changes) - REQUEST_FIELDS
        if unknown:
            raise KeyError(f"not a plan input: {', '.join(sorted(unknown))}")
        for name in changes:
            self._field_errors.pop(name, None)
        self._inputs.update(changes)
        self._schedule()

    def diuretics_refused(self, doses: tuple) -> InputError | None:
        """What the core says against the plan holding ``doses`` (the request's diuretics),
        checked before they are entered; None when it takes them, or when there is no plan
        to check them in yet (then the status line says what is wrong once they are)."""
        request = self.request
        if request is None:
            return None
        try:
            replace(request, diuretics=tuple(doses))  # the request checks itself on creation
        except InputError as exc:
            return exc
        return None

    def set_field_error(self, name: str, message: str) -> None:
        """A view could not read what the user typed; no plan until it is fixed."""
        self._field_errors[name] = message
        self._schedule()

    def replace_request(
        self,
        request: PlanRequest | None,
        acknowledged: dict[str, str] | None = None,
        acknowledged_for: dict[str, str] | None = None,
    ) -> None:
        """A new patient (None), a demo or an opened file: everything is replaced.

        ``acknowledged_for`` is what each reason's warning said when it was given (a
        re-plan, a draft, a saved version): a warning that now says something else needs
        its reason again. Reasons opened without it (a plan file) cover their warnings
        as the first plan built from ``request`` words them, as they were saved; a
        reason whose warning is not in that plan lapses rather than covering whatever
        the warning may say later."""
        self._inputs = (
            {f: getattr(request, f) for f in REQUEST_FIELDS} if request else dict(BLANK_INPUTS)
        )
        self._field_errors.clear()
        self._acknowledged = dict(acknowledged or {})
        self._acknowledged_for = dict(acknowledged_for or {})
        self._adopt_wording = acknowledged_for is None
        self.lapsed = {}
        # outputs measured before this session: kept for periods no new observation covers
        self._saved_outputs = (
            (request.ins_and_outs_period_h, request.measured_outputs) if request else (None, ())
        )
        self.observations = []
        self.versions = []
        self.inputsReplaced.emit(request)
        self.observationsChanged.emit()
        self.recompute()

    def reload_table(self) -> None:
        """The species table changed (a clinic override): rebuild with the new values."""
        self.table = load_table()
        self.tableNoticeChanged.emit(self.table_notice)
        self._schedule()

    @property
    def table_notice(self) -> str:
        """Each clinic override the core left out (file:line, why, what applies instead);
        past five, how many more (`vetfluid-cli species` lists them all)."""
        notices = self.table.notices
        lines = [notice.one_line() for notice in notices[:5]]
        if len(notices) > 5:
            lines.append(f"… and {len(notices) - 5} more (`vetfluid-cli species` lists them all)")
        return "\n".join(lines)

    def _schedule(self) -> None:
        self._timer.start()

    # ---- the plan --------------------------------------------------------------------------
    def recompute(self) -> None:
        """Build the request and the plan now (normally called by the coalescing timer)."""
        self._timer.stop()
        self._ready = False
        if self._field_errors:
            self._publish(None, next(iter(self._field_errors.values())))
            return
        if not self._inputs.get("species_id"):
            self._publish(None, "Choose a species to start a plan.")
            return
        if self._inputs.get("weight_kg") is None:
            self._publish(None, "Enter the body weight with its unit.")
            return
        try:
            request = PlanRequest(**self._inputs)
            plan = build_plan(request, self.table)
        except VetfluidError as exc:
            self._publish(None, self.in_words(exc))
            return
        self._publish(plan, "")

    def in_words(self, error: VetfluidError) -> str:
        """An error for the status line, its field named as the form names it
        ("Replace deficit over must be between 1 and 96 h", not ``replace_hours``)."""
        field = error.field
        if not field:
            return error.one_line()
        definition = self.table.definitions.get(field)
        words = FIELD_WORDS.get(field) or (definition.label if definition else "")
        words = words or field.replace("_", " ")
        message = error.message
        if "_" in field:  # an id, never a word of the sentence ("unknown species …" stays)
            message = re.sub(rf"\b{re.escape(field)}\b", words, message)
        text = message if words.lower() in message.lower() else f"{words}: {message}"
        return text + (f" — {error.fix}" if error.fix else "")

    def _publish(self, plan: Plan | None, problem: str) -> None:
        self.plan = plan
        if plan is not None:
            self._lapse_changed_acknowledgements(plan)
        # reasons without their wording adopt only the first plan's words: one that cannot
        # be built leaves them to lapse rather than cover whatever a later plan says
        self._adopt_wording = False
        if problem != self.problem:
            self.problem = problem
            self.problemChanged.emit(problem)
        self.planChanged.emit(plan)
        self.readinessChanged.emit()

    @property
    def request(self) -> PlanRequest | None:
        return self.plan.request if self.plan else None

    # ---- acknowledgements and readiness ---------------------------------------------------
    @property
    def acknowledged(self) -> dict[str, str]:
        return dict(self._acknowledged)

    @property
    def acknowledged_for(self) -> dict[str, str]:
        """What each acknowledged warning said when its reason was given."""
        return dict(self._acknowledged_for)

    def acknowledge(self, code: str, reason: str) -> None:
        """Record why a soft finding, as it now reads, is accepted (an empty reason
        withdraws it)."""
        self.lapsed.pop(code, None)
        if reason.strip():
            self._acknowledged[code] = reason.strip()
            shown = self.plan and next((f for f in self.plan.findings if f.code == code), None)
            if shown:
                self._acknowledged_for[code] = shown.message
        else:
            self._acknowledged.pop(code, None)
            self._acknowledged_for.pop(code, None)
        self._ready = False
        self.readinessChanged.emit()

    def _lapse_changed_acknowledgements(self, plan: Plan) -> None:
        """A reason given for one wording of a warning ("6 sites at 0.57 mL") does not
        cover another ("7 sites at 0.65 mL"): it lapses and is kept to show the user, and
        covers the warning again if it comes back to the words it was given for."""
        adopting = self._adopt_wording
        shown = {f.code: f.message for f in plan.findings}
        for code, (reason, given_for) in list(self.lapsed.items()):
            if shown.get(code) == given_for:  # e.g. a weight retyped digit by digit
                del self.lapsed[code]
                self._acknowledged[code], self._acknowledged_for[code] = reason, given_for
        for code in list(self._acknowledged):
            message, given_for = shown.get(code), self._acknowledged_for.get(code)
            if given_for is None and adopting and message is not None:
                self._acknowledged_for[code] = message  # the plan it was saved with
            elif given_for is None:
                self.lapsed[code] = (self._acknowledged.pop(code), WORDING_NOT_KNOWN)
            elif message is not None and message != given_for:
                self.lapsed[code] = (self._acknowledged.pop(code), given_for)
                del self._acknowledged_for[code]

    def blockers(self) -> list[Finding]:
        """What stops the plan being marked ready (all hard findings, unacknowledged soft)."""
        return self.plan.unacknowledged(self._acknowledged) if self.plan else []

    def mark_ready(self) -> bool:
        """Mark the plan ready if nothing blocks it; returns whether it is ready."""
        self._ready = self.plan is not None and not self.blockers()
        self.readinessChanged.emit()
        return self._ready

    @property
    def ready(self) -> bool:
        return self._ready

    # ---- observations and plan versions ------------------------------------------------------
    def add_observation(self, observation) -> None:  # noqa: ANN001 — Observation
        self.observations.append(observation)
        self.observations.sort(key=lambda o: o.hour)
        self._observed()

    def restore_observations(self, observations) -> None:  # noqa: ANN001 — Observations
        """The observations of a reopened draft or saved version (after replace_request);
        the outputs saved with it that came from them are not counted a second time."""
        from vetfluid.course.observations import outputs_not_observed

        self.observations = sorted(observations, key=lambda o: o.hour)
        period, saved = self._saved_outputs
        if period is not None and saved:
            self._saved_outputs = (
                period,
                outputs_not_observed(saved, self.observations, period_h=period),
            )
        self._observed()

    def remove_observation(self, index: int) -> None:
        del self.observations[index]
        self._observed()

    def set_ins_and_outs(self, period_h: float | None) -> None:
        """Plan by ins and outs every ``period_h`` hours from what was measured, or stop."""
        from vetfluid.course.observations import measured_outputs, outputs_agree

        saved_period, saved = self._saved_outputs
        earlier = saved if saved_period == period_h else ()  # other periods cannot be reused
        measured = (
            ()
            if period_h is None
            else measured_outputs(self.observations, period_h=period_h, earlier=earlier)
        )
        shown = self._inputs.get("measured_outputs") or ()
        if outputs_agree(measured, shown):
            measured = shown  # a reopened plan, added up again: the very plan that was saved
        self.update(ins_and_outs_period_h=period_h, measured_outputs=measured)

    def _observed(self) -> None:
        self.observationsChanged.emit()
        period = self._inputs.get("ins_and_outs_period_h")
        if period is not None:  # an ins-and-outs plan follows each measurement
            self.set_ins_and_outs(period)

    def replan_request(self) -> PlanRequest | None:
        """The request a re-plan would start from (raises InputError when nothing measured
        allows one); None without a plan."""
        from vetfluid.course.observations import replan_request

        return replan_request(self.plan, self.observations) if self.plan else None

    def replan(self, request: PlanRequest | None = None) -> None:
        """Start a new plan version from the patient's current state (``request``, when the
        caller has already worked it out with :meth:`replan_request`); keep the earlier one."""
        request = request or self.replan_request()
        if request is None:
            return
        versions = [*self.versions, (self.plan.request, tuple(self.observations))]
        self.replace_request(request, self.acknowledged, self.acknowledged_for)
        self.versions = versions
        self.observationsChanged.emit()
