"""The benchmark's constant-source panel solver (benchmarks/panel_flow.py) against closed-form potential flows."""

import sys
from pathlib import Path

import numpy as np
import pytest
import trimesh

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
import panel_flow as pf  # noqa: E402

# Tolerances: measured on the 1,280-face icosphere (benchmarks/panel_flow.py, docs/uncertainty.md) as RMS 0.0058
# and largest 0.018 against the exact Cp, and set a little above.
RMS_TOL, MAX_TOL = 0.008, 0.025


@pytest.fixture(scope="module")
def sphere():
    m = trimesh.creation.icosphere(subdivisions=3)  # 1,280 faces, unit radius
    return np.asarray(m.vertices), np.asarray(m.faces)


def sphere_cp(centroids, stream):
    """Sphere in a uniform stream, Cp = 1 - 9/4 sin^2(theta), theta from the stream axis [text: Batchelor,
    An Introduction to Fluid Dynamics, 1967, sec. 6.8]."""
    cos = centroids @ stream / np.linalg.norm(centroids, axis=1)
    return 1.0 - 2.25 * (1.0 - cos**2)


def force_coefficient(v, f, cp):
    """Pressure force / (q * pi), the unit sphere's frontal area."""
    c, n, a = pf.face_geometry(v, f)
    return -(cp[:, None] * n * a[:, None]).sum(axis=0) / np.pi


@pytest.mark.parametrize("yaw", [0.0, 30.0])
def test_sphere_cp_against_exact(sphere, yaw):
    v, f = sphere
    sol = pf.solve(v, f, yaw_deg=yaw)
    c, _, _ = pf.face_geometry(v, f)
    err = sol.cp - sphere_cp(c, pf.stream_direction(yaw))
    assert np.sqrt(np.mean(err**2)) <= RMS_TOL
    assert np.abs(err).max() <= MAX_TOL
    assert sol.normal_residual < 1e-6  # the boundary condition holds (float32 store of the velocities)


def test_no_force_on_a_lopsided_body(sphere):
    # d'Alembert: no net force on a closed body in steady potential flow [text: Batchelor 1967, sec. 6.4].  The
    # sphere's own force is zero by its central symmetry alone, so the body here is a smooth egg (radius scaled by
    # 1 + 0.25 x + 0.1 z).  Measured: |force| / (q pi) 0.0030 at 1,280 faces, 0.0016 at 5,120 (first order).
    v, f = sphere
    v = v * (1.0 + 0.25 * v[:, :1] + 0.1 * v[:, 2:3])
    sol = pf.solve(v, f, yaw_deg=20.0)
    assert np.linalg.norm(force_coefficient(v, f, sol.cp)) < 0.005  # against a mean |Cp| of 0.74


@pytest.fixture(scope="module")
def grounded(sphere):
    v, f = sphere
    h = 3.0  # centre height over the radius
    v = v + [0.0, 0.0, h]
    return v, f, h, pf.solve(v, f, ground=True)


def test_ground_image_is_symmetric(grounded):
    # The sphere, its image and the stream are symmetric about the vertical plane y = 0 and, in potential flow,
    # fore and aft (x -> -x, the stream reversed: Cp is quadratic in the velocity).  The icosphere maps to
    # itself under both reflections.
    v, f, _, sol = grounded
    c, _, _ = pf.face_geometry(v, f)
    tree = trimesh.proximity.cKDTree(c)
    for flip in ([1.0, -1.0, 1.0], [-1.0, 1.0, 1.0]):
        d, j = tree.query(c * flip)
        assert d.max() < 1e-9
        assert np.abs(sol.cp - sol.cp[j]).max() < 1e-6


def test_ground_pulls_the_sphere_down(grounded, sphere):
    # A sphere of radius a, centre h above a wall, in a stream U along it: its doublet m = -2 pi a^3 U
    # [Batchelor 1967, sec. 6.8] and the image doublet at -h give, by Lagally's theorem F = -rho (m . grad) v_image
    # [Milne-Thomson, Theoretical Hydrodynamics, 1968, ch. 16], F_z = -(3 pi / 16) rho U^2 a^6 / h^4, i.e. a force
    # coefficient on pi a^2 of -(3/8) (a/h)^4 towards the wall, plus terms smaller by (a/h)^3.  The same follows from
    # the fluid's kinetic energy (pi/3) rho a^3 U^2 (1 + 3 a^3 / (16 h^3)) of a sphere moving parallel to a wall
    # [Lamb, Hydrodynamics, 1932, ch. VI], F_z = dT/dh.  Measured here: 1.3 % above the leading term at h = 3 a.
    v, f, h, sol = grounded
    F = force_coefficient(v, f, sol.cp)
    leading = -(3.0 / 8.0) / h**4
    assert F[2] / leading == pytest.approx(1.0, abs=0.03)
    assert abs(F[0]) < 1e-3 * abs(leading) and abs(F[1]) < 1e-3 * abs(leading)  # d'Alembert along the ground
    free = force_coefficient(*sphere, pf.solve(*sphere).cp)
    assert abs(free[2]) < 1e-3 * abs(leading)  # no lift without the ground


def test_separated_base_is_the_rear_cap(sphere):
    # On the sphere the widest section is the equator (x = 0); with the facing threshold cos(60 deg) the base is
    # the cap within 60 degrees of the rear stagnation point.
    v, f = sphere
    c, n, a = pf.face_geometry(v, f)
    assert abs(pf.widest_station(c, n, a, pf.stream_direction(0.0))) < 0.05
    cp, base = pf.separated_base(c, n, a, np.zeros(len(c)), pf.stream_direction(0.0), base_cp=-0.25,
                                 min_facing=0.5)
    cap = n[:, 0] > 0.5
    assert np.array_equal(base, cap) and np.all(cp[base] == -0.25) and np.all(cp[~base] == 0.0)
