"""Lift distribution, centre-line section, exports and 3D views."""

from __future__ import annotations

import os
import subprocess
import sys

import numpy as np
import pytest

from conftest import icosphere
from meshpress.bodies.body import Body
from meshpress.loads.distribution import lift_distribution, section_at_y, surface_quantities
from meshpress.taps.projection import ProjectedTaps

RHO_G = 1000.0 * 9.80665  # water, standard gravity (CGPM 1901), N/m3


def _sphere_body(subdivisions=5, radius=1.0):
    v, f = icosphere(subdivisions, radius)
    return Body(v, f)


def _taps_on(body, idx, values, names=None, kind="p"):
    idx = np.asarray(idx)
    c = body.centroids[idx]
    names = names or [f"T{i}" for i in range(len(idx))]
    return ProjectedTaps(list(names), c, c, idx, np.full((len(idx), 3), 1 / 3), np.zeros(len(idx)),
                         np.asarray(values, float), kind)


# Lift distribution ---------------------------------------------------------------------------

def test_lift_distribution_hydrostatic_sphere_slab_by_slab():
    # Archimedes applied to each slab x0 < x < x1 of a closed body under p = -rho g z: the skin of the
    # slab carries rho g times the slab's volume upward (the cut faces are vertical and carry no lift).
    # Sphere of radius R: dL/dx = rho g pi (R^2 - x^2) [closed form].
    R = 1.0
    body = _sphere_body(5, R)
    p = -RHO_G * body.centroids[:, 2]
    d = lift_distribution(body.triangles, body.area_vectors, p, n_stations=20)
    a, b = d.edges_m[:-1], d.edges_m[1:]
    exact = RHO_G * np.pi * (R**2 * (b - a) - (b**3 - a**3) / 3) / (b - a)  # station mean of pi (R^2 - x^2)
    peak = RHO_G * np.pi * R**2
    assert np.max(np.abs(d.dL_dx - exact)) < 0.01 * peak
    # Total: rho g times the polyhedron's volume, exactly (divergence theorem; p linear).
    assert d.cumulative[-1] == pytest.approx(RHO_G * body.volume(), rel=1e-9)
    # Half the sphere is ahead of x = 0 by symmetry.
    assert d.at(0.0) == pytest.approx(0.5 * d.cumulative[-1], rel=2e-3)


def test_lift_distribution_shares_cut_faces_exactly():
    # One triangle spanning x 0..2, corners at x = 0, 1, 2: area per unit x is a tent, so the share
    # ahead of x = 0.5 is 0.5^2 / (2 * 1) = 1/8 (area of a similar triangle, elementary geometry).
    tri = np.array([[[0.0, 0.0, 0.0], [1.0, 1.0, 0.0], [2.0, 0.0, 0.0]]])
    av = 0.5 * np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])  # n dA along +z or -z
    d = lift_distribution(tri, av, np.array([-1.0]), edges=[0.0, 0.5, 1.0, 2.0])
    total = float(av[0, 2])
    np.testing.assert_allclose(d.cumulative, [0.0, total / 8, total / 2, total], rtol=1e-12, atol=1e-15)


def test_lift_distribution_rejects_bad_edges():
    body = _sphere_body(1)
    with pytest.raises(ValueError, match="increasing"):
        lift_distribution(body.triangles, body.area_vectors, np.zeros(body.n_faces), edges=[0.0, 0.0])


def test_surface_quantities_follow_the_definitions():
    # Cp = (p - p_ref)/q and dF/dA = -(p - p_ref) n (CONVENTIONS.md, SAE J1594 signs).
    n = np.array([[0.0, 0.0, 1.0], [1.0, 0.0, 0.0]])
    sq = surface_quantities(n, np.array([100.0, -50.0]), "p", q=500.0, p_ref=10.0)
    np.testing.assert_allclose(sq.cp, [90 / 500, -60 / 500])
    np.testing.assert_allclose(sq.force_per_area, [[0, 0, -90.0], [60.0, 0, 0]])
    sq = surface_quantities(n, np.array([0.2, -0.4]), "cp", q=None)
    assert sq.p_Pa is None and sq.force_unit == "per q"


