"""The loader: file formats, cleaning, orientation, frame, diagnostics, frontal area."""

import meshio
import numpy as np
import pytest
import trimesh

import meshpress
from meshpress.errors import InputError

from conftest import icosphere


def _soup(v, f):
    """Triangle soup: every face with its own three vertices, as in an STL file."""
    tri = v[f]
    return tri.reshape(-1, 3), np.arange(3 * len(f)).reshape(-1, 3)


def test_soup_with_flipped_faces_becomes_closed_outward(tmp_path):
    v, f = icosphere(3, radius=0.5, center=(0, 0, 0.5))
    volume = trimesh.Trimesh(v, f).volume  # trimesh's mass properties, before we spoil the winding
    rng = np.random.default_rng(1)
    f = f.copy()
    flip = rng.random(len(f)) < 0.2
    f[flip] = f[flip][:, ::-1]
    sv, sf = _soup(v, f)
    path = tmp_path / "ball.stl"
    trimesh.Trimesh(sv, sf, process=False).export(path)
    b = meshpress.load_body(path)
    r = b.report
    assert r.watertight and r.holes == 0
    assert r.faces == len(f) and r.vertices == len(v)
    assert r.flipped_faces == flip.sum()
    # Outward: every normal points away from the centre (checked against trimesh's own test).
    m = trimesh.Trimesh(b.vertices, b.faces, process=False)
    assert m.is_winding_consistent and m.volume > 0
    c = b.centroids - b.centroids.mean(axis=0)
    assert np.all(np.einsum("ij,ij->i", c, b.face_normals) > 0)
    # Volume against trimesh's mass properties of the same polyhedron.
    assert r.volume_m3 == pytest.approx(volume, rel=1e-6)  # STL stores float32


def test_inside_out_body_is_turned_outward(tmp_path):
    v, f = icosphere(3)
    path = tmp_path / "inv.ply"
    trimesh.Trimesh(v, f[:, ::-1], process=False).export(path)
    b = meshpress.load_body(path)
    assert b.volume() > 0 and b.report.flipped_faces == len(f)


def test_holes_and_closure(tmp_path):
    # Cut a polar cap off a unit sphere: one hole whose area is about that of the cut circle.
    v, f = icosphere(5)
    c = v[f].mean(axis=1)
    keep = c[:, 2] < 0.8
    path = tmp_path / "cut.obj"
    m = trimesh.Trimesh(v, f[keep])
    m.export(path)
    b = meshpress.load_body(path)
    r = b.report
    assert not r.watertight and r.holes == 1
    # Hole rim radius ~ sqrt(1 - 0.8^2) = 0.6 -> area ~ pi 0.36 (faces straddle the cut: loose).
    assert r.hole_areas_m2[0] == pytest.approx(np.pi * 0.36, rel=0.1)
    # |sum n dA| equals the hole's vector area (divergence theorem on the closed-up surface).
    assert r.closure * r.area_m2 == pytest.approx(r.hole_areas_m2[0], rel=0.02)
    assert any("open" in w for w in b.warnings)


def test_degenerate_and_duplicate_faces_dropped(tmp_path):
    v, f = icosphere(2)
    f2 = np.vstack([f, f[:5], [[0, 0, 1]], [[1, 2, 2]]])
    path = tmp_path / "d.off"
    trimesh.Trimesh(v, f2, process=False).export(path)
    b = meshpress.load_body(path)
    assert b.report.faces == len(f) and b.report.dropped_faces == 7


@pytest.mark.parametrize("top", [2**30, 2**32, 2**40])
def test_row_grouping_above_the_one_key_limit_matches_numpy_unique(top):
    # Rows whose values reach 2**30 (two columns still pack into one int64), 2**32 or 2**40 (they do not), far
    # above the 2**21 that one int64 key holds for three columns: the grouping must partition them exactly as
    # np.unique(axis=0) does (the reference) and keep each group's first row.  At 2**32 the key
    # (a n + b) n + c wraps to b n + c, so (1, 5, 7) and (2, 5, 7) would meet under a key that overflowed.
    from meshpress.bodies.cleaning import ONE_KEY_LIMIT, group_rows

    rng = np.random.default_rng(5)
    base = rng.integers(0, top, size=(400, 3))
    base[:50, :2] = base[50:100, :2]  # rows that share their first two values and differ in the third
    base[100:103] = [[1, 5, 7], [2, 5, 7], [top - 1, top - 1, top - 1]]
    rows = base[rng.integers(0, len(base), size=3000)]
    n = int(rows.max()) + 1
    assert n >= ONE_KEY_LIMIT
    codes, first = group_rows(rows, n)
    ref_rows, ref_first, ref_inv = np.unique(rows, axis=0, return_index=True, return_inverse=True)
    assert np.array_equal(np.sort(first), np.sort(ref_first))
    assert np.array_equal(rows[first][codes], rows)
    # The same partition: every group of ours is one group of numpy's and back.
    assert len(set(zip(codes.tolist(), ref_inv.ravel().tolist()))) == len(first) == len(ref_rows)
    assert np.array_equal(codes[first], np.arange(len(first)))  # numbered in order of first appearance


