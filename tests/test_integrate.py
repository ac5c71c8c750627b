"""Integration against exact answers: divergence theorem, Archimedes, potential flow."""

import numpy as np
import pytest
import trimesh

import meshpress
from meshpress.bodies.body import Body
from meshpress.loads.coefficients import axle_split
from meshpress.loads.integrate import force_and_moment

from conftest import fibonacci_hemisphere, icosphere, sphere_cp, write_taps

RHO_W, G = 1000.0, 9.80665


def test_uniform_pressure_on_closed_body_gives_no_force_or_moment():
    # Divergence theorem: the closed integral of n dA and of r x n dA both vanish.
    v, f = icosphere(4, radius=0.7, center=(0.3, -0.2, 0.9))
    b = Body(v, f)
    F, M = force_and_moment(b.area_vectors, b.centroids, np.full(b.n_faces, 1234.5), r0=(0.1, 0.2, 0.0))
    assert np.abs(F).max() < 1e-9 * 1234.5 * b.area
    assert np.abs(M).max() < 1e-9 * 1234.5 * b.area


def test_uniform_pressure_on_sample_body(samples_dir):
    b = meshpress.load_body(samples_dir / "coupe.stl", length_unit="mm", up="+y", forward="-z")
    F, M = force_and_moment(b.area_vectors, b.centroids, np.full(b.n_faces, 500.0))
    assert np.abs(F).max() < 1e-8 * 500 * b.area
    assert np.abs(M).max() < 1e-8 * 500 * b.area


def test_archimedes_sphere_exact_volume():
    # Archimedes: p = rho g (h - z) on a closed body gives rho g V upward, acting at the volume centroid.
    r, c = 0.5, np.array([0.2, 0.0, 1.0])
    v, f = icosphere(5, radius=r, center=c)
    b = Body(v, f)
    p = RHO_W * G * (3.0 - b.centroids[:, 2])
    F, M = force_and_moment(b.area_vectors, b.centroids, p)
    # Against trimesh's mass properties (an independent implementation) of the same polyhedron:
    mesh = trimesh.Trimesh(v, f)
    # Face-centroid quadrature is exact for a linear field over flat faces.
    assert F[2] == pytest.approx(RHO_W * G * mesh.volume, rel=1e-9)
    assert np.abs(F[:2]).max() < 1e-9 * F[2]
    # ... and against the exact sphere volume 4/3 pi r^3 (discretisation error of the icosphere only).
    assert F[2] == pytest.approx(RHO_W * G * 4 / 3 * np.pi * r**3, rel=5e-3)
    # Line of action through the volume centroid: M = c x F.
    np.testing.assert_allclose(M, np.cross(mesh.center_mass, F), atol=1e-9 * abs(F[2]))


def test_archimedes_sample_body_through_pipeline_with_axle_split(tmp_path, samples_dir):
    # Hydrostatic field sampled at the taps is linear, so the thin-plate spline with its linear
    # term reproduces it exactly (Duchon 1977); the whole pipeline must then give Archimedes.
    from meshpress.taps.layout import read_taps

    kw = dict(length_unit="mm", up="+y", forward="-z", front_axle=-250.0, rear_axle=2350.0)
    body = meshpress.load_body(samples_dir / "coupe.stl", **kw)
    table = read_taps(samples_dir / "coupe_taps.csv")
    taps = meshpress.project_taps(body, table)
    p = RHO_W * G * (2.0 - taps.points[:, 2])
    res = meshpress.compute_loads(body, taps.with_values(p), meshpress.make_field("rbf"), ref_area=2.0)
    mesh = trimesh.load(samples_dir / "coupe.stl")  # independent volume (trimesh mass properties)
    V = mesh.volume * 1e-9
    assert res.lift_N == pytest.approx(RHO_W * G * V, rel=2e-3)
    # Lever arms: buoyancy B at x_c splits as front = B (x_r - x_c) / WB.
    xc = body.volume_centroid()[0]
    B = res.lift_N
    ax = body.axles
    assert res.front_lift_N == pytest.approx(B * (ax.rear_x - xc) / ax.wheelbase, rel=5e-3, abs=1e-3 * B)
    assert res.rear_lift_N == pytest.approx(B * (xc - ax.front_x) / ax.wheelbase, rel=5e-3, abs=1e-3 * B)


def test_hemisphere_potential_flow_lift(hemisphere_file, tmp_path):
    # Hemisphere on the ground in potential flow: CL = 11/16 on the base area
    # (integral of Cp = 1 - 9/4 sin^2(theta) over the upper half sphere; CONVENTIONS.md, derived).
    pts = fibonacci_hemisphere(150)
    taps = write_taps(tmp_path / "t.csv", [f"T{i}" for i in range(len(pts))], pts, sphere_cp(pts))
    res = meshpress.run_loads(hemisphere_file, taps, ref_area=np.pi)
    assert res.CL == pytest.approx(11 / 16, rel=0.01)
    # Symmetric field: no drag or side force in potential flow (d'Alembert).
    assert abs(res.CD) < 0.01 and abs(res.CS) < 0.01


def test_axle_split_single_force_at_front_axle():
    # Worked example: a single upward force F at the front axle puts all of it on the front axle.
    wb, F = 2.6, 1000.0
    r = np.array([-wb / 2, 0.0, 0.3])
    M = np.cross(r, [0.0, 0.0, F])
    front, rear = axle_split(F, M[1], wb)
    assert front == pytest.approx(F) and rear == pytest.approx(0.0, abs=1e-9)
    # Mirror: at the rear axle it all goes to the rear.
    M = np.cross(-r * [1, 0, 0], [0.0, 0.0, F])
    front, rear = axle_split(F, M[1], wb)
    assert rear == pytest.approx(F) and front == pytest.approx(0.0, abs=1e-9)


def test_coefficient_identities(samples_dir):
    # CLF + CLR = CL and CLF - CLR = 2 CPM, by definition (CONVENTIONS.md).
    res = meshpress.run_loads(samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv", length_unit="mm",
                              up="+y", forward="-z", front_axle=-250, rear_axle=2350, q=472.6)
    assert res.CLF + res.CLR == pytest.approx(res.CL)
    assert res.CLF - res.CLR == pytest.approx(2 * res.CPM)
    assert res.front_lift_N + res.rear_lift_N == pytest.approx(res.lift_N)
    assert res.CL == pytest.approx(res.lift_N / (472.6 * res.ref_area_m2))


def test_reference_offset_on_open_surface(hemisphere_file, tmp_path):
    # Over an open surface a uniform pressure gives -p times the vector area (divergence theorem):
    # on the upper unit hemisphere sum n dA = (0, 0, pi r^2), so p_ref = 1 with zero taps gives lift +pi.
    pts = fibonacci_hemisphere(30)
    taps = write_taps(tmp_path / "z.csv", [f"T{i}" for i in range(30)], pts, np.zeros(30))
    res = meshpress.run_loads(hemisphere_file, taps, p_ref=1.0, q=1.0, ref_area=1.0)
    assert res.CL == pytest.approx(np.pi, rel=2e-3)  # icosphere cut: its rim circle is slightly short of r = 1
    assert abs(res.CD) < 1e-9 and abs(res.CS) < 1e-9