# Centre-line section ------------------------------------------------------------------------

def test_section_of_a_sphere_lies_on_its_great_circle_and_reads_a_linear_field_exactly():
    R = 0.8
    body = _sphere_body(4, R)
    x = body.vertices[:, 0].copy()
    s = section_at_y(body.vertices, body.faces, body.face_normals, x, 0.0)
    r = np.hypot(s.x_m, s.z_m)
    # Chords of the icosphere lie inside the circle, by less than the sagitta of its longest edge.
    edge = np.max(np.linalg.norm(body.triangles[:, 0] - body.triangles[:, 1], axis=1))
    assert np.all(r <= R + 1e-9) and np.all(r >= R - edge**2 / (4 * R))
    # Linear interpolation of a linear field along an edge is exact.
    np.testing.assert_allclose(s.values, s.x_m, atol=1e-12)
    assert np.all(np.diff(s.x_m) >= 0)
    assert np.all(s.upper[s.z_m > 0.1 * R]) and not np.any(s.upper[s.z_m < -0.1 * R])


# Exports ------------------------------------------------------------------------------------

def _read_vtk(path):
    """Cell data, point data and cell count read by an independent reader: meshio for .vtu, VTK's own
    XML reader (the format's reference implementation) for .vtp."""
    if path.suffix == ".vtu":
        import meshio

        m = meshio.read(path)
        return ({k: np.concatenate(v) for k, v in m.cell_data.items()}, dict(m.point_data),
                sum(len(c.data) for c in m.cells))
    from vtkmodules.util.numpy_support import vtk_to_numpy
    from vtkmodules.vtkIOXML import vtkXMLPolyDataReader

    r = vtkXMLPolyDataReader()
    r.SetFileName(str(path))
    r.Update()
    out = r.GetOutput()

    def arrays(d):
        return {d.GetArrayName(i): vtk_to_numpy(d.GetArray(i)) for i in range(d.GetNumberOfArrays())}

    return arrays(out.GetCellData()), arrays(out.GetPointData()), out.GetNumberOfCells()


def test_vtp_and_vtu_carry_the_field(tmp_path):
    from meshpress.outputs.export import write_body

    body = _sphere_body(3)
    p = 100.0 * body.centroids[:, 0]
    taps = _taps_on(body, [0, 100, 200], p[[0, 100, 200]])
    for name in ("body.vtp", "body.vtu"):
        out = write_body(tmp_path / name, body, p, taps, "p", q=50.0)
        cd, pd_, n_cells = _read_vtk(out)
        assert n_cells == body.n_faces
        np.testing.assert_allclose(cd["p_Pa"], p)
        np.testing.assert_allclose(cd["Cp"], p / 50.0)
        np.testing.assert_allclose(cd["force_per_area"], -p[:, None] * body.face_normals, atol=1e-9)
        # Distance to the nearest tap against a brute-force computation.
        brute = np.min(np.linalg.norm(body.centroids[:, None] - taps.points[None], axis=2), axis=1)
        np.testing.assert_allclose(cd["tap_distance_m"], brute, atol=1e-12)
        assert len(pd_["Cp"]) == len(body.vertices)


def test_body_file_must_be_vtk(tmp_path):
    from meshpress.errors import InputError
    from meshpress.outputs.export import write_body

    body = _sphere_body(1)
    with pytest.raises(InputError, match=r"\.vtp or \.vtu"):
        write_body(tmp_path / "x.stl", body, np.zeros(body.n_faces))


def test_tap_csv_round_trips_awkward_names(tmp_path):
    import pandas as pd

    from meshpress.outputs.export import tap_rows, write_tap_csv

    body = _sphere_body(2)
    names = ['<script>alert("x")</script>', "a,b", 'quote"d']
    taps = _taps_on(body, [1, 2, 3], [10.0, -20.0, 5.0], names)
    rows = tap_rows(body, taps, q=100.0, residuals=np.array([1.0, -2.0, 0.5]))
    out = write_tap_csv(tmp_path / "taps.csv", rows)
    df = pd.read_csv(out)
    assert list(df["tap"]) == names
    np.testing.assert_allclose(df["Cp"], [0.1, -0.2, 0.05])
    np.testing.assert_allclose(df["loo_residual_Cp"], [0.01, -0.02, 0.005])
    np.testing.assert_allclose(df[["x_m", "y_m", "z_m"]].to_numpy(), body.centroids[[1, 2, 3]], atol=1e-6)


