"""The ``skyloom`` command: plan, check and describe scenes from a terminal."""

from __future__ import annotations

import argparse
import importlib
import importlib.util
import math
import sys
from contextlib import nullcontext
from pathlib import Path

from . import SAFETY_CAUTION, __version__, lifecycle
from .crash_log import write_crash_log
from .errors import Cancelled, ExportError, SkyloomError
from .export import audit_export, export_plan, inspect_target, load_export
from .limits import MAX_SAMPLE_RATE_HZ, MAX_WORKERS
from .progress import no_progress
from .scene import load_scene
from .terminal_progress import TerminalProgress
from .verify import spec_from_scene, verify

#: Exit codes (README, "Command line"): verified; fails verification (or the export does not match
#: its curves); bad input or a file that cannot be read or written; an internal error (a bug: the
#: traceback is in a log file); interrupted by Ctrl-C (SIGINT); ended by SIGTERM.
EXIT_OK, EXIT_UNSAFE, EXIT_BAD_INPUT, EXIT_INTERNAL = 0, 1, 2, 3
EXIT_CANCELLED, EXIT_TERMINATED = lifecycle.EXIT_CODES.values()


def _rate(text: str) -> float:
    value = _finite(text)
    if not 0 < value <= MAX_SAMPLE_RATE_HZ:
        raise argparse.ArgumentTypeError(f"{text}: must be above 0 and at most {MAX_SAMPLE_RATE_HZ:g} Hz")
    return value


def _finite(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"{text}: must be a finite number")
    return value


def _workers(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if not 1 <= value <= MAX_WORKERS:
        raise argparse.ArgumentTypeError(f"{text}: must be between 1 and {MAX_WORKERS}")
    return value


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="skyloom",
        description="Plan collision-free, dynamically feasible trajectories for a fleet of drones, "
                    "verify them, and export them for flight controllers.",
        epilog=f"Safety: {SAFETY_CAUTION}",
    )
    p.add_argument("--version", action="version", version=f"skyloom {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    pl = sub.add_parser("plan", help="plan a scene's whole timeline, verify it and write an export folder",
                        description="Plan every transition of SCENE, verify the result over continuous time, "
                                    "and write trajectories, samples, a report and a 3D file into --out. "
                                    "A plan that fails verification is not written unless --export-unverified.")
    pl.add_argument("scene", type=Path, help="scene file (.json, see README: Scene file)")
    pl.add_argument("--out", type=Path, required=True,
                    help="export folder: a new or empty folder, or an earlier Skyloom export (replaced only once "
                         "the new export is complete); anything else is refused")
    pl.add_argument("--rate", type=_rate, default=10.0, metavar="HZ", help="samples.csv rate in Hz (default 10)")
    pl.add_argument("--samples", choices=["csv", "parquet"], default="csv",
                    help="sampled states as samples.csv (default) or a compact columnar samples.parquet "
                         "(large fleets; needs pip install 'skyloom[columnar]')")
    pl.add_argument("--degree", type=int, help="Bézier degree of each piece (default: the scene's, usually 7)")
    pl.add_argument("--profile", choices=["cruise", "min_snap", "min_jerk"],
                    help="time law of straight-line flights (default cruise)")
    pl.add_argument("--export-unverified", action="store_true",
                    help="write the export even if verification fails (every file is then marked UNVERIFIED)")
    pl.add_argument("--search", choices=["auto", "ecbs", "lacam"],
                    help="multi-agent search on the roadmap (default: the scene's, usually auto: ECBS up to 32 "
                         "drones, else LaCAM*)")
    pl.add_argument("--suboptimality", type=_finite, metavar="W",
                    help="roadmap search: sum of costs within W × optimal (W ≥ 1; default: the scene's, usually 2)")
    pl.add_argument("--roadmap-samples", type=int, metavar="N", help="free-space samples for the roadmap")
    pl.add_argument("--stretch", type=_finite, help="roadmap spanner stretch factor (≥ 1)")
    pl.add_argument("--time-limit", type=_finite, metavar="S", help="roadmap search time limit per transition (s)")
    pl.add_argument("--no-cache", action="store_true", help="rebuild the roadmap instead of reusing a cached one")
    pl.add_argument("--no-smoothing", action="store_true",
                    help="keep roadmap plans stop-and-go (stop at every waypoint) instead of smoothing them")
    pl.add_argument("--iterations", type=int, metavar="N", help="most corridor/QP smoothing rounds (default 5)")
    pl.add_argument("--objective", metavar="OBJ",
                    help="smoothing objective: snap, jerk, acceleration, energy, or weights such as "
                         "'acceleration=1,snap=0.01' (default: the scene's, usually snap)")
    pl.add_argument("--workers", type=_workers, metavar="N",
                    help="worker processes for roadmap transitions and their per-drone QPs (default: all CPUs; "
                         "1 = no extra processes)")
    pl.add_argument("--cluster", metavar="ADDRESS",
                    help="run that work on a Dask cluster instead: a scheduler address (tcp://host:8786), or "
                         "'local' for a LocalCluster on this machine (needs pip install 'skyloom[cluster]')")
    pl.add_argument("--quiet", action="store_true", help="no progress bar")

    ck = sub.add_parser("check", help="re-verify an export folder on its own",
                        description="Re-read an export folder's trajectories and scene and verify them again.")
    ck.add_argument("folder", type=Path, help="export folder written by 'skyloom plan'")
    ck.add_argument("--quiet", action="store_true", help="no progress bar")

    gui = sub.add_parser("gui", help="open the desktop designer",
                         description="Open the desktop designer on SCENE (default: the bridge sample scene).")
    gui.add_argument("scene", type=Path, nargs="?", help="scene file (.json)")

    info = sub.add_parser("info", help="validate a scene file and summarise it")
    info.add_argument("scene", type=Path, help="scene file (.json)")
    return p


