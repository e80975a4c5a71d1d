"""Plan files get an extension of their own, ``.vfplan`` (issue 21), so a desktop can open
them with vetfluid by double-click (Windows associates by the last extension only, and
``.vfplan.json`` was a JSON file there). Files saved before as ``.vfplan.json`` still open;
the save dialog's overwrite question is about the file actually written."""

from __future__ import annotations

import json

import pytest
from PySide6.QtWidgets import QFileDialog, QMessageBox

from vetfluid.planning.demos import DEMOS
from vetfluid.records.request_file import read_request_file, with_suffix, write_request_file


@pytest.mark.parametrize(
    ("given", "written"),
    [
        ("rex", "rex.vfplan"),
        ("rex.vfplan", "rex.vfplan"),
        ("rex.vfplan.json", "rex.vfplan.json"),  # the name files had before: kept as asked
        ("Rex.VFPLAN", "Rex.VFPLAN"),  # Windows' names are read whatever their case
        ("Rex.Smith", "Rex.Smith.vfplan"),  # a dot of the user's own is not an extension
        ("rex.json", "rex.json.vfplan"),
    ],
)
def test_new_plan_files_end_in_vfplan(tmp_path, given, written):
    path = write_request_file(tmp_path / given, DEMOS["renal_cat"].request, {})
    assert path == tmp_path / written == with_suffix(tmp_path / given)
    assert read_request_file(path).request == DEMOS["renal_cat"].request
    assert json.loads(path.read_text(encoding="utf-8"))["format"] == "vetfluid-plan-request"


def test_the_content_is_the_same_json_whatever_the_name(tmp_path):
    new = write_request_file(tmp_path / "a", DEMOS["small_gerbil"].request, {"X": "why"})
    old = write_request_file(tmp_path / "a.vfplan.json", DEMOS["small_gerbil"].request,
                             {"X": "why"})  # fmt: skip
    assert new.read_bytes() == old.read_bytes()


@pytest.fixture()
def dialogs(monkeypatch):
    """The file dialogs answered as the user would: what the save dialog returns, and the
    filters each dialog offered."""
    offered: dict[str, str] = {}
    chosen: dict[str, str] = {}

    def run_save(dialog):  # noqa: ANN001, ANN202
        offered["save"] = ";;".join(dialog.nameFilters())
        offered["suffix"] = dialog.defaultSuffix()
        return 1

    monkeypatch.setattr(QFileDialog, "exec", run_save)
    monkeypatch.setattr(QFileDialog, "selectedFiles", lambda _dialog: [chosen["save"]])

    def open_name(_parent, _title, _folder, filters):  # noqa: ANN001, ANN202
        offered["open"] = filters
        return chosen["open"], filters

    monkeypatch.setattr(QFileDialog, "getOpenFileName", open_name)
    return offered, chosen


def _dog(qtbot, window) -> None:  # noqa: ANN001
    window.open_demo("dehydrated_dog")
    qtbot.waitUntil(lambda: window.session.plan is not None)


def test_export_saves_a_vfplan_file(qtbot, planner, dialogs, tmp_path):
    offered, chosen = dialogs
    _dog(qtbot, planner)
    chosen["save"] = str(tmp_path / "rex.vfplan")
    planner.save_file()
    assert offered["save"] == "vetfluid plan file (*.vfplan)"
    assert offered["suffix"] == "vfplan"  # added by the dialog before it asks to overwrite
    assert read_request_file(tmp_path / "rex.vfplan").request == DEMOS["dehydrated_dog"].request


