"""Site editing: the flight volume, keep-out boxes and obstacle meshes (added, removed, placed).
Every change is one undo step; a value the scene rules refuse is not applied and the message
says which field and why (the table shows the old value again)."""

from __future__ import annotations

import os
from dataclasses import dataclass, replace
from pathlib import Path

from pydantic import ValidationError
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import (
    QDoubleSpinBox,
    QFileDialog,
    QGridLayout,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QScrollArea,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from core.scene import Scene
from core.scene.checks import box_problem
from core.scene.model import Box, MeshRef, NamedBox

from .document import Document
from .fresh_names import fresh_name

MESH_FILTER = "Meshes (*.stl *.obj *.ply *.glb *.gltf)"
AXES = "xyz"


@dataclass(frozen=True)
class Column:
    """One editable table column: record attribute ``field`` (component ``index`` of a 3-vector)."""

    label: str
    field: str
    index: int | None = None
    number: bool = True

    def text(self, record) -> str:
        value = getattr(record, self.field)
        value = value if self.index is None else value[self.index]
        return f"{value:g}" if self.number else str(value)

    def edited(self, record, text: str):
        """``record`` with this column set from ``text`` (raises ValueError for a bad value)."""
        value = float(text) if self.number else text.strip()
        if self.index is not None:
            vector = list(getattr(record, self.field))
            vector[self.index] = value
            value = tuple(vector)
        return replace(record, **{self.field: value})  # pydantic validates (its errors are ValueErrors)


BOX_COLUMNS = (Column("name", "name", number=False),
               *(Column(f"{a} min (m)", "lower", i) for i, a in enumerate(AXES)),
               *(Column(f"{a} max (m)", "upper", i) for i, a in enumerate(AXES)))
MESH_COLUMNS = (Column("name", "name", number=False), Column("file", "file", number=False),
                Column("units", "units", number=False), Column("scale", "scale"),
                Column("turn about z (°)", "rotate_deg", 2),
                *(Column(f"move {a} (m)", "translate", i) for i, a in enumerate(AXES)))


class RecordTable(QTableWidget):
    """Rows of immutable records edited cell by cell; ``commit(records, text)`` receives the edited tuple."""

    def __init__(self, columns: tuple[Column, ...], what: str, commit, refuse, parent=None):
        super().__init__(0, len(columns), parent)
        self.columns, self.what, self._commit, self._refuse = columns, what, commit, refuse
        self.records: tuple = ()
        self.setHorizontalHeaderLabels([c.label for c in columns])
        self.verticalHeader().setVisible(False)
        self.itemChanged.connect(self._edited)

    def show_records(self, records: tuple) -> None:
        self.records = records
        self.blockSignals(True)
        self.setRowCount(len(records))
        for r, record in enumerate(records):
            for c, column in enumerate(self.columns):
                self.setItem(r, c, QTableWidgetItem(column.text(record)))
        self.blockSignals(False)
        self.resizeColumnsToContents()

    def _edited(self, item: QTableWidgetItem) -> None:
        r, column = item.row(), self.columns[item.column()]
        record = self.records[r]
        try:
            edited = column.edited(record, item.text())
            problem = box_problem(edited) if isinstance(edited, Box) else None
        except ValidationError as exc:  # the scene model's own reason
            problem = exc.errors()[0]["msg"].removeprefix("Value error, ")
        except ValueError:
            problem = f"{item.text()!r} is not a number"
        if problem is not None:
            self._refuse(f"{self.what} {getattr(record, 'name', r)}: {column.label}: {problem}; the edit was not "
                         "applied")
            QTimer.singleShot(0, lambda: self.show_records(self.records))  # after Qt finished the edit
            return
        records = tuple(edited if k == r else x for k, x in enumerate(self.records))
        self._commit(records, f"{self.what} {getattr(edited, 'name', r)}: {column.label} {item.text()}")

    def selected_row(self) -> int | None:
        """The current row, or None."""
        return self.currentRow() if self.currentRow() >= 0 else None


class SitePanel(QScrollArea):
    """Flight volume (six spin boxes), keep-out boxes and meshes (tables with add and remove)."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.setWidgetResizable(True)
        body = QWidget()
        column = QVBoxLayout(body)
        volume = QGroupBox("Flight volume (drone centres stay inside)")
        grid = QGridLayout(volume)
        self.volume_spins: list[list[QDoubleSpinBox]] = []
        for row, corner in enumerate(("lower", "upper")):
            grid.addWidget(QLabel(corner), row, 0)
            spins = []
            for i, a in enumerate(AXES):
                spin = QDoubleSpinBox(minimum=-100_000, maximum=100_000, decimals=2, singleStep=1.0,
                                      prefix=f"{a} ", suffix=" m")
                spin.setMinimumWidth(80)  # narrower than its range's widest text: the panel stays narrow
                spin.editingFinished.connect(self._volume_edited)
                grid.addWidget(spin, row, 1 + i)
                spins.append(spin)
            self.volume_spins.append(spins)
        column.addWidget(volume)
        self.boxes = RecordTable(BOX_COLUMNS, "keep-out box", self._commit_boxes, self.document.message.emit)
        column.addWidget(self._group("Keep-out boxes (no clearance may touch them)", self.boxes,
                                     ("Add box", self.add_box), ("Remove box", self.remove_box)))
        self.meshes = RecordTable(MESH_COLUMNS, "mesh", self._commit_meshes, self.document.message.emit)
        self.meshes.setToolTip("A mesh's file is scaled by its units and scale, turned about z and moved; "
                               "files are named relative to the scene's folder")
        column.addWidget(self._group("Obstacle meshes", self.meshes, ("Add mesh…", self.add_mesh_dialog),
                                     ("Remove mesh", self.remove_mesh)))
        column.addStretch(1)
        self.setWidget(body)
        document.scene_changed.connect(self.refresh)
        self.refresh()

    @staticmethod
    def _group(title: str, table: RecordTable, *buttons) -> QGroupBox:
        group = QGroupBox(title)
        layout = QVBoxLayout(group)
        layout.addWidget(table)
        row = QHBoxLayout()
        for text, slot in buttons:
            button = QPushButton(text)
            button.clicked.connect(slot)
            row.addWidget(button)
        row.addStretch(1)
        layout.addLayout(row)
        return group

    def refresh(self) -> None:
        site = self.document.scene.site
        for spins, corner in zip(self.volume_spins, (site.flight_volume.lower, site.flight_volume.upper), strict=True):
            for spin, value in zip(spins, corner, strict=True):
                spin.blockSignals(True)
                spin.setValue(value)
                spin.blockSignals(False)
        self.boxes.show_records(site.keep_out)
        self.meshes.show_records(site.meshes)

    def _edit_site(self, text: str, **changes) -> None:
        scene: Scene = self.document.scene
        self.document.edit(replace(scene, site=replace(scene.site, **changes)), text)

    def _volume_edited(self) -> None:
        lower, upper = (tuple(s.value() for s in spins) for spins in self.volume_spins)
        volume = Box(lower=lower, upper=upper)
        if volume == self.document.scene.site.flight_volume:
            return
        problem = box_problem(volume)
        if problem is not None:
            self.document.message.emit(f"flight volume: {problem}; the edit was not applied")
            QTimer.singleShot(0, self.refresh)
            return
        self._edit_site("flight volume", flight_volume=volume)

    def _commit_boxes(self, boxes: tuple, text: str) -> None:
        self._edit_site(text, keep_out=boxes)

    def _commit_meshes(self, meshes: tuple, text: str) -> None:
        self._edit_site(text, meshes=meshes)

    def add_box(self) -> None:
        """A 2 m cube at the middle of the flight volume's floor, under a fresh name."""
        site = self.document.scene.site
        (x0, y0, z0), (x1, y1, _) = site.flight_volume.bounds
        cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
        name = fresh_name("box", {b.name for b in site.keep_out})
        box = NamedBox(lower=(cx - 1.0, cy - 1.0, z0), upper=(cx + 1.0, cy + 1.0, z0 + 2.0), name=name)
        self._edit_site(f"add keep-out box {name}", keep_out=site.keep_out + (box,))

    def remove_box(self) -> None:
        r = self.boxes.selected_row()
        site = self.document.scene.site
        if r is not None:
            self._edit_site(f"remove keep-out box {site.keep_out[r].name}",
                            keep_out=site.keep_out[:r] + site.keep_out[r + 1:])

    def add_mesh_dialog(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Add an obstacle mesh", str(self.document.base_dir), MESH_FILTER)
        if path:
            self.add_mesh(Path(path))

    def add_mesh(self, path: Path) -> None:
        """Add ``path`` as an obstacle mesh (named relative to the scene's folder where it can be)."""
        site, base = self.document.scene.site, self.document.base_dir.resolve()
        try:
            file = os.path.relpath(Path(path).resolve(), base)
        except ValueError:  # another drive
            file = str(Path(path).resolve())
        name = fresh_name(Path(path).stem.replace(" ", "_") or "mesh", {m.name for m in site.meshes})
        try:
            mesh = MeshRef(name=name, file=file)
        except ValueError as exc:
            self.document.message.emit(f"mesh {path}: {exc}")
            return
        self._edit_site(f"add mesh {name}", meshes=site.meshes + (mesh,))

    def remove_mesh(self) -> None:
        r = self.meshes.selected_row()
        site = self.document.scene.site
        if r is not None:
            self._edit_site(f"remove mesh {site.meshes[r].name}", meshes=site.meshes[:r] + site.meshes[r + 1:])

