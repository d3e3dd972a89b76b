"""What the verifier found (violations, or unproven values) and the closest approaches of drone
pairs; clicking a row moves the time cursor there, selects the drones and frames them in 3D."""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import QAbstractItemView, QLabel, QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget

from core.inspection import APPROACH_BAND

from .document import Document


@dataclass(frozen=True)
class Finding:
    """One row: ``severity`` is "violation", "unproven" or "close approach"; drone indices."""

    severity: str
    kind: str
    drones: tuple[int, ...]
    time: float
    value: float
    limit: float
    detail: str


def findings(document: Document) -> list[Finding]:
    """Rows for the document's plan: verifier violations first, then close approaches."""
    plan = document.plan
    if plan is None:
        return []
    ids = plan.scene.fleet.ids
    rows = [Finding("violation" if v.proven else "unproven", v.kind, tuple(ids.index(d) for d in v.drones), v.time,
                    v.measured, v.required, v.detail) for v in plan.report.violations]
    rows += [Finding("close approach", "separation", a.pair, a.time, a.ratio, 1.0,
                     f"closest sampled approach of {ids[a.pair[0]]} and {ids[a.pair[1]]} (ratio 1 = clearance)")
             for a in document.approaches]
    return rows


class FindingsTable(QWidget):
    """Table of :class:`Finding` rows; emits ``focus_requested`` with drone indices on a click."""

    COLUMNS = ("severity", "what", "drones", "time (s)", "value", "limit", "detail")
    focus_requested = Signal(tuple)

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.rows: list[Finding] = []
        self.summary = QLabel()
        self.table = QTableWidget(0, len(self.COLUMNS))
        self.table.setHorizontalHeaderLabels(self.COLUMNS)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.horizontalHeader().setStretchLastSection(True)
        layout = QVBoxLayout(self)
        layout.addWidget(self.summary)
        layout.addWidget(self.table, 1)
        self.table.cellClicked.connect(lambda row, _col: self.activate(row))
        document.plan_changed.connect(self.refresh)
        document.plan_stale_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        self.rows = findings(self.document)
        plan = self.document.plan
        if plan is None:
            self.summary.setText("No plan yet.")
        else:
            verdict = "Verification PASSED" if plan.verified else "Verification FAILED"
            if not self.document.plan_is_current:
                verdict = f"Plan out of date (scene edited since); for the scene before the edits: {verdict}"
            n_bad = sum(r.severity != "close approach" for r in self.rows)
            self.summary.setText(f"{verdict}: {n_bad} problems; {len(self.rows) - n_bad} drone pairs came "
                                 f"within {APPROACH_BAND:g}× the clearance (sampled).")
        ids = plan.scene.fleet.ids if plan else ()
        self.table.setRowCount(len(self.rows))
        for r, f in enumerate(self.rows):
            values = (f.severity, f.kind, ", ".join(ids[d] for d in f.drones), f"{f.time:.2f}", f"{f.value:.3g}",
                      f"{f.limit:.3g}", f.detail)
            for c, text in enumerate(values):
                item = QTableWidgetItem(text)
                if f.severity != "close approach":
                    item.setForeground(QColor(255, 110, 110))
                self.table.setItem(r, c, item)
        self.table.resizeColumnsToContents()

    def activate(self, row: int) -> None:
        """Move the time cursor to row ``row``'s time and select (and frame) its drones."""
        f = self.rows[row]
        self.document.set_time(f.time)
        self.document.select(f.drones)
        self.focus_requested.emit(f.drones)
