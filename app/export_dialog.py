"""Export through the same exporter as the CLI, after showing the safety caution and the
verification status. An unverified plan is written only when the user ticks that it may be,
and its files then say UNVERIFIED."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import (
    QCheckBox,
    QDialog,
    QDialogButtonBox,
    QDoubleSpinBox,
    QFileDialog,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QVBoxLayout,
)

from core import SAFETY_CAUTION
from core.export import export_plan
from core.pipeline import PlanResult


class ExportDialog(QDialog):
    """Folder, sample rate, caution, status; :meth:`write` does the export."""

    def __init__(self, result: PlanResult, default_folder: Path, protect: list[Path], parent=None):
        super().__init__(parent)
        self.setWindowTitle("Export plan")
        self.setMinimumWidth(620)  # room for a whole folder path
        self.result, self.protect = result, protect
        status = ("Verification PASSED: Skyloom's independent checker proved the clearances and limits over "
                  "continuous time." if result.verified else
                  f"Verification FAILED ({len(result.report.violations)} problems). Do not fly this plan.")
        self.status = QLabel(status)
        self.status.setWordWrap(True)
        self.caution = QLabel(f"<b>Safety.</b> {SAFETY_CAUTION}")
        self.caution.setWordWrap(True)
        self.folder = QLineEdit(str(default_folder))
        browse = QPushButton("Choose…")
        browse.clicked.connect(self._browse)
        self.rate = QDoubleSpinBox(minimum=0.1, maximum=1000.0, value=10.0, suffix=" Hz")
        self.allow_unverified = QCheckBox("write it anyway, every file marked UNVERIFIED")
        self.allow_unverified.setVisible(not result.verified)
        self.understood = QCheckBox("I have read the caution above")
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Save | QDialogButtonBox.StandardButton.Cancel)
        self.save_button = buttons.button(QDialogButtonBox.StandardButton.Save)
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        row = QHBoxLayout()
        row.addWidget(self.folder, 1)
        row.addWidget(browse)
        form = QFormLayout()
        form.addRow("folder", row)
        rule = QLabel("A new or empty folder, or an earlier Skyloom export; a folder holding other files is "
                      "refused and left as it is.")
        rule.setWordWrap(True)
        form.addRow("", rule)
        form.addRow("samples.csv rate", self.rate)
        layout = QVBoxLayout(self)
        for w in (self.status, self.caution):
            layout.addWidget(w)
        layout.addLayout(form)
        layout.addWidget(self.allow_unverified)
        layout.addWidget(self.understood)
        layout.addWidget(buttons)
        for box in (self.understood, self.allow_unverified):
            box.toggled.connect(self._update)
        self._update()

    def _update(self) -> None:
        self.save_button.setEnabled(self.understood.isChecked()
                                    and (self.result.verified or self.allow_unverified.isChecked()))

    def _browse(self) -> None:
        folder = QFileDialog.getExistingDirectory(self, "Export folder", str(Path(self.folder.text()).parent))
        if folder:  # a chosen folder that holds other files is refused on Save, with the reason
            self.folder.setText(folder)

    def write(self) -> tuple[Path, list[str]]:
        """Write the export; return its folder and notes about folders kept aside. Raises
        :class:`SkyloomError` saying why when the folder may not be replaced or cannot be written
        (only a new or empty folder, or an earlier Skyloom export, is replaced)."""
        notes: list[str] = []
        folder = export_plan(self.result, Path(self.folder.text()), sample_rate_hz=self.rate.value(),
                             allow_unverified=self.allow_unverified.isChecked(), protect=self.protect,
                             warn=notes.append)
        return folder, notes