def test_cleaning_through_the_two_key_grouping_matches_numpy_unique(monkeypatch):
    # A shuffled soup of a sphere with repeated and re-ordered faces, cleaned once with one key per row and once
    # forced through the two-key grouping (the path of meshes above 2**21 vertices): the same vertices, faces and
    # kept faces; and the counts np.unique(axis=0) gives (the reference) on the quantised coordinates and the
    # sorted faces.
    from meshpress.bodies import cleaning
    from meshpress.tolerances import TOL

    rng = np.random.default_rng(3)
    v, f = icosphere(3)
    f = np.vstack([f, f[:40][:, [1, 2, 0]], f[40:60][:, ::-1]])  # 40 repeated faces, 20 repeated and flipped
    f = f[rng.permutation(len(f))]
    vs, fs = _soup(v + 1e-9 * rng.standard_normal(v.shape), f)
    one = cleaning.clean(vs, fs)
    monkeypatch.setattr(cleaning, "ONE_KEY_LIMIT", 2)
    two = cleaning.clean(vs, fs)
    for a, b in zip(one, two):
        assert np.array_equal(np.asarray(a), np.asarray(b))
    lo = vs.min(axis=0)
    span = float((vs.max(axis=0) - lo).max())
    q = ((vs - lo) * (10.0**TOL.merge_digits / span) + 0.5).astype(np.int64)
    ref_v, ref_inv = np.unique(q, axis=0, return_inverse=True)
    ref_f = np.unique(np.sort(ref_inv.ravel()[fs], axis=1), axis=0)
    assert len(two[0]) == len(ref_v) == len(v) and two[3] == len(vs) - len(ref_v)
    assert len(two[1]) == len(ref_f) == len(f) - 60 and two[4] == 60
    assert np.allclose(np.sort(two[0], axis=0), np.sort(v, axis=0), atol=1e-8)


def test_meshio_formats_and_quads(tmp_path):
    # A unit cube of quads, written by meshio as VTU: read back, quads split, area 6.
    pts = np.array([[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0, 1], [1, 0, 1], [1, 1, 1], [0, 1, 1]], float)
    quads = np.array([[0, 3, 2, 1], [4, 5, 6, 7], [0, 1, 5, 4], [2, 3, 7, 6], [1, 2, 6, 5], [0, 4, 7, 3]])
    for ext in ("vtu", "vtk"):
        path = tmp_path / f"cube.{ext}"
        meshio.write(path, meshio.Mesh(pts, [("quad", quads)]))
        b = meshpress.load_body(path)
        assert b.report.faces == 12 and b.area == pytest.approx(6.0)
        assert b.report.watertight and b.volume() == pytest.approx(1.0)
        # Frontal area of a unit cube: exactly 1 m2 (raster edges align with the cube).
        assert b.frontal_area(0.01) == pytest.approx(1.0, rel=0.02)


def test_scene_of_parts_becomes_one_body(tmp_path):
    a = trimesh.creation.icosphere(2, radius=0.3)
    c = trimesh.creation.box((0.5, 0.5, 0.5))
    c.apply_translation((1.5, 0, 0.25))
    scene = trimesh.Scene([a, c])
    path = tmp_path / "parts.glb"
    scene.export(path)
    b = meshpress.load_body(path)
    assert b.report.parts == 2 and b.report.components == 2
    assert b.report.faces == len(a.faces) + len(c.faces)
    assert b.volume() == pytest.approx(a.volume + c.volume, rel=1e-6)


def test_frontal_area_of_sphere():
    # Projection of a sphere of radius r: a disc of area pi r^2 (icosphere slightly smaller).
    v, f = icosphere(5, radius=1.0)
    b = meshpress.Body(v, f)
    exact_poly = np.pi  # the icosphere's silhouette is inscribed: within 0.5 % at 20k faces
    assert b.frontal_area(0.002) == pytest.approx(exact_poly, rel=5e-3)


