"""Time slider with play/pause and playback speed."""

from __future__ import annotations

from PySide6.QtCore import Qt, QTimer
from PySide6.QtWidgets import QComboBox, QHBoxLayout, QLabel, QPushButton, QSlider, QWidget

from .document import Document

#: Slider steps per second of flight.
STEPS_PER_SECOND = 100
#: Animation frame interval (ms).
FRAME_MS = 33
SPEEDS = ("0.25×", "0.5×", "1×", "2×", "4×", "10×")


class TimeBar(QWidget):
    """Bound to the document's time; plays at the chosen speed."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.play_button = QPushButton("Play")
        self.play_button.setCheckable(True)
        self.slider = QSlider(Qt.Orientation.Horizontal)
        self.speed = QComboBox()
        self.speed.addItems(SPEEDS)
        self.speed.setCurrentText("1×")
        self.clock = QLabel("0.00 s")
        self.clock.setMinimumWidth(120)
        layout = QHBoxLayout(self)
        layout.setContentsMargins(4, 0, 4, 0)
        for w in (self.play_button, self.slider, self.clock, QLabel("speed"), self.speed):
            layout.addWidget(w, 1 if w is self.slider else 0)
        self.timer = QTimer(self, interval=FRAME_MS)
        self.timer.timeout.connect(self.advance)
        self.play_button.toggled.connect(self._toggle)
        self.slider.valueChanged.connect(lambda v: document.set_time(v / STEPS_PER_SECOND))
        document.plan_changed.connect(self.refresh)
        document.time_changed.connect(self.show_time)
        self.refresh()

    def refresh(self) -> None:
        plan = self.document.plan
        duration = plan.trajectory.duration if plan else 0.0
        self.slider.setRange(0, int(round(duration * STEPS_PER_SECOND)))
        self.setEnabled(plan is not None)
        self.show_time(self.document.time)

    def show_time(self, t: float) -> None:
        self.slider.blockSignals(True)
        self.slider.setValue(int(round(t * STEPS_PER_SECOND)))
        self.slider.blockSignals(False)
        duration = self.document.plan.trajectory.duration if self.document.plan else 0.0
        self.clock.setText(f"{t:.2f} / {duration:.2f} s")

    def advance(self) -> None:
        """One animation frame at the chosen speed (stops at the end)."""
        plan = self.document.plan
        if plan is None:
            return
        factor = float(self.speed.currentText().rstrip("×"))
        t = self.document.time + factor * FRAME_MS / 1000.0
        if t >= plan.trajectory.duration:
            t = plan.trajectory.duration
            self.play_button.setChecked(False)
        self.document.set_time(t)

    def _toggle(self, on: bool) -> None:
        if on and self.document.plan and self.document.time >= self.document.plan.trajectory.duration:
            self.document.set_time(0.0)
        self.play_button.setText("Pause" if on else "Play")
        (self.timer.start if on else self.timer.stop)()
