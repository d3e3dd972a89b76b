"""Writing an export folder. The folder is built beside its target and moved into place only
when complete, so a failure never leaves a half-written export (the earlier one is kept); what
may be replaced at all is decided in :mod:`core.export.target`."""

from __future__ import annotations

import hashlib
import json
import re
import shutil
from collections.abc import Callable, Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import asdict
from pathlib import Path

from pydantic_core import to_json

from ..errors import ExportError
from ..plan_summary import plan_summary_lines
from ..reading import file_sha256
from ..scene.io import EXPORT_STAMP_FIELD, dumps_compact, scene_to_dict
from .documents import ExportStatus, Manifest
from .gltf import paths_gltf
from .plan_records import roadmap_record, transition_record
from .samples_csv import check_sample_rate, write_samples_csv, write_samples_parquet
from .target import MANIFEST, export_folder
from .trajectory_json import trajectory_document

#: The sampled-states file of each ``samples`` format.
SAMPLE_FILES = {"csv": "samples.csv", "parquet": "samples.parquet"}


def _file_name(text: str) -> str:
    """``text`` with every character outside letters, digits, ``.``, ``_`` and ``-`` replaced by ``_``."""
    return re.sub(r"[^A-Za-z0-9._-]", "_", text)


def trajectory_file(drone_id: str) -> str:
    """Relative path of a drone's trajectory file (ids are checked safe at load; this keeps any
    other character out of file names all the same)."""
    return f"trajectories/{_file_name(drone_id)}.json"


def export_plan(result, out_dir: str | Path, *, sample_rate_hz: float = 10.0, allow_unverified: bool = False,
                gltf_samples_per_piece: int = 32, protect: Sequence[Path] = (),
                warn: Callable[[str], None] = lambda message: None, samples: str = "csv") -> Path:
    """Write ``result`` (a :class:`core.pipeline.PlanResult`) into ``out_dir``; return its path.

    Refuses a plan that failed verification unless ``allow_unverified`` (then every file says so),
    and a target that is not new, empty or an earlier Skyloom export (see
    :mod:`core.export.target`). ``protect`` lists input files (the scene file) that the target
    must not contain; the scene's CSV and mesh files are always protected. ``warn`` receives
    notes about folders kept aside. ``samples`` is ``"csv"`` (samples.csv) or ``"parquet"``
    (samples.parquet, columnar, for large fleets). Raises :class:`ExportError` saying what and where.
    """
    report = result.report
    if not report.ok and not allow_unverified:
        raise ExportError(f"the plan failed verification ({len(report.violations)} violation(s)); nothing was "
                          "written. Fix the scene, or pass the explicit override to export it marked UNVERIFIED.")
    traj, scene, base = result.trajectory, result.scene, Path(result.base_dir)
    check_sample_rate(sample_rate_hz, traj.duration, traj.n_drones)
    names = [trajectory_file(d) for d in traj.drone_ids]
    if len(set(n.casefold() for n in names)) != len(names):
        raise ExportError("two drone ids map to the same trajectory file name; rename the drones")
    inputs = [*protect, *(base / f.csv for f in scene.formations if f.csv), *(base / m.file for m in scene.site.meshes)]
    status = ExportStatus.of(report.ok)
    stamp = status.model_dump()
    mesh_files = [f"meshes/{k}_{_file_name(Path(m.file).name)}" for k, m in enumerate(scene.site.meshes)]
    if samples not in SAMPLE_FILES:
        raise ExportError(f"--samples {samples}: expected one of {', '.join(SAMPLE_FILES)}")
    files = ["scene.json", "report.json", "report.txt", SAMPLE_FILES[samples], "paths.gltf", *mesh_files, *names]
    monomials = traj.monomial_coefficients()  # (N, S, n + 1, 3), converted once for the whole fleet
    try:
        with export_folder(out_dir, inputs) as (stage, kept):
            sample_path = stage / SAMPLE_FILES[samples]
            digests: dict[str, str] = {}  # of the bytes as written, so no file is read back

            def write(name: str, data: bytes) -> None:
                (stage / name).write_bytes(data)
                digests[name] = hashlib.sha256(data).hexdigest()

            def write_samples() -> None:
                if samples == "parquet":
                    write_samples_parquet(sample_path, traj, sample_rate_hz, stamp)
                else:
                    with open(sample_path, "w", encoding="utf-8", newline="") as out:
                        write_samples_csv(out, traj, sample_rate_hz, status.header)
                digests[sample_path.name] = file_sha256(sample_path)  # streamed: hashed here, in this thread

            def write_gltf() -> None:
                write("paths.gltf", paths_gltf(traj, gltf_samples_per_piece, stamp).encode("utf-8"))

            # The samples and the glTF are mostly numpy work and file writes, which release the GIL:
            # they run beside the trajectory files (measured: bench/bench_planning.py).
            with ThreadPoolExecutor(2) as writers:
                side = [writers.submit(write_samples), writers.submit(write_gltf)]
                (stage / "trajectories").mkdir()
                for k, name in enumerate(names):  # pydantic-core serialises ~10× faster than json.dumps
                    write(name, to_json(trajectory_document(traj, k, monomials[k], scene.fleet.drones[k].type, status)))
                scene_doc = {EXPORT_STAMP_FIELD: stamp, **scene_to_dict(scene, inline_csv=True)}
                if mesh_files:
                    (stage / "meshes").mkdir()  # copies let the folder be re-verified on its own
                for k, (mesh, copied) in enumerate(zip(scene.site.meshes, mesh_files, strict=True)):
                    shutil.copyfile(base / mesh.file, stage / copied)
                    digests[copied] = file_sha256(stage / copied)
                    scene_doc["site"]["meshes"][k]["file"] = copied
                write("scene.json", dumps_compact(scene_doc).encode("utf-8"))
                write("report.json", json.dumps({**stamp, **report.to_dict()}, indent=1).encode("utf-8"))
                plan_lines = "\n".join(plan_summary_lines(result))
                write("report.txt", f"{status.header}\n\nPlan\n{plan_lines}\n\n{report.to_text()}".encode())
                for future in side:
                    future.result()
            manifest = Manifest(
                **stamp, scene=scene.name, duration_s=traj.duration, degree=traj.degree,
                sample_rate_hz=float(sample_rate_hz), breaks_s=traj.breaks.tolist(), pieces=list(traj.segment_labels),
                drones=[{"id": d, "file": n} for d, n in zip(traj.drone_ids, names, strict=True)],
                transitions=[transition_record(t) for t in result.transitions], settings=asdict(result.settings),
                roadmap=roadmap_record(result.roadmap),
                files=[MANIFEST, *files], digests={f: digests[f] for f in files},
            )
            (stage / MANIFEST).write_text(json.dumps(manifest.model_dump(), indent=1), encoding="utf-8")
    except OSError as exc:
        raise ExportError(f"--out {out_dir}: could not write the export ({exc.strerror or exc}"
                          f"{': ' + exc.filename if isinstance(exc.filename, str) else ''}); nothing was replaced, "
                          "an earlier export there is intact") from None
    for note in kept:
        warn(note)
    return Path(out_dir)


__all__ = ["export_plan", "trajectory_file"]