def test_axes_and_units_map_to_vehicle_frame(tmp_path, small_car):
    # Same body in m with z up / forward -x, and in mm with y up / forward -z.
    path, v, f = small_car
    mm = np.column_stack([v[:, 1], v[:, 2], v[:, 0]]) * 1000.0 + [5.0, -40.0, 300.0]
    p2 = tmp_path / "car_mm.vtu"  # VTU keeps doubles (STL would round to float32)
    meshio.write(p2, meshio.Mesh(mm, [("triangle", f)]))
    a = meshpress.load_body(path, front_axle=0.85, rear_axle=3.45)
    b = meshpress.load_body(p2, length_unit="mm", up="+y", forward="-z", front_axle=1150.0, rear_axle=3750.0)
    np.testing.assert_allclose(np.sort(a.centroids, axis=0), np.sort(b.centroids, axis=0), atol=1e-9)
    assert a.axles.wheelbase == pytest.approx(2.6) and b.axles.wheelbase == pytest.approx(2.6)
    # Origin on the ground (lowest point) midway between the axles.
    assert b.vertices[:, 2].min() == pytest.approx(0.0, abs=1e-12)
    assert b.axles.front_x == pytest.approx(-1.3)


def test_implausible_size_names_the_unit(tmp_path, small_car):
    path, v, f = small_car
    p2 = tmp_path / "car_mm.stl"
    trimesh.Trimesh(v * 1000.0, f, process=False).export(p2)
    b = meshpress.load_body(p2, length_unit="m")
    assert any("--length-unit mm" in w for w in b.warnings)


def test_wrong_forward_axis_is_warned(tmp_path, small_car):
    # A car is longest along its length (common practice: about twice its width): the same body read with its
    # length taken as the height (y up and forward -z written as the defaults z up, forward -x) gets a warning
    # naming the options; read right, it gets none.
    path, v, f = small_car
    mm = np.column_stack([v[:, 1], v[:, 2], v[:, 0]]) * 1000.0  # y up, forward -z, in mm
    p2 = tmp_path / "car_mm.vtu"
    meshio.write(p2, meshio.Mesh(mm, [("triangle", f)]))
    right = meshpress.load_body(p2, length_unit="mm", up="+y", forward="-z")
    wrong = meshpress.load_body(p2, length_unit="mm")
    assert not any("check --forward" in w for w in right.warnings)
    assert any("check --forward and --up (+z)" in w and "upward (z)" in w for w in wrong.warnings)


@pytest.mark.parametrize("kw, msg", [
    (dict(up="+w"), "not a signed axis"),
    (dict(up="+z", forward="-z"), "must be different axes"),
    (dict(length_unit="furlong"), "unknown length unit"),
    (dict(front_axle=1.0), "give both"),
    (dict(front_axle=3.0, rear_axle=1.0), "ahead of the rear axle"),
])
def test_bad_loader_options(small_car, kw, msg):
    with pytest.raises(InputError, match=msg):
        meshpress.load_body(small_car[0], **kw)


def test_bad_mesh_files(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        meshpress.load_body(tmp_path / "nope.stl")
    bad = tmp_path / "bad.stl"
    bad.write_text("this is not a mesh\n")
    with pytest.raises(InputError, match="bad.stl"):
        meshpress.load_body(bad)


def test_cached_geometry_matches_a_fresh_computation(samples_dir):
    # The loader seeds the caches from its own arrays; they must equal what the faces give afresh.
    b = meshpress.load_body(samples_dir / "coupe_scan.stl", length_unit="mm", up="+y", forward="-z")
    t = b.vertices[b.faces]
    np.testing.assert_allclose(b.triangles, t, atol=1e-12)
    np.testing.assert_allclose(b.area_vectors, 0.5 * np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0]), atol=1e-12)
    np.testing.assert_allclose(b.centroids, t.mean(axis=1), atol=1e-12)
    assert b.report.flipped_faces > 0


def test_ground_height_given(small_car):
    # The origin sits on the given ground plane, not on the lowest point.
    path, v, f = small_car
    b = meshpress.load_body(path, ground=-0.1)
    assert b.vertices[:, 2].min() == pytest.approx(0.1 + v[:, 2].min(), abs=1e-12)


def test_stl_headers_that_lie_or_ask_too_much_are_refused_up_front(tmp_path, cli):
    # Binary STL layout (80-byte header, uint32 count, 50 bytes per face: the format's definition): a file that
    # declares 10^7 faces in 100 bytes is truncated or lies; one that declares more than the limit is refused
    # before any reading, with the limit in the message.
    import struct

    from meshpress.bodies.readers import MAX_FACES

    lie = tmp_path / "lie.stl"
    lie.write_bytes(b"\0" * 80 + struct.pack("<I", 10**7) + b"\0" * 16)
    big = tmp_path / "big.stl"
    big.write_bytes(b"\0" * 80 + struct.pack("<I", MAX_FACES + 1) + b"\0" * 50)
    taps = tmp_path / "t.csv"
    taps.write_text("tap,x,y,z,cp\nA,0,0,0,0.1\n")
    for f, words in ((lie, "holds room for 0"), (big, f"limit of {MAX_FACES:,}")):
        r = cli("loads", f, taps, "--quiet")
        assert r.returncode == 2 and words in r.stderr and "Traceback" not in r.stderr, r.stderr
        assert len(r.stderr.strip().splitlines()) == 1
