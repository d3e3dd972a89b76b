"""The fleet: its size (drones added with the next ids of a chosen type, or the last ones
removed) and its drone types (clearance radii — taller vertically for downwash — tracking
margin, limits, downwash shift; added as a copy of the selected type, removed when no drone uses
them). Every change is one undo step."""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtCore import QTimer
from PySide6.QtWidgets import (
    QComboBox,
    QDoubleSpinBox,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QSpinBox,
    QTableWidget,
    QVBoxLayout,
    QWidget,
)

from core import limits
from core.scene.checks import drone_type_problem
from core.scene.model import Drone

from .document import Document
from .fresh_names import fresh_name, next_ids

FIELDS = (("radius_xy", "radius xy", " m"), ("radius_z", "radius z", " m"), ("tracking_margin", "margin", " m"),
          ("max_speed_xy", "speed xy", " m/s"), ("max_speed_z", "speed z", " m/s"),
          ("max_acceleration", "acceleration", " m/s²"), ("downwash_shift", "downwash shift", " m"))
#: Fields that may be 0 (the others are radii, speeds and accelerations, which must be positive).
MAY_BE_ZERO = {"tracking_margin", "downwash_shift"}


class FleetPanel(QWidget):
    """One column per drone type, one row per field (all fields visible in a narrow panel); the
    drone count per type is in the summary line."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.table = QTableWidget(len(FIELDS), 0)
        self.table.setVerticalHeaderLabels([label for _, label, _ in FIELDS])
        self.table.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 10)  # all rows in view
        self.summary = QLabel(wordWrap=True, toolTip="set a drone's type in the Drones tab")
        self.size = QSpinBox(minimum=1, maximum=limits.MAX_DRONES, keyboardTracking=False,
                             toolTip="Drones in the fleet: more adds drones with the next ids, fewer removes the "
                                     "last ones (formations then need as many points: see the layout)")
        self.new_type = QComboBox(toolTip="the type of drones added by a larger fleet size")
        size_row = QHBoxLayout()
        for w in (QLabel("fleet size"), self.size, QLabel("new drones are"), self.new_type):
            size_row.addWidget(w)
        size_row.addStretch(1)
        add_type, remove_type = QPushButton("Add type"), QPushButton("Remove type")
        add_type.setToolTip("a new type, a copy of the selected column's (then edit its values)")
        remove_type.setToolTip("remove the selected type (only when no drone is of it)")
        type_row = QHBoxLayout()
        for w in (add_type, remove_type):
            type_row.addWidget(w)
        type_row.addStretch(1)
        layout = QVBoxLayout(self)
        layout.addWidget(self.summary)
        layout.addLayout(size_row)
        layout.addWidget(self.table, 1)
        layout.addLayout(type_row)
        self.size.valueChanged.connect(self.resize_fleet)
        add_type.clicked.connect(self.add_type)
        remove_type.clicked.connect(self.remove_type)
        document.scene_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        fleet = self.document.scene.fleet
        counts = {t.name: sum(d.type == t.name for d in fleet.drones) for t in fleet.types}
        self.summary.setText(f"{len(fleet.drones)} drones: " + ", ".join(f"{n} × {k}" for k, n in counts.items()))
        self.size.blockSignals(True)
        self.size.setValue(len(fleet.drones))
        self.size.blockSignals(False)
        chosen = self.new_type.currentText()
        self.new_type.clear()
        self.new_type.addItems([t.name for t in fleet.types])
        self.new_type.setCurrentText(chosen if chosen in counts else fleet.drones[-1].type)
        self.table.setColumnCount(len(fleet.types))
        self.table.setHorizontalHeaderLabels([t.name for t in fleet.types])
        for col, t in enumerate(fleet.types):
            for row, (name, _, suffix) in enumerate(FIELDS):
                spin = QDoubleSpinBox(minimum=0.0 if name in MAY_BE_ZERO else 0.01, maximum=1000.0, decimals=2,
                                      singleStep=0.05, suffix=suffix, value=getattr(t, name))
                spin.editingFinished.connect(
                    lambda col=col, name=name, spin=spin: self._commit(col, name, spin.value()))
                self.table.setCellWidget(row, col, spin)
        self.table.resizeColumnsToContents()

    def _commit(self, column: int, name: str, value: float) -> None:
        scene = self.document.scene
        types = list(scene.fleet.types)
        if getattr(types[column], name) == value:
            return
        edited = replace(types[column], **{name: value})
        problem = drone_type_problem(edited)
        if problem is not None:  # refused as typed, not only when planning: the table shows the old value
            self.document.message.emit(f"{edited.name}: radius z {problem}; the edit was not applied")
            QTimer.singleShot(0, self.refresh)  # later: the spin box being edited is replaced
            return
        types[column] = edited
        self.document.edit(replace(scene, fleet=replace(scene.fleet, types=tuple(types))),
                           f"{types[column].name}: {name.replace('_', ' ')} {value:g}")

    def resize_fleet(self, size: int) -> None:
        """Add drones of the chosen type with the next ids, or remove the last drones."""
        scene = self.document.scene
        drones = scene.fleet.drones
        if size == len(drones):
            return
        if size > len(drones):
            kind = self.new_type.currentText() or drones[-1].type
            added = next_ids([d.id for d in drones], size - len(drones))
            drones = drones + tuple(Drone(id=i, type=kind) for i in added)
            text = f"fleet size {size} (added {kind} drones)"
        else:
            drones, text = drones[:size], f"fleet size {size} (removed the last drones)"
        self.document.edit(replace(scene, fleet=replace(scene.fleet, drones=drones)), text)
        short = [f.name for f in scene.formations if len(f.points) != size]
        if short:
            self.document.message.emit(f"The fleet has {size} drones now; formation(s) {', '.join(short)} have "
                                       "another number of points: add or delete points in the formation layout "
                                       "before planning.")

    def _selected_type(self) -> int:
        """The current column's type (the first type when there is none)."""
        return max(self.table.currentColumn(), 0)

    def add_type(self) -> None:
        scene = self.document.scene
        base = scene.fleet.types[self._selected_type()]
        name = fresh_name(f"{base.name}_copy", {t.name for t in scene.fleet.types})
        types = scene.fleet.types + (replace(base, name=name),)
        self.document.edit(replace(scene, fleet=replace(scene.fleet, types=types)), f"add drone type {name}")

    def remove_type(self) -> None:
        scene = self.document.scene
        gone = scene.fleet.types[self._selected_type()]
        users = sum(d.type == gone.name for d in scene.fleet.drones)
        if users or len(scene.fleet.types) == 1:
            reason = f"{users} drone(s) are of it; give them another type first (Drones tab)" if users else \
                "a fleet needs at least one type"
            self.document.message.emit(f"drone type {gone.name} was not removed: {reason}")
            return
        types = tuple(t for t in scene.fleet.types if t is not gone)
        pairs = tuple(p for p in scene.fleet.pairs if gone.name not in p.types)
        self.document.edit(replace(scene, fleet=replace(scene.fleet, types=types, pairs=pairs)),
                           f"remove drone type {gone.name}")
