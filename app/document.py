"""The one place that owns the open scene, its file, the undo history, the current plan, the time
cursor and the drone selection. Views read from it and change it only through its methods."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import shiboken6
from PySide6.QtCore import QObject, QSettings, Signal
from PySide6.QtGui import QUndoCommand, QUndoStack

from core.errors import SkyloomError
from core.inspection import Approach, closest_approaches
from core.pipeline import PlanResult
from core.scene import Formation, Scene, load_scene, save_scene
from core.scene.checks import check_scene
from core.scene.io import relocated
from core.scene.meshes import SiteMesh, load_site_meshes
from core.scene.starter import starter_scene

RECENT_KEY = "recent_files"
RECENT_COUNT = 8


class SceneEdit(QUndoCommand):
    """One undoable edit: the whole scene before and after (scenes are immutable values)."""

    def __init__(self, document: Document, before: Scene, after: Scene, text: str, merge_key: int = -1):
        super().__init__(text)
        self.document, self.before, self.after, self.merge_key = document, before, after, merge_key

    def redo(self) -> None:
        self.document._show_scene(self.after)

    def undo(self) -> None:
        self.document._show_scene(self.before)

    def id(self) -> int:  # noqa: A003 - Qt's name
        return self.merge_key

    def mergeWith(self, other: QUndoCommand) -> bool:  # noqa: N802 - Qt's name
        if not isinstance(other, SceneEdit) or other.merge_key != self.merge_key or self.merge_key < 0:
            return False
        self.after = other.after
        return True


class Document(QObject):
    """Scene + file + undo stack + plan + time + selection, with change signals."""

    scene_changed = Signal()
    plan_changed = Signal()
    time_changed = Signal(float)
    selection_changed = Signal()
    path_changed = Signal()
    #: The plan stopped (True) or started again (False, by undo) matching the scene as edited.
    plan_stale_changed = Signal(bool)
    formation_chosen = Signal(str)
    message = Signal(str)

    def __init__(self, scene: Scene, path: Path | None = None, settings: QSettings | None = None):
        super().__init__()
        self.scene, self.path = scene, path
        self.undo_stack = QUndoStack(self)
        self.plan: PlanResult | None = None
        self.approaches: list[Approach] = []
        self.time = 0.0
        self.selected: tuple[int, ...] = ()
        self.workers: int | None = None
        self.active_formation = scene.formations[0].name
        #: The designer's remembered choices (recent files, the look).
        self.settings = settings or QSettings("Skyloom", "Designer")
        self._meshes: tuple[SiteMesh, ...] | None = None
        self._mesh_site = None
        self._stale = False

    # --- files -------------------------------------------------------------------------------
    @property
    def base_dir(self) -> Path:
        return self.path.parent if self.path else Path(".")

    def open(self, path: Path) -> None:
        """Load ``path`` (raises :class:`SkyloomError` with the reason when the file cannot be read
        or its structure is wrong; the open scene stays). A scene saved while still being edited
        (points in an obstacle, counts that do not match) opens, and its problems are listed."""
        scene = load_scene(path, check=False)
        self._reset(scene, Path(path))
        self._remember(self.path)
        problems = self.problems()
        if problems:
            self.message.emit("\n".join([f"{self.source_name} opened with {len(problems)} problem(s) to fix before "
                                          "planning:", *(f"{where}: {why}" for where, why in problems)]))

    def new(self) -> None:
        """Start a new scene without a file (:func:`core.scene.starter.starter_scene`)."""
        self._reset(starter_scene(), None)

    @property
    def unsaved(self) -> bool:
        """Whether the scene has edits that are not in its file (False once Qt has deleted the undo
        stack: a title update can still arrive while the interpreter tears the window down)."""
        return shiboken6.isValid(self.undo_stack) and not self.undo_stack.isClean()

    @property
    def plan_is_current(self) -> bool:
        """Whether there is a plan and it was made for the scene exactly as it is now (an edit
        makes the plan stale: it is not verified for the edited scene and is not exported)."""
        return self.plan is not None and self.plan.scene == self.scene

    def _reset(self, scene: Scene, path: Path | None) -> None:
        self.undo_stack.clear()
        self.path = path
        self.plan, self.approaches = None, []
        self._show_scene(scene)
        self.plan_changed.emit()
        self.path_changed.emit()

    def save(self, path: Path | None = None) -> None:
        """Write the scene (atomically) to ``path`` or its own file. Saved into another folder,
        the files it names keep working (:func:`core.scene.io.relocated`: CSV formations inline,
        mesh paths from the new folder), in the file and in the open scene, its undo history and
        its plan alike, so a later save or undo names them right too."""
        target = Path(path or self.path)
        old_dir, new_dir = self.base_dir, target.parent
        scene = relocated(self.scene, old_dir, new_dir)
        save_scene(scene, target)
        if scene != self.scene:
            self._relocate(old_dir, new_dir)
        self.path = target
        self.undo_stack.setClean()
        self._remember(target)
        self.path_changed.emit()

    def _relocate(self, old_dir: Path, new_dir: Path) -> None:
        """Re-point every scene the document holds from ``old_dir`` to ``new_dir`` (no undo step:
        the scene means the same)."""
        for k in range(self.undo_stack.count()):
            step = self.undo_stack.command(k)
            if isinstance(step, SceneEdit):
                step.before, step.after = (relocated(x, old_dir, new_dir) for x in (step.before, step.after))
        if self.plan is not None:
            self.plan = replace(self.plan, scene=relocated(self.plan.scene, old_dir, new_dir))
        self._mesh_site = None  # same meshes, other paths: read again under the new folder
        self.scene = relocated(self.scene, old_dir, new_dir)
        self.scene_changed.emit()

    def recent_files(self) -> list[str]:
        value = self.settings.value(RECENT_KEY, [])
        return [value] if isinstance(value, str) else list(value or [])

    def _remember(self, path: Path) -> None:
        items = [str(Path(path).resolve())] + [p for p in self.recent_files() if p != str(Path(path).resolve())]
        self.settings.setValue(RECENT_KEY, items[:RECENT_COUNT])

    # --- edits -------------------------------------------------------------------------------
    def edit(self, after: Scene, text: str, merge_key: int = -1) -> None:
        """Replace the scene with ``after`` as one undoable step named ``text``."""
        if after != self.scene:
            self.undo_stack.push(SceneEdit(self, self.scene, after, text, merge_key))

    def edit_formation(self, name: str, points: np.ndarray, groups: tuple[str, ...] | None, text: str,
                       merge_key: int = -1) -> None:
        """Set formation ``name``'s points ``(n, 3)`` (and groups); a CSV source becomes inline points."""
        formations = tuple(
            replace(f, points=tuple(map(tuple, np.asarray(points, dtype=float).tolist())), groups=groups, csv=None)
            if f.name == name else f for f in self.scene.formations)
        self.edit(replace(self.scene, formations=formations), text, merge_key)

    def add_formation(self, formation: Formation) -> None:
        self.edit(replace(self.scene, formations=self.scene.formations + (formation,)),
                  f"add formation {formation.name}")

    def choose_formation(self, name: str) -> None:
        if name != self.active_formation and self.formation(name) is not None:
            self.active_formation = name
            self.formation_chosen.emit(name)

    def formation(self, name: str) -> Formation | None:
        return next((f for f in self.scene.formations if f.name == name), None)

    def problems(self) -> list[tuple[str, str]]:
        """What is inconsistent in the scene as edited (empty when it can be planned)."""
        return check_scene(self.scene, self.source_name, self.base_dir, self.meshes() or None)

    @property
    def source_name(self) -> str:
        """The scene file's name for messages (the scene's name while it has no file)."""
        return self.path.name if self.path else self.scene.name

    def meshes(self) -> tuple[SiteMesh, ...]:
        """The site's meshes (read once per site); an unreadable one is reported and skipped."""
        if self._mesh_site != self.scene.site:
            self._mesh_site = self.scene.site
            try:
                self._meshes = load_site_meshes(self.scene.site, self.base_dir, self.source_name)
            except SkyloomError as exc:
                self._meshes = ()
                self.message.emit(str(exc))
        return self._meshes or ()

    def _show_scene(self, scene: Scene) -> None:
        self.scene = scene
        if self.formation(self.active_formation) is None:
            self.active_formation = scene.formations[0].name
            self.formation_chosen.emit(self.active_formation)
        self.scene_changed.emit()
        self._update_stale()

    def _update_stale(self) -> None:
        stale = self.plan is not None and not self.plan_is_current
        if stale != self._stale:
            self._stale = stale
            self.plan_stale_changed.emit(stale)

    # --- plan, time, selection ---------------------------------------------------------------
    def set_plan(self, result: PlanResult, approaches: list[Approach] | None = None) -> None:
        """Show ``result`` and its close ``approaches`` (sampled now if not given); the previous
        plan is replaced only here, after a plan succeeded."""
        self.plan = result
        self.approaches = approaches if approaches is not None else \
            closest_approaches(result.trajectory, result.scene.fleet.clearance)
        self.time = min(self.time, result.trajectory.duration)
        self.plan_changed.emit()
        self._update_stale()
        self.time_changed.emit(self.time)

    def set_time(self, t: float) -> None:
        duration = self.plan.trajectory.duration if self.plan else 0.0
        t = float(np.clip(t, 0.0, duration))
        if t != self.time:
            self.time = t
            self.time_changed.emit(t)

    def select(self, drones: tuple[int, ...]) -> None:
        drones = tuple(sorted(set(int(d) for d in drones)))
        if drones != self.selected:
            self.selected = drones
            self.selection_changed.emit()
