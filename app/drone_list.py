"""Every drone of the fleet in one list (id, type, the group of its start point), with a filter
box; selecting rows selects those drones in the document, so the 3D view, the motion plots and
the findings all follow, and a selection made elsewhere (3D picking, a finding) shows here. The
selected drones' type is set below the list (one undo step)."""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtCore import QItemSelection, QItemSelectionModel
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from .document import Document

COLUMNS = ("drone", "type", "start group")


class DroneList(QWidget):
    """A table of drones bound to :class:`Document` selection; ``filter`` keeps the rows whose id,
    type or start group contains the typed text (case ignored)."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.filter = QLineEdit(placeholderText="Filter by id, type or group", clearButtonEnabled=True)
        self.filter.setToolTip("Shows the drones whose id, type or start-formation group contains this text; "
                               "Ctrl-click or Shift-click rows to select several")
        self.table = QTableWidget(0, len(COLUMNS))
        self.table.setHorizontalHeaderLabels(list(COLUMNS))
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.verticalHeader().setVisible(False)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.count = QLabel()
        self.type_choice = QComboBox()
        self.set_type_button = QPushButton("Set type of the selected")
        type_row = QHBoxLayout()
        for w in (QLabel("type"), self.type_choice, self.set_type_button):
            type_row.addWidget(w)
        type_row.addStretch(1)
        layout = QVBoxLayout(self)
        layout.addWidget(self.filter)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.count)
        layout.addLayout(type_row)
        self.set_type_button.clicked.connect(lambda: self.set_type(self.type_choice.currentText()))
        self.filter.textChanged.connect(self._apply_filter)
        self.table.itemSelectionChanged.connect(self._selection_edited)
        document.scene_changed.connect(self.refill)
        document.selection_changed.connect(self._show_selection)
        self.refill()

    def refill(self) -> None:
        """One row per drone of the scene as it is now."""
        scene = self.document.scene
        start = self.document.formation(scene.timeline.start)
        groups = start.groups if start is not None and start.groups is not None else ()
        rows = [(d.id, d.type, groups[k] if k < len(groups) else "") for k, d in enumerate(scene.fleet.drones)]
        self.table.blockSignals(True)
        self.table.setRowCount(len(rows))
        for r, values in enumerate(rows):
            for c, text in enumerate(values):
                self.table.setItem(r, c, QTableWidgetItem(text))
        self.table.blockSignals(False)
        self.table.resizeColumnsToContents()
        chosen = self.type_choice.currentText()
        self.type_choice.clear()
        self.type_choice.addItems([t.name for t in scene.fleet.types])
        self.type_choice.setCurrentText(chosen)
        self._apply_filter(self.filter.text())
        self._show_selection()

    def set_type(self, name: str) -> None:
        """Give the selected drones drone type ``name``."""
        scene = self.document.scene
        chosen = set(self.document.selected)
        if not chosen or name not in {t.name for t in scene.fleet.types}:
            return
        drones = tuple(replace(d, type=name) if k in chosen else d for k, d in enumerate(scene.fleet.drones))
        self.document.edit(replace(scene, fleet=replace(scene.fleet, drones=drones)),
                           f"{len(chosen)} drone(s) to type {name}")

    def _apply_filter(self, text: str) -> None:
        needle = text.strip().casefold()
        for r in range(self.table.rowCount()):
            hit = not needle or any(needle in self.table.item(r, c).text().casefold() for c in range(len(COLUMNS)))
            self.table.setRowHidden(r, not hit)
        self._update_count()

    def _update_count(self) -> None:
        total = self.table.rowCount()
        shown = sum(not self.table.isRowHidden(r) for r in range(total))
        self.count.setText(f"{shown} of {total} drones shown, {len(self.document.selected)} selected")

    def _selection_edited(self) -> None:
        rows = sorted({index.row() for index in self.table.selectionModel().selectedRows()})
        self.document.select(tuple(rows))

    def _show_selection(self) -> None:
        """Select the document's drones here (without echoing the change back)."""
        model = self.table.selectionModel()
        selection = QItemSelection()
        last = self.table.columnCount() - 1
        for r in self.document.selected:
            if r < self.table.rowCount():
                selection.select(self.table.model().index(r, 0), self.table.model().index(r, last))
        self.table.blockSignals(True)
        model.select(selection, QItemSelectionModel.SelectionFlag.ClearAndSelect)
        self.table.blockSignals(False)
        if self.document.selected and self.document.selected[0] < self.table.rowCount():
            self.table.scrollToItem(self.table.item(self.document.selected[0], 0))
        self._update_count()