def main(argv: list[str] | None = None) -> int:
    """Run one ``skyloom`` command; returns its exit code. No traceback ever reaches the terminal:
    an unexpected error prints one line and the log file that holds its traceback."""
    args = _parser().parse_args(argv)
    try:
        with lifecycle.signal_guard():
            return {"plan": _plan, "check": _check, "info": _info, "gui": _gui}[args.command](args)
    except Cancelled:
        print("skyloom: cancelled", file=sys.stderr)
        return EXIT_CANCELLED
    except KeyboardInterrupt:
        print("\nskyloom: interrupted; worker processes ended, nothing half-written kept", file=sys.stderr)
        return EXIT_CANCELLED
    except lifecycle.Terminated:
        print("\nskyloom: terminated; worker processes ended, nothing half-written kept", file=sys.stderr)
        return EXIT_TERMINATED
    except SkyloomError as exc:
        print(f"skyloom: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except MemoryError as exc:
        log = write_crash_log(f"command: {vars(args)}", exc)
        print(f"skyloom: ran out of memory; try a smaller fleet or fewer roadmap samples (details: {log})",
              file=sys.stderr)
        return EXIT_INTERNAL
    except Exception as exc:  # noqa: BLE001 - the last line of defence: log it, never show a traceback
        log = write_crash_log(f"command: {vars(args)}", exc)
        print(f"skyloom: internal error ({type(exc).__name__}); this is a bug, please report it with the log "
              f"file {log}", file=sys.stderr)
        return EXIT_INTERNAL


def _progress(args):
    return no_progress if args.quiet else TerminalProgress()


def _plan(args) -> int:
    from .executors import cluster_executor
    from .pipeline import plan, with_settings  # here, so that check/info never load the planner
    from .plan_summary import plan_summary_lines

    scene = load_scene(args.scene)
    inspect_target(args.out.absolute(), [args.scene])  # refuse a target before minutes of planning
    if args.samples == "parquet" and importlib.util.find_spec("pyarrow") is None:
        raise ExportError("--samples parquet needs pyarrow: pip install 'skyloom[columnar]'")
    progress = _progress(args)
    settings = with_settings(scene, degree=args.degree, profile=args.profile, search=args.search,
                             suboptimality=args.suboptimality,
                             roadmap_samples=args.roadmap_samples, spanner_stretch=args.stretch,
                             search_time_limit=args.time_limit, smoothing_iterations=args.iterations,
                             objective=args.objective, smoothing=False if args.no_smoothing else None)
    with cluster_executor(args.cluster) if args.cluster else nullcontext() as executor:
        result = plan(scene, settings=settings, base_dir=args.scene.parent, use_cache=not args.no_cache,
                      progress=progress, executor=executor, workers=args.workers, source=args.scene.name)
    if isinstance(progress, TerminalProgress):
        progress.close()
    print("\n".join(plan_summary_lines(result)))
    print("\n".join(result.report.summary_lines()))
    if not result.report.ok:
        for v in result.report.violations[:20]:
            print("  " + v.describe())
        if len(result.report.violations) > 20:
            print(f"  ... and {len(result.report.violations) - 20} more")
    if result.report.ok or args.export_unverified:
        export_plan(result, args.out, sample_rate_hz=args.rate, allow_unverified=args.export_unverified,
                    protect=[args.scene], warn=lambda note: print(f"warning: {note}", file=sys.stderr),
                    samples=args.samples)
        print(f"wrote {args.out}/" + ("" if result.report.ok else " (marked UNVERIFIED)"))
    else:
        print(f"nothing written to {args.out} (use --export-unverified to write it marked UNVERIFIED)")
    print(f"Safety: {SAFETY_CAUTION}")
    return EXIT_OK if result.report.ok else EXIT_UNSAFE


def _check(args) -> int:
    loaded = load_export(args.folder)
    progress = _progress(args)
    report = verify(loaded.trajectory, spec_from_scene(loaded.scene, args.folder), progress=progress)
    if isinstance(progress, TerminalProgress):
        progress.close()
    print("\n".join(report.summary_lines()))
    for v in report.violations[:20]:
        print("  " + v.describe())
    findings = audit_export(loaded)
    if findings:
        print(f"Export files: {len(findings)} problem(s) — what controllers would read does not match the verified "
              "curves or the files were changed:")
        for f in findings:
            print("  " + f.describe())
    else:
        print("Export files: every trajectory's monomials and every sampled row match the verified curves; "
              "every file matches its digest and carries the same status and caution.")
    if loaded.manifest.verified and not report.ok:
        print("warning: the export claims it was verified, but this check fails", file=sys.stderr)
    print(f"Safety: {SAFETY_CAUTION}")
    return EXIT_OK if report.ok and not findings else EXIT_UNSAFE


def _gui(args) -> int:
    # The designer lives in app/ (Qt); core itself never imports Qt, so it is loaded only here.
    designer = importlib.import_module("app.main")
    return designer.run(args.scene)


def _info(args) -> int:
    scene = load_scene(args.scene)
    v = scene.site.flight_volume
    print(f"{scene.name}: {len(scene.fleet.drones)} drones of {len(scene.fleet.types)} type(s), "
          f"{len(scene.formations)} formations, {len(scene.timeline.transitions)} transitions")
    print(f"  flight volume {v.lower} to {v.upper} m; {len(scene.site.keep_out)} keep-out boxes, "
          f"{len(scene.site.meshes)} meshes")
    for t in scene.fleet.types:
        print(f"  type {t.name}: radii {t.radius_xy} m / {t.radius_z} m (+{t.tracking_margin} m), speed "
              f"{t.max_speed_xy} / {t.max_speed_z} m/s, acceleration {t.max_acceleration} m/s²")
    order = [scene.timeline.start] + [f"{t.to} ({t.assignment}, {t.duration})" for t in scene.timeline.transitions]
    print("  timeline: " + " → ".join(order))
    return EXIT_OK


if __name__ == "__main__":
    sys.exit(main())
