"""Nested leave-one-out (the hyperparameter choice re-made without each tap) against explicit refits."""

from __future__ import annotations

import numpy as np

from meshpress.bodies.body import Body
from meshpress.loads.compare import compare_methods, recommend
from meshpress.fields import Field, make_field
from meshpress.fields.kernels import matern, nested_residuals, solve_with_loo, solve_with_nested

from conftest import icosphere
from test_fields_contract import fibonacci_sphere, make_taps


def _problem(n=15, seed=0):
    rng = np.random.default_rng(seed)
    y = rng.normal(size=(n, 3))
    D = np.linalg.norm(y[:, None] - y[None], axis=2)
    d = np.sin(2 * y[:, 0]) + y[:, 1] ** 2
    P = np.column_stack([np.ones(n), y[:, 2]])
    return D, P, d


def test_inner_loo_equals_refitting_without_each_tap():
    # Removing a row and column of the saddle system is a rank-one downdate of its inverse (block inversion;
    # e.g. Golub and Van Loan, Matrix Computations, 4th ed., sec. 2.1.4); the residuals it gives must equal
    # Rippa's residuals of the system built without the tap (Rippa, Adv. Comput. Math. 11 (1999) 193-210).
    D, P, d = _problem()
    K = matern("matern52", D, 0.8)
    _, _, loo, inner = solve_with_nested(K, P, d, 1e-3)
    _, _, loo_ref = solve_with_loo(K, P, d, 1e-3)
    np.testing.assert_allclose(loo, loo_ref, rtol=1e-10)
    for i in range(len(d)):
        keep = np.arange(len(d)) != i
        _, _, e = solve_with_loo(K[np.ix_(keep, keep)], P[keep], d[keep], 1e-3)
        np.testing.assert_allclose(inner[i], np.sqrt(np.mean(e**2)), rtol=1e-8)


def test_nested_residuals_follow_the_definition():
    # Nested cross-validation (Cawley and Talbot, JMLR 11 (2010) 2079-2107, sec. 5): for each left-out tap,
    # choose the candidate of lowest leave-one-out error on the other taps, then predict the left-out tap with
    # that candidate fitted to the other taps.  Done here by explicit refits and solves.
    D, P, d = _problem(14, seed=1)
    lengths, ridges = (0.3, 0.8, 2.0), (1e-6, 1e-2)
    cands = [(l, r) for l in lengths for r in ridges]
    loos, inners = [], []
    for l, r in cands:
        _, _, loo, inner = solve_with_nested(matern("matern32", D, l), P, d, r)
        loos.append(loo)
        inners.append(inner)
    got = nested_residuals(np.array(loos), np.array(inners))
    n = len(d)
    for i in range(n):
        keep = np.arange(n) != i
        best = None
        for l, r in cands:
            K = matern("matern32", D, l)
            _, _, e = solve_with_loo(K[np.ix_(keep, keep)], P[keep], d[keep], r)
            s = np.sqrt(np.mean(e**2))
            if best is None or s < best[0]:
                best = (s, l, r)
        _, l, r = best
        K = matern("matern32", D, l)
        A = np.block([[K[np.ix_(keep, keep)] + r * np.eye(n - 1), P[keep]], [P[keep].T, np.zeros((2, 2))]])
        z = np.linalg.solve(A, np.r_[d[keep], 0, 0])
        pred = K[i, keep] @ z[: n - 1] + P[i] @ z[n - 1:]
        np.testing.assert_allclose(got[i], d[i] - pred, rtol=1e-7, atol=1e-10)


def test_geodesic_nested_loo_equals_refitting_with_the_trend_rechosen():
    # With the length scale and ridge fixed, trend="auto" still chooses the trend (constant or linear in
    # the normal) by leave-one-out; the generic Field.loo_residuals refits the whole method without each tap, so
    # it re-makes that choice: the nested residuals by definition (Cawley and Talbot 2010).
    v, f = icosphere(3)
    sphere = Body(v, f)
    pts = fibonacci_sphere(18)
    taps = make_taps(sphere, pts, np.sin(2 * pts[:, 0]) + 0.6 * pts[:, 2])
    field = make_field("geodesic", length=0.6, ridge=1e-4, trend="auto").fit(sphere, taps)
    np.testing.assert_allclose(field.loo_residuals_nested(), Field.loo_residuals(field), rtol=1e-6, atol=1e-8)


