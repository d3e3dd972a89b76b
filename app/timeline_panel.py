"""The timeline: start formation and hold, then each transition's target, assignment mode,
duration (or as fast as possible) and hold time, and when it starts (from the current plan, or
from the fixed durations before planning); transitions are inserted after, removed or moved with
the selected row. Every change is one undo step."""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QHBoxLayout,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from core.scene import Timeline, Transition

from .document import Document

MODES = ("labeled", "unlabeled", "grouped")
FASTEST_LABEL = "as fast as possible"


def _seconds(value: float, special: str | None = None) -> QDoubleSpinBox:
    spin = QDoubleSpinBox(minimum=0.0, maximum=36_000.0, value=value, decimals=1, singleStep=1.0, suffix=" s")
    if special:
        spin.setSpecialValueText(special)
    return spin


def start_times(timeline: Timeline, flown: list[float] | None = None) -> list[str]:
    """When each transition starts, as text: seconds after take-off from the durations ``flown``
    (a current plan's, s), else from the timeline's fixed durations, with "+ fastest × k" for the
    k earlier transitions flown as fast as possible (their length is known once planned)."""
    out, t, unknown = [], timeline.start_hold, 0
    for k, tr in enumerate(timeline.transitions):
        out.append(f"{t:.1f} s" + (f" + fastest × {unknown}" if unknown else ""))
        if flown is not None:
            t += flown[k]
        elif tr.duration == "fastest":
            unknown += 1
        else:
            t += float(tr.duration)
        t += tr.hold
    return out


class TimelinePanel(QWidget):
    """Editable table of transitions (target, assignment, duration, hold) and their start times."""

    COLUMNS = ("to formation", "assignment", "duration", "hold", "starts at")

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.start = QComboBox()
        self.start_hold = _seconds(0.0)
        self.table = QTableWidget(0, len(self.COLUMNS))
        self.table.setHorizontalHeaderLabels(self.COLUMNS)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.add_button, self.remove_button = QPushButton("Insert"), QPushButton("Remove")
        self.up_button, self.down_button = QPushButton("Move up"), QPushButton("Move down")
        self.add_button.setToolTip("Insert a transition after the selected one (at the end when none is selected)")
        self.remove_button.setToolTip("Remove the selected transition (the last one when none is selected)")
        form = QFormLayout()
        start_row = QHBoxLayout()
        start_row.addWidget(self.start, 1)
        start_row.addWidget(self.start_hold)
        form.addRow("start at (hold)", start_row)
        buttons = QHBoxLayout()
        for button in (self.add_button, self.remove_button, self.up_button, self.down_button):
            buttons.addWidget(button)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addWidget(self.table, 1)
        layout.addLayout(buttons)
        self.add_button.clicked.connect(self._add)
        self.remove_button.clicked.connect(self._remove)
        self.up_button.clicked.connect(lambda: self._move(-1))
        self.down_button.clicked.connect(lambda: self._move(1))
        self.start.currentTextChanged.connect(self._commit)
        self.start_hold.editingFinished.connect(self._commit)
        document.scene_changed.connect(self.refresh)
        document.plan_changed.connect(self.show_start_times)
        document.plan_stale_changed.connect(self.show_start_times)
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
        self.show_start_times()
        self.table.resizeColumnsToContents()

    def show_start_times(self, *_args) -> None:
        """The read-only "starts at" column (exact once the scene as edited is planned)."""
        plan = self.document.plan
        flown = [t.duration for t in plan.transitions] if self.document.plan_is_current else None
        for row, text in enumerate(start_times(self.document.scene.timeline, flown)):
            item = QTableWidgetItem(text)
            item.setFlags(item.flags() & ~Qt.ItemFlag.ItemIsEditable)
            item.setToolTip("seconds after take-off, from the plan" if flown else
                            "seconds after take-off from the fixed durations; transitions flown as fast as "
                            "possible add their time once planned")
            self.table.setItem(row, 4, item)

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

    def selected_row(self) -> int | None:
        """The selected transition's index, or None."""
        rows = self.table.selectionModel().selectedRows()
        return rows[0].row() if rows else None

    def _set_transitions(self, transitions: list[Transition], text: str, select: int | None) -> None:
        scene = self.document.scene
        self.document.edit(replace(scene, timeline=replace(scene.timeline, transitions=tuple(transitions))), text)
        if select is not None:
            self.table.selectRow(select)

    def _add(self) -> None:
        scene = self.document.scene
        transitions = list(scene.timeline.transitions)
        row = self.selected_row()
        at = len(transitions) if row is None else row + 1
        before = transitions[at - 1].to if at > 0 else scene.timeline.start
        target = next((f.name for f in scene.formations if f.name != before), before)
        transitions.insert(at, Transition(to=target))
        self._set_transitions(transitions, "insert transition", at)

    def _remove(self) -> None:
        transitions = list(self.document.scene.timeline.transitions)
        if len(transitions) > 1:
            row = self.selected_row()
            at = len(transitions) - 1 if row is None else row
            del transitions[at]
            self._set_transitions(transitions, "remove transition", min(at, len(transitions) - 1) if row is not None
                                  else None)

    def _move(self, step: int) -> None:
        transitions = list(self.document.scene.timeline.transitions)
        row = self.selected_row()
        if row is None or not 0 <= row + step < len(transitions):
            return
        transitions[row], transitions[row + step] = transitions[row + step], transitions[row]
        self._set_transitions(transitions, "move transition", row + step)
