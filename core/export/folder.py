"""Writing and reading an export folder. The folder is built beside its target and moved into
place only when complete, so a failure never leaves a half-written export (earlier one kept)."""

from __future__ import annotations

import json
import re
import shutil
from dataclasses import asdict
from pathlib import Path

from .. import SAFETY_CAUTION, __version__
from ..atomic import staged_folder
from ..errors import ExportError, SceneError
from ..plan_summary import plan_summary_lines
from ..scene.io import dumps_compact, scene_from_dict, scene_to_dict
from ..scene.model import Scene
from ..trajectory import FleetTrajectory
from .gltf import paths_gltf
from .samples_csv import samples_csv
from .trajectory_json import trajectory_document, trajectory_from_documents

EXPORT_FORMAT = "skyloom-plan"
UNVERIFIED_NOTE = "UNVERIFIED: this plan FAILED verification and was exported only on explicit request. Do not fly it."


def _file_name(drone_id: str) -> str:
    return "trajectories/" + re.sub(r"[^A-Za-z0-9._-]", "_", drone_id) + ".json"


def export_plan(result, out_dir: str | Path, *, sample_rate_hz: float = 10.0, allow_unverified: bool = False,
                gltf_samples_per_piece: int = 32) -> Path:
    """Write ``result`` (a :class:`core.pipeline.PlanResult`) into ``out_dir``; return its path.

    Refuses a plan that failed verification unless ``allow_unverified``; then every file says so.
    """
    report = result.report
    if not report.ok and not allow_unverified:
        raise ExportError(f"the plan failed verification ({len(report.violations)} violation(s)); nothing was "
                          "written. Fix the scene, or pass the explicit override to export it marked UNVERIFIED.")
    traj, scene = result.trajectory, result.scene
    status = {
        "verified": report.ok,
        "status": "VERIFIED by Skyloom's checker" if report.ok else UNVERIFIED_NOTE,
        "caution": SAFETY_CAUTION,
        "generator": f"Skyloom {__version__}",
    }
    header = f"{status['status']}\n{SAFETY_CAUTION}"
    files = {_file_name(d): trajectory_document(traj, k, scene.fleet.drones[k].type, status)
             for k, d in enumerate(traj.drone_ids)}
    if len(files) != traj.n_drones:
        raise ExportError("two drone ids map to the same file name; rename the drones")
    mesh_files = [f"meshes/{k}_{Path(m.file).name}" for k, m in enumerate(scene.site.meshes)]
    manifest = {
        "format": EXPORT_FORMAT, "version": 1, **status,
        "scene": scene.name, "duration_s": traj.duration, "degree": traj.degree,
        "breaks_s": traj.breaks.tolist(), "pieces": list(traj.segment_labels),
        "drones": [{"id": d, "file": _file_name(d)} for d in traj.drone_ids],
        "transitions": [{
            "from": t.source, "to": t.target, "assignment": t.mode, "assignment_method": t.assignment.method,
            "duration_s": t.duration, "minimum_duration_s": t.minimum_duration, "lower_bound_s": t.lower_bound,
            "makespan_ratio": t.makespan_ratio, "method": t.method, "spacing_guarantee": t.spacing_guarantee,
            "search": t.search,
        } for t in result.transitions],
        "settings": asdict(result.settings),
        "roadmap": {k: v for k, v in result.stats.items() if k.startswith("roadmap")},
        "files": ["plan.json", "scene.json", "report.json", "report.txt", "samples.csv", "paths.gltf",
                  *mesh_files, *files],
    }
    with staged_folder(out_dir) as stage:
        (stage / "trajectories").mkdir()
        for name, doc in files.items():
            (stage / name).write_text(json.dumps(doc), encoding="utf-8")
        scene_doc = scene_to_dict(scene, inline_csv=True)
        if mesh_files:
            (stage / "meshes").mkdir()  # copies let the folder be re-verified on its own
        for k, (mesh, copied) in enumerate(zip(scene.site.meshes, mesh_files, strict=True)):
            shutil.copyfile(Path(result.base_dir) / mesh.file, stage / copied)
            scene_doc["site"]["meshes"][k]["file"] = copied
        (stage / "scene.json").write_text(dumps_compact(scene_doc), encoding="utf-8")
        (stage / "report.json").write_text(json.dumps({**status, **report.to_dict()}, indent=1), encoding="utf-8")
        plan_lines = "\n".join(plan_summary_lines(result))
        (stage / "report.txt").write_text(f"{header}\n\nPlan\n{plan_lines}\n\n{report.to_text()}", encoding="utf-8")
        (stage / "samples.csv").write_text(samples_csv(traj, sample_rate_hz, header), encoding="utf-8")
        (stage / "paths.gltf").write_text(paths_gltf(traj, gltf_samples_per_piece, status), encoding="utf-8")
        (stage / "plan.json").write_text(json.dumps(manifest, indent=1), encoding="utf-8")
    return Path(out_dir)


def load_export(folder: str | Path) -> tuple[Scene, FleetTrajectory, dict]:
    """Scene, trajectories and manifest of an export folder (for re-verification)."""
    folder = Path(folder)
    try:
        manifest = json.loads((folder / "plan.json").read_text(encoding="utf-8"))
        if manifest.get("format") != EXPORT_FORMAT:
            raise ExportError(f"{folder / 'plan.json'}: not a Skyloom plan (format {manifest.get('format')!r})")
        scene_data = json.loads((folder / "scene.json").read_text(encoding="utf-8"))
        documents = [json.loads((folder / d["file"]).read_text(encoding="utf-8")) for d in manifest["drones"]]
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise ExportError(f"{folder}: cannot read the export ({exc})") from None
    try:
        scene = scene_from_dict(scene_data, source=str(folder / "scene.json"), base_dir=folder)
    except SceneError as exc:
        raise ExportError(str(exc)) from None
    try:
        traj = trajectory_from_documents(documents)
    except (ValueError, KeyError, IndexError) as exc:
        raise ExportError(f"{folder / 'trajectories'}: malformed trajectory file ({exc})") from None
    return scene, traj, manifest
