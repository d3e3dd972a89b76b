"""Formations: choose the one being laid out, add new ones, fill one from a generator (grid, ring,
line, sphere) or a CSV file."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from PySide6.QtWidgets import (
    QComboBox,
    QDoubleSpinBox,
    QFileDialog,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QInputDialog,
    QListWidget,
    QPushButton,
    QSpinBox,
    QStackedWidget,
    QVBoxLayout,
    QWidget,
)

from core import formations
from core.errors import SkyloomError
from core.scene import Formation
from core.scene.io import read_formation_csv

from .document import Document


def _spin(value: float, low: float = -10000.0, high: float = 10000.0, suffix: str = " m") -> QDoubleSpinBox:
    spin = QDoubleSpinBox(minimum=low, maximum=high, value=value, decimals=2, singleStep=0.5, suffix=suffix)
    spin.setMinimumWidth(70)  # narrower than the widest value of its range: three fit a narrow panel
    return spin


class GeneratorBox(QGroupBox):
    """Parameters of one generator at a time; :meth:`points` returns ``(n, 3)`` metres."""

    KINDS = ("grid", "ring", "line", "sphere")

    def __init__(self, parent=None):
        super().__init__("Fill with a pattern", parent)
        self.kind = QComboBox()
        self.kind.addItems(self.KINDS)
        self.count = QSpinBox(minimum=1, maximum=100_000, value=8)
        self.pages = QStackedWidget()
        self.grid_spacing, self.grid_columns = _spin(2.0, 0.01), QSpinBox(minimum=0, maximum=10_000, value=0,
                                                                          specialValueText="square")
        self.ring_radius = _spin(5.0, 0.01)
        self.sphere_radius = _spin(5.0, 0.01)
        self.centre = [_spin(0.0), _spin(0.0), _spin(3.0)]
        self.line_end = [_spin(10.0), _spin(0.0), _spin(3.0)]
        grid_page, ring_page, line_page, sphere_page = QWidget(), QWidget(), QWidget(), QWidget()
        QFormLayout(grid_page).addRow("spacing", self.grid_spacing)
        grid_page.layout().addRow("columns", self.grid_columns)
        QFormLayout(ring_page).addRow("radius", self.ring_radius)
        end_row = QHBoxLayout()
        for w in self.line_end:
            end_row.addWidget(w)
        QFormLayout(line_page).addRow("to", end_row)
        QFormLayout(sphere_page).addRow("radius", self.sphere_radius)
        for page in (grid_page, ring_page, line_page, sphere_page):
            self.pages.addWidget(page)
        self.kind.currentIndexChanged.connect(self.pages.setCurrentIndex)
        centre_row = QHBoxLayout()
        for w in self.centre:
            centre_row.addWidget(w)
        form = QFormLayout(self)
        form.addRow("pattern", self.kind)
        form.addRow("points", self.count)
        form.addRow("origin / centre", centre_row)
        form.addRow(self.pages)
        self.apply = QPushButton("Replace the points")
        form.addRow(self.apply)

    def points(self) -> np.ndarray:
        n = self.count.value()
        origin = [w.value() for w in self.centre]
        kind = self.kind.currentText()
        if kind == "grid":
            columns = self.grid_columns.value() or None
            return formations.grid(n, self.grid_spacing.value(), origin=origin, columns=columns)
        if kind == "ring":
            return formations.ring(n, self.ring_radius.value(), center=origin)
        if kind == "sphere":
            return formations.sphere(n, self.sphere_radius.value(), center=origin)
        return formations.line(n, origin, [w.value() for w in self.line_end])


class FormationPanel(QWidget):
    """List of formations (the selected one is laid out and shown in 3D) with new/generate/import."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.list = QListWidget()
        self.add_button = QPushButton("New formation…")
        self.import_button = QPushButton("Import CSV…")
        self.generator = GeneratorBox()
        buttons = QHBoxLayout()
        buttons.addWidget(self.add_button)
        buttons.addWidget(self.import_button)
        layout = QVBoxLayout(self)
        layout.addWidget(self.list, 1)
        layout.addLayout(buttons)
        layout.addWidget(self.generator)
        self.list.currentTextChanged.connect(lambda name: name and document.choose_formation(name))
        self.add_button.clicked.connect(self._new_formation)
        self.import_button.clicked.connect(self._import_csv)
        self.generator.apply.clicked.connect(self.apply_generator)
        document.scene_changed.connect(self.refresh)
        document.formation_chosen.connect(self.refresh)
        self._fleet_size = -1
        self.refresh()

    def refresh(self, *_args) -> None:
        drones = len(self.document.scene.fleet.drones)
        if drones != self._fleet_size:  # a pattern makes one point per drone unless the user says otherwise
            self._fleet_size = drones
            self.generator.count.setValue(drones)
        names = [f.name for f in self.document.scene.formations]
        self.list.blockSignals(True)
        self.list.clear()
        self.list.addItems(names)
        self.list.setCurrentRow(names.index(self.document.active_formation))
        self.list.blockSignals(False)

    def apply_generator(self) -> None:
        f = self.document.formation(self.document.active_formation)
        points = self.generator.points()
        self.document.edit_formation(f.name, points, None, f"{self.generator.kind.currentText()} pattern in {f.name}")

    def load_csv(self, path: Path) -> None:
        """Replace the active formation's points (and groups) with those of CSV ``path``."""
        f = self.document.formation(self.document.active_formation)
        try:
            points, groups = read_formation_csv(Path(path), str(path))
        except SkyloomError as exc:
            self.document.message.emit(str(exc))
            return
        self.document.edit_formation(f.name, np.asarray(points), tuple(groups) if groups else None,
                                     f"import {Path(path).name} into {f.name}")

    def _import_csv(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Import formation points", str(self.document.base_dir),
                                              "CSV files (*.csv)")
        if path:
            self.load_csv(Path(path))

    def _new_formation(self) -> None:
        name, ok = QInputDialog.getText(self, "New formation", "Name:")
        name = name.strip()
        if not ok or not name:
            return
        if self.document.formation(name) is not None:
            self.document.message.emit(f"a formation named {name!r} already exists")
            return
        n = len(self.document.scene.fleet.drones)
        self.document.add_formation(Formation(name=name, points=tuple(map(tuple, formations.grid(n, 2.0).tolist()))))
        self.document.choose_formation(name)