# 3D views -----------------------------------------------------------------------------------

def _image_is_a_picture(img, size):
    w, h = size
    assert img.shape == (h, w, 3) and img.dtype == np.uint8
    # Not blank: many distinct colours and real contrast.
    flat = img.reshape(-1, 3)
    assert len(np.unique(flat[::7], axis=0)) > 200
    assert float(flat.std()) > 15


def test_views_render_off_screen_at_the_requested_size():
    from meshpress.outputs.view3d import VIEWS, render_views

    body = _sphere_body(3, 0.5)
    cp = body.centroids[:, 0] / 0.5  # antisymmetric: -1 at the front, +1 at the back
    taps = _taps_on(body, [5, 50, 500], cp[[5, 50, 500]], kind="cp")
    size = (320, 200)
    imgs = render_views(body, cp, taps, views=tuple(VIEWS), kind="cp", size=size, tap_names=True, arrows=True)
    for name in VIEWS:
        _image_is_a_picture(imgs[name], size)
    # The side view shows blue (suction) at the front (left) and red at the back (right) of the body.
    side = imgs["side"].astype(int)
    row = side[size[1] // 2]
    left, right = row[size[0] // 2 - 60], row[size[0] // 2 + 60]
    assert left[2] > left[0] and right[0] > right[2]


def test_each_view_matches_a_fresh_render_of_it_title_and_camera_included():
    """One plotter serves all views with as few renders as it can; each picture must still be exactly
    what a new plotter draws for that view alone (a regression: the title and zoom once lagged a view)."""
    from meshpress.outputs.view3d import BodyView

    body = _sphere_body(3, 0.5)
    cp = body.centroids[:, 0] / 0.5
    size = (320, 200)
    shared = BodyView(body, cp, kind="cp", size=size)
    try:
        seq = [shared.screenshot(n) for n in ("top", "side", "bottom")]
    finally:
        shared.close()
    for name, img in zip(("top", "side", "bottom"), seq):
        alone = BodyView(body, cp, kind="cp", size=size)
        try:
            ref = alone.screenshot(name)
        finally:
            alone.close()
        assert np.abs(img.astype(int) - ref.astype(int)).mean() < 0.5, name


def test_a_picture_drawn_aside_equals_the_one_drawn_here(monkeypatch):
    from meshpress.aside import start_aside

    payload = bytes(range(256)) * 1000
    assert start_aside(lambda: payload).result() == payload
    # Where VTK is not loaded yet the work goes to a child process (its pid comes back).
    code = ("import os; from meshpress.aside import start_aside; "
            "print(start_aside(lambda: str(os.getpid()).encode()).result().decode(), os.getpid())")
    child, me = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert child != me
    # Work that draws waits for this process once VTK's renderer is loaded here (as it is after the tests above).
    import pyvista  # noqa: F401

    assert start_aside(lambda: str(os.getpid()).encode(), opengl=True).result() == str(os.getpid()).encode()
    # A child that fails leaves the work to this process, which then raises its own error.
    calls = []

    def boom():
        calls.append(1)
        raise RuntimeError("drawn here")

    with pytest.raises(RuntimeError, match="drawn here"):
        start_aside(boom).result()
    assert calls == [1]  # the child's call was in another process; only this one counted here
    monkeypatch.setenv("MESHPRESS_SERIAL", "1")
    assert start_aside(lambda: payload).result() == payload


def test_colour_limits_are_symmetric_about_zero():
    from meshpress.outputs.view3d import colour_field

    body = _sphere_body(2)
    v = 3.0 + body.centroids[:, 2]  # all positive: the scale still straddles zero
    cf = colour_field(body, v, None, "p", q=None, quantity="p")
    assert cf.limit > 0 and cf.name == "p"
    cf = colour_field(body, v, None, "p", q=2.0, quantity="cp")
    np.testing.assert_allclose(cf.faces, v / 2.0)


def test_colour_scale_keeps_a_small_parts_own_range():
    # A small part with a strong field (a wing's suction peak) is not clipped by the body's percentile;
    # the limit is then that part's own 99.5th percentile (numpy's, the reference).
    from meshpress.bodies.body import Body
    from meshpress.outputs.view3d import colour_field

    v1, f1 = icosphere(6, 1.0)  # 81,920 faces: the body
    v2, f2 = icosphere(2, 0.2)  # 320 faces: the "wing", 0.4 % of the faces, under the 0.5 % a percentile cuts
    v2 = v2 + [0.0, 0.0, 2.0]
    body = Body(np.vstack([v1, v2]), np.vstack([f1, f2 + len(v1)]), part_names=["body", "wing"],
                face_part=np.r_[np.zeros(len(f1), int), np.ones(len(f2), int)])
    cp = np.r_[np.full(len(f1), 0.3), np.linspace(-1.8, -1.0, len(f2))]
    cf = colour_field(body, cp, None, "cp", quantity="cp")
    assert cf.limit == pytest.approx(np.percentile(np.abs(cp[len(f1):]), 99.5))
    one = colour_field(_sphere_body(4), np.full(5120, 0.3), None, "cp", quantity="cp")
    assert one.limit == pytest.approx(0.3)


def test_decimated_copy_for_big_meshes_keeps_the_field():
    from meshpress.outputs.view3d import body_polydata

    body = _sphere_body(5)
    vals = body.vertices[:, 2].copy()
    small, dec = body_polydata(body, {"value": vals}, max_faces=2000)
    assert dec and small.n_cells < 0.5 * body.n_faces
    # Clustering keeps original vertices, so each value is the field at that very point.
    np.testing.assert_allclose(small.point_data["value"], np.asarray(small.points)[:, 2], atol=1e-12)


def _lightness(rgb):
    """CIE 1976 L* of sRGB colours (0-1): sRGB transfer of IEC 61966-2-1, Y with the D65 weights."""
    c = np.asarray(rgb, float)[..., :3]
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    y = lin @ np.array([0.2126, 0.7152, 0.0722])
    f = np.where(y > (6 / 29) ** 3, np.cbrt(y), y / (3 * (6 / 29) ** 2) + 4 / 29)
    return 116 * f - 16


def test_colour_map_is_diverging_with_its_lightest_colour_at_zero():
    from meshpress.outputs.view3d import _cmap

    cmap = _cmap()
    L = _lightness(cmap(np.arange(cmap.N)))  # every colour of the table once
    mid = int(np.argmax(L))
    assert abs(mid - (cmap.N - 1) / 2) <= 4  # the lightest colour sits at the centre of the scale (zero)
    lo, hi = cmap.N // 2 - 8, cmap.N // 2 + 8
    assert np.all(np.diff(L[:lo]) > 0) and np.all(np.diff(L[hi:]) < 0)  # lightness runs monotonically
    assert abs(L[0] - L[-1]) < 12  # the two ends are about equally dark
    # Uniform: no step in lightness much larger than the mean step (no hidden bands).
    steps = np.abs(np.diff(L[:lo]))
    assert steps.max() < 3 * steps.mean()


@pytest.mark.slow
def test_view_command_writes_pngs_and_refuses_a_window_without_display(tmp_path, cli, samples_dir):
    import os

    from PIL import Image

    common = [samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv", "--length-unit", "mm", "--up=+y",
              "--forward=-z", "--speed", "100 km/h", "--quiet"]
    out = tmp_path / "v.png"
    r = cli("view", *common, "--colour", "lift", "--png", out, "--size", "400x250")
    assert r.returncode == 0, r.stderr
    _image_is_a_picture(np.asarray(Image.open(out).convert("RGB")), (400, 250))
    if not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")):
        r = cli("view", *common)
        assert r.returncode == 2 and r.stderr.startswith("meshpress: error: no display")
