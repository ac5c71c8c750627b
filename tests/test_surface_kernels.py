"""Kriging kernels of the surface itself (Laplace-Beltrami Matérn and heat kernels) against the sphere."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import eval_legendre

from meshpress.bodies.body import Body
from meshpress.bands.gpkernels import SPECTRAL_KERNELS, spectral_density
from meshpress.bands.kriging import SurfaceGP
from meshpress.bands.patches import Carrier

from conftest import icosphere


@pytest.fixture(scope="module")
def carrier():
    v, f = icosphere(3)  # 642 vertices: small enough to be its own carrier
    return Carrier(Body(v, f), 2500)


def test_spectrum_of_the_unit_sphere(carrier):
    # The spherical harmonics of degree l are the Laplace-Beltrami eigenfunctions of the unit sphere, eigenvalue
    # l (l + 1) with multiplicity 2l + 1 (e.g. Courant and Hilbert, Methods of Mathematical Physics I, ch. VII;
    # textbook result quoted from memory).
    lam, phi, area = carrier.spectrum()
    expected = np.concatenate([np.full(2 * l + 1, l * (l + 1.0)) for l in range(4)])  # first 16
    np.testing.assert_allclose(lam[: len(expected)], expected, rtol=0.02, atol=1e-8)
    assert area == pytest.approx(4 * np.pi, rel=0.01)
    # mass-orthonormal eigenvectors
    import robust_laplacian

    _, M = robust_laplacian.mesh_laplacian(carrier.vertices, carrier.faces)
    gram = phi[:, :20].T @ (M @ phi[:, :20])
    np.testing.assert_allclose(gram, np.eye(20), atol=1e-8)


def test_carrier_distances_from_a_second_process_equal_those_made_here(carrier, monkeypatch):
    # The distances are computed in a forked child where that is possible (meshpress.aside); the great-circle
    # distance on the unit sphere (arc = angle between the position vectors) is the outside reference.
    import meshpress.aside as aside

    assert aside.aside_possible()
    d_child = carrier.distance
    monkeypatch.setenv("MESHPRESS_SERIAL", "1")
    v, f = icosphere(3)
    here = Carrier(Body(v, f), 2500)
    assert here._distance_job is None
    np.testing.assert_array_equal(d_child, here.distance)
    u = carrier.vertices / np.linalg.norm(carrier.vertices, axis=1, keepdims=True)
    arc = np.arccos(np.clip(u @ u.T, -1.0, 1.0))
    assert np.sqrt(np.mean((d_child - arc) ** 2)) < 0.03  # heat method at 642 vertices: a few per cent


def sphere_correlation(cosg, length, nu, lmax=80):
    """Closed-form zonal correlation on the unit sphere.

    Addition theorem of spherical harmonics: ``sum_m Y_lm(x) Y_lm(x') = (2l+1)/(4 pi) P_l(cos g)``, so a kernel
    with spectral weights ``g(l(l+1))`` is ``sum_l (2l+1)/(4 pi) g P_l(cos g)`` (Borovitskiy et al., NeurIPS 2020,
    sec. 3), normalised here to 1 at g = 0.
    """
    ls = np.arange(lmax + 1)
    w = (2 * ls + 1) * spectral_density(ls * (ls + 1.0), length, nu)
    k = sum(w[l] * eval_legendre(l, cosg) for l in ls)
    return k / w.sum()


@pytest.mark.parametrize("name", ["lb-heat", "lb-matern32", "lb-matern52"])
def test_kernel_matches_the_legendre_series_on_the_sphere(carrier, name):
    v = carrier.vertices
    d = np.arccos(np.clip(v @ v.T, -1, 1))  # exact great-circle distance (only bounds the fit here)
    T = np.eye(len(v))[:5]
    gp = SurfaceGP(d, kernel=name, spectrum=carrier.spectrum(), length_scale=0.6, variance=1.0, nugget=1e-6,
                   mean_variance=1e-12).fit(T, np.arange(5.0))
    K = gp.K_
    rng = np.random.default_rng(3)
    i, j = rng.integers(0, len(v), 60), rng.integers(0, len(v), 60)
    ref = sphere_correlation(np.clip((v[i] * v[j]).sum(axis=1), -1, 1), 0.6, SPECTRAL_KERNELS[name])
    # Discretisation error of the 642-vertex mesh: measured largest 0.030 (matern32), 0.019 (matern52), 0.009
    # (heat), falling about fourfold on the 2,562-vertex icosphere (second order).
    np.testing.assert_allclose(K[i, j], ref, atol=0.035)
    np.testing.assert_allclose(np.diag(K), 1.0, atol=0.03)  # constant variance on a homogeneous surface


def test_auto_kernel_follows_the_field_smoothness(carrier):
    # Smooth: the potential-flow sphere field (degree-2 harmonic, Batchelor 1967, sec. 6.8).  Rough: a draw from
    # the lb-matern12 prior itself at a short length.  Maximum likelihood should prefer a smooth kernel for the
    # first and a rough one for the second (type-II ML model choice; Rasmussen and Williams 2006, sec. 5.4).
    v = carrier.vertices
    d = np.arccos(np.clip(v @ v.T, -1, 1))
    lam, phi, area = carrier.spectrum()
    rng = np.random.default_rng(11)
    idx = rng.choice(len(v), 150, replace=False)
    T = np.eye(len(v))[idx]
    smooth = 1.0 - 2.25 * (v[idx, 1] ** 2 + v[idx, 2] ** 2)
    g = spectral_density(lam, 0.3, 0.5)
    rough = (phi @ (np.sqrt(g * area / g.sum()) * rng.normal(size=len(lam))))[idx]
    gs = SurfaceGP(d, kernel="auto", spectrum=(lam, phi, area)).fit(T, smooth, np.full(150, 1e-6))
    gr = SurfaceGP(d, kernel="auto", spectrum=(lam, phi, area)).fit(T, rough, np.full(150, 1e-6))
    assert gs.kernel_ in ("lb-matern52", "lb-heat")
    assert gr.kernel_ in ("exponential", "lb-matern12")
    assert set(gs.candidates_) == {"exponential", *SPECTRAL_KERNELS}


def test_cli_kernel_choices_match_the_model():
    from meshpress.commands.options import KRIGING_KERNELS
    from meshpress.bands.gpkernels import KERNELS

    assert KRIGING_KERNELS == KERNELS
