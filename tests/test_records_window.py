"""Records from the window: save versions, open them again, get a crashed draft back."""

from __future__ import annotations

from PySide6.QtWidgets import QMessageBox

from vetfluid.demos import DEMOS
from vetfluid.records import Records


def test_save_versions_and_open_them_again(qtbot, planner, vetfluid_home):
    window = planner
    window.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    assert window.save_version(name="Rex", client_ref="C-7", author="AB") == 1
    window.session.update(weight_kg=25.0)
    qtbot.waitUntil(lambda: window.session.plan.request.weight_kg == 25.0)
    assert window.save_version(author="AB") == 2  # same patient, next version
    window.new_patient()
    qtbot.waitUntil(lambda: window.session.plan is None)
    patient = window.records.find_patients("Rex")[0]
    window.load_version(patient.id, 1)
    qtbot.waitUntil(lambda: window.session.plan is not None)
    assert window.session.plan.request == DEMOS["dehydrated_dog"].request
    with Records.open(vetfluid_home / "records.sqlite") as db:  # a second reader sees both
        assert [v.version for v in db.versions(patient.id)] == [1, 2]


def test_a_draft_left_by_a_crash_is_offered_back(qtbot, planner, monkeypatch):
    window = planner
    window.open_demo("small_gerbil")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    window._save_draft()  # what the autosave timer does a few seconds after each edit
    window.new_patient()
    qtbot.waitUntil(lambda: window.session.plan is None)
    monkeypatch.setattr(QMessageBox, "question", lambda *a, **k: QMessageBox.StandardButton.Yes)
    assert window.offer_draft()
    qtbot.waitUntil(lambda: window.session.plan is not None)
    assert window.session.plan.request == DEMOS["small_gerbil"].request


def test_declining_the_draft_clears_it(qtbot, planner, monkeypatch):
    window = planner
    window.open_demo("renal_cat")
    qtbot.waitUntil(lambda: window.session.plan is not None)
    window._save_draft()
    monkeypatch.setattr(QMessageBox, "question", lambda *a, **k: QMessageBox.StandardButton.No)
    assert not window.offer_draft()
    assert window.records.draft() is None
