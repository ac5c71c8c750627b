"""Tap tables, projection and the pressure field's special cases."""

import numpy as np
import pandas as pd
import pytest

import meshpress
from meshpress.errors import InputError
from meshpress.taps.layout import read_taps

from conftest import write_taps


def _csv(tmp_path, text, name="t.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


@pytest.mark.parametrize("text, msg", [
    ("tap,x,y\nA,1,2\n", "missing column(s) z"),
    ("tap,x,y,z\nA,1,2,3\n", "needs a 'p'"),
    ("tap,x,y,z,p,cp\nA,1,2,3,4,5\n", "both 'p' and 'cp'"),
    ("tap,x,y,z,p\n", "no rows"),
    ("", "empty"),
    ("tap,x,y,z,p\nA,1,2,3,4\nB,1,2,zz,4\n", "line 3, column z: 'zz' is not a number (tap 'B')"),
    ("tap,x,y,z,p\nA,1,2,3,4\nB,1,2,3,\n", "line 3, column p"),
    ("# comment\ntap,x,y,z,p\nA,1,2,3,4\nA,1,2,3,4\n", "line 4, column tap: duplicate tap name 'A' (first on line 3)"),
    ("tap,x,y,z,p,side\nA,1,2,3,4,sideways\n", "column side"),
])
def test_bad_tables(tmp_path, text, msg):
    p = _csv(tmp_path, text)
    with pytest.raises(InputError) as e:
        read_taps(p)
    assert msg in str(e.value) and "t.csv" in str(e.value)


def test_pressure_unit_and_xlsx(tmp_path):
    df = pd.DataFrame({"tap": ["A", "B"], "x": [0, 1], "y": [0, 0], "z": [1, 1], "p": [1.0, -2.0]})
    df.to_excel(tmp_path / "t.xlsx", index=False)
    t = read_taps(tmp_path / "t.xlsx", pressure_unit="inH2O")
    np.testing.assert_allclose(t.values, [249.08891, -2 * 249.08891], rtol=1e-7)
    with pytest.raises(InputError, match="unknown pressure unit"):
        read_taps(tmp_path / "t.xlsx", pressure_unit="bar-ish")


def test_far_tap_is_an_error_naming_it(tmp_path, small_car):
    path, v, f = small_car
    body = meshpress.load_body(path)
    pts = np.array([[1.0, 0.0, 1.5], [2.0, 0.0, 5.0]])  # second: 3.6 m above the roof
    t = read_taps(write_taps(tmp_path / "t.csv", ["ok", "typo"], pts, [0.0, 0.0]))
    with pytest.raises(InputError, match="tap 'typo' is .* mm from the surface"):
        meshpress.project_taps(body, t)


def test_side_selects_the_right_face_of_a_thin_plate(tmp_path):
    # Plate 1 m x 1 m, 4 mm thick: a tap in its mid-plane is 2 mm from both faces.
    import trimesh

    box = trimesh.creation.box((1.0, 1.0, 0.004))
    box.apply_translation((0, 0, 0.5))
    box.export(tmp_path / "plate.stl")
    body = meshpress.load_body(tmp_path / "plate.stl")
    pts = np.array([[0.1, 0.1, 0.5], [0.1, 0.1, 0.5], [0.2, 0.1, 0.5]])  # "l" and "a" pick one face: apart
    t = read_taps(write_taps(tmp_path / "t.csv", ["u", "l", "a"], pts, [0, 0, 0],
                             extra={"side": ["upper", "lower", "-z"]}))
    pj = meshpress.project_taps(body, t)
    n = body.face_normals[pj.faces]
    assert n[0, 2] > 0.99 and n[1, 2] < -0.99 and n[2, 2] < -0.99
    np.testing.assert_allclose(pj.distance, 0.002, atol=1e-7)  # STL float32


def test_projection_matches_trimesh_closest_point(small_car):
    # Our k-d-tree candidate search against trimesh.proximity.closest_point (reference implementation).
    import trimesh

    path, v, f = small_car
    body = meshpress.load_body(path)
    rng = np.random.default_rng(3)
    q = body.centroids[rng.choice(body.n_faces, 40)] + rng.normal(0, 0.02, (40, 3))
    from meshpress.taps.projection import nearest_on_faces

    p, fi, d = nearest_on_faces(body, q)
    m = trimesh.Trimesh(body.vertices, body.faces, process=False)
    p2, d2, _ = trimesh.proximity.closest_point(m, q)
    np.testing.assert_allclose(d, d2, atol=1e-12)


def test_centre_line_taps_fall_back_to_constant_term(tmp_path, small_car):
    path, v, f = small_car
    body = meshpress.load_body(path)
    rng = np.random.default_rng(0)
    sel = np.flatnonzero(np.abs(body.centroids[:, 1]) < 1e-9)
    if len(sel) < 10:  # no face centroid exactly on the plane: use surface points at y = 0
        sel = np.argsort(np.abs(body.centroids[:, 1]))[:30]
    # Faces either side of the plane map to the same point: keep one tap per place (two taps at one place with
    # different readings cannot be interpolated, and are not what this test is about).
    pts = np.unique(np.round(body.centroids[sel] * [1, 0, 1], 9), axis=0)
    t = read_taps(write_taps(tmp_path / "c.csv", [f"c{i}" for i in range(len(pts))],
                             body.frame.to_mesh(pts), rng.normal(0, 1, len(pts))))
    pj = meshpress.project_taps(body, t, max_distance=0.05)
    res = meshpress.compute_loads(body, pj, meshpress.make_field("rbf"), q=100.0)
    assert any("lie in one plane" in w for w in res.warnings)
    assert np.isfinite(res.CL)


def test_rbf_reproduces_linear_field(small_car, tmp_path):
    # Thin-plate spline with a linear term reproduces linear functions exactly (Duchon 1977).
    path, v, f = small_car
    body = meshpress.load_body(path)
    rng = np.random.default_rng(2)
    pts = body.centroids[rng.choice(body.n_faces, 40, replace=False)]
    lin = lambda p: 3.0 + 2.0 * p[:, 0] - 1.5 * p[:, 1] + 0.5 * p[:, 2]
    t = read_taps(write_taps(tmp_path / "l.csv", [f"t{i}" for i in range(40)], body.frame.to_mesh(pts), lin(pts)))
    field = meshpress.make_field("rbf").fit(body, meshpress.project_taps(body, t))
    np.testing.assert_allclose(field.at_points(body.centroids), lin(body.centroids), atol=1e-8)


def test_two_taps_at_one_place_with_different_readings_are_named(tmp_path, small_car):
    # Interpolation needs distinct centres (Wendland, Scattered Data Approximation, 2005, ch. 8): with two taps
    # at one place scipy's RBF solve either fails (singular) or returns a meaningless interpolant, so the tool
    # must stop and name the two taps.
    path, v, f = small_car
    body = meshpress.load_body(path)
    rng = np.random.default_rng(4)
    pts = body.centroids[rng.choice(body.n_faces, 12, replace=False)]
    pts = np.vstack([pts, pts[3]])
    vals = rng.normal(0, 1, len(pts))
    t = read_taps(write_taps(tmp_path / "d.csv", [f"t{i}" for i in range(len(pts))], body.frame.to_mesh(pts), vals))
    with pytest.raises(InputError, match=r"'t3' and 't12' are at the same place"):
        meshpress.project_taps(body, t)
