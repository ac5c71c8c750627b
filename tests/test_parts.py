"""Bodies of several parts: scene parts and separate shells, loads per part, fields kept apart.

Truths: the divergence theorem (a uniform pressure gives no force on a closed part), Archimedes' principle (a
hydrostatic pressure gives each closed part a lift of rho g V, V from trimesh's mesh volume, a reference
library), d'Alembert's paradox for a sphere in potential flow (Cp = 1 - 9/4 sin^2 theta, Batchelor 1967 sec.
6.8: no force), and linearity of the integral (the parts sum to the whole).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import trimesh

import meshpress as mp
from meshpress.bodies import exact

from conftest import write_taps

BIG = dict(radius=1.0, center=(0.0, 0.0, 1.2))
SMALL = dict(radius=0.3, center=(3.0, 0.0, 2.0))  # behind and above: a "rear wing" of the invented test scene


def _sphere(radius, center, subdivisions):
    m = trimesh.creation.icosphere(subdivisions=subdivisions, radius=radius)
    m.apply_translation(center)
    return m


def _scene_file(tmp_path, suffix=".glb"):
    big, small = _sphere(**BIG, subdivisions=4), _sphere(**SMALL, subdivisions=3)
    sc = trimesh.Scene()
    sc.add_geometry(big, node_name="body", geom_name="g_body")
    sc.add_geometry(small, node_name="rear wing", geom_name="g_wing")
    path = tmp_path / f"scene{suffix}"
    sc.export(str(path))
    return path, big, small


def _spread(n, radius, center, seed):
    rng = np.random.default_rng(seed)
    u = rng.normal(size=(n, 3))
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    return u, u * radius + np.asarray(center)


def _taps(tmp_path, cp_of, n_big=60, n_small=25):
    ub, pb = _spread(n_big, **BIG, seed=1)
    us, ps = _spread(n_small, **SMALL, seed=2)
    pts = np.vstack([pb, ps])
    vals = np.concatenate([cp_of(ub, pb), cp_of(us, ps)])
    names = [f"B{i}" for i in range(n_big)] + [f"W{i}" for i in range(n_small)]
    return write_taps(tmp_path / "taps.csv", names, pts, vals)


def test_a_scene_keeps_its_parts_and_their_names(tmp_path):
    path, big, small = _scene_file(tmp_path)
    body = mp.load_body(path)
    assert sorted(body.part_names) == ["body", "rear wing"]
    counts = dict(zip(body.part_names, np.bincount(body.face_part)))
    assert counts == {"body": len(big.faces), "rear wing": len(small.faces)}
    listed = {p["name"]: p for p in body.report.part_list}
    assert listed["rear wing"]["area_m2"] == pytest.approx(small.area, rel=1e-6)  # glTF stores float32


def test_stl_shells_become_parts_named_by_position(tmp_path):
    big, small = _sphere(**BIG, subdivisions=4), _sphere(**SMALL, subdivisions=3)
    path = tmp_path / "two.stl"
    trimesh.util.concatenate([big, small]).export(str(path))
    body = mp.load_body(path)  # default axes: x forward is -x, so x = +3 is behind the big sphere
    assert body.part_names == ["two", "rear high"]
    one = mp.load_body(path, split_shells=False)
    assert one.part_names == ["two"]


@pytest.mark.parametrize("split", [True, False])
def test_uniform_and_hydrostatic_pressure_on_each_part(tmp_path, split):
    # Divergence theorem: a uniform pressure gives no force on each closed part.  Archimedes: p = -rho g z gives
    # each part the lift rho g V.  The thin-plate RBF reproduces a field linear in position exactly (its
    # polynomial tail), with or without the parts kept apart.
    rho_g = 1000.0 * 9.80665
    path, big, small = _scene_file(tmp_path)
    body = mp.load_body(path)
    for pressure, expect in [(lambda p: np.full(len(p), 250.0), lambda m: 0.0),
                             (lambda p: -rho_g * p[:, 2], lambda m: rho_g * m.volume)]:
        taps_file = tmp_path / "p.csv"
        # Taps on the facets themselves (so each reads the field exactly where it sits), and the highest and
        # lowest vertex of each part: the field is bounded by the taps' range (fields/bounds.py).
        pts = np.vstack([trimesh.sample.sample_surface(m, n, seed=k)[0] for k, (m, n) in enumerate([(big, 60), (small, 25)])]
                        + [m.vertices[[m.vertices[:, 2].argmax(), m.vertices[:, 2].argmin()]] for m in (big, small)])
        write_taps(taps_file, [f"T{i}" for i in range(len(pts))], pts, pressure(pts), kind="p")
        taps = mp.project_taps(body, mp.read_taps(taps_file), max_distance=0.05)
        field = mp.make_field("rbf", regions="parts") if split else mp.make_field("rbf")
        r = mp.compute_loads(body, taps, field, ref_area=1.0)
        parts = {p.name: p.loads for p in r.parts}
        for name, mesh in (("body", big), ("rear wing", small)):
            assert parts[name].lift_N == pytest.approx(expect(mesh), abs=1e-6 * rho_g * big.volume)
            assert abs(parts[name].drag_N) < 1e-6 * rho_g * big.volume
        assert sum(p.lift_N for p in parts.values()) == pytest.approx(r.lift_N, rel=1e-12, abs=1e-9)


@pytest.mark.slow
def test_default_loads_per_part_sum_to_the_whole_with_bands(tmp_path):
    # Potential flow round each sphere alone (each in its own free stream: a test of bookkeeping, not of
    # interference): no force on either (d'Alembert); the parts' figures sum to the whole.
    path, _, _ = _scene_file(tmp_path)

    def cp(u, p):
        return exact.sphere_cp(u)

    taps_file = _taps(tmp_path, cp)
    from meshpress.loads.analysis import run_loads_parts

    run = run_loads_parts(path, taps_file, q=500.0, bands=True, max_tap_distance=0.05)
    r = run.result
    assert [p.name for p in r.parts] == run.body.part_names and len(r.parts) == 2
    for k in ("lift_N", "drag_N", "side_N", "pitch_moment_Nm"):
        assert sum(getattr(p.loads, k) for p in r.parts) == pytest.approx(getattr(r, k), rel=1e-9, abs=1e-9)
    for p in r.parts:
        # No force by d'Alembert, within the band (the taps sample the field; the band says how well).
        assert abs(p.loads.CL) < 3 * p.bands["CL_u"] + 0.01
        assert p.bands["CL_lo95"] < p.loads.CL < p.bands["CL_hi95"]
        assert p.bands["CL"] == pytest.approx(p.loads.CL, rel=1e-7, abs=1e-9)  # one model: the band's centre
    assert "fitted on 2 regions separately" in r.method  # each part its own model


def test_parts_are_kept_apart_in_the_field(tmp_path):
    # Two constant fields, one per part: kept apart, each part's faces carry exactly its own constant; merged,
    # a straight-line RBF across the gap mixes them a little (the reason to keep them apart).
    path, _, _ = _scene_file(tmp_path)
    body = mp.load_body(path)
    ub, pb = _spread(40, **BIG, seed=5)
    us, ps = _spread(20, **SMALL, seed=6)
    f = write_taps(tmp_path / "c.csv", [f"T{i}" for i in range(60)], np.vstack([pb, ps]),
                   np.r_[np.full(40, 0.5), np.full(20, -0.5)])
    taps = mp.project_taps(body, mp.read_taps(f), max_distance=0.05)
    wing = body.face_part == body.part_names.index("rear wing")
    apart = mp.make_field("rbf", regions="parts").fit(body, taps).face_values()
    merged = mp.make_field("rbf").fit(body, taps).face_values()
    assert np.allclose(apart[wing], -0.5, atol=1e-9) and np.allclose(apart[~wing], 0.5, atol=1e-9)
    assert np.abs(merged[wing] + 0.5).max() > 1e-4


def test_cli_part_option_table_and_json(tmp_path, cli):
    big, small = _sphere(**BIG, subdivisions=4), _sphere(**SMALL, subdivisions=3)
    big.export(str(tmp_path / "body.stl"))
    small.export(str(tmp_path / "wing.stl"))

    def cp(u, p):
        return exact.sphere_cp(u)

    taps_file = _taps(tmp_path, cp)
    out = tmp_path / "r.json"
    r = cli("loads", tmp_path / "body.stl", taps_file, "--part", f"wing={tmp_path / 'wing.stl'}", "--q", "500",
            "--method", "rbf", "--no-bands", "--max-tap-distance", "0.05", "--json", out, "--quiet")
    assert r.returncode == 0, r.stderr
    assert "part " in r.stdout and "\n  wing " in r.stdout
    d = json.loads(out.read_text())
    names = [p["name"] for p in d["parts"]]
    assert names == ["body", "wing"]
    for p in d["parts"]:
        assert {"faces", "area_m2", "CL", "CD", "lift_N", "drag_N", "force_N"} <= set(p)
    assert sum(p["lift_N"] for p in d["parts"]) == pytest.approx(d["lift_N"], rel=1e-9, abs=1e-9)
    bad = cli("loads", tmp_path / "body.stl", taps_file, "--part", "wing.stl", "--q", "500", "--quiet")
    assert bad.returncode == 2 and "NAME=FILE" in bad.stderr and "Traceback" not in bad.stderr
    assert len(bad.stderr.strip().splitlines()) == 1


@pytest.mark.slow
def test_a_wing_part_above_a_body_gives_its_own_kutta_joukowski_lift():
    # A Joukowski wing (exact section Cp from the conformal map; lift from the Kutta-Joukowski theorem,
    # Milne-Thomson, Theoretical Hydrodynamics, ch. 6) as a separate part 0.4 m above a sphere (Cp of the sphere
    # in potential flow, Batchelor 1967 sec. 6.8).  Each part carries its isolated exact field (a test of keeping
    # the parts apart and of the per-part bookkeeping, not of interference).  Default method, no flags but the
    # parts: the wing's own lift within 5 % of Kutta-Joukowski.
    from meshpress.bodies.body import Body
    from meshpress.bodies.exact import Joukowski, sphere_cp
    from meshpress.taps.layout import TapTable

    J = Joukowski(eps=0.1, mu=0.04, alpha_deg=4.0, chord=0.3)
    Vw, Fw = J.body(span=0.8, n_around=120, n_span=30)
    lift_off = np.array([0.0, 0.0, 1.4])
    sph = trimesh.creation.icosphere(subdivisions=4, radius=0.5)
    V = np.vstack([np.asarray(sph.vertices), Vw + lift_off])
    F = np.vstack([np.asarray(sph.faces), Fw + len(sph.vertices)])
    body = Body(V, F, part_names=["body", "wing"], face_part=np.r_[np.zeros(len(sph.faces), int),
                                                                     np.ones(len(Fw), int)])
    pts = []
    for y in (-0.25, 0.0, 0.25):
        th = np.linspace(0, 2 * np.pi, 25, endpoint=False) + 0.05
        xz = J.contour(th)
        pts.append(np.column_stack([xz[:, 0], np.full(len(th), y), xz[:, 1]]) + lift_off)
    wing_pts = np.vstack(pts)
    u, body_pts = _spread(60, radius=0.5, center=(0, 0, 0), seed=7)
    table = TapTable([f"W{i}" for i in range(len(wing_pts))] + [f"B{i}" for i in range(60)],
                     np.vstack([wing_pts, body_pts]), np.r_[J.cp_at(wing_pts - lift_off), sphere_cp(u)], "cp",
                     [""] * (len(wing_pts) + 60))
    taps = mp.project_taps(body, table, max_distance=0.01)
    from meshpress.fields.regional import RegionalField

    # What meshpress loads does with a body of several parts: the default model fitted part by part.
    r = mp.compute_loads(body, taps, RegionalField("posterior", "parts"), ref_area=1.0)
    wing = next(p for p in r.parts if p.name == "wing")
    assert wing.taps == len(wing_pts)
    cl_wing = wing.loads.force_per_q_m2[2] / (J.chord * 0.8)
    assert cl_wing == pytest.approx(J.cz, rel=0.05)


def test_diff_says_what_a_change_did_to_each_part(tmp_path, cli):
    # Change only the wing's readings, by dCp = k (z - z0) (k in 1/m): kept apart, the body's figures do not move,
    # and the wing's lift changes by -k V_wing q (divergence theorem: -closed-integral of z n_z dA = -V), V from
    # trimesh's mesh volume (a reference library).  The thin-plate RBF reproduces the linear change exactly.
    path, big, small = _scene_file(tmp_path)
    k, z0 = 0.8, SMALL["center"][2]
    pts = np.vstack([trimesh.sample.sample_surface(m, n, seed=s)[0] for s, (m, n) in enumerate([(big, 50), (small, 30)])]
                    + [m.vertices[[m.vertices[:, 2].argmax(), m.vertices[:, 2].argmin()]] for m in (big, small)])
    on_wing = np.r_[np.zeros(50, bool), np.ones(30, bool), False, False, True, True]
    base = 0.3 - 0.2 * pts[:, 2]
    names = [f"T{i}" for i in range(len(pts))]
    write_taps(tmp_path / "a.csv", names, pts, base)
    write_taps(tmp_path / "b.csv", names, pts, base + np.where(on_wing, k * (pts[:, 2] - z0), 0.0))
    q = 400.0
    for tag in "ab":
        r = cli("loads", path, tmp_path / f"{tag}.csv", "--q", q, "--ref-area", "1", "--method", "rbf", "--no-bands",
                "--max-tap-distance", "0.05", "--json", tmp_path / f"{tag}.json", "--quiet")
        assert r.returncode == 0, r.stderr
    r = cli("diff", tmp_path / "a.json", tmp_path / "b.json")
    assert r.returncode == 0, r.stderr
    assert "by part:" in r.stdout
    from meshpress.commands.diff import compare_files

    d = compare_files(tmp_path / "a.json", tmp_path / "b.json")
    assert d["parts"]["body"]["CL"] == pytest.approx(0.0, abs=1e-9)
    assert d["parts"]["rear wing"]["CL"] == pytest.approx(-k * small.volume, rel=1e-6)
    assert d["delta"]["CL"] == pytest.approx(d["parts"]["rear wing"]["CL"], rel=1e-9)


def test_exported_cad_units_axes_and_scene_transforms(tmp_path):
    # The same two-part scene written three ways: metres with z up; inches (25.4 mm exactly, by definition of the
    # international inch, 1959) with y up and the nose along +z, as glTF exports often are; and with the wing as
    # an untransformed copy placed by its node's transform.  All three give the same body in the vehicle frame.
    _, big, small = _scene_file(tmp_path)
    # mesh (x, y, z) from the scene's own (x, y, z): a rotation (det +1) taking z up to y up and -x forward to +z
    to_yup = np.array([[0, -1, 0], [0, 0, 1], [-1, 0, 0]], float)
    assert np.linalg.det(to_yup) == pytest.approx(1.0)
    ref = mp.load_body(_scene_file(tmp_path)[0])
    sc = trimesh.Scene()
    for name, m in (("body", big), ("rear wing", small)):
        c = m.copy()
        c.vertices = (np.asarray(m.vertices) @ to_yup.T) / 0.0254
        sc.add_geometry(c, node_name=name, geom_name="g " + name)
    sc.export(str(tmp_path / "inch.glb"))
    inch = mp.load_body(tmp_path / "inch.glb", length_unit="in", up="+y", forward="+z")
    assert inch.report.source_frame.startswith("in, up +y, forward +z")
    moved = trimesh.Scene()
    moved.add_geometry(big, node_name="body", geom_name="g_body")
    T = np.eye(4)
    T[:3, 3] = SMALL["center"]
    moved.add_geometry(_sphere(SMALL["radius"], (0, 0, 0), 3), node_name="rear wing", geom_name="g_wing", transform=T)
    moved.export(str(tmp_path / "moved.glb"))
    placed = mp.load_body(tmp_path / "moved.glb")
    for b in (inch, placed):
        assert sorted(b.part_names) == sorted(ref.part_names)
        for name in ref.part_names:
            ca = ref.centroids[ref.face_part == ref.part_names.index(name)].mean(axis=0)
            cb = b.centroids[b.face_part == b.part_names.index(name)].mean(axis=0)
            assert np.allclose(ca, cb, atol=1e-5), name


def test_a_shell_inside_the_body_is_found_and_left_out(tmp_path):
    # A small closed shell wholly inside a sphere (a seat in a closed body): the winding number of the sphere
    # there is 1 (Jacobson et al. 2013), so it is left out and said so; a shell outside stays, named by place.
    outer = _sphere(radius=1.0, center=(0, 0, 1.0), subdivisions=4)
    seat = _sphere(radius=0.2, center=(0.3, 0.1, 0.8), subdivisions=2)
    wing = _sphere(**SMALL, subdivisions=2)
    path = tmp_path / "junk.stl"
    trimesh.util.concatenate([outer, seat, wing]).export(str(path))
    body = mp.load_body(path)
    assert body.n_faces == len(outer.faces) + len(wing.faces)
    assert body.report.inner_shells == 1 and body.report.inner_faces == len(seat.faces)
    assert any("inside the body" in w for w in body.warnings)
    assert body.part_names == ["junk", "rear high"]
    kept = mp.load_body(path, keep_inner=True)
    assert kept.n_faces == len(outer.faces) + len(seat.faces) + len(wing.faces)


def test_inside_test_agrees_with_the_closed_form_and_the_full_sum():
    # The solid angle a closed surface subtends at a point inside it is 4 pi, and 0 outside (Gauss), so the
    # winding number of a closed polyhedron is 1 nearer its centre than its nearest face plane and 0 beyond its
    # farthest vertex.  Skin.inside, which replaces far cells of faces by their summed area vector, must give
    # those answers; and on an open hemisphere, where the winding number takes every value between, the answers
    # of the full face-by-face sum, also with cells so coarse (theta 3) that most points fall back on that sum.
    # Near the hemisphere's base disc the winding number is close to 1/2 (the hemisphere subtends 2 pi from its
    # centre), where the far cells' sum alone would answer wrongly at theta 3 (73 of these 300 points).
    from meshpress.bodies.inner import Skin, winding_number

    rng = np.random.default_rng(11)
    tri = _sphere(1.0, (0, 0, 0), 4).triangles
    n = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    inradius = float(np.min(np.abs(np.einsum("ij,ij->i", n / np.linalg.norm(n, axis=1)[:, None], tri[:, 0]))))
    d = rng.standard_normal((200, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    inner = d * rng.uniform(0.0, 0.999 * inradius, 200)[:, None]
    outer = d * rng.uniform(1.001, 3.0, 200)[:, None]
    assert np.allclose(winding_number(inner, tri), 1.0, atol=1e-9)
    assert np.allclose(winding_number(outer, tri), 0.0, atol=1e-9)
    skin = Skin(tri)
    assert all(skin.inside(p) for p in inner) and not any(skin.inside(p) for p in outer)
    hemi = tri[tri.mean(axis=1)[:, 2] > 0]
    pts = rng.uniform(-1.5, 1.5, (300, 3))
    w = winding_number(pts, hemi)
    assert 0.3 < w[np.linalg.norm(pts, axis=1) < 0.9].mean() < 0.7  # open: neither 0 nor 1 inside
    disc = np.column_stack([rng.uniform(-0.6, 0.6, (300, 2)), rng.uniform(-0.01, 0.01, 300)])
    wd = winding_number(disc, hemi)
    assert np.allclose(wd, 0.5, atol=0.04)
    pts, w = np.vstack([pts, disc]), np.concatenate([w, wd])
    for s in (Skin(hemi), Skin(hemi, theta=3.0)):
        assert [s.inside(p) for p in pts] == list(w > 0.5)


def test_shell_search_finds_the_sphere_inside_and_not_the_ones_beside():
    # Skin: a unit sphere.  A sphere inside it (winding number 1 at all its points, closed form above) is found;
    # one inside the skin's box but outside the skin (its centre 1.39 from the skin's, radius 0.1) and one across
    # the skin (half out) are not, nor one outside the box.
    from meshpress.bodies.inner import inner_shells

    shells = [_sphere(1.0, (0, 0, 0), 4), _sphere(0.2, (0.2, -0.3, 0.1), 2), _sphere(0.1, (0.8, 0.8, 0.8), 2),
              _sphere(0.2, (0.0, 0.0, 0.95), 2), _sphere(0.2, (2.0, 0.0, 0.0), 2)]
    labels = [7, 3, 5, 9, 4]
    tri = np.vstack([m.triangles for m in shells])
    component = np.concatenate([np.full(len(m.faces), k) for m, k in zip(shells, labels)])
    areas = np.concatenate([m.area_faces for m in shells])
    assert np.array_equal(inner_shells(component, tri, areas), [3])


def test_non_manifold_edges_are_counted_and_located():
    # Three triangles on one edge (a fin glued to a plate along its edge): that edge has three faces, the only
    # non-manifold one (definition of a 2-manifold mesh: every edge has one or two faces).
    from meshpress.bodies.diagnostics import nonmanifold_edges

    v = np.array([[0, 0, 0], [1, 0, 0], [0.5, 1, 0], [0.5, -1, 0], [0.5, 0, 1]], float)
    f = np.array([[0, 1, 2], [1, 0, 3], [0, 1, 4]])
    d = nonmanifold_edges(f, v)
    assert d["count"] == 1 and d["centre_m"] == [0.5, 0.0, 0.0]
