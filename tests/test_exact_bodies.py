"""The closed-form truths used by the accuracy benchmark check out against their theorems."""

import numpy as np
import pytest

from meshpress.bodies.body import Body
from meshpress.bodies.exact import (HEMISPHERE_CL, Joukowski, ellipsoid_alpha0, ellipsoid_cp, sphere_cp,
                             uv_hemisphere)


def test_hemisphere_mesh_integral_is_11_16():
    # Cp = 1 - 9/4 sin^2 theta on a sphere (Anderson, Fundamentals of Aerodynamics, sec. 6.4);
    # CL = 11/16 on the base area for the hemisphere on the ground [derived].
    v, f = uv_hemisphere(1.0, 40, 80)
    b = Body(v, f)
    cl = -(sphere_cp(b.centroids) * b.area_vectors[:, 2]).sum() / np.pi
    assert cl == pytest.approx(HEMISPHERE_CL, rel=2e-3)


def test_ellipsoid_reduces_to_sphere():
    # Lamb, Hydrodynamics, sec. 114: alpha0 = 2/3 for a sphere, so the surface speed factor is 3/2.
    assert ellipsoid_alpha0(1, 1, 1) == pytest.approx(2 / 3, rel=1e-9)
    p = np.random.default_rng(0).normal(size=(50, 3))
    p /= np.linalg.norm(p, axis=1, keepdims=True)
    np.testing.assert_allclose(ellipsoid_cp(p, 1, 1, 1), sphere_cp(p), atol=1e-9)
    # Prolate spheroid in axial flow, Lamb sec. 114: alpha0 = 2 (1 - e^2) / e^3 (atanh(e) - e).
    e = np.sqrt(1 - 0.25)
    assert ellipsoid_alpha0(2, 1, 1) == pytest.approx(2 * (1 - e**2) / e**3 * (np.arctanh(e) - e), rel=1e-8)


def test_joukowski_pressure_integrates_to_kutta_joukowski_lift():
    # Exact Cp from the conformal map; lift per span rho U Gamma (Kutta-Joukowski theorem), normal
    # to the flow at alpha to x, so the z-force is L cos(alpha) (no drag: d'Alembert).
    J = Joukowski(eps=0.1, mu=0.04, alpha_deg=4.0, chord=0.3)
    th = np.linspace(0, 2 * np.pi, 200001)
    xz = J.contour(th)
    cp = J.cp(th)
    # Force per span per q: -closed integral of cp n ds; with the contour traversed counter-clockwise
    # the outward normal ds is (dz, -dx).
    dx, dz = np.diff(xz[:, 0]), np.diff(xz[:, 1])
    cpm = 0.5 * (cp[1:] + cp[:-1])
    sign = 1 if np.sum(xz[:-1, 0] * dz - xz[:-1, 1] * dx) > 0 else -1
    lift = -np.sum(cpm * (-dx) * sign)
    assert lift / J.chord == pytest.approx(J.cz, rel=2e-4)
    assert cp.max() == pytest.approx(1.0, abs=1e-3)  # a stagnation point: Cp = 1 [text]
