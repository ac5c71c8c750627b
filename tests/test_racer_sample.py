"""The second invented sample, sample_meshes/racer.glb and racer_taps.csv (scripts/make_samples.py racer).

Truths: trimesh (a reference library) reading the same glTF file, for the parts, their face counts and their
closure; the glTF 2.0 specification (Khronos, section 3.4 "Coordinate System and Units": metres, +Y up, the
front of an asset facing +Z, right-handed, so +X is the asset's left) for the file's frame; the divergence
theorem (a uniform pressure gives no force and no moment on a closed surface).
"""

from __future__ import annotations

import numpy as np
import pytest
import trimesh

import meshpress as mp
from meshpress.commands.demo import SAMPLES

from conftest import SAMPLES as SAMPLE_DIR
from conftest import run_cli, write_taps

GLB = SAMPLE_DIR / "racer.glb"
TAPS = SAMPLE_DIR / "racer_taps.csv"
NAMES = {"body", "wheel front left", "wheel front right", "wheel rear left", "wheel rear right", "rear wing",
         "wing stands", "splitter"}
SHELLS = {"wing stands": 2}  # the stands are one part of two boxes; every other part is one closed shell


@pytest.fixture(scope="module")
def scene():
    return trimesh.load(str(GLB))


@pytest.fixture(scope="module")
def body():
    return mp.load_body(GLB, **SAMPLES["racer"]["settings"])


def test_the_scene_has_its_named_parts_and_face_counts(scene, body):
    assert GLB.stat().st_size < 3e6
    assert "INVENTED DEMO DATA" in scene.metadata["note"] and TAPS.read_text().startswith("# INVENTED DEMO DATA")
    counts = {name: len(scene.geometry[scene.graph[name][1]].faces) for name in scene.graph.nodes_geometry}
    assert set(counts) == NAMES
    assert 40_000 <= sum(counts.values()) <= 80_000
    assert set(body.part_names) == NAMES
    assert dict(zip(body.part_names, np.bincount(body.face_part).tolist())) == counts
    assert {p["name"]: p["faces"] for p in body.report.part_list} == counts


def test_the_file_frame_is_the_gltf_convention(scene):
    # glTF 2.0: +Y up, the front faces +Z, +X is the asset's left.  The wheels stand on one ground plane, the
    # front ones nearer the nose, the left ones at +X; the splitter reaches furthest forward, the wing is high.
    g = {name: scene.geometry[scene.graph[name][1]].copy().apply_transform(scene.graph[name][0])
         for name in scene.graph.nodes_geometry}
    ground = [g[f"wheel {e} {s}"].bounds[0, 1] for e in ("front", "rear") for s in ("left", "right")]
    assert np.ptp(ground) < 1e-6 and abs(ground[0]) < 1e-6  # the file's origin is on the ground
    for side, sign in (("left", 1), ("right", -1)):
        front, rear = g[f"wheel front {side}"].centroid, g[f"wheel rear {side}"].centroid
        assert front[2] > rear[2] and sign * front[0] > 0.5 and sign * rear[0] > 0.5
    assert g["splitter"].bounds[1, 2] > g["body"].bounds[1, 2]
    assert g["rear wing"].bounds[0, 2] < g["wheel rear left"].bounds[0, 2]  # reaches further back than the wheels
    assert g["rear wing"].bounds[0, 1] > 0.8 * g["body"].bounds[1, 1]


def test_each_part_is_closed_and_the_wheels_and_stands_reach_into_the_body(scene, body):
    for name in scene.graph.nodes_geometry:
        m = scene.geometry[scene.graph[name][1]]
        assert m.is_watertight and m.is_winding_consistent and m.volume > 0, name
        assert len(m.split(only_watertight=False)) == SHELLS.get(name, 1), name
    # The loader sees the same: every edge shared by two faces, no holes, one component per shell.
    assert body.report.watertight and body.report.holes == 0
    assert body.report.components == len(NAMES) + sum(SHELLS.values()) - len(SHELLS)
    # As in real exports the wheels sit partly inside the body's lower sides and the stands run from inside
    # the deck into the wing (trimesh's ray test of containment): closed parts that overlap, not touching
    # ones, so each stays watertight on its own.  The loader does not report the overlap.
    b = scene.geometry[scene.graph["body"][1]]
    w = scene.geometry[scene.graph["wheel front left"][1]]
    inside = b.contains(w.vertices[::7])
    assert 0.05 < inside.mean() < 0.95
    st = scene.geometry[scene.graph["wing stands"][1]]
    wing = scene.geometry[scene.graph["rear wing"][1]]
    low, high = st.vertices[st.vertices[:, 1] < st.vertices[:, 1].mean()], st.vertices[st.vertices[:, 1] > 1.2]
    assert b.contains(low).all() and wing.contains(high).all()


def test_uniform_pressure_gives_no_force_on_any_part(tmp_path, body):
    # Divergence theorem: a constant Cp over a closed surface integrates to zero force and moment.  The
    # thin-plate RBF reproduces a constant exactly (its polynomial tail); the untapped parts (wheels, stands)
    # take the nearest tap's value, the same constant.
    table = mp.read_taps(TAPS)
    f = write_taps(tmp_path / "uniform.csv", table.names, table.points, np.full(len(table.names), 0.7))
    taps = mp.project_taps(body, mp.read_taps(f), max_distance=0.01)
    r = mp.compute_loads(body, taps, mp.make_field("rbf", regions="parts"), q=472.6, ref_area=1.0)
    assert {p.name for p in r.parts} == NAMES
    for p in r.parts:
        scale = 472.6 * 0.7 * p.area_m2  # the force the pressure would give on one side alone
        assert np.abs(p.loads.force_N).max() < 1e-9 * scale, p.name
        assert np.abs(p.loads.moment_Nm).max() < 1e-9 * scale * 5.0, p.name  # lever arms under 5 m


@pytest.mark.slow
def test_demo_racer_prints_a_downforce_row_for_the_rear_wing(tmp_path):
    # A check of the sign of the invented field (scripts/make_samples.py wing_cp: suction on the inverted wing's
    # lower face, pressure on its upper face), carried through the loader's axes (y up, forward +z) and the
    # per-part table: the wing pushes down.
    r = run_cli("demo", "--sample", "racer", "--out", tmp_path / "demo", "--no-report", "--no-bands", "--quiet")
    assert r.returncode == 0, r.stderr
    assert "INVENTED DEMO DATA" in r.stdout and "racer.glb" in r.stdout
    rows = [line.split() for line in r.stdout.splitlines() if line.startswith("  rear wing ")]
    assert len(rows) == 1, r.stdout
    faces, taps, lift = rows[0][2:5]
    assert int(taps) == 36 and float(lift.replace(",", "")) < 0
    assert (tmp_path / "demo" / "loads.json").is_file()


@pytest.mark.parametrize("args, word", [(("--sample", "nonsense"), "nonsense"), (("--sample", "racer", "--scan"), "--scan")])
def test_demo_bad_sample_options_are_one_line_and_status_2(tmp_path, args, word):
    r = run_cli("demo", *args, "--no-report", "--out", tmp_path / "demo")
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1 and word in r.stderr
