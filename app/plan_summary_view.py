"""The plan summary as tables: the verifier's verdict, one row per transition (how it was
planned, how long it flies against its bounds, what the smoothing did) and one row per drone
(smallest separation ratio and peaks, sortable; a click selects the drone), with the full text
report under "Details". Cells are selectable; Ctrl+C copies them as tab-separated text."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QGuiApplication, QKeySequence
from PySide6.QtWidgets import (
    QAbstractItemView,
    QLabel,
    QPlainTextEdit,
    QTableWidget,
    QTableWidgetItem,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from core import SAFETY_CAUTION
from core.pipeline import PlanResult
from core.plan_summary import plan_summary_lines

from .document import Document

#: First lines of the summary while the plan does not match the scene as edited.
STALE_NOTE = ("PLAN OUT OF DATE: the scene was edited after this plan was made. What follows was verified "
              "for the scene before those edits, not for the scene as it is now; plan again (F5).")
TRANSITION_COLUMNS = ("transition", "planned by", "flight (s)", "needs at least (s)", "× straight-line bound",
                      "× free-space bound", "smoothing")
DRONE_COLUMNS = ("drone", "type", "smallest separation ratio", "speed xy (m/s)", "speed z (m/s)",
                 "acceleration (m/s²)", "jerk (m/s³)", "snap (m/s⁴)")


class NumberItem(QTableWidgetItem):
    """A number shown with three decimals that sorts as a number."""

    def __init__(self, value: float):
        super().__init__(f"{value:.3f}")
        self.value = value
        self.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)

    def __lt__(self, other: QTableWidgetItem) -> bool:
        return self.value < other.value if isinstance(other, NumberItem) else super().__lt__(other)


class CopyableTable(QTableWidget):
    """A read-only table whose selected cells Ctrl+C copies as tab-separated rows."""

    def __init__(self, columns: tuple[str, ...], parent=None):
        super().__init__(0, len(columns), parent)
        self.setHorizontalHeaderLabels(list(columns))
        self.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.verticalHeader().setVisible(False)
        self.setWordWrap(False)

    def copy_text(self) -> str:
        """The selected cells, rows by newlines and columns by tabs (the header first)."""
        cells = self.selectedIndexes()
        if not cells:
            return ""
        rows, cols = sorted({c.row() for c in cells}), sorted({c.column() for c in cells})
        header = "\t".join(self.horizontalHeaderItem(c).text() for c in cols)
        body = ["\t".join(self.item(r, c).text() if self.item(r, c) else "" for c in cols) for r in rows]
        return "\n".join([header, *body])

    def keyPressEvent(self, event):  # noqa: N802 - Qt's name
        if event.matches(QKeySequence.StandardKey.Copy):
            QGuiApplication.clipboard().setText(self.copy_text())
        else:
            super().keyPressEvent(event)

    def fill(self, rows: list[tuple]) -> None:
        """Rows of cell values (floats shown with three decimals, sorted as numbers)."""
        self.setSortingEnabled(False)
        self.setRowCount(len(rows))
        for r, values in enumerate(rows):
            for c, value in enumerate(values):
                self.setItem(r, c, NumberItem(value) if isinstance(value, float) else QTableWidgetItem(str(value)))
        self.resizeColumnsToContents()


def transition_rows(plan: PlanResult) -> list[tuple]:
    """One row per transition (see :data:`TRANSITION_COLUMNS`)."""
    rows = []
    for t in plan.transitions:
        rounds = t.smoothing.rounds if t.smoothing else ()
        accepted = sum(r.accepted for r in rounds)
        smoothing = "—" if t.smoothing is None else f"{accepted} of {len(rounds)} rounds kept"
        if t.smoothing and t.smoothing.note:
            smoothing += f"; {t.smoothing.note}"
        free = "—" if t.free_space_ratio is None else float(t.free_space_ratio)
        rows.append((f"{t.problem.source} → {t.problem.target}", t.method_text, float(t.duration),
                     float(t.minimum_duration), float(t.makespan_ratio), free, smoothing))
    return rows


def drone_rows(plan: PlanResult) -> list[tuple]:
    """One row per drone (see :data:`DRONE_COLUMNS`), in fleet order."""
    types = {d.id: d.type for d in plan.scene.fleet.drones}
    return [(d.drone, types.get(d.drone, ""), float(d.min_separation_ratio), float(d.peak_speed_xy),
             float(d.peak_speed_z), float(d.peak_acceleration), float(d.peak_jerk), float(d.peak_snap))
            for d in plan.report.drones]


class PlanSummaryView(QWidget):
    """Verdict line, out-of-date banner, and the Transitions / Drones / Details tabs."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.banner = QLabel(STALE_NOTE, wordWrap=True, objectName="banner")
        self.verdict = QLabel(textInteractionFlags=Qt.TextInteractionFlag.TextSelectableByMouse, wordWrap=True)
        self.transitions = CopyableTable(TRANSITION_COLUMNS)
        self.drones = CopyableTable(DRONE_COLUMNS)
        self.drones.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.drones.setToolTip("Click a column's header to sort by it; click a row to select the drone")
        self.details = QPlainTextEdit(readOnly=True)  # the full text report, selectable and copyable
        self.tabs = QTabWidget()
        for widget, name in ((self.transitions, "Transitions"), (self.drones, "Drones"), (self.details, "Details")):
            self.tabs.addTab(widget, name)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.addWidget(self.banner)
        layout.addWidget(self.verdict)
        layout.addWidget(self.tabs, 1)
        self.drones.itemSelectionChanged.connect(self._select_drones)
        document.plan_changed.connect(self.refresh)
        document.plan_stale_changed.connect(self.refresh)
        self.refresh()

    def refresh(self, *_args) -> None:
        plan = self.document.plan
        self.banner.setVisible(plan is not None and not self.document.plan_is_current)
        if plan is None:
            self.verdict.setText("No plan yet: press Plan (F5).")
            self.transitions.fill([])
            self.drones.fill([])
            self.details.setPlainText("No plan yet: press Plan (F5).")
            return
        self.verdict.setText(" · ".join(line.strip() for line in plan.report.summary_lines()))
        self.transitions.fill(transition_rows(plan))
        self.drones.blockSignals(True)
        self.drones.fill(drone_rows(plan))
        self.drones.setSortingEnabled(True)
        self.drones.blockSignals(False)
        stale = [] if self.document.plan_is_current else [STALE_NOTE, ""]
        lines = [*stale, *plan.report.summary_lines(), "", *plan_summary_lines(plan), "", f"Safety: {SAFETY_CAUTION}"]
        self.details.setPlainText("\n".join(lines))

    def _select_drones(self) -> None:
        plan = self.document.plan
        if plan is None:
            return
        ids = plan.scene.fleet.ids
        chosen = {self.drones.item(i.row(), 0).text() for i in self.drones.selectionModel().selectedRows()}
        self.document.select(tuple(ids.index(d) for d in chosen if d in ids))