def test_compare_ranks_by_the_nested_score():
    # The rule of meshpress.loads.compare: the lowest nested leave-one-out RMS wins (Cawley and Talbot 2010), the
    # plain score only where a row has no nested one.
    rows = [{"method": "geodesic", "loo_rms": 0.10, "loo_nested_rms": 0.30, "loo_unit": "Cp"},
            {"method": "rbf", "loo_rms": 0.20, "loo_nested_rms": 0.20, "loo_unit": "Cp"}]
    assert recommend(rows) == "rbf"
    rows[1]["loo_nested_rms"] = None
    assert recommend(rows) == "rbf"
    rows[0]["loo_nested_rms"] = 0.15
    assert recommend(rows) == "geodesic"


def test_compare_reports_both_scores():
    # Methods with no setting chosen by cross-validation have nested = plain (common practice: nothing to nest).
    v, f = icosphere(3)
    sphere = Body(v, f)
    pts = fibonacci_sphere(30)
    taps = make_taps(sphere, pts, np.sin(2 * pts[:, 0]) + pts[:, 2] ** 2)
    c = compare_methods(sphere, taps, ["rbf", "geodesic", "nearest"], ref_area=np.pi)
    by = {r["method"]: r for r in c["methods"]}
    for m in ("rbf", "nearest"):
        assert by[m]["loo_nested_rms"] == by[m]["loo_rms"]
    assert by["geodesic"]["loo_nested_rms"] is not None
    assert c["recommended"] == min(by, key=lambda m: by[m]["loo_nested_rms"])
    assert "nested" in c["summary"]


def test_point_chunks_give_the_one_block_answer():
    # Evaluating in chunks bounds the memory of the (taps, points, 3) temporaries and must not change a value
    # (common practice; scipy's RBFInterpolator chunks its evaluation the same way).
    from meshpress.fields.surface_common import by_point_chunks

    v, f = icosphere(3)
    sphere = Body(v, f)
    pts = fibonacci_sphere(20)
    taps = make_taps(sphere, pts, np.cos(3 * pts[:, 1]))
    field = make_field("geodesic").fit(sphere, taps)
    q = fibonacci_sphere(301)
    fi, b = field.work_.locate(q)
    whole = field.at_points(q)
    wm = field.work_

    from meshpress.fields.surface_common import normals_at

    def raw(fc, bc):
        d = wm.distance.at_points(field.distances_, fc, bc)
        n = normals_at(field.vertex_normals_, wm.body.faces, fc, bc)
        return field.coef_ @ (matern(field.kernel, d, field.length_) * field._orient(n)) + field.mean_

    np.testing.assert_allclose(by_point_chunks(fi, b, raw, chunk=7), raw(fi, b), rtol=1e-12)
    np.testing.assert_allclose(whole, raw(fi, b), rtol=1e-12)


def test_kriging_kernel_chosen_by_loo_and_rechosen_without_each_tap():
    # kernel="loo": every candidate fitted by maximum likelihood, the one of lowest leave-one-out RMS kept; the
    # nested residual of tap i is that of the kernel the other taps' residuals pick (Cawley and Talbot 2010).
    from meshpress.bands.gpkernels import AUTO_KERNELS

    v, f = icosphere(3)
    sphere = Body(v, f)
    pts = fibonacci_sphere(30)
    taps = make_taps(sphere, pts, np.sin(2 * pts[:, 0]) + pts[:, 2] ** 2)
    kw = dict(orientation=False, stagnation=False, patches=400)
    field = make_field("kriging", kernel="loo", **kw).fit(sphere, taps)
    R = np.array([make_field("kriging", kernel=k, carrier=field.carrier_, **kw).fit(sphere, taps).loo_residuals()
                  for k in AUTO_KERNELS])
    rms = np.sqrt(np.mean(R**2, axis=1))
    assert field.gp_.kernel_ == AUTO_KERNELS[int(np.argmin(rms))]
    np.testing.assert_allclose(field.loo_residuals(), R[np.argmin(rms)], atol=1e-12)
    want = [R[np.argmin([(np.delete(r, i) ** 2).sum() for r in R]), i] for i in range(len(taps))]
    np.testing.assert_allclose(field.loo_residuals_nested(), want, atol=1e-12)
