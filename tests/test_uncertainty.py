"""Bands of the load figures: closed-form propagation, kriging, reporting."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from meshpress.bodies.body import Axles, Body
from meshpress.errors import InputError
from meshpress.fields import make_field
from meshpress.bands.kriging import SurfaceGP
from meshpress.bands.patches import Carrier
from meshpress.taps.projection import ProjectedTaps, nearest_on_faces
from meshpress.bands.tapweights import generic_tap_weights, rbf_tap_weights
from meshpress.bands.uncertainty import (K95, Measurement, compute_uncertainty, difference_u, figure_face_weights,
                                   measurement_var, report_numbers, sensor_u)

from conftest import icosphere


def sphere_cp(p):
    """Sphere in potential flow along x: Cp = 1 - 9/4 sin^2(theta) [text: Batchelor 1967, sec. 6.8]."""
    r2 = (p**2).sum(axis=1)
    return 1.0 - 2.25 * (p[:, 1] ** 2 + p[:, 2] ** 2) / r2


def make_taps(body, pts, values=None):
    from trimesh.triangles import points_to_barycentric

    cp, fid, dist = nearest_on_faces(body, pts)
    bary = points_to_barycentric(body.triangles[fid], cp)
    vals = sphere_cp(cp) if values is None else values
    return ProjectedTaps([f"T{i}" for i in range(len(cp))], cp.copy(), cp, fid, bary, dist, vals, "cp")


def fib_points(n, hemisphere=None):
    i = np.arange(n) + 0.5
    z = 1 - 2 * i / n
    t = np.pi * (1 + 5**0.5) * i
    p = np.column_stack([np.sqrt(1 - z**2) * np.cos(t), np.sqrt(1 - z**2) * np.sin(t), z])
    if hemisphere == "front":
        p = p[p[:, 0] < 0]
    return p


def turning_line(n=61):
    """A line of ``n`` nodes over 0-2 m whose normal turns through 180 degrees between x = 0.5 and 1.5.

    Returns x (n,), distances (n, n), the normal's angle phi (n,) and unit normals (n, 3) in the x-y plane.
    """
    x = np.linspace(0.0, 2.0, n)
    phi = np.pi * np.clip(x - 0.5, 0, 1)
    return x, np.abs(x[:, None] - x[None, :]), phi, np.column_stack([np.cos(phi), np.sin(phi), np.zeros_like(x)])


def tap_rows(idx, n):
    """(len(idx), n) float: taps exactly at nodes ``idx`` (one weight of 1 per row)."""
    T = np.zeros((len(idx), n))
    T[np.arange(len(idx)), idx] = 1.0
    return T


@pytest.fixture(scope="module")
def sphere():
    v, f = icosphere(3)
    return Body(v, f, axles=Axles(-0.5, 0.5))


def test_rbf_weights_match_unit_vector_fits(sphere):
    taps = make_taps(sphere, fib_points(30))
    names, G = figure_face_weights(sphere, kind="cp", ref_area=np.pi, wheelbase=1.0)
    # Linear weights exist for the unbounded RBF (clamping to the tap range is not linear).
    field = make_field("rbf", extrapolation="none").fit(sphere, taps)
    W = rbf_tap_weights(field, G)
    W2 = generic_tap_weights(make_field("rbf", extrapolation="none"), sphere, taps, G)
    np.testing.assert_allclose(W, W2, rtol=1e-6, atol=1e-9)
    # figure = W' y, the same as integrating the fitted field
    np.testing.assert_allclose(taps.values @ W, field.face_values() @ G, rtol=1e-8, atol=1e-10)


def test_closed_form_variance_matches_monte_carlo(sphere):
    # Law of propagation for a linear model (JCGM 100:2008 GUM 5.1.2) checked by Monte Carlo propagation of
    # distributions (JCGM 101:2008, GUM Supplement 1).
    rng = np.random.default_rng(1)
    taps = make_taps(sphere, fib_points(25))
    names, G = figure_face_weights(sphere, kind="cp", ref_area=np.pi, wheelbase=1.0)
    field = make_field("rbf", extrapolation="none").fit(sphere, taps)
    W = rbf_tap_weights(field, G)
    u = rng.uniform(0.005, 0.03, len(taps))
    meas = Measurement.build(len(taps), tap_u=u)
    sd = np.sqrt(measurement_var(W, meas))
    n = 400
    samples = np.empty((n, len(names)))
    for s in range(n):
        y = taps.values + rng.normal(0, u)
        samples[s] = make_field("rbf", extrapolation="none").fit(sphere, taps.with_values(y)).face_values() @ G
    mc = samples.std(axis=0, ddof=1)
    k = names.index("CL")
    # sd of a sample sd is about sd / sqrt(2 n): 4 of those
    assert abs(mc[k] - sd[k]) < 4 * sd[k] / np.sqrt(2 * n)
    assert np.all(np.abs(mc - sd) <= 4 * sd / np.sqrt(2 * n) + 1e-12)


def test_reference_pressure_error_on_open_surface_matches_monte_carlo():
    # Over an open surface a uniform offset gives force -p times the openings' vector area (divergence theorem).
    v, f = icosphere(3)
    keep = v[f].mean(axis=1)[:, 2] > 0
    body = Body(v, f[keep], axles=Axles(-0.5, 0.5))
    names, G = figure_face_weights(body, kind="cp", ref_area=np.pi, wheelbase=1.0)
    meas = Measurement.build(3, u_p_ref=0.02)
    var = measurement_var(np.zeros((3, len(names))), meas, G.sum(axis=0))
    k = names.index("CL")
    # base opening: unit disc, vector area pi (pointing down, outward of the missing base); CL per unit offset = 1
    assert np.sqrt(var[k]) == pytest.approx(0.02 * 1.0, rel=0.02)
    closed = Body(v, f)
    _, Gc = figure_face_weights(closed, kind="cp", ref_area=np.pi, wheelbase=1.0)
    assert np.all(np.abs(Gc.sum(axis=0)) < 1e-12)


def test_sensor_accuracy_is_rectangular():
    # GUM 4.3.7: a bound +/- a with no other knowledge -> u = a / sqrt(3)
    assert sensor_u(3.0) == pytest.approx(3.0 / np.sqrt(3))
    assert sensor_u(0.25, full_scale=2500.0) == pytest.approx(6.25 / np.sqrt(3))


def test_difference_of_shared_taps_cancels_common_error():
    rng = np.random.default_rng(2)
    n = 12
    wa, wb = rng.normal(size=n), rng.normal(size=n)
    shared, own = 0.02, 0.01
    u = difference_u(wa, wb, np.full(n, shared**2 + own**2), np.full(n, shared**2 + own**2), np.full(n, shared**2))
    common = rng.normal(0, shared, (20000, n))
    ea = common + rng.normal(0, own, (20000, n))
    eb = common + rng.normal(0, own, (20000, n))
    mc = (ea @ wa - eb @ wb).std()
    assert u == pytest.approx(mc, rel=0.03)
    # same weights: only the own parts remain
    assert difference_u(wa, wa, np.full(n, shared**2 + own**2), np.full(n, shared**2 + own**2),
                        np.full(n, shared**2)) == pytest.approx(np.sqrt(2) * own * np.linalg.norm(wa))


def test_gp_posterior_matches_scikit_learn_on_a_line():
    # Reference: scikit-learn GaussianProcessRegressor with ConstantKernel + ConstantKernel * Matern(nu=0.5 / 1.5),
    # fixed hyperparameters (optimizer=None), alpha = noise variance.
    from sklearn.gaussian_process import GaussianProcessRegressor
    from sklearn.gaussian_process.kernels import ConstantKernel, Matern

    x = np.linspace(0.0, 2.0, 81)
    d = np.abs(x[:, None] - x[None, :])
    idx = np.array([3, 11, 20, 34, 41, 55, 62, 77])
    y = np.sin(3 * x[idx]) + 0.3 * x[idx]
    T = tap_rows(idx, len(x))
    for name, nu in (("exponential", 0.5), ("matern32", 1.5)):
        gp = SurfaceGP(d, kernel=name, length_scale=0.4, variance=0.7, nugget=1e-3, mean_variance=4.0).fit(T, y)
        k = ConstantKernel(4.0, "fixed") + ConstantKernel(0.7, "fixed") * Matern(0.4, "fixed", nu=nu)
        ref = GaussianProcessRegressor(k, alpha=1e-3, optimizer=None, normalize_y=False).fit(x[idx, None], y)
        mu, cov = ref.predict(x[:, None], return_cov=True)
        np.testing.assert_allclose(gp.node_mean(), mu, atol=1e-8)
        np.testing.assert_allclose(gp.node_var(), np.diag(cov), atol=1e-8)
        # Bayesian quadrature: trapezoid integral of the field, mean a'mu and variance a' Sigma a
        a = np.full(len(x), x[1] - x[0])
        a[[0, -1]] /= 2
        m, v, _ = gp.figures(a)
        assert m[0] == pytest.approx(a @ mu, abs=1e-8)
        assert v[0] == pytest.approx(a @ cov @ a, rel=1e-6, abs=1e-10)
        lml = ref.log_marginal_likelihood_value_
        assert gp.log_marginal_likelihood(0.4, 0.7, 1e-3) == pytest.approx(lml, rel=1e-8)


@pytest.mark.slow
def test_ml_fit_matches_scikit_learn_optimum():
    # Reference: scikit-learn GaussianProcessRegressor maximising the same marginal likelihood (kernel
    # ConstantKernel(fixed) + ConstantKernel * Matern(nu=0.5) + WhiteKernel) on data drawn from the model.
    from sklearn.gaussian_process import GaussianProcessRegressor
    from sklearn.gaussian_process.kernels import ConstantKernel, Matern, WhiteKernel

    rng = np.random.default_rng(5)
    x = np.linspace(0, 10, 200)
    d = np.abs(x[:, None] - x[None, :])
    K = np.exp(-d / 0.3) + 1e-10 * np.eye(len(x))
    f = np.linalg.cholesky(K) @ rng.normal(size=len(x))
    idx = np.arange(0, 200, 2)
    y = f[idx] + rng.normal(0, 0.05, len(idx))
    T = tap_rows(idx, len(x))
    gp = SurfaceGP(d, mean_variance=25.0).fit(T, y)
    k = (ConstantKernel(25.0, "fixed") + ConstantKernel(1.0, (1e-3, 1e2)) * Matern(0.5, (1e-2, 30), nu=0.5)
         + WhiteKernel(1e-2, (1e-8, 1.0)))
    ref = GaussianProcessRegressor(k, n_restarts_optimizer=3, random_state=0).fit(x[idx, None], y)
    ours = gp.log_marginal_likelihood(gp.length_scale_, gp.variance_, gp.nugget_)
    assert ours >= ref.log_marginal_likelihood_value_ - 0.05  # optimiser tolerance, in nats
    ref_l = ref.kernel_.k1.k2.k2.length_scale
    assert gp.length_scale_ == pytest.approx(ref_l, rel=0.1)


def test_band_covers_sphere_truth_and_reports(sphere):
    taps = make_taps(sphere, fib_points(40))
    names, G = figure_face_weights(sphere, kind="cp", ref_area=np.pi, wheelbase=1.0)
    truth = sphere_cp(sphere.centroids) @ G
    res = compute_uncertainty(sphere, taps, ref_area=np.pi, field=make_field("rbf").fit(sphere, taps))
    for k, n in enumerate(names):
        b = res.band(n)
        # Sphere in potential flow: zero force (d'Alembert) -- every figure within 3 u of it (a 99.7 % check: six
        # 95 % checks at once would fail one time in four by chance; plus round-off, since with exact readings a
        # smooth kernel can make the band of a figure that is zero by symmetry ~1e-9 wide).
        assert abs(b.value - truth[k]) <= 3 * b.u + 1e-6, n
    d = res.to_dict()
    assert {"CL", "CL_u", "CL_lo95", "CL_hi95", "uncertainty_budget"} <= set(d)
    hook = report_numbers(res, "CL")
    assert hook["importance"].shape == (sphere.n_faces,)
    assert np.all(hook["importance"] >= 0)
    assert hook["figures"]["CL"]["hi95"] == pytest.approx(b.value + K95 * b.u if n == "CL" else
                                                          res.band("CL").hi95)


@pytest.mark.slow
def test_figure_with_no_tap_near_its_region_gets_a_wide_band():
    # The car-like sample body (invented field): 40 taps on the front half only, against 40 spread over the
    # whole body.  The rear axle's figure depends on the unseen rear half, so its band must widen.
    from meshpress.bodies import samples

    v, f = samples.car_body(40, 30)
    v = v - [2.15, 0, 0]
    body = Body(v, f, axles=Axles(-1.3, 1.3))

    def cp(p, n):
        return samples.car_cp(p + [2.15, 0, 0], n)

    rng = np.random.default_rng(3)
    cen = body.centroids
    out = {}
    for where, ok in (("front", cen[:, 0] < -0.3), ("all", np.ones(body.n_faces, bool))):
        fid = rng.choice(np.flatnonzero(ok), 40, replace=False)
        taps = make_taps(body, cen[fid], cp(cen[fid], body.face_normals[fid]))
        out[where] = compute_uncertainty(body, taps, ref_area=2.0)
    widen = {f: out["front"].band(f).u / out["all"].band(f).u for f in ("CLF", "CLR")}
    assert widen["CLR"] > 2
    # CLF is tied to the rear through the pitching moment, so it widens too, but less.
    assert widen["CLR"] > 1.2 * widen["CLF"], widen


def test_carrier_on_big_body_is_simplified():
    v, f = icosphere(5)
    body = Body(v, f)
    car = Carrier(body, 1000)
    assert 800 < car.n < 1300
    # surface distance between antipodes ~ pi (heat method, about 1-2 % on coarse meshes)
    i = np.argmax(car.vertices[:, 2])
    j = np.argmin(car.vertices[:, 2])
    assert car.distance[i, j] == pytest.approx(np.pi, rel=0.05)
    assert car.face_matrix.shape == (body.n_faces, car.n)
    np.testing.assert_allclose(np.asarray(car.face_matrix.sum(axis=1)).ravel(), 1.0)


@pytest.mark.slow
def test_cli_uncertainty_runs_and_rejects_bad_accuracy(cli, samples_dir, tmp_path):
    mesh, taps = samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv"
    base = [mesh, taps, "--length-unit", "mm", "--up", "+y", "--forward=-z", "--front-axle", "-250",
            "--rear-axle", "2350", "--speed", "100 km/h", "--quiet", "--patches", "600"]
    r = cli("uncertainty", *base, "--sensor-accuracy", "abc")
    assert r.returncode == 2 and r.stderr.startswith("meshpress: error: --sensor-accuracy")
    assert "Traceback" not in r.stderr
    out = tmp_path / "u.json"
    r = cli("uncertainty", *base, "--sensor-accuracy", "0.25%", "--full-scale", "2500", "--json", out)
    assert r.returncode == 0, r.stderr
    import json

    d = json.loads(out.read_text())
    u = d["uncertainty"]
    assert u["CL_lo95"] < u["CL"] < u["CL_hi95"]
    assert u["uncertainty_budget"]["CL"]["measurement_u"] > 0
    # Readings in Pa with the speed given: the impact term is centred on q unless told not to.
    assert "about a stagnation level of" in u["uncertainty_model"]
    out2 = tmp_path / "u_off.json"
    r = cli("uncertainty", *base, "--stagnation-prior", "off", "--json", out2)
    assert r.returncode == 0, r.stderr
    assert "stagnation" not in json.loads(out2.read_text())["uncertainty"]["uncertainty_model"]
    assert "streamwise weight" not in u["uncertainty_model"]  # off by default
    out3 = tmp_path / "u_aniso.json"
    r = cli("uncertainty", *base, "--anisotropy-gp", "on", "--json", out3)
    assert r.returncode == 0, r.stderr
    assert "streamwise weight" in json.loads(out3.read_text())["uncertainty"]["uncertainty_model"]


def test_regions_make_independent_gps_like_scikit_learn_per_segment():
    # Reference: scikit-learn GaussianProcessRegressor fitted separately on each of two segments of a line
    # (ConstantKernel(mean) + ConstantKernel * Matern(nu=0.5), fixed hyperparameters): with regions the model is
    # the two independent fields, so its posterior must equal the two separate fits node by node.
    from sklearn.gaussian_process import GaussianProcessRegressor
    from sklearn.gaussian_process.kernels import ConstantKernel, Matern

    x = np.linspace(0.0, 2.0, 81)
    d = np.abs(x[:, None] - x[None, :])
    groups = (x >= 1.0).astype(int)
    idx = np.array([3, 11, 20, 34, 41, 55, 62, 77])
    y = np.where(groups[idx] == 0, np.sin(3 * x[idx]), 2.0 + x[idx])
    T = tap_rows(idx, len(x))
    gp = SurfaceGP(d, kernel="exponential", length_scale=0.4, variance=0.7, nugget=1e-3, mean_variance=4.0,
                   groups=groups).fit(T, y)
    mu, var = np.empty(len(x)), np.empty(len(x))
    for g in (0, 1):
        k = ConstantKernel(4.0, "fixed") + ConstantKernel(0.7, "fixed") * Matern(0.4, "fixed", nu=0.5)
        sel = groups[idx] == g
        ref = GaussianProcessRegressor(k, alpha=1e-3, optimizer=None).fit(x[idx[sel], None], y[sel])
        m, s = ref.predict(x[groups == g, None], return_std=True)
        mu[groups == g], var[groups == g] = m, s**2
    np.testing.assert_allclose(gp.node_mean(), mu, atol=1e-8)
    np.testing.assert_allclose(gp.node_var(), var, atol=1e-8)
    # and the integral over both segments: independent, so the variances add
    a = np.full(len(x), x[1] - x[0])
    m, v, _ = gp.figures(a)
    assert m[0] == pytest.approx(a @ mu, abs=1e-8)
    assert v[0] == pytest.approx(a @ gp.posterior_cov() @ a, rel=1e-8)


def test_regions_in_a_spectral_kernel_match_the_dense_formulas(sphere):
    # Bayesian quadrature in closed form (O'Hagan 1991): mean c' S^-1 y and variance a'Ka - c' S^-1 c with the
    # masked prior K = (tau^2 + s^2 R) o B written out densely; the model's region-by-region products must agree.
    car = Carrier(sphere, 400)
    groups = (car.vertices[:, 2] >= 0).astype(int)
    pts = fib_points(30)
    taps = make_taps(sphere, pts)
    gp = SurfaceGP(car.distance, kernel="lb-matern32", spectrum=car.spectrum(), length_scale=0.6, variance=0.5,
                   nugget=1e-4, groups=groups).fit(car.points_matrix(taps.points), taps.values)
    lam, phi, area = car.spectrum()
    from meshpress.bands.gpkernels import spectral_density

    g = spectral_density(lam, 0.6, 1.5)
    B = groups[:, None] == groups[None, :]
    K = (gp.mean_variance_ + 0.5 * (phi * (g * area / g.sum())) @ phi.T) * B
    T = gp.T_.toarray()
    assert set(np.unique(groups[T.nonzero()[1]])) <= {0, 1}
    S = T @ K @ T.T + 1e-4 * np.eye(len(T))
    a = np.random.default_rng(1).random((car.n, 2))
    c = T @ K @ a
    m, v, _ = gp.figures(a)
    np.testing.assert_allclose(m, c.T @ np.linalg.solve(S, taps.values), rtol=1e-8)
    np.testing.assert_allclose(v, np.einsum("ik,ik->k", a, K @ a) - np.einsum("ik,ik->k", c, np.linalg.solve(S, c)),
                               rtol=1e-6)


def plates_with_taps():
    """A closed plate 1 m x 1 m x 20 mm and 16 taps on each face: Cp = -1 - 0.5 x on top, +1 underneath."""
    import trimesh

    m = trimesh.creation.box(extents=(1.0, 1.0, 0.02))
    v, f = trimesh.remesh.subdivide_to_size(m.vertices, m.faces, max_edge=0.04)
    body = Body(v, f, axles=Axles(-0.25, 0.25))
    gx = np.linspace(-0.4, 0.4, 4)
    top = np.array([(x, y, 0.01) for x in gx for y in gx])
    bot = top * [1, 1, -1] + [0.06, 0.06, 0]
    return body, make_taps(body, np.vstack([top, bot]), np.r_[-1.0 - 0.5 * top[:, 0], np.full(16, 1.0)])


def test_regions_stop_the_band_leaking_between_plates():
    # Two parallel faces 20 mm apart, Cp = -1 - 0.5 x on top and +1 underneath: net lift per q and m2 = 2 (F = -p n dA
    # over flat faces, closed form; x symmetric about 0).  With the faces as regions the estimate is within its band
    # of 2 and close to it; without, the model mixes the two faces round the 20 mm edge.
    body, taps = plates_with_taps()
    split = compute_uncertainty(body, taps, ref_area=1.0, regions="normal", n_patches=800, orientation=False).band("CL")
    whole = compute_uncertainty(body, taps, ref_area=1.0, n_patches=800, orientation=False).band("CL")
    assert split.value == pytest.approx(2.0, rel=0.02)
    assert split.lo95 <= 2.0 <= split.hi95
    assert abs(split.value - 2.0) < abs(whole.value - 2.0)


@pytest.mark.parametrize("form, kappa", [("se", 1.0), ("exponential", 1.0), ("matern32", 1.0), ("matern52", 1.0),
                                         ("matern52", 2.5)])
def test_orientation_factor_matches_scikit_learn_kernels_on_a_line(form, kappa):
    # Reference: the GP posterior (Rasmussen and Williams 2006, eqs. 2.23-2.24) with the Gram matrices of
    # scikit-learn's kernels: ConstantKernel + ConstantKernel * Matern(nu=0.5) on the position times a kernel of
    # the unit normal: RBF(theta), because exp(-(1 - n.n') / theta^2) = exp(-|n - n'|^2 / (2 theta^2)) for unit
    # vectors; Matern(theta, nu=0.5 or 1.5) of the chordal distance |n - n'| for the rougher forms.  With a
    # streamwise weight kappa: Matern with one length scale per axis, [theta / kappa, theta, theta], whose distance
    # sqrt(kappa^2 dn_x^2 + dn_y^2 + dn_z^2) / theta is the factor's (automatic relevance determination, R&W
    # sec. 5.1).
    from sklearn.gaussian_process.kernels import RBF, Matern

    ls = [0.6 / kappa, 0.6, 0.6]
    ref = {"se": RBF(0.6), "exponential": Matern(0.6, nu=0.5), "matern32": Matern(0.6, nu=1.5),
           "matern52": Matern(ls, nu=2.5)}[form]

    x, d, phi, nrm = turning_line()
    idx = np.array([2, 9, 17, 25, 31, 40, 47, 58])
    y = np.cos(phi[idx]) + 0.2 * x[idx]
    T = tap_rows(idx, len(x))
    gp = SurfaceGP(d, kernel="exponential", length_scale=0.5, variance=0.7, nugget=1e-3, mean_variance=4.0,
                   normals=nrm, orientation=True, normal_scale=0.6, orientation_kernel=form,
                   normal_anisotropy=kappa).fit(T, y)
    K = 4.0 + 0.7 * Matern(0.5, nu=0.5)(x[:, None]) * ref(nrm)
    S = K[np.ix_(idx, idx)] + 1e-3 * np.eye(len(idx))
    mu = K[:, idx] @ np.linalg.solve(S, y)
    var = np.diag(K) - np.einsum("ij,ji->i", K[:, idx], np.linalg.solve(S, K[idx, :]))
    np.testing.assert_allclose(gp.node_mean(), mu, atol=1e-8)
    np.testing.assert_allclose(gp.node_var(), var, atol=1e-8)
    np.testing.assert_allclose(gp.K_, K, atol=1e-12)


@pytest.mark.parametrize("form", ["se", "matern32", "matern52"])
def test_orientation_scale_is_fitted_at_the_likelihood_optimum(form):
    # Maximum likelihood (R&W eq. 2.30): at the fitted theta the log likelihood, evaluated directly by a Cholesky
    # factorisation (independent of the fit's analytic gradient), must not rise when theta moves 5 % either way.
    x, d, phi, nrm = turning_line()
    idx = np.arange(1, 61, 3)
    y = np.cos(2 * phi[idx]) + 0.3 * np.sin(3 * x[idx])
    T = tap_rows(idx, len(x))
    gp = SurfaceGP(d, kernel="exponential", length_scale=0.8, variance=0.5, nugget=1e-4, mean_variance=4.0,
                   normals=nrm, orientation=True, orientation_kernel=form).fit(T, y)
    th = gp.normal_scale_
    assert 0.1 < th < 10.0  # an interior optimum, not a bound

    def loglik(t):
        from meshpress.bands.gpkernels import orientation_factor

        n = nrm[idx]
        F = orientation_factor(1.0 - n @ n.T, t, form)[0]
        K = 4.0 + 0.5 * np.exp(-d[np.ix_(idx, idx)] / 0.8) * F + 1e-4 * np.eye(len(idx))
        c = np.linalg.cholesky(K)
        a = np.linalg.solve(c, y)
        return -0.5 * a @ a - np.log(np.diag(c)).sum() - 0.5 * len(idx) * np.log(2 * np.pi)

    best = loglik(th)
    assert gp.log_marginal_likelihood(0.8, 0.5, 1e-4) == pytest.approx(best, abs=1e-8)  # the model agrees
    for f in (0.95, 1.05):
        assert loglik(th * f) <= best + 1e-7


def test_orientation_kernel_auto_keeps_the_form_of_highest_likelihood():
    # Type-II maximum likelihood model choice (R&W 2006, sec. 5.4): "auto" fits both forms and keeps the one of the
    # lowest negative log marginal likelihood; its posterior is then that of the form fitted alone.
    x, d, phi, nrm = turning_line(81)
    idx = np.arange(0, 81, 3)
    y = np.abs(np.cos(phi[idx])) ** 0.5 - 0.6 * (phi[idx] > 1.2)  # a cusp and a step in the normal's angle
    T = tap_rows(idx, len(x))
    kw = dict(kernel="exponential", length_scale=0.8, nugget=1e-4, mean_variance=4.0, normals=nrm, orientation=True)
    auto = SurfaceGP(d, orientation_kernel="auto", **kw).fit(T, y)
    assert set(auto.candidates_) == {"exponential/se", "exponential/matern52", "exponential/matern32"}
    assert auto.nll_ == min(auto.candidates_.values())
    alone = SurfaceGP(d, orientation_kernel=auto.orientation_form_, **kw).fit(T, y)
    np.testing.assert_allclose(auto.node_mean(), alone.node_mean(), atol=1e-10)
    assert auto.choice_ == f"exponential/{auto.orientation_form_}"


def test_orientation_keeps_the_two_faces_of_a_plate_apart():
    # The plates of the regions test without any regions: the orientation factor alone must bring the estimate
    # of the closed-form net lift (2 per q and m2) closer than the plain model, and hold it inside its band.
    body, taps = plates_with_taps()
    car = Carrier(body, 800)
    plain = compute_uncertainty(body, taps, ref_area=1.0, carrier=car, orientation=False).band("CL")
    turned = compute_uncertainty(body, taps, ref_area=1.0, carrier=car, orientation=True)
    b = turned.band("CL")
    assert abs(b.value - 2.0) < 0.5 * abs(plain.value - 2.0)
    assert b.lo95 <= 2.0 <= b.hi95
    assert "orientation" in turned.model


def test_normal_trend_matches_scikit_learn_kernels_on_a_line():
    # A mean beta . n with beta ~ N(0, t^2 I) is the linear kernel t^2 n.n' added to the covariance (Rasmussen and
    # Williams 2006, sec. 2.7): reference Gram matrices from scikit-learn's Matern (position) and DotProduct
    # (sigma_0 = 0, on the unit normal), posterior by R&W eqs. 2.23-2.24.
    from sklearn.gaussian_process.kernels import DotProduct, Matern

    x, d, phi, nrm = turning_line()
    idx = np.array([2, 9, 17, 25, 31, 40, 47, 58])
    y = 0.8 * np.cos(phi[idx]) - 0.3 * np.sin(phi[idx]) + 0.05 * x[idx]
    T = tap_rows(idx, len(x))
    gp = SurfaceGP(d, kernel="exponential", length_scale=0.5, variance=0.2, nugget=1e-3, mean_variance=4.0,
                   normals=nrm, trend_variance=0.9).fit(T, y)
    K = 4.0 + 0.2 * Matern(0.5, nu=0.5)(x[:, None]) + 0.9 * DotProduct(sigma_0=0.0, sigma_0_bounds="fixed")(nrm)
    S = K[np.ix_(idx, idx)] + 1e-3 * np.eye(len(idx))
    mu = K[:, idx] @ np.linalg.solve(S, y)
    var = np.diag(K) - np.einsum("ij,ji->i", K[:, idx], np.linalg.solve(S, K[idx, :]))
    np.testing.assert_allclose(gp.node_mean(), mu, atol=1e-8)
    np.testing.assert_allclose(gp.node_var(), var, atol=1e-8)


def test_stagnation_prior_matches_a_gp_with_a_trend_of_known_prior_mean_on_a_line():
    # A trend h(x) . beta with beta ~ N(b, B) is a GP of mean h . b and covariance k + h' B h (Rasmussen and
    # Williams 2006, sec. 2.7, eqs. 2.39-2.41): reference Gram matrices from scikit-learn's Matern (position) and
    # DotProduct (sigma_0 = 0) on the Newtonian features, b = (1, 0) (impact term at full stagnation, Cp = 1).
    from sklearn.gaussian_process.kernels import DotProduct, Matern

    from meshpress.bands.gptrend import impact_prior, trend_features

    x = np.linspace(0.0, 2.0, 61)
    d = np.abs(x[:, None] - x[None, :])
    phi = np.pi * x / 2.0  # the normal turns from facing the flow (-x) to facing downstream
    nrm = np.column_stack([-np.cos(phi), np.zeros_like(x), np.sin(phi)])
    H = trend_features(nrm, "newtonian")
    idx = np.array([30, 36, 41, 47, 52, 58])  # none on the forward-facing first half
    y = 0.2 - 0.4 * np.sin(phi[idx]) + 0.05 * x[idx]
    T = tap_rows(idx, len(x))
    b = impact_prior("newtonian", 1.0)
    gp = SurfaceGP(d, kernel="exponential", length_scale=0.5, variance=0.2, nugget=1e-3, mean_variance=4.0,
                   normals=nrm, trend_variance=0.3, trend_basis="newtonian", trend=True, trend_mean=b).fit(T, y)
    K = 4.0 + 0.2 * Matern(0.5, nu=0.5)(x[:, None]) + 0.3 * DotProduct(sigma_0=0.0, sigma_0_bounds="fixed")(H)
    S = K[np.ix_(idx, idx)] + 1e-3 * np.eye(len(idx))
    mu = H @ b + K[:, idx] @ np.linalg.solve(S, y - H[idx] @ b)
    var = np.diag(K) - np.einsum("ij,ji->i", K[:, idx], np.linalg.solve(S, K[idx, :]))
    np.testing.assert_allclose(gp.node_mean(), mu, atol=1e-8)
    np.testing.assert_allclose(gp.node_var(), var, atol=1e-8)
    a = np.zeros(len(x))
    a[:10] = 0.1  # a figure of the untapped forward-facing part
    m, v, w = gp.figures(a)
    np.testing.assert_allclose(m[0], a @ mu, atol=1e-8)
    np.testing.assert_allclose(v[0], a @ K @ a - a @ K[:, idx] @ np.linalg.solve(S, K[idx] @ a), atol=1e-8)
    with pytest.raises(InputError, match="trend means"):
        SurfaceGP(d, normals=nrm, trend_basis="newtonian", trend_mean=[1.0, 0.0, 0.0])


def test_stagnation_prior_fills_the_windward_side_of_a_sphere_with_no_tap_on_it():
    # Newton's sine-squared law with Cp_max = 1 (Anderson, Hypersonic and High-Temperature Gas Dynamics, ch. 3;
    # Cp = 1 at the stagnation point of incompressible flow, Bernoulli) on the windward half, a base level on the
    # leeward half, read by taps on the leeward half only: the impact term's coefficient is then unseen, and only
    # the prior centred on stagnation puts the windward cap near Cp = 1 (a zero-mean prior leaves it near the
    # base level).
    from meshpress.fields import make_field
    from meshpress.bands.gptrend import trend_features

    v, f = icosphere(3)
    body = Body(v, f, axles=Axles(-0.5, 0.5))
    pts = fib_points(60)
    pts = pts[pts[:, 0] > 0.05]

    def cp(normals):
        F = trend_features(normals, "newtonian")
        return -0.2 + F[:, 0] - 0.1 * F[:, 1]

    taps = make_taps(body, pts)
    taps = taps.with_values(cp(body.face_normals[taps.faces]))
    cap = body.face_normals[:, 0] < -0.9
    err = {}
    for stagnation in (True, False):
        fld = make_field("kriging", stagnation=stagnation, extrapolation="none").fit(body, taps)
        err[stagnation] = np.abs(np.asarray(fld.face_values())[cap] - cp(body.face_normals[cap])).max()
    assert err[True] < 0.1
    assert err[False] > 0.5
    # The same readings in Pa at q = 500 Pa: the stagnation level is q when the field is told it, and unknown
    # (no prior) when not.
    q = 500.0
    pa = dataclasses.replace(taps, values=q * taps.values, kind="p")
    for given, bound in ((q, lambda e: e < 0.1 * q), (None, lambda e: e > 0.5 * q)):
        fld = make_field("kriging", stagnation=True, q=given, extrapolation="none").fit(body, pa)
        assert bound(np.abs(np.asarray(fld.face_values())[cap] - q * cp(body.face_normals[cap])).max())


def test_stagnation_prior_is_kept_or_dropped_by_marginal_likelihood():
    # Type-II maximum likelihood model choice (Rasmussen and Williams 2006, sec. 5.4): with readings that follow
    # Newton's law at Cp_max = 1 on the windward side (Anderson, ch. 3) the prior centred on stagnation fits the
    # taps better than one centred on 0, and with a windward side in suction (Cp = -0.5 cos^2, invented) worse;
    # the choice keeps the better fit, and its likelihoods are those of the two fits made separately.
    from meshpress.bands.gptrend import impact_prior, trend_features

    v, f = icosphere(3)
    body = Body(v, f, axles=Axles(-0.5, 0.5))
    car = Carrier(body, 600)
    taps = make_taps(body, fib_points(40))
    F = trend_features(body.face_normals[taps.faces], "newtonian")
    T = car.points_matrix(taps.points)
    b = impact_prior("newtonian", 1.0)
    for a, keep in ((1.0, True), (-0.5, False)):
        y = -0.2 + a * F[:, 0] - 0.1 * F[:, 1]
        kw = dict(kernel="exponential", trend="newtonian", orientation=True, orientation_kernel="matern52")
        gp = SurfaceGP.on_carrier(car, trend_mean=b, trend_mean_choice=True, **kw).fit(T, y, 1e-6)
        on = SurfaceGP.on_carrier(car, trend_mean=b, **kw).fit(T, y, 1e-6)
        off = SurfaceGP.on_carrier(car, **kw).fit(T, y, 1e-6)
        assert gp.trend_mean_used_ is keep
        assert gp.trend_mean_candidates_ == pytest.approx({"prior": on.nll_, "none": off.nll_})
        np.testing.assert_allclose(gp.node_mean(), (on if keep else off).node_mean(), atol=1e-10)


@pytest.mark.slow
def test_cli_uncertainty_report_map_and_spread(cli, samples_dir, tmp_path):
    # The reporting: bands in the report beside the method spread, and a map of where unknown pressure
    # matters most (sd x face weight, common practice of sensitivity maps); bad figure names are one-line errors.
    import json

    from PIL import Image

    mesh, taps = samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv"
    base = [mesh, taps, "--length-unit", "mm", "--up", "+y", "--forward=-z", "--front-axle", "-250",
            "--rear-axle", "2350", "--speed", "100 km/h", "--quiet", "--patches", "600"]
    r = cli("uncertainty", *base, "--map", tmp_path / "m.png", "--map-figure", "CQ")
    assert r.returncode == 2 and r.stderr.startswith("meshpress: error: --map-figure 'CQ'")
    assert not (tmp_path / "m.png").exists()
    no_axles = [a for a in base if a not in ("--front-axle", "-250", "--rear-axle", "2350")]
    r = cli("uncertainty", *no_axles, "--map", tmp_path / "m.png", "--map-figure", "CLF")
    assert r.returncode == 2 and "these inputs give" in r.stderr and "Traceback" not in r.stderr
    r = cli("uncertainty", *base, "--spread", "rbf")
    assert r.returncode == 2 and "--spread" in r.stderr and "Traceback" not in r.stderr
    out = tmp_path / "u.json"
    r = cli("uncertainty", *base, "--spread", "rbf,nearest", "--map", tmp_path / "m.png", "--map-figure", "CLR",
            "--report", tmp_path / "rep", "--json", out)
    assert r.returncode == 0, r.stderr
    img = np.asarray(Image.open(tmp_path / "m.png").convert("RGB")).astype(float)
    assert img.shape[0] > 500 and img.shape[1] > 800 and img.std() > 15
    page = (tmp_path / "rep" / "report.html").read_text()
    assert "How sure is the number" in page and "method spread" in page
    assert "Where unknown pressure matters most for CLR" in page
    spread = json.loads(out.read_text())["uncertainty"]["method_spread"]
    assert spread["_methods"] == ["rbf", "nearest"] and spread["CL"] >= 0
    # the report folder's loads.json carries the same bands as --json
    in_report = json.loads((tmp_path / "rep" / "loads.json").read_text())["uncertainty"]
    assert in_report == json.loads(out.read_text())["uncertainty"]
    assert (tmp_path / "rep" / "images" / "map_CLR.png").exists()


def test_importance_is_largest_where_no_tap_is(sphere):
    # Taps on the front half only: for the drag-like figure the unseen rear must carry more importance per area
    # than the tapped front (the posterior sd grows away from data; Rasmussen and Williams 2006, sec. 2.2).
    from meshpress.outputs.bandreport import importance_per_area

    taps = make_taps(sphere, fib_points(60, hemisphere="front"))
    res = compute_uncertainty(sphere, taps, ref_area=np.pi)
    imp = importance_per_area(res, sphere, "CD")
    x = sphere.centroids[:, 0]
    assert imp[x > 0.3].mean() > 3 * imp[x < -0.3].mean()


def test_normal_anisotropy_is_fitted_at_the_likelihood_optimum():
    # Maximum likelihood (R&W eq. 2.30): the fitted kappa and theta, checked by a direct Cholesky evaluation of
    # the log likelihood (independent of the fit's analytic gradient), which must not rise when either moves
    # 5 % either way.  The normal turns round a full circle in the x-y plane while the readings vary faster with
    # n_x than with n_y, so the likelihood must weigh the streamwise component more (kappa > 1).
    from sklearn.gaussian_process.kernels import Matern

    x = np.linspace(0.0, 2.0, 81)
    d = np.abs(x[:, None] - x[None, :])
    phi = np.pi * x
    nrm = np.column_stack([np.cos(phi), np.sin(phi), np.zeros_like(x)])
    idx = np.arange(1, 81, 2)
    y = np.sin(4 * nrm[idx, 0]) + 0.5 * np.sin(2 * nrm[idx, 1])
    T = tap_rows(idx, len(x))
    gp = SurfaceGP(d, kernel="exponential", length_scale=5.0, variance=0.5, nugget=1e-4, mean_variance=4.0,
                   normals=nrm, orientation=True, orientation_kernel="matern52", normal_anisotropy=None).fit(T, y)
    th, ka = gp.normal_scale_, gp.normal_anisotropy_
    assert 1.5 < ka < 100.0 and 0.1 < th < 10.0 and 0.1 < th / ka < 10.0  # interior optima, streamwise weighed more

    def loglik(t, k):
        n = nrm[idx]
        F = Matern([t / k, t, t], nu=2.5)(n)
        K = 4.0 + 0.5 * np.exp(-d[np.ix_(idx, idx)] / 5.0) * F + 1e-4 * np.eye(len(idx))
        c = np.linalg.cholesky(K)
        a = np.linalg.solve(c, y)
        return -0.5 * a @ a - np.log(np.diag(c)).sum() - 0.5 * len(idx) * np.log(2 * np.pi)

    best = loglik(th, ka)
    assert gp.log_marginal_likelihood(5.0, 0.5, 1e-4) == pytest.approx(best, abs=1e-8)  # the model agrees
    for f in (0.95, 1.05):
        assert loglik(th * f, ka) <= best + 1e-7
        assert loglik(th, ka * f) <= best + 1e-7


def test_field_outside_the_band_is_named():
    # A value outside estimate +/- 1.96 u is outside the two-sided 95 % interval of a normal distribution
    # (JCGM 100:2008, G.3; 1.959964 from scipy.stats.norm.ppf(0.975)); forces are not repeated beside their
    # coefficients.
    from scipy.stats import norm

    from meshpress.commands.uncertainty import format_bands
    from meshpress.bands.uncertainty import Band, UncertaintyResult, field_outside

    z = norm.ppf(0.975)
    bands = [Band("CL", 0.30, 0.10, 0.0, 0.10, 0.0, 0.30 + 1.01 * z * 0.10),
             Band("CD", 0.20, 0.05, 0.0, 0.05, 0.0, 0.20 - 0.99 * z * 0.05),
             Band("lift_N", 300.0, 100.0, 0.0, 100.0, 0.0, 300.0 + 1.01 * z * 100.0)]
    assert [b.name for b in field_outside(bands)] == ["CL"]
    res = UncertaintyResult(bands, np.zeros(1), np.zeros((1, 3)), ["CL", "CD", "lift_N"], "test model", "cp")
    text = format_bands(res, "rbf")
    assert "outside the band: the field's CL +0.498" in text and "CD +0." not in text.split("outside")[1]
    inside = [dataclasses.replace(b, field_value=b.value) for b in bands]
    assert field_outside(inside) == []
    assert "all lie inside" in format_bands(dataclasses.replace(res, bands=inside), "rbf")
