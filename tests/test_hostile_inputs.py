"""A corpus of hostile inputs and faults, tried as a careless user would, through the command line.

Each case states its expected exit code (README, "Command line") and a fragment of the message;
every case also asserts that no traceback reaches the user and that no file outside ``--out``
changed. The rules checked here are our own (README "Limits", "Export folder"); no external
reference applies.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from collections.abc import Callable
from contextlib import suppress
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import ROOT, scene_dict
from core.cli import main
from core.reading import file_sha256

SAMPLES = ROOT / "sample_scenes"


@pytest.fixture
def site(tmp_path) -> Path:
    """A private copy of the sample scenes (the CSV and meshes they reference included)."""
    shutil.copytree(SAMPLES, tmp_path / "site")
    return tmp_path / "site"


def lab(site: Path) -> dict:
    return json.loads((site / "lab_eight.json").read_text())


def snapshot(folder: Path, skip: str = "out") -> dict[str, str]:
    """Digest of every file below ``folder`` except under ``skip``."""
    return {
        str(p.relative_to(folder)): file_sha256(p)
        for p in sorted(folder.rglob("*"))
        if p.is_file() and skip not in p.relative_to(folder).parts
    }


def run(argv: list[str], capsys) -> tuple[int, str]:
    """Exit code and printed text of one command (argparse refusals exit through SystemExit)."""
    try:
        code = main([str(a) for a in argv])
    except SystemExit as exc:
        code = exc.code
    out = capsys.readouterr()
    text = out.out + out.err
    assert "Traceback" not in text and 'File "' not in text, text
    return code, text


@dataclass(frozen=True)
class SceneCase:
    """A mutation of the lab sample (``mutate(scene dict, site folder)``), the extra command-line
    options, the expected exit code and a fragment of the expected message."""

    name: str
    mutate: Callable[[dict, Path], None]
    code: int
    fragment: str
    options: tuple[str, ...] = ()


def _set(path: str, value) -> Callable[[dict, Path], None]:
    """Mutation setting the field at a dotted path (``fleet.types.0.max_speed_xy``) to ``value``."""

    def mutate(data: dict, _site: Path) -> None:
        *parents, last = path.split(".")
        node = data
        for key in parents:
            node = node[int(key)] if isinstance(node, list) else node[key]
        if isinstance(node, list):
            node[int(last)] = value
        else:
            node[last] = value

    return mutate


DEEP = "__nested 3000 deep__"  # replaced by 3000 nested arrays in the file text (json.dumps would recurse)


def _nested(data: dict, _site: Path) -> None:
    data["planner"] = {"degree": DEEP}


def _many_drones(n: int) -> Callable[[dict, Path], None]:
    def mutate(data: dict, _site: Path) -> None:
        data["fleet"]["drones"] = [{"id": f"D{k}", "type": "nano-quad"} for k in range(n)]

    return mutate


def _csv(text: str | bytes, name: str = "cube.csv") -> Callable[[dict, Path], None]:
    def mutate(data: dict, site: Path) -> None:
        (site / name).write_bytes(text if isinstance(text, bytes) else text.encode())
        data["formations"][1] = {"name": "cube", "csv": name}

    return mutate


def _mesh(content: bytes) -> Callable[[dict, Path], None]:
    def mutate(data: dict, site: Path) -> None:
        (site / "junk.stl").write_bytes(content)
        data["site"]["meshes"] = [{"name": "junk", "file": "junk.stl"}]

    return mutate


def _holds(total_days: float) -> Callable[[dict, Path], None]:
    def mutate(data: dict, _site: Path) -> None:
        per = total_days * 86_400 / len(data["timeline"]["transitions"])
        for t in data["timeline"]["transitions"]:
            t["hold"] = min(per, 86_400.0)
        data["timeline"]["transitions"] = data["timeline"]["transitions"] * 3

    return mutate


def _case_clash(data: dict, _site: Path) -> None:
    data["fleet"]["drones"][1]["id"] = "n1"


def _passwd(data: dict, _site: Path) -> None:
    data["formations"][1] = {"name": "cube", "csv": "/etc/passwd"}


def _pairs(pairs: list[dict]) -> Callable[[dict, Path], None]:
    def mutate(data: dict, _site: Path) -> None:
        data["fleet"]["pairs"] = pairs

    return mutate


NAN, INF = float("nan"), float("inf")
SCENE_CASES = [
    SceneCase(
        "infinite speed limit", _set("fleet.types.0.max_speed_xy", INF), 2, "max_speed_xy: Input should be a finite"
    ),
    SceneCase("infinite acceleration limit", _set("fleet.types.0.max_acceleration", INF), 2, "finite number"),
    SceneCase(
        "absurd acceleration limit", _set("fleet.types.0.max_acceleration", 1e308), 2, "less than or equal to 200"
    ),
    SceneCase("infinite flight volume", _set("site.flight_volume.upper.2", INF), 2, "flight_volume.upper[2]"),
    SceneCase("minus infinite flight volume", _set("site.flight_volume.lower.0", -INF), 2, "finite number"),
    SceneCase("huge flight volume", _set("site.flight_volume.upper.0", 90_000.0), 2, "each side may be at most"),
    SceneCase("NaN in a point", _set("formations.0.points.3.1", NAN), 2, "formations[0].points[3][1]"),
    SceneCase("1e308 in a point", _set("formations.0.points.3.1", 1e308), 2, "less than or equal to 100000"),
    SceneCase("1e308 in the volume", _set("site.flight_volume.upper.1", 1e308), 2, "less than or equal to 100000"),
    SceneCase(
        "string as a number", _set("fleet.types.0.radius_xy", "0.12"), 2, "radius_xy: Input should be a valid number"
    ),
    SceneCase(
        "boolean as a number", _set("fleet.types.0.max_speed_z", True), 2, "max_speed_z: Input should be a valid number"
    ),
    SceneCase("number as a boolean", _set("planner.smoothing", 1), 2, "planner.smoothing"),
    SceneCase("infinite hold", _set("timeline.transitions.0.hold", INF), 2, "hold: Input should be a finite"),
    SceneCase("1e7 s hold", _set("timeline.transitions.0.hold", 1e7), 2, "less than or equal to 86400"),
    SceneCase("1e7 s duration", _set("timeline.transitions.1.duration", 1e7), 2, "less than or equal to 86400"),
    SceneCase("infinite duration", _set("timeline.transitions.1.duration", INF), 2, "duration"),
    SceneCase("timeline over a week", _holds(9), 2, "a timeline may last at most"),
    SceneCase(
        "NaN time limit", _set("planner.search_time_limit", NAN), 2, "search_time_limit: Input should be a finite"
    ),
    SceneCase("JSON nested 3000 deep", _nested, 2, "nested deeper than 32 levels"),
    SceneCase("20 000 drones", _many_drones(20_000), 2, "at most 5000"),
    SceneCase("id with a line break", _set("fleet.drones.0.id", "N1\n# injected line"), 2, "is not a valid id"),
    SceneCase("id with commas", _set("fleet.drones.1.id", "N2,99,0"), 2, "is not a valid id"),
    SceneCase("id with a NUL byte", _set("fleet.drones.2.id", "N3\x00"), 2, "is not a valid id"),
    SceneCase("ids differing in case", _case_clash, 2, "differ only in case"),
    SceneCase("group label with a comma", _set("formations.0.groups.0", "am,ber"), 2, "is not a valid id"),
    SceneCase("type name with a line break", _set("fleet.types.0.name", "nano\nquad"), 2, "control character"),
    SceneCase("NaN in a CSV", _csv("x,y,z\n0,0,nan\n"), 2, "cube.csv: row 2"),
    SceneCase("inf in a CSV", _csv("x,y,z\ninf,0,1\n"), 2, "finite numbers"),
    SceneCase("bad first CSV row", _csv("1,2,three\n" + "0,0,1\n" * 7), 2, "cube.csv: row 1"),
    SceneCase("NUL bytes in a CSV", _csv(b"0,0,1\x00\n"), 2, "NUL bytes"),
    SceneCase("CSV path to a system file", _passwd, 2, "must be a .csv file"),
    SceneCase("random-bytes STL", _mesh(np.random.default_rng(3).bytes(4000)), 2, "site.meshes[0].file: mesh 'junk'"),
    SceneCase("empty STL", _mesh(b""), 2, "site.meshes[0].file"),
    SceneCase("rate zero", lambda d, s: None, 2, "argument --rate", ("--rate", "0")),
    SceneCase("rate NaN", lambda d, s: None, 2, "argument --rate", ("--rate", "nan")),
    SceneCase("rate 1e6", lambda d, s: None, 2, "argument --rate", ("--rate", "1e6")),
    SceneCase("rate negative", lambda d, s: None, 2, "argument --rate", ("--rate", "-5")),
    SceneCase("workers zero", lambda d, s: None, 2, "argument --workers", ("--workers", "0")),
    SceneCase("workers negative", lambda d, s: None, 2, "argument --workers", ("--workers", "-1")),
    SceneCase("time limit NaN", lambda d, s: None, 2, "argument --time-limit", ("--time-limit", "nan")),
    SceneCase("infinite objective weight", lambda d, s: None, 2, "weights must be finite", ("--objective", "snap=inf")),
    SceneCase("NaN objective weight", _set("planner.objective", "jerk=nan"), 2, "weights must be finite"),
    SceneCase("infinite downwash shift", _set("fleet.types.0.downwash_shift", INF), 2,
              "downwash_shift: Input should be a finite"),
    SceneCase("negative downwash shift", _set("fleet.types.0.downwash_shift", -0.2), 2, "greater than or equal to 0"),
    SceneCase("pair naming an unknown type",
              _pairs([{"types": ["nano-quad", "ghost"], "radius_xy": 0.3, "radius_z": 0.7}]), 2,
              "fleet.pairs[0].types: unknown drone type"),
    SceneCase("pair radius as a string", _pairs([{"types": ["nano-quad", "nano-quad"], "radius_xy": "0.3",
                                                  "radius_z": 0.7}]), 2, "radius_xy: Input should be a valid number"),
    SceneCase("pair radius 1e308", _pairs([{"types": ["nano-quad", "nano-quad"], "radius_xy": 0.3,
                                            "radius_z": 1e308}]), 2, "less than or equal to"),
    SceneCase("unchanged lab sample", lambda d, s: None, 0, "Verification PASSED"),
]


@pytest.mark.parametrize("case", SCENE_CASES, ids=[c.name for c in SCENE_CASES])
def test_hostile_scene_and_option(case: SceneCase, site, capsys):
    data = lab(site)
    case.mutate(data, site)
    scene = site / "case.json"
    scene.write_text(json.dumps(data).replace(f'"{DEEP}"', "[" * 3000 + "]" * 3000))
    before = snapshot(site)
    code, text = run(["plan", scene, "--out", site / "out", "--quiet", "--workers", "1", *case.options], capsys)
    assert code == case.code, text
    assert case.fragment in text, text
    assert "root:" not in text and "charset" not in text  # never echo a system file or a library's guts
    assert snapshot(site) == before
    assert (site / "out").exists() == (case.code == 0)


def test_unreadable_scene_files(site, capsys):
    for path, fragment in (
        ("/dev/zero", "not a regular file"),
        (site, "is a folder"),
        (site / "missing.json", "No such file"),
    ):
        code, text = run(["info", path], capsys)
        assert code == 2 and fragment in text, text
    (site / "broken.json").write_text('{"name": ')
    code, text = run(["info", site / "broken.json"], capsys)
    assert code == 2 and "broken.json: line 1, column 10: not valid JSON" in text


# --- export targets ------------------------------------------------------------------------------


def _plan_lab(site: Path, out: Path, capsys, *extra) -> tuple[int, str]:
    return run(["plan", site / "lab_eight.json", "--out", out, "--quiet", "--workers", "1", *extra], capsys)


def test_export_never_replaces_what_skyloom_did_not_write(site, tmp_path, capsys, monkeypatch):
    notes = tmp_path / "notes.txt"
    notes.write_text("mine")
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "photo.jpg").write_bytes(b"\xff\xd8")
    before = snapshot(tmp_path, skip="nothing")
    for target, fragment in (
        (notes, "is a file that Skyloom did not write"),
        (mine, "holds 1 file(s) that Skyloom did not write ('photo.jpg')"),
        (site, "an input of this plan"),
        (tmp_path, "an input of this plan"),
        (notes / "sub", "is part of that path a file"),
    ):
        code, text = _plan_lab(site, target, capsys)
        assert code == 2 and fragment in text, text
    monkeypatch.chdir(site)
    code, text = _plan_lab(site, Path("."), capsys)
    assert code == 2 and "an input of this plan" in text
    assert snapshot(tmp_path, skip="nothing") == before


def test_export_replaces_an_earlier_export_but_not_files_added_to_it(site, tmp_path, capsys):
    out = tmp_path / "show"
    assert _plan_lab(site, out, capsys)[0] == 0
    assert _plan_lab(site, out, capsys)[0] == 0  # an earlier export is replaced
    (out / "my notes.txt").write_text("mine")
    code, text = _plan_lab(site, out, capsys)
    assert code == 2 and "also holds files it did not write ('my notes.txt')" in text
    assert (out / "my notes.txt").read_text() == "mine" and run(["check", out, "--quiet"], capsys)[0] == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["show", "site"]  # no staging leftovers


def test_export_faults_keep_the_earlier_export(site, tmp_path, capsys, monkeypatch):
    out = tmp_path / "show"
    assert _plan_lab(site, out, capsys)[0] == 0
    before = snapshot(out, skip="nothing")
    import core.export.folder as folder

    for error in (
        OSError(28, "No space left on device"),
        PermissionError(13, "Permission denied"),
        OSError(30, "Read-only file system"),
    ):
        monkeypatch.setattr(folder, "paths_gltf", lambda *a, e=error: (_ for _ in ()).throw(e))
        code, text = _plan_lab(site, out, capsys)
        assert code == 2 and error.strerror in text and "nothing was replaced" in text, text
        assert snapshot(out, skip="nothing") == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["show", "site"]


def test_staging_leftovers_of_a_killed_export_are_removed(site, tmp_path, capsys):
    out = tmp_path / "show"
    stale = tmp_path / ".show.skyloom-staging-0a1b2c"
    (stale / "trajectories").mkdir(parents=True)
    (stale / "trajectories" / "N1.json").write_text("{")
    assert _plan_lab(site, out, capsys)[0] == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["show", "site"]


def test_concurrent_exports_to_one_target_are_serialised(site, tmp_path):
    from concurrent.futures import ThreadPoolExecutor

    from core.export import export_plan
    from core.pipeline import plan
    from core.scene import load_scene

    result = plan(load_scene(site / "lab_eight.json"), base_dir=site, workers=1)
    out = tmp_path / "show"
    with ThreadPoolExecutor(4) as pool:
        done = list(pool.map(lambda _: export_plan(result, out), range(8)))
    assert done == [out] * 8
    assert sorted(p.name for p in tmp_path.iterdir()) == ["show", "site"]
    assert main(["check", str(out), "--quiet"]) == 0


# --- skyloom check on damaged exports -----------------------------------------------------------


@pytest.fixture
def export(site, tmp_path, capsys) -> Path:
    out = tmp_path / "show"
    assert _plan_lab(site, out, capsys)[0] == 0
    return out


def _edit_json(path: Path, change: Callable[[object], object]) -> None:
    path.write_text(json.dumps(change(json.loads(path.read_text()))))


def _piece_field(field: str, value):
    def change(doc):
        doc["pieces"][0][field] = value
        return doc

    return change


def _constant_monomials(doc):
    for p in doc["pieces"]:
        p["monomial"] = {a: [100.0] * len(v) for a, v in p["monomial"].items()}
    return doc


def _zero_samples(path: Path) -> None:
    lines = path.read_text().splitlines()
    path.write_text(
        "\n".join(line if line.startswith(("#", "drone")) else line.split(",")[0] + ",0" * 10 for line in lines) + "\n"
    )


def _flip(field: str, value):
    def change(doc):
        doc[field] = value
        return doc

    return change


CHECK_CASES = [
    ("manifest a list", "plan.json", lambda p: _edit_json(p, lambda d: [d]), 2, "not a Skyloom plan manifest"),
    (
        "manifest names 7 of 8 drones",
        "plan.json",
        lambda p: _edit_json(p, lambda d: {**d, "drones": d["drones"][:7]}),
        2,
        "lists 7 drones but scene.json has 8",
    ),
    (
        "manifest path outside the folder",
        "plan.json",
        lambda p: _edit_json(
            p, lambda d: {**d, "drones": [{"id": "N1", "file": "../../etc/passwd"}, *d["drones"][1:]]}
        ),
        2,
        "not a plain relative path",
    ),
    (
        "Bézier a list",
        "trajectories/N2.json",
        lambda p: _edit_json(p, _piece_field("bezier", [1, 2, 3])),
        2,
        "pieces.0.bezier",
    ),
    (
        "NaN control point",
        "trajectories/N2.json",
        lambda p: _edit_json(p, _piece_field("bezier", {"x": [float("nan")] * 10, "y": [0.0] * 10, "z": [0.0] * 10})),
        2,
        "finite number",
    ),
    (
        "infinite limit in scene.json",
        "scene.json",
        lambda p: _edit_json(p, lambda d: (d["fleet"]["types"][0].update(max_speed_xy=float("inf")), d)[1]),
        2,
        "max_speed_xy: Input should be a finite",
    ),
    (
        "monomials a constant 100 m",
        "trajectories/N3.json",
        lambda p: _edit_json(p, _constant_monomials),
        1,
        "trajectories/N3.json (drone N3): piece 0",
    ),
    ("samples.csv zeroed", "samples.csv", _zero_samples, 1, "samples.csv (drone N1): at t = 0.000 s, position x"),
    ("samples.csv deleted", "samples.csv", lambda p: p.unlink(), 1, "samples.csv: is missing"),
    (
        "samples.csv truncated",
        "samples.csv",
        lambda p: p.write_text("".join(p.read_text().splitlines(keepends=True)[:40])),
        1,
        "rows; ",
    ),
    (
        "verified flag flipped",
        "trajectories/N4.json",
        lambda p: _edit_json(p, _flip("verified", False)),
        1,
        "trajectories/N4.json (drone N4): its verified differ from plan.json's",
    ),
    (
        "caution removed",
        "report.json",
        lambda p: _edit_json(p, _flip("caution", "")),
        1,
        "report.json: its caution differ",
    ),
    (
        "status wording changed",
        "plan.json",
        lambda p: _edit_json(p, lambda d: {**d, "status": "fine"}),
        1,
        "does not match verified = true",
    ),
    (
        "marked unverified",
        "plan.json",
        lambda p: _edit_json(p, lambda d: {**d, "verified": False, "status": d["status"]}),
        1,
        "marked UNVERIFIED",
    ),
    (
        "glTF changed",
        "paths.gltf",
        lambda p: p.write_text(p.read_text().replace("Skyloom", "Skyloon", 1)),
        1,
        "paths.gltf: changed since it was exported",
    ),
    ("report.json replaced by a named pipe", "report.json", lambda p: (p.unlink(), os.mkfifo(p)), 1,
     "report.json: is missing"),
    (
        "scene.json stamp removed",
        "scene.json",
        lambda p: _edit_json(p, lambda d: {k: v for k, v in d.items() if k != "export_status"}),
        1,
        "scene.json: carries no status and caution",
    ),
]


@pytest.mark.parametrize("name,file,damage,code,fragment", CHECK_CASES, ids=[c[0] for c in CHECK_CASES])
def test_check_on_a_damaged_export(name, file, damage, code, fragment, export, capsys):
    damage(export / file)
    got, text = run(["check", export, "--quiet"], capsys)
    assert got == code and fragment in text, text


def test_check_verifies_mesh_copies_against_their_digests(tmp_path, capsys):
    """A mesh scene planned on straight lines (the mesh stands aside), exported, its mesh copy edited."""
    import trimesh

    trimesh.creation.box((1.0, 1.0, 1.0)).export(tmp_path / "post.stl")
    low, high = np.array([[-2.0, 0, 1], [2.0, 0, 1]]), np.array([[-2.0, 0, 4], [2.0, 0, 4]])
    data = scene_dict({"low": low, "high": high}, [{"to": "high", "assignment": "labeled"}],
                      volume=((-10, -10, 0), (10, 10, 10)))
    data["site"]["meshes"] = [{"name": "post", "file": "post.stl", "translate": [6, 6, 0.5]}]
    (tmp_path / "post.json").write_text(json.dumps(data))
    out = tmp_path / "out"
    assert run(["plan", tmp_path / "post.json", "--out", out, "--quiet", "--workers", "1"], capsys)[0] == 0
    assert run(["check", out, "--quiet"], capsys)[0] == 0
    trimesh.creation.box((1.0, 1.0, 1.2)).export(out / "meshes" / "0_post.stl")  # still a valid mesh
    code, text = run(["check", out, "--quiet"], capsys)
    assert code == 1 and "meshes/0_post.stl: changed since it was exported" in text


# --- the roadmap cache ---------------------------------------------------------------------------


def _cache_entry() -> Path:
    from core.paths import cache_dir

    entries = list((cache_dir() / "roadmaps").glob("*.npz"))
    assert len(entries) == 1
    return entries[0]


def _swap_scene(tmp_path: Path) -> Path:
    """Two drones swapping places: straight lines collide, so the roadmap (and its cache) is used."""
    p, q = np.array([[-3.0, 0, 2], [3.0, 0, 2]]), np.array([[3.0, 0, 2], [-3.0, 0, 2]])
    data = scene_dict({"p": p, "q": q}, [{"to": "q", "assignment": "labeled"}], volume=((-6, -6, 0), (6, 6, 6)))
    data["planner"] = {"roadmap_samples": 300, "smoothing": False}
    (tmp_path / "swap.json").write_text(json.dumps(data))
    return tmp_path / "swap.json"


def _truncate(entry: Path) -> None:
    entry.write_bytes(entry.read_bytes()[:100])


def _inconsistent(entry: Path) -> None:
    with np.load(entry) as z:
        arrays = dict(z)
    arrays["edges"] = arrays["edges"][:, :1]
    np.savez(entry, **arrays)


def _other_roadmap(entry: Path) -> None:
    """A well-formed entry holding a different roadmap than its key and checksum say."""
    with np.load(entry) as z:
        arrays = dict(z)
    arrays["vertices"] = arrays["vertices"] + 0.5
    np.savez(entry, **arrays)


@pytest.mark.parametrize(
    "damage,fragment",
    [(_truncate, "is unusable"), (_inconsistent, "is unusable"), (_other_roadmap, "checksum mismatch")],
)
def test_damaged_cache_entries_are_rebuilt_with_a_warning(damage, fragment, tmp_path, capsys):
    scene = _swap_scene(tmp_path)
    assert run(["plan", scene, "--out", tmp_path / "o1", "--quiet", "--workers", "1"], capsys)[0] == 0
    damage(_cache_entry())
    code, text = run(["plan", scene, "--out", tmp_path / "o2", "--quiet", "--workers", "1"], capsys)
    assert code == 0 and "warning: roadmap cache entry" in text and fragment in text, text
    code, text = run(["plan", scene, "--out", tmp_path / "o3", "--quiet", "--workers", "1"], capsys)
    assert code == 0 and "warning" not in text and "(from cache)" in text  # the rebuilt entry was stored


def test_unwritable_cache_means_planning_without_it(tmp_path, capsys, monkeypatch):
    scene = _swap_scene(tmp_path)
    blocker = tmp_path / "cache-is-a-file"
    blocker.write_text("")
    monkeypatch.setenv("SKYLOOM_CACHE_DIR", str(blocker))
    code, text = run(["plan", scene, "--out", tmp_path / "o1", "--quiet", "--workers", "1"], capsys)
    assert code == 0 and "could not store the roadmap in the cache" in text, text
    assert blocker.read_text() == ""


# --- unexpected errors ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "error,fragment",
    [(ZeroDivisionError("x"), "internal error (ZeroDivisionError)"), (MemoryError(), "ran out of memory")],
)
def test_an_unexpected_error_prints_one_line_and_a_log_file(error, fragment, site, capsys, monkeypatch):
    import core.pipeline

    def broken(*_a, **_k):
        raise error

    monkeypatch.setattr(core.pipeline, "plan", broken)
    code, text = _plan_lab(site, site.parent / "out", capsys)
    assert code == 3 and fragment in text
    log = Path(text.split("log file " if "log file " in text else "details: ")[1].split(")")[0].strip())
    assert "Traceback" in log.read_text() and type(error).__name__ in log.read_text()


# --- property: any mutation of a sample scene -----------------------------------------------------

def _paths(node, prefix=()) -> list[tuple]:
    """Every field and item path of a parsed JSON tree (containers included)."""
    out = [prefix] if prefix else []
    children = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
    for key, child in children:
        out += _paths(child, (*prefix, key))
    return out


LAB_PATHS = _paths(json.loads((SAMPLES / "lab_eight.json").read_text()))
DELETE, EXTRA = object(), object()
HOSTILE_VALUES = st.one_of(
    st.sampled_from([float("nan"), float("inf"), -float("inf"), 1e308, -1e308, 1e-300, 0, -1, "0.12", True, False,
                     None, [], {}, "", "N1\n# injected", "N2,99,0", "a\x00b", "x" * 500, DELETE, EXTRA]),
    st.floats(allow_nan=True, allow_infinity=True), st.integers(-(10**12), 10**12), st.text(max_size=8),
    st.lists(st.floats(-1e6, 1e6), max_size=4),
)


def _apply(data: dict, path: tuple, value) -> None:
    node = data
    for key in path[:-1]:
        node = node[key]
    key = path[-1]
    if value is DELETE:
        del node[key]
    elif value is EXTRA:
        if isinstance(node, dict):
            node["unexpected_field"] = 1
        else:
            node.append(node[key])
    else:
        node[key] = value


@pytest.fixture(scope="module")
def earlier_export(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("earlier") / "show"
    assert main(["plan", str(SAMPLES / "lab_eight.json"), "--out", str(out), "--quiet", "--workers", "1"]) == 0
    return out


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(changes=st.lists(st.tuples(st.sampled_from(LAB_PATHS), HOSTILE_VALUES), min_size=1, max_size=3))
def test_any_mutated_scene_is_planned_or_refused_cleanly(changes, earlier_export, capsys):
    """Exit code 0, 1 or 2; no traceback; nothing written outside --out; an earlier export untouched."""
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        shutil.copy(SAMPLES / "cube.csv", folder)
        shutil.copytree(earlier_export, folder / "show")
        data = lab(SAMPLES)
        for path, value in changes:
            with suppress(KeyError, IndexError, TypeError):  # an earlier change removed or replaced that part
                _apply(data, path, value)
        (folder / "case.json").write_text(json.dumps(data))
        before = snapshot(folder)
        code, text = run(["plan", folder / "case.json", "--out", folder / "out", "--quiet", "--workers", "1"], capsys)
        assert code in (0, 1, 2), text
        assert snapshot(folder) == before
        assert run(["check", folder / "show", "--quiet"], capsys)[0] == 0


def test_a_goal_boxed_in_by_keep_out_walls_is_named(tmp_path, capsys):
    """Six keep-out walls enclose a hollow 3 m cube around the second goal point: no drone can reach it."""
    walls = [((-2, -2, 0.0), (2, 2, 0.5)), ((-2, -2, 3.5), (2, 2, 4.0)), ((-2, -2, 0), (-1.5, 2, 4)),
             ((1.5, -2, 0), (2, 2, 4)), ((-2, -2, 0), (2, -1.5, 4)), ((-2, 1.5, 0), (2, 2, 4))]
    start, goal = np.array([[-6.0, -6, 2], [6.0, -6, 2]]), np.array([[-6.0, 6, 2], [0.0, 0, 2]])
    data = scene_dict({"start": start, "goal": goal}, [{"to": "goal"}], volume=((-8, -8, 0), (8, 8, 6)), keep_out=walls)
    data["planner"] = {"roadmap_samples": 400, "smoothing": False}
    (tmp_path / "boxed.json").write_text(json.dumps(data))
    code, text = run(["plan", tmp_path / "boxed.json", "--out", tmp_path / "out", "--quiet", "--workers", "1"], capsys)
    assert code == 2 and "formations[1] ('goal').points[1] at (0.00, 0.00, 2.00)" in text, text