def test_the_overwrite_question_is_about_the_file_written(qtbot, planner, dialogs, answer,
                                                          tmp_path):  # fmt: skip
    """A name such as "Rex.Smith" has a dot of its own, so the dialog adds no extension and
    asks nothing about "Rex.Smith.vfplan", the file written: vetfluid asks; No keeps it."""
    _, chosen = dialogs
    _dog(qtbot, planner)
    earlier = tmp_path / "Rex.Smith.vfplan"
    earlier.write_text("kept", encoding="utf-8")
    chosen["save"] = str(tmp_path / "Rex.Smith")
    answer({"Rex.Smith.vfplan already exists": QMessageBox.StandardButton.No})
    planner.save_file()
    assert earlier.read_text(encoding="utf-8") == "kept"
    assert not (tmp_path / "Rex.Smith").exists()
    answer({"Rex.Smith.vfplan already exists": QMessageBox.StandardButton.Yes})
    planner.save_file()
    assert read_request_file(earlier).request == DEMOS["dehydrated_dog"].request


def test_import_offers_both_names_and_opens_a_file_saved_before(qtbot, planner, dialogs,
                                                                answer, tmp_path):  # fmt: skip
    offered, chosen = dialogs
    request = DEMOS["renal_cat"].request
    chosen["open"] = str(write_request_file(tmp_path / "cat.vfplan.json", request, {}))
    planner.open_file()
    assert offered["open"] == "vetfluid plan file (*.vfplan *.vfplan.json)"
    qtbot.waitUntil(lambda: planner.session.plan is not None)
    assert planner.session.plan.request == request


# ---- `vetfluid sheet` and a plan file whose name starts with "-" (review of 66a3521, 3) ----
@pytest.mark.parametrize(
    "arguments",
    [
        ["--", "-dog.vfplan", "-o", "sheet.pdf"],  # refused before: "-o/--output required"
        ["-o", "sheet.pdf", "--", "-dog.vfplan"],
        ["--page", "letter", "--", "-dog.vfplan", "-o", "sheet.pdf"],
        ["./-dog.vfplan", "-o", "sheet.pdf"],
    ],
)
def test_the_sheet_prints_a_plan_file_named_with_a_dash(tmp_path, monkeypatch, capsys,
                                                        arguments):  # fmt: skip
    from ui.app import main

    monkeypatch.chdir(tmp_path)
    write_request_file(tmp_path / "-dog", DEMOS["dehydrated_dog"].request, {})
    assert main(["vetfluid", "sheet", *arguments]) == 0, capsys.readouterr().err
    assert (tmp_path / "sheet.pdf").stat().st_size > 0
    assert capsys.readouterr().out.startswith("wrote sheet.pdf (")


def test_the_sheet_takes_one_plan_file_after_double_dash(tmp_path, monkeypatch, capsys):
    from ui.app import main

    monkeypatch.chdir(tmp_path)
    with pytest.raises(SystemExit) as stopped:  # argparse's usage error, exit 2
        main(["vetfluid", "sheet", "-o", "sheet.pdf", "--", "-a.vfplan", "-b.vfplan"])
    assert stopped.value.code == 2
    assert "-b.vfplan" in capsys.readouterr().err and not (tmp_path / "sheet.pdf").exists()


def test_the_help_says_how_to_name_a_plan_file_starting_with_a_dash(capsys):
    from ui.app import USAGE, main

    assert "vetfluid sheet -- -PLAN.vfplan -o sheet.pdf" in USAGE
    with pytest.raises(SystemExit):
        main(["vetfluid", "sheet", "--help"])
    assert "vetfluid sheet -- -dog.vfplan -o sheet.pdf" in capsys.readouterr().out


def test_a_dashed_name_without_double_dash_says_how(tmp_path, monkeypatch, capsys):
    from ui.app import main

    monkeypatch.chdir(tmp_path)
    with pytest.raises(SystemExit) as stopped:
        main(["vetfluid", "sheet", "-dog.vfplan", "-o", "sheet.pdf"])
    assert stopped.value.code == 2
    assert capsys.readouterr().err.endswith(
        "vetfluid sheet: error: -dog.vfplan is not an option of vetfluid sheet — to print a "
        "plan file of that name, write vetfluid sheet -- -dog.vfplan -o sheet.pdf (or "
        "./-dog.vfplan)\n"
    )
