"""The timeline: start formation and hold, then each transition's target, assignment mode,
duration (or as fast as possible) and hold time. Every change is one undo step."""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtWidgets import (
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QHBoxLayout,
    QPushButton,
    QTableWidget,
    QVBoxLayout,
    QWidget,
)

from core.scene import Transition

from .document import Document

MODES = ("labeled", "unlabeled", "grouped")
FASTEST_LABEL = "as fast as possible"


def _seconds(value: float, special: str | None = None) -> QDoubleSpinBox:
    spin = QDoubleSpinBox(minimum=0.0, maximum=36_000.0, value=value, decimals=1, singleStep=1.0, suffix=" s")
    if special:
        spin.setSpecialValueText(special)
    return spin


class TimelinePanel(QWidget):
    """Editable table of transitions (target, assignment, duration, hold)."""

    COLUMNS = ("to formation", "assignment", "duration", "hold")

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.start = QComboBox()
        self.start_hold = _seconds(0.0)
        self.table = QTableWidget(0, len(self.COLUMNS))
        self.table.setHorizontalHeaderLabels(self.COLUMNS)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.add_button, self.remove_button = QPushButton("Add transition"), QPushButton("Remove last")
        form = QFormLayout()
        start_row = QHBoxLayout()
        start_row.addWidget(self.start, 1)
        start_row.addWidget(self.start_hold)
        form.addRow("start at (hold)", start_row)
        buttons = QHBoxLayout()
        buttons.addWidget(self.add_button)
        buttons.addWidget(self.remove_button)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addWidget(self.table, 1)
        layout.addLayout(buttons)
        self.add_button.clicked.connect(self._add)
        self.remove_button.clicked.connect(self._remove)
        self.start.currentTextChanged.connect(self._commit)
        self.start_hold.editingFinished.connect(self._commit)
        document.scene_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        scene = self.document.scene
        names = [f.name for f in scene.formations]
        self.start.blockSignals(True)
        self.start.clear()
        self.start.addItems(names)
        self.start.setCurrentText(scene.timeline.start)
        self.start.blockSignals(False)
        self.start_hold.blockSignals(True)
        self.start_hold.setValue(scene.timeline.start_hold)
        self.start_hold.blockSignals(False)
        self.table.setRowCount(len(scene.timeline.transitions))
        for row, t in enumerate(scene.timeline.transitions):
            target, mode = QComboBox(), QComboBox()
            target.addItems(names)
            target.setCurrentText(t.to)
            mode.addItems(MODES)
            mode.setCurrentText(t.assignment)
            duration = _seconds(0.0 if t.duration == "fastest" else float(t.duration), FASTEST_LABEL)
            hold = _seconds(t.hold)
            for col, w in enumerate((target, mode, duration, hold)):
                self.table.setCellWidget(row, col, w)
                signal = w.currentTextChanged if isinstance(w, QComboBox) else w.editingFinished
                signal.connect(self._commit)
        self.table.resizeColumnsToContents()

    def transitions(self) -> tuple[Transition, ...]:
        out = []
        for row in range(self.table.rowCount()):
            target, mode, duration, hold = (self.table.cellWidget(row, c) for c in range(4))
            out.append(Transition(to=target.currentText(), assignment=mode.currentText(),
                                  duration=duration.value() if duration.value() > 0 else "fastest",
                                  hold=hold.value()))
        return tuple(out)

    def _commit(self, *_args) -> None:
        scene = self.document.scene
        timeline = replace(scene.timeline, start=self.start.currentText(), start_hold=self.start_hold.value(),
                           transitions=self.transitions())
        self.document.edit(replace(scene, timeline=timeline), "edit timeline")

    def _add(self) -> None:
        scene = self.document.scene
        last = scene.timeline.transitions[-1].to
        target = next((f.name for f in scene.formations if f.name != last), last)
        timeline = replace(scene.timeline, transitions=scene.timeline.transitions + (Transition(to=target),))
        self.document.edit(replace(scene, timeline=timeline), "add transition")

    def _remove(self) -> None:
        scene = self.document.scene
        if len(scene.timeline.transitions) > 1:
            timeline = replace(scene.timeline, transitions=scene.timeline.transitions[:-1])
            self.document.edit(replace(scene, timeline=timeline), "remove transition")

