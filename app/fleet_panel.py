"""Drone types: clearance radii (horizontal, vertical — taller for downwash), tracking margin and
limits. Every change is one undo step."""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QDoubleSpinBox, QLabel, QTableWidget, QVBoxLayout, QWidget

from core.scene.checks import drone_type_problem

from .document import Document

FIELDS = (("radius_xy", "radius xy", " m"), ("radius_z", "radius z", " m"), ("tracking_margin", "margin", " m"),
          ("max_speed_xy", "speed xy", " m/s"), ("max_speed_z", "speed z", " m/s"),
          ("max_acceleration", "acceleration", " m/s²"), ("downwash_shift", "downwash shift", " m"))
#: Fields that may be 0 (the others are radii, speeds and accelerations, which must be positive).
MAY_BE_ZERO = {"tracking_margin", "downwash_shift"}


class FleetPanel(QWidget):
    """One row per drone type; the drone count per type is shown beside it."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.table = QTableWidget(0, len(FIELDS))
        self.table.setHorizontalHeaderLabels([label for _, label, _ in FIELDS])
        self.summary = QLabel()
        layout = QVBoxLayout(self)
        layout.addWidget(self.summary)
        layout.addWidget(self.table, 1)
        document.scene_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        fleet = self.document.scene.fleet
        counts = {t.name: sum(d.type == t.name for d in fleet.drones) for t in fleet.types}
        self.summary.setText(f"{len(fleet.drones)} drones: " + ", ".join(f"{n} × {k}" for k, n in counts.items()))
        self.table.setRowCount(len(fleet.types))
        self.table.setVerticalHeaderLabels([t.name for t in fleet.types])
        for row, t in enumerate(fleet.types):
            for col, (name, _, suffix) in enumerate(FIELDS):
                spin = QDoubleSpinBox(minimum=0.0 if name in MAY_BE_ZERO else 0.01, maximum=1000.0, decimals=2,
                                      singleStep=0.05, suffix=suffix, value=getattr(t, name))
                spin.editingFinished.connect(
                    lambda row=row, name=name, spin=spin: self._commit(row, name, spin.value()))
                self.table.setCellWidget(row, col, spin)
        self.table.resizeColumnsToContents()

    def _commit(self, row: int, name: str, value: float) -> None:
        scene = self.document.scene
        types = list(scene.fleet.types)
        if getattr(types[row], name) == value:
            return
        edited = replace(types[row], **{name: value})
        problem = drone_type_problem(edited)
        if problem is not None:  # refused as typed, not only when planning: the table shows the old value
            self.document.message.emit(f"{edited.name}: radius z {problem}; the edit was not applied")
            QTimer.singleShot(0, self.refresh)  # later: the spin box being edited is replaced
            return
        types[row] = edited
        self.document.edit(replace(scene, fleet=replace(scene.fleet, types=tuple(types))),
                           f"{types[row].name}: {name.replace('_', ' ')} {value:g}")
