"""Planner settings: roadmap density, stretch, search method, suboptimality, search time, smoothing on/off,
rounds and objective, and worker processes (a machine setting, not stored in the scene)."""

from __future__ import annotations

from dataclasses import replace

from PySide6.QtWidgets import QCheckBox, QComboBox, QDoubleSpinBox, QFormLayout, QSpinBox, QWidget

from core.objectives import OBJECTIVES

from .document import Document

#: ``planner.search`` values and how the form names them.
SEARCH_CHOICES = (("auto", "by fleet size"), ("ecbs", "ECBS"), ("lacam", "LaCAM*"))


class PlannerPanel(QWidget):
    """A form bound to ``scene.planner``; each change is one undo step."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.samples = QSpinBox(minimum=50, maximum=200_000, singleStep=250)
        self.stretch = QDoubleSpinBox(minimum=1.0, maximum=10.0, singleStep=0.1, decimals=2)
        self.search = QComboBox()
        for value, text in SEARCH_CHOICES:
            self.search.addItem(text, value)
        self.search.setToolTip("By fleet size: ECBS (sum of costs within w of the optimum) up to 32 drones, with "
                               "LaCAM* taking over if ECBS runs out of time; LaCAM* (complete, fast on hundreds of "
                               "drones) for larger teams.")
        self.suboptimality = QDoubleSpinBox(minimum=1.0, maximum=10.0, singleStep=0.1, decimals=2)
        self.time_limit = QDoubleSpinBox(minimum=1.0, maximum=3600.0, singleStep=10.0, suffix=" s")
        self.smoothing = QCheckBox("smooth roadmap plans")
        self.iterations = QSpinBox(minimum=1, maximum=50)
        self.objective = QComboBox(editable=True)
        self.objective.addItems(list(OBJECTIVES))
        self.degree = QSpinBox(minimum=5, maximum=15)
        self.workers = QSpinBox(minimum=0, maximum=256, specialValueText="all CPUs")
        form = QFormLayout(self)
        rows = (
            ("roadmap points", self.samples,
             "How many free-space points the roadmap around obstacles is built from (default 1 500), besides the "
             "points the passage samplers add near obstacles. More points find narrow passages more surely and give "
             "shorter paths; building takes longer and needs more memory."),
            ("roadmap detour allowance", self.stretch,
             "How much longer than before a path may become when the roadmap is thinned out (a greedy spanner with "
             "this stretch factor; default 1.5). 1 keeps every connection; larger values give a sparser roadmap that "
             "is searched faster, with longer detours."),
            ("search", self.search, self.search.toolTip()),
            ("ECBS cost allowance (w)", self.suboptimality,
             "ECBS returns a plan whose total number of steps is at most w times the fewest possible (default 2). "
             "1 asks for the optimum, which can take very long for large teams. LaCAM* has no such bound."),
            ("search time limit", self.time_limit,
             "Longest the multi-agent search may run (default 60 s); when it runs out, the message names the drones "
             "that did not get through and where they crowd."),
            (None, self.smoothing,
             "Off: roadmap plans stop at every waypoint (the stop-and-go plan). On: the curves are smoothed inside "
             "safe corridors, every round checked by the independent verifier."),
            ("smoothing rounds", self.iterations,
             "Most corridor-and-QP rounds (default 5). After the first, each round re-times the steps; smoothing "
             "ends when a round shortens the flight by less than 5 % (or not at all: then the round before is kept). "
             "A round that fails is followed by rounds that only reshape the curves."),
            ("smoothness goal", self.objective,
             "What smoothing minimises: the integral of squared snap (default), jerk or acceleration, 'energy', or "
             "weights such as acceleration=1,snap=0.01."),
            ("curve degree (Bézier)", self.degree,
             "Polynomial degree of each curve piece (default 9: continuous up to snap; 7–8: up to jerk). Higher "
             "degrees bend more freely and cost more to solve."),
            ("worker processes", self.workers,
             "Processes that solve the drones' smoothing problems in parallel (a setting of this computer, not "
             "saved in the scene)."),
        )
        for label, widget, tip in rows:
            widget.setToolTip(tip)
            if label is None:
                form.addRow(widget)
            else:
                form.addRow(label, widget)
        self._fields = {"roadmap_samples": self.samples, "spanner_stretch": self.stretch,
                        "suboptimality": self.suboptimality, "search_time_limit": self.time_limit,
                        "smoothing_iterations": self.iterations, "degree": self.degree}
        for w in self._fields.values():
            w.editingFinished.connect(self._commit)
        self.smoothing.toggled.connect(self._commit)
        self.objective.activated.connect(self._commit)
        self.search.activated.connect(self._commit)
        self.objective.lineEdit().editingFinished.connect(self._commit)
        self.workers.valueChanged.connect(lambda v: setattr(document, "workers", v or None))
        document.scene_changed.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        s = self.document.scene.planner
        for name, w in self._fields.items():
            w.blockSignals(True)
            w.setValue(getattr(s, name))
            w.blockSignals(False)
        self.smoothing.blockSignals(True)
        self.smoothing.setChecked(s.smoothing)
        self.smoothing.blockSignals(False)
        self.objective.blockSignals(True)
        self.objective.setCurrentText(s.objective)
        self.objective.blockSignals(False)
        self.search.blockSignals(True)
        self.search.setCurrentIndex(self.search.findData(s.search))
        self.search.blockSignals(False)

    def _commit(self, *_args) -> None:
        scene = self.document.scene
        changes = {name: w.value() for name, w in self._fields.items()}
        changes.update(smoothing=self.smoothing.isChecked(), objective=self.objective.currentText().strip(),
                       search=self.search.currentData())
        try:
            planner = replace(scene.planner, **changes)
        except ValueError as exc:  # pydantic's ValidationError is a ValueError
            self.document.message.emit(f"planner settings: {exc}")
            self.refresh()
            return
        self.document.edit(replace(scene, planner=planner), "planner settings")
