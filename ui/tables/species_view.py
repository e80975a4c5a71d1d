"""The species table on screen, with the clinic's own values (overrides).

Mirrors ``vetfluid/tables/species.py`` (the table) and ``vetfluid/tables/overrides.py`` (the
clinic's edits). Rows are species, columns their identity and then every
parameter. Nothing here computes a clinical value: the cells show what
:func:`vetfluid.tables.species.load_table` resolved, formatted by
:func:`vetfluid.common.formatting.table_value_text`; edits go to
:func:`vetfluid.tables.overrides.set_override` / :func:`~vetfluid.tables.overrides.remove_override`
through a :class:`QUndoStack` (undo and redo write the row back with
:func:`~vetfluid.tables.overrides.write_override`), and the table is reloaded from disk afterwards.

Markers (text, so they survive printing, screen readers and colour blindness):
``*`` recalled from memory (unverified), ``∴`` derived from other values,
``✎`` clinic override; values inherited from a taxon group are in italics.
"""

from __future__ import annotations

import textwrap
from collections.abc import Iterable
from functools import cache
from pathlib import Path

from PySide6.QtCore import (
    QAbstractTableModel,
    QModelIndex,
    QPersistentModelIndex,
    QSortFilterProxyModel,
    Qt,
    Signal,
)
from PySide6.QtGui import (
    QAction,
    QBrush,
    QColor,
    QFont,
    QKeySequence,
    QShortcut,
    QUndoCommand,
    QUndoStack,
)
from PySide6.QtWidgets import (
    QAbstractButton,
    QAbstractItemView,
    QComboBox,
    QFileDialog,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QStyledItemDelegate,
    QTableView,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from vetfluid.common.errors import VetfluidError
from vetfluid.common.formatting import table_value_text
from vetfluid.tables import overrides
from vetfluid.tables.species import MAINTENANCE_METHODS, SpeciesTable, SpeciesValue, load_table

BASIS_ROLE = Qt.ItemDataRole.UserRole + 1
ORIGIN_ROLE = Qt.ItemDataRole.UserRole + 2
SORT_ROLE = Qt.ItemDataRole.UserRole + 3
CHOICES_ROLE = Qt.ItemDataRole.UserRole + 4

MARKER_MEMORY = "*"
MARKER_DERIVED = "∴"  # "therefore": reasoned from other values
MARKER_OVERRIDE = "✎"
MISSING = "—"
_LEGEND_ITEMS = (
    (MARKER_MEMORY, "recalled from memory — unverified"),
    (MARKER_DERIVED, "derived from other values"),
    (MARKER_OVERRIDE, "clinic override"),
    ("italic", "inherited from the taxon group"),
    (MISSING, "not on record"),
)
_LEGEND_TAIL = (
    "Hover a cell for unit, range, source and origin; F2 edits, Delete resets to the shipped value."
)
LEGEND = (
    "Markers: " + "  ·  ".join(f"{mark} {meaning}" for mark, meaning in _LEGEND_ITEMS) + ".  "
) + _LEGEND_TAIL
_LEGEND_HTML = (
    "<b>Markers:</b>&nbsp; "
    + " &nbsp;·&nbsp; ".join(
        f"<i>italic</i> = {meaning}" if mark == "italic" else f"<b>{mark}</b>&nbsp;{meaning}"
        for mark, meaning in _LEGEND_ITEMS
    )
    + f". &nbsp; {_LEGEND_TAIL}"
)
UNVERIFIED_TEXT = "recalled from memory — unverified, not checked against a publication"
IDENTITY_COLUMNS = (
    ("common_name", "Common name"),
    ("scientific_name", "Scientific name"),
    ("taxon_group", "Taxon group"),
)
CLINIC_NOTE = "Clinic value entered in the species table"
_TIP_WIDTH = 72
# Symbols and abbreviations as the trade writes them (column headers only).
_HEADER_WORDS = {
    "na": "Na",
    "k": "K",
    "usg": "USG",
    "sc": "SC",
    "icoel": "intracoelomic",
    "ecf": "ECF",
    "q10": "Q10",
}


@cache
def _origin_font(origin: str) -> QFont:
    """Italic for inherited, bold for overrides (built once: PySide6 6.12 miscounts
    references to None when many QFont objects are created and freed)."""
    font = QFont()
    font.setItalic(origin == "inherited")
    font.setBold(origin == "override")
    return font


@cache
def _override_brush() -> QBrush:
    return QBrush(QColor(255, 244, 204))


def _wrap(text: str) -> str:
    return "\n".join(textwrap.fill(line, _TIP_WIDTH) if line else "" for line in text.split("\n"))


def column_label(parameter: str, unit: str) -> str:
    """A parameter name for a column header, without the unit words its name ends with.

    ``column_label("plasma_osmolality_mosm_per_kg", "mOsm/kg") == "plasma osmolality"``;
    the unit itself is shown on its own header line.
    """
    words = parameter.split("_")
    unit_words = unit.lower().replace("°", "").replace("/", " per ", 1).replace("/", " ").split()
    if len(unit_words) < len(words) and words[-len(unit_words) :] == unit_words:
        words = words[: -len(unit_words)]
    return " ".join(_HEADER_WORDS.get(word, word) for word in words)


def _plain(value: SpeciesValue) -> str:
    """A value as a person reads it in a cell (numbers the safe way, a value on record with
    every figure it has: :func:`table_value_text`)."""
    if isinstance(value.value, bool):
        return "yes" if value.value else "no"
    if isinstance(value.value, float):
        return table_value_text(value.value, basis=value.basis)
    return str(value.value)


def _with_unit(value: SpeciesValue) -> str:
    """The value for a sentence: numbers with their unit, flags and words alone."""
    text = _plain(value)
    return f"{text} {value.unit}" if isinstance(value.value, float) else text


def markers(value: SpeciesValue) -> str:
    """The text markers of one value (empty for a published, shipped value)."""
    found = []
    if value.origin == "override":
        found.append(MARKER_OVERRIDE)
    if value.basis == "memory":
        found.append(MARKER_MEMORY)
    elif value.basis == "derived":
        found.append(MARKER_DERIVED)
    return " ".join(found)


# ---- the model --------------------------------------------------------------------
class OverrideCommand(QUndoCommand):
    """One change to the clinic override of one (species, parameter).

    ``before`` and ``after`` are the override rows (None: no override, the
    shipped value applies). The change itself is made before the command is
    pushed (so a refused value never reaches the stack); the first ``redo``
    that ``QUndoStack.push`` calls is therefore skipped.
    """

    def __init__(
        self,
        model: SpeciesTableModel,
        *,
        species_id: str,
        parameter: str,
        before: SpeciesValue | None,
        after: SpeciesValue | None,
        text: str,
    ) -> None:
        super().__init__(text)
        self._model = model
        self.species_id = species_id
        self.parameter = parameter
        self.before = before
        self.after = after
        self._already_done = True

    def redo(self) -> None:
        if self._already_done:
            self._already_done = False
            return
        self._model.apply_override(self.species_id, self.parameter, self.after, undoing=False)

    def undo(self) -> None:
        self._model.apply_override(self.species_id, self.parameter, self.before, undoing=True)


class SpeciesTableModel(QAbstractTableModel):
    """Species (rows) × identity and parameters (columns) of the effective species table.

    Signals: ``messageChanged(str)`` after every edit attempt (what was saved,
    or why nothing was); ``tableChanged()`` after every change to the clinic
    overrides (edit, reset, undo, redo), once the table has been reloaded.
    """

    messageChanged = Signal(str)
    tableChanged = Signal()

    def __init__(
        self,
        *,
        table: SpeciesTable | None = None,
        undo_stack: QUndoStack | None = None,
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self._table = table if table is not None else load_table()
        self._species = self._table.species_ids()
        self._parameters = list(self._table.definitions)
        self.undo_stack = undo_stack if undo_stack is not None else QUndoStack(self)

    # ---- lookup ---------------------------------------------------------------
    @property
    def table(self) -> SpeciesTable:
        return self._table

    def species_id(self, row: int) -> str:
        return self._species[row]

    def parameter(self, column: int) -> str | None:
        """The parameter of a value column; None for the identity columns."""
        offset = column - len(IDENTITY_COLUMNS)
        return self._parameters[offset] if offset >= 0 else None

    def index_of(self, species_id: str, parameter: str) -> QModelIndex:
        return self.index(
            self._species.index(species_id),
            len(IDENTITY_COLUMNS) + self._parameters.index(parameter),
        )

    def value_at(self, index: QModelIndex) -> SpeciesValue | None:
        parameter = self.parameter(index.column())
        if parameter is None:
            return None
        return self._table.get(self.species_id(index.row()), parameter)

    # ---- Qt model interface ---------------------------------------------------
    def rowCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(self._species)

    def columnCount(self, parent: QModelIndex | QPersistentModelIndex = QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(IDENTITY_COLUMNS) + len(self._parameters)

    def flags(self, index: QModelIndex | QPersistentModelIndex) -> Qt.ItemFlag:
        if not index.isValid():
            return Qt.ItemFlag.NoItemFlags
        base = Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable
        if self.parameter(index.column()) is not None:
            base |= Qt.ItemFlag.ItemIsEditable
        return base

    def headerData(
        self, section: int, orientation: Qt.Orientation, role: int = Qt.ItemDataRole.DisplayRole
    ):
        if orientation == Qt.Orientation.Vertical:
            if not 0 <= section < len(self._species):
                return None
            sid = self._species[section]
            if role == Qt.ItemDataRole.DisplayRole:
                return sid
            if role == Qt.ItemDataRole.ToolTipRole:
                return f"{self._table.species(sid).common_name} (id {sid})"
            return None
        if not 0 <= section < self.columnCount():
            return None
        parameter = self.parameter(section)
        if parameter is None:
            label = IDENTITY_COLUMNS[section][1]
            if role == Qt.ItemDataRole.DisplayRole:
                return label
            if role == Qt.ItemDataRole.ToolTipRole:
                return f"{label} (from species_data/species.csv). Click to sort."
            return None
        definition = self._table.definitions[parameter]
        if role == Qt.ItemDataRole.DisplayRole:
            label = textwrap.fill(column_label(parameter, definition.unit), 18)
            return f"{label}\n[{definition.unit}]"
        if role == Qt.ItemDataRole.ToolTipRole:
            return _wrap(
                f"{parameter} [{definition.unit}]\n{definition.description}\n"
                f"Type: {definition.type}; required: {definition.required}.\n"
                "Click the header to sort by this column."
            )
        return None

    def data(
        self, index: QModelIndex | QPersistentModelIndex, role: int = Qt.ItemDataRole.DisplayRole
    ):
        if not index.isValid():
            return None
        species = self._table.species(self.species_id(index.row()))
        parameter = self.parameter(index.column())
        if parameter is None:
            text = getattr(species, IDENTITY_COLUMNS[index.column()][0])
            if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.AccessibleTextRole):
                return text
            if role == SORT_ROLE:
                return (1, text.lower())
            if role == ORIGIN_ROLE:
                return "shipped"
            return None
        value = self._table.get(species.id, parameter)
        if role == Qt.ItemDataRole.DisplayRole:
            if value is None:
                return MISSING
            mark = markers(value)
            return f"{_plain(value)} {mark}" if mark else _plain(value)
        if role == Qt.ItemDataRole.EditRole:
            return "" if value is None else overrides.stored_text(value.value)
        if role == Qt.ItemDataRole.ToolTipRole:
            return self._tooltip(species.id, parameter, value)
        if role == Qt.ItemDataRole.AccessibleTextRole:
            return self._spoken(parameter, value)
        if role == BASIS_ROLE:
            return None if value is None else value.basis
        if role == ORIGIN_ROLE:
            return None if value is None else value.origin
        if role == SORT_ROLE:
            if value is None:
                return (2, "")
            if isinstance(value.value, float):
                return (0, value.value)
            return (1, _plain(value))
        if role == CHOICES_ROLE:
            definition = self._table.definitions[parameter]
            if definition.type == "flag":
                return list(overrides.FLAG_WORDS)
            if parameter == "maintenance_method":
                return list(MAINTENANCE_METHODS)
            return None
        if role == Qt.ItemDataRole.FontRole and value is not None:
            return None if value.origin == "shipped" else _origin_font(value.origin)
        if role == Qt.ItemDataRole.BackgroundRole and value is not None:
            return _override_brush() if value.origin == "override" else None
        if role == Qt.ItemDataRole.TextAlignmentRole:
            if self._table.definitions[parameter].type == "number":
                return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            return int(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)
        return None

    def _origin_text(self, value: SpeciesValue) -> str:
        if value.origin == "override":
            return f"clinic override ({value.location})"
        if value.origin == "inherited":
            group = self._table.species(value.defined_on)
            # the file and line find the row; the group's id is for the data files only
            return f"inherited from {group.common_name} (species_data/{value.location})"
        return f"shipped with vetfluid (species_data/{value.location})"

    def _tooltip(self, species_id: str, parameter: str, value: SpeciesValue | None) -> str:
        name = self._table.species(species_id).common_name
        definition = self._table.definitions[parameter]
        if value is None:
            return _wrap(
                f"{name} · {parameter} [{definition.unit}]\n"
                "Not on record for this species or its groups.\n"
                "F2 or double-click to enter a clinic value."
            )
        lines = [f"{name} · {parameter}", f"Value: {overrides.stored_text(value.value)}"]
        if definition.type == "number":
            lines[-1] += f" {value.unit}"
        if value.low is not None or value.high is not None:
            low = table_value_text(value.low, basis=value.basis) if value.low is not None else "…"
            high = (
                table_value_text(value.high, basis=value.basis) if value.high is not None else "…"
            )
            lines.append(f"Range: {low}–{high} {value.unit}")
        source = self._table.sources.get(value.source_id) if value.source_id else None
        if value.basis == "memory":
            lines.append(f"Basis: {UNVERIFIED_TEXT}")
            if source is not None:
                lines.append(f"Believed to come from (not checked): {source.citation}")
        elif value.basis == "derived":
            lines.append("Basis: derived from other values (see the note)")
            if source is not None:
                lines.append(f"Source: {source.citation}")
        else:
            lines.append("Basis: published — checked against the source")
            if source is not None:
                lines.append(f"Source: {source.citation}")
        lines.append(f"Origin: {self._origin_text(value)}")
        if value.note:
            lines.append(f"Note: {value.note}")
        if value.origin == "override":
            shipped = overrides.shipped_value(species_id=species_id, parameter=parameter)
            if shipped is None:
                lines.append("Reset (Delete key) removes it: nothing is shipped for this value.")
            else:
                lines.append(
                    f"Reset (Delete key) returns to the shipped {_with_unit(shipped)} "
                    f"({shipped.basis}, {shipped.origin})."
                )
        else:
            lines.append("F2 or double-click to enter a clinic value.")
        return _wrap("\n".join(lines))

    def _spoken(self, parameter: str, value: SpeciesValue | None) -> str:
        if value is None:
            return f"{parameter}: not on record"
        words = [f"{parameter}: {_with_unit(value)}"]
        if value.basis == "memory":
            words.append("unverified, recalled from memory")
        elif value.basis == "derived":
            words.append("derived")
        if value.origin == "override":
            words.append("clinic override")
        elif value.origin == "inherited":
            words.append(f"inherited from {self._table.species(value.defined_on).common_name}")
        return ", ".join(words)

    # ---- editing --------------------------------------------------------------
    def setData(
        self,
        index: QModelIndex | QPersistentModelIndex,
        value,
        role: int = Qt.ItemDataRole.EditRole,
    ) -> bool:
        """Save a typed value as a clinic override (undoable); refusals become a message."""
        if role != Qt.ItemDataRole.EditRole or not index.isValid():
            return False
        parameter = self.parameter(index.column())
        if parameter is None:
            return False
        species_id = self.species_id(index.row())
        name = self._table.species(species_id).common_name
        text = "" if value is None else str(value).strip()
        current = self._table.get(species_id, parameter)
        if not text:
            self.messageChanged.emit(
                f"⚠ Not saved: {name} · {parameter} needs a value. To go back to the shipped "
                "value, select the cell and press Delete (Reset to shipped value)."
            )
            return False
        if current is not None and text == overrides.stored_text(current.value):
            self.messageChanged.emit(f"{name} · {parameter}: unchanged.")
            return False
        before = overrides.get_override(species_id=species_id, parameter=parameter)
        try:
            overrides.set_override(
                species_id=species_id,
                parameter=parameter,
                value=text,
                low=current.low if current is not None else None,
                high=current.high if current is not None else None,
                note=CLINIC_NOTE,
                basis="memory",
            )
            after = overrides.get_override(species_id=species_id, parameter=parameter)
        except (VetfluidError, OSError) as exc:
            self.messageChanged.emit(f"⚠ Not saved: {name} · {_reason(exc)}")
            return False
        self.undo_stack.push(
            OverrideCommand(
                self,
                species_id=species_id,
                parameter=parameter,
                before=before,
                after=after,
                text=f"set {name} {parameter} to {text}",
            )
        )
        self.reload()
        saved = self._table.get(species_id, parameter)
        self.messageChanged.emit(
            f"✓ Saved {name} · {parameter} = {_with_unit(saved) if saved else text} "
            f"as a clinic override ({MARKER_OVERRIDE} {MARKER_MEMORY} unverified). "
            "Undo puts the previous value back."
        )
        return True

    def reset_to_shipped(self, indexes: Iterable[QModelIndex | QPersistentModelIndex]) -> int:
        """Remove the clinic overrides under ``indexes`` (one undo step); returns how many."""
        keys = []
        for index in indexes:
            value = self.value_at(QModelIndex(index))
            if value is not None and value.origin == "override":
                # the override may sit on the species' group: that row is the one removed
                key = (value.defined_on, value.parameter)
                if key not in keys:
                    keys.append(key)
        if not keys:
            self.messageChanged.emit(
                "Nothing to reset: none of the selected cells holds a clinic override "
                f"({MARKER_OVERRIDE})."
            )
            return 0
        done = 0
        self.undo_stack.beginMacro(f"reset {len(keys)} value(s) to shipped")
        try:
            for species_id, parameter in keys:
                before = overrides.get_override(species_id=species_id, parameter=parameter)
                name = self._table.species(species_id).common_name
                try:
                    overrides.remove_override(species_id=species_id, parameter=parameter)
                except (VetfluidError, OSError) as exc:
                    self.messageChanged.emit(f"⚠ Not reset: {name} · {_reason(exc)}")
                    break
                self.undo_stack.push(
                    OverrideCommand(
                        self,
                        species_id=species_id,
                        parameter=parameter,
                        before=before,
                        after=None,
                        text=f"reset {name} {parameter} to shipped",
                    )
                )
                done += 1
        finally:
            self.undo_stack.endMacro()
        if done:
            self.reload()
            groups = sorted(
                self._table.species(holder).common_name
                for holder, _ in keys[:done]
                if self._table.species(holder).rank != "species"
            )
            whole_group = (
                f" The clinic value was the group's ({', '.join(groups)}): every species in "
                "it is back on its shipped value."
                if groups
                else ""
            )
            self.messageChanged.emit(
                f"✓ Reset {done} value(s) to the shipped value.{whole_group} "
                "Undo puts the clinic value back."
            )
        return done

    def apply_override(
        self,
        species_id: str,
        parameter: str,
        row: SpeciesValue | None,
        *,
        undoing: bool,
    ) -> None:
        """Make the file hold ``row`` for this key (None: no override); used by undo/redo."""
        verb = "Undo" if undoing else "Redo"
        name = self._table.species(species_id).common_name
        try:
            if row is None:
                if overrides.get_override(species_id=species_id, parameter=parameter):
                    overrides.remove_override(species_id=species_id, parameter=parameter)
            else:
                overrides.write_override(row)
        except (VetfluidError, OSError) as exc:
            self.messageChanged.emit(f"⚠ {verb} failed, nothing changed: {name} · {_reason(exc)}")
            return
        self.reload()
        shown = self._table.get(species_id, parameter)
        now = "not on record" if shown is None else f"{_with_unit(shown)} ({shown.origin})"
        self.messageChanged.emit(f"{verb}: {name} · {parameter} is now {now}.")

    def reload(self) -> None:
        """Re-read the species table (and the overrides) from disk and refresh every cell."""
        try:
            table = load_table()
        except (VetfluidError, OSError) as exc:
            self.messageChanged.emit(f"⚠ The species table could not be reloaded: {_reason(exc)}")
            return
        self._table = table
        if self.rowCount() and self.columnCount():
            self.dataChanged.emit(
                self.index(0, 0), self.index(self.rowCount() - 1, self.columnCount() - 1)
            )
        self.tableChanged.emit()


def _reason(exc: Exception) -> str:
    return (
        exc.one_line()
        if isinstance(exc, VetfluidError)
        else f"the file could not be written ({exc})"
    )


# ---- filtering and sorting ----------------------------------------------------------
class SpeciesFilterModel(QSortFilterProxyModel):
    """Filters rows by free text (the core's species search) and taxon group; sorts by value."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self._text = ""
        self._matches: set[str] | None = None
        self._group: str | None = None
        self.setSortRole(SORT_ROLE)

    def set_text(self, text: str) -> None:
        self._change_filter(text=text.strip(), group=self._group)

    def set_group(self, group: str | None) -> None:
        self._change_filter(text=self._text, group=group or None)

    def _change_filter(self, *, text: str, group: str | None) -> None:
        # beginFilterChange() arrived in Qt 6.10 and deprecates invalidateRowsFilter()
        modern = hasattr(self, "beginFilterChange")
        if modern:
            self.beginFilterChange()
        self._text, self._group = text, group
        self._refresh_matches()
        if modern:
            self.endFilterChange(QSortFilterProxyModel.Direction.Rows)
        else:
            self.invalidateRowsFilter()

    def _refresh_matches(self) -> None:
        source = self.sourceModel()
        if not self._text or source is None:
            self._matches = None
        else:
            self._matches = {s.id for s in source.table.search(self._text)}

    def filterAcceptsRow(self, source_row: int, source_parent) -> bool:
        source = self.sourceModel()
        species = source.table.species(source.species_id(source_row))
        if self._matches is not None and species.id not in self._matches:
            return False
        return self._group is None or species.taxon_group == self._group

    def lessThan(self, left, right) -> bool:
        return tuple(left.data(SORT_ROLE) or (3, "")) < tuple(right.data(SORT_ROLE) or (3, ""))


class _ChoiceDelegate(QStyledItemDelegate):
    """A drop-down editor for cells with a fixed set of words (yes/no, maintenance method)."""

    def createEditor(self, parent, option, index):
        choices = index.data(CHOICES_ROLE)
        if not choices:
            editor = super().createEditor(parent, option, index)
            if isinstance(editor, QLineEdit):
                editor.setAccessibleName("Clinic value")
                editor.setToolTip(
                    "Type a plain number in the column's unit; Enter saves, Esc cancels"
                )
            return editor
        combo = QComboBox(parent)
        combo.addItems(choices)
        combo.setAccessibleName("Clinic value")
        combo.setToolTip("Choose the clinic value; Enter saves, Esc cancels")
        return combo

    def setEditorData(self, editor, index) -> None:
        if isinstance(editor, QComboBox):
            position = editor.findText(index.data(Qt.ItemDataRole.EditRole))
            editor.setCurrentIndex(max(position, 0))
            return
        super().setEditorData(editor, index)

    def setModelData(self, editor, model, index) -> None:
        if isinstance(editor, QComboBox):
            model.setData(index, editor.currentText(), Qt.ItemDataRole.EditRole)
            return
        super().setModelData(editor, model, index)


# ---- the widget -------------------------------------------------------------------
class SpeciesTableView(QWidget):
    """Browse, filter, sort and edit the species table; export the effective values.

    ``undo_stack`` holds the override edits (the main window may add
    ``undo_action``/``redo_action`` to its Edit menu — the same actions, so
    their shortcuts never clash). ``tableChanged`` fires after every change to
    the clinic overrides, so the planner can recompute.
    """

    tableChanged = Signal()
    ALL_GROUPS = "All groups"

    def __init__(
        self, model: SpeciesTableModel | None = None, parent: QWidget | None = None
    ) -> None:
        super().__init__(parent)
        self.model = model if model is not None else SpeciesTableModel(parent=self)
        self.undo_stack = self.model.undo_stack
        self.proxy = SpeciesFilterModel(self)
        self.proxy.setSourceModel(self.model)
        self.setAccessibleName("Species table")

        self.filter_edit = QLineEdit(self)
        self.filter_edit.setPlaceholderText("id, name or group, e.g. gerbil")
        self.filter_edit.setClearButtonEnabled(True)
        self.filter_edit.setAccessibleName("Find species")
        self.filter_edit.setToolTip(
            "Show only species whose id, common name, scientific name or taxon group "
            "contains this text (Ctrl+F)"
        )
        find_label = QLabel("&Find:", self)
        find_label.setBuddy(self.filter_edit)

        self.group_combo = QComboBox(self)
        self.group_combo.addItem(self.ALL_GROUPS, None)
        groups = sorted(
            {self.model.table.species(s).taxon_group for s in self.model.table.species_ids()}
        )
        for group in groups:
            self.group_combo.addItem(group, group)
        self.group_combo.setAccessibleName("Taxon group")
        self.group_combo.setToolTip("Show only the species of one taxon group")
        self.group_combo.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        group_label = QLabel("&Group:", self)
        group_label.setBuddy(self.group_combo)

        self.table_view = QTableView(self)
        self.table_view.setModel(self.proxy)
        self.table_view.setItemDelegate(_ChoiceDelegate(self.table_view))
        self.table_view.setSortingEnabled(True)
        self.table_view.sortByColumn(-1, Qt.SortOrder.AscendingOrder)  # file order until clicked
        self.table_view.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.table_view.setEditTriggers(
            QAbstractItemView.EditTrigger.DoubleClicked
            | QAbstractItemView.EditTrigger.EditKeyPressed
        )
        self.table_view.setAlternatingRowColors(True)
        self.table_view.setWordWrap(False)
        self.table_view.setAccessibleName("Species values")
        self.table_view.setAccessibleDescription(
            "One row per species; value columns show the effective value with markers: "
            f"{MARKER_MEMORY} unverified, {MARKER_DERIVED} derived, "
            f"{MARKER_OVERRIDE} clinic override."
        )
        header = self.table_view.horizontalHeader()
        header.setDefaultAlignment(Qt.AlignmentFlag.AlignCenter | Qt.AlignmentFlag.AlignVCenter)
        header.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        header.setHighlightSections(True)
        self.table_view.verticalHeader().setDefaultSectionSize(22)

        # Fixed button texts (the stack's own actions would grow with each command's text);
        # what will be undone or redone is in the tooltip.
        self.undo_action = QAction("&Undo", self)
        self.undo_action.setShortcut(QKeySequence.StandardKey.Undo)
        self.undo_action.triggered.connect(self.undo_stack.undo)
        self.undo_stack.canUndoChanged.connect(self.undo_action.setEnabled)
        self.undo_stack.undoTextChanged.connect(self._undo_text_changed)
        self.redo_action = QAction("&Redo", self)
        self.redo_action.setShortcuts([QKeySequence.StandardKey.Redo, QKeySequence("Ctrl+Y")])
        self.redo_action.triggered.connect(self.undo_stack.redo)
        self.undo_stack.canRedoChanged.connect(self.redo_action.setEnabled)
        self.undo_stack.redoTextChanged.connect(self._redo_text_changed)
        self._undo_text_changed(self.undo_stack.undoText())
        self._redo_text_changed(self.undo_stack.redoText())
        self.reset_action = QAction("Re&set to shipped value", self)
        self.reset_action.setShortcut(QKeySequence.StandardKey.Delete)
        self.reset_action.setToolTip(
            f"Remove the clinic override ({MARKER_OVERRIDE}) from the selected cells so the "
            "shipped value applies again (Delete key in the table); undoable"
        )
        self.reset_action.triggered.connect(self.reset_selected)
        self.export_action = QAction("&Export table to CSV…", self)
        self.export_action.setToolTip(
            "Save every effective value (after inheritance and clinic overrides) as a CSV file: "
            "species_id, parameter, value, low, high, unit, basis, origin, defined_on, "
            "source_id, note"
        )
        self.export_action.triggered.connect(self._export_with_dialog)
        for action in (self.undo_action, self.redo_action):
            action.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
            self.addAction(action)
        # Delete only in the table itself, never while a cell editor has the focus.
        self.reset_action.setShortcutContext(Qt.ShortcutContext.WidgetShortcut)
        self.table_view.addAction(self.reset_action)
        find_shortcut = QShortcut(QKeySequence.StandardKey.Find, self, self.filter_edit.setFocus)
        find_shortcut.setContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)

        buttons = []
        for action, accessible in (
            (self.undo_action, "Undo clinic value change"),
            (self.redo_action, "Redo clinic value change"),
            (self.reset_action, "Reset selected cells to shipped value"),
            (self.export_action, "Export effective species table to CSV"),
        ):
            button = QToolButton(self)
            button.setDefaultAction(action)
            button.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
            button.setAccessibleName(accessible)
            buttons.append(button)
        self.undo_button, self.redo_button, self.reset_button, self.export_button = buttons

        self.legend = QLabel(_LEGEND_HTML, self)
        self.legend.setTextFormat(Qt.TextFormat.RichText)
        self.legend.setObjectName("species_legend")
        self.legend.setWordWrap(True)
        self.legend.setAccessibleName("Marker legend")
        self.legend.setAccessibleDescription(LEGEND)
        self.legend.setToolTip(
            "Every value carries its basis: published values have no marker; values "
            "recalled from memory are unverified until checked against a publication."
        )
        self.message = QLabel("", self)
        self.message.setObjectName("species_message")
        self.message.setWordWrap(True)
        self.message.setAccessibleName("Species table message")
        self.message.setToolTip("What the last edit did, or why it was not saved")
        self.message.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.message.setText(
            "Clinic values are saved to your data folder, never to the shipped table."
        )

        controls = QHBoxLayout()
        controls.addWidget(find_label)
        controls.addWidget(self.filter_edit, 2)
        controls.addWidget(group_label)
        controls.addWidget(self.group_combo)
        controls.addSpacing(12)
        for button in buttons:
            controls.addWidget(button)
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(self.legend)
        layout.addWidget(self.table_view, 1)
        layout.addWidget(self.message)

        self.filter_edit.textChanged.connect(self.proxy.set_text)
        self.group_combo.currentIndexChanged.connect(
            lambda _: self.proxy.set_group(self.group_combo.currentData())
        )
        self.model.messageChanged.connect(self.message.setText)
        self.model.tableChanged.connect(self.tableChanged)
        self.model.tableChanged.connect(self._fit_columns)
        self._name_builtin_buttons()
        self._fit_columns()

    # ---- actions --------------------------------------------------------------
    def selected_source_indexes(self) -> list[QModelIndex]:
        return [
            self.proxy.mapToSource(i) for i in self.table_view.selectionModel().selectedIndexes()
        ]

    def reset_selected(self) -> int:
        """Reset the selected cells that hold a clinic override; returns how many."""
        return self.model.reset_to_shipped(self.selected_source_indexes())

    def export_to(self, path: Path | str) -> int:
        """Write the effective table to ``path``; returns the row count (0 after a refusal)."""
        try:
            count = overrides.export_effective_table(Path(path), table=self.model.table)
        except (VetfluidError, OSError) as exc:
            self.message.setText(f"⚠ Not exported: {_reason(exc)}")
            return 0
        self.message.setText(f"✓ Exported {count} values to {path}.")
        return count

    def _export_with_dialog(self) -> None:
        path, _ = QFileDialog.getSaveFileName(
            self,
            "Export effective species table",
            str(Path.home() / "vetfluid-species-table.csv"),
            "CSV files (*.csv)",
        )
        if path:
            if not path.lower().endswith(".csv"):
                path += ".csv"
            self.export_to(path)

    def _name_builtin_buttons(self) -> None:
        """Qt's own small buttons (the filter's clear button, the table's corner) get names too."""
        for button in self.filter_edit.findChildren(QAbstractButton):
            button.setAccessibleName("Clear the species filter")
            button.setToolTip("Clear the filter and show every species")
        for button in self.table_view.findChildren(QAbstractButton):
            button.setAccessibleName("Select every cell")
            button.setToolTip("Select every cell (Ctrl+A)")

    def _undo_text_changed(self, text: str) -> None:
        self.undo_action.setEnabled(self.undo_stack.canUndo())
        what = f": {text}" if text else " (nothing to undo)"
        self.undo_action.setToolTip(f"Undo the last change to the clinic values{what} (Ctrl+Z)")

    def _redo_text_changed(self, text: str) -> None:
        self.redo_action.setEnabled(self.undo_stack.canRedo())
        what = f": {text}" if text else " (nothing to redo)"
        self.redo_action.setToolTip(f"Redo the change just undone{what} (Ctrl+Shift+Z or Ctrl+Y)")

    def _fit_columns(self) -> None:
        self.table_view.resizeColumnsToContents()
