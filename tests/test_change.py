"""Bands on the change between two configurations on shared taps (meshpress.bands.change, uncertainty --baseline)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from meshpress.bodies.body import Axles, Body
from meshpress.bands.change import ErrorSources, compute_change, match_taps, tap_covariances
from meshpress.errors import InputError
from meshpress.bands.kriging import SurfaceGP
from meshpress.bands.uncertainty import K95, figure_face_weights

from conftest import icosphere, write_taps
from test_uncertainty import fib_points, make_taps, sphere_cp

C = 0.05  # the small smooth change: Cp_other = Cp_base + C z


def base_field(p):
    """Sphere in potential flow (Batchelor 1967, 6.8) plus an invented bumpy part, so that 40 taps leave a wide band."""
    return sphere_cp(p) + 0.3 * np.sin(3 * p[:, 0]) * np.cos(2 * p[:, 1]) + 0.2 * p[:, 2] ** 3


@pytest.fixture(scope="module")
def case():
    v, f = icosphere(3)
    body = Body(v, f, axles=Axles(-0.5, 0.5))
    taps = make_taps(body, fib_points(40))
    n = len(taps)
    yb = base_field(taps.points)
    yo = yb + C * taps.points[:, 2]
    rng = np.random.default_rng(4)
    eb = ErrorSources.build(n, random_u=rng.uniform(0.002, 0.006, n), systematic_u=0.01, u_p_ref=0.01)
    eo = ErrorSources.build(n, random_u=rng.uniform(0.002, 0.006, n), systematic_u=0.01, u_p_ref=0.01)
    rho = 0.3
    ch = compute_change(body, taps, yb, yo, err_base=eb, err_other=eo, correlation=rho, ref_area=np.pi)
    return body, taps, yb, yo, eb, eo, rho, ch


def test_measurement_part_of_change_matches_monte_carlo(case):
    # Monte Carlo propagation of distributions (JCGM 101:2008, GUM Supplement 1) against the closed form
    # w'(C_a + C_b - 2 C_ab)w (JCGM 100:2008, GUM 5.2.2).  Sensors: rectangular bounds (GUM 4.3.7) built so that
    # the two runs' systematic errors have correlation rho; standard errors of the mean: normal, independent;
    # the reference pressure: a common offset of every tap, correlated rho between the runs.
    body, taps, yb, yo, eb, eo, rho, ch = case
    W = ch.tap_weights
    n, N = len(taps), 40_000
    rng = np.random.default_rng(7)
    half = np.sqrt(3.0) * eb.systematic_u  # rectangular half-width with standard uncertainty u

    def rect(shape):
        return rng.uniform(-1, 1, shape) * half

    common, ref_c = rect((N, n)), rng.uniform(-1, 1, (N, 1)) * np.sqrt(3.0) * eb.u_p_ref
    s_b = np.sqrt(rho) * common + np.sqrt(1 - rho) * rect((N, n))
    s_o = np.sqrt(rho) * common + np.sqrt(1 - rho) * rect((N, n))
    r_b = np.sqrt(rho) * ref_c + np.sqrt(1 - rho) * rng.uniform(-1, 1, (N, 1)) * np.sqrt(3.0) * eb.u_p_ref
    r_o = np.sqrt(rho) * ref_c + np.sqrt(1 - rho) * rng.uniform(-1, 1, (N, 1)) * np.sqrt(3.0) * eo.u_p_ref
    e_b = s_b + rng.normal(0, eb.random_u, (N, n)) + r_b
    e_o = s_o + rng.normal(0, eo.random_u, (N, n)) + r_o
    mc = ((e_o - e_b) @ W).std(axis=0, ddof=1)
    closed = np.array([b.u_measurement for b in ch.bands])
    # sd of a sample sd is about sd / sqrt(2 N): allow 4 of those
    big = closed > 1e-6
    assert np.all(np.abs(mc[big] - closed[big]) <= 4 * closed[big] / np.sqrt(2 * N) + 1e-9)
    k = ch.names.index("CL")
    # the shared part cancels: the change's measurement u is below the sum in quadrature of the runs' own
    own = np.sqrt(((W[:, k] ** 2) * (eb.measurement().tap_u ** 2 + eo.measurement().tap_u ** 2)).sum())
    assert closed[k] < 0.9 * own


def test_change_estimate_is_linear_in_the_readings(case):
    # The Monte Carlo above goes through the kriging weights; check that refitting the difference model at its
    # fitted hyperparameters on perturbed readings gives exactly the weights' figure (linear estimator).
    body, taps, yb, yo, eb, eo, rho, ch = case
    d = ch.difference
    gp, car = d.gp, d.carrier
    T = car.points_matrix(taps.points)
    a = car.fine_weights(d.face_weights)
    vb, vo, cab = tap_covariances(eb, eo, rho)
    rng = np.random.default_rng(8)
    for _ in range(2):
        y = yo - yb + rng.normal(0, 0.01, len(taps))
        fixed = SurfaceGP(car.distance, kernel=gp.kernel_, spectrum=gp.spectrum, length_scale=gp.length_scale_,
                          variance=gp.variance_, nugget=gp.nugget_, mean_variance=gp.mean_variance_,
                          normals=gp.normals, trend_variance=gp.trend_variance_, orientation=gp.orientation,
                          normal_scale=gp.normal_scale_ if gp.orientation else None,
                          orientation_kernel=gp.orientation_form_ or "se",
                          trend=gp.use_trend, trend_basis=gp.trend_basis).fit(T, y, vb + vo - 2 * cab)
        np.testing.assert_allclose(fixed.figures(a)[0], y @ ch.tap_weights, rtol=1e-7, atol=1e-10)


def test_small_smooth_change_has_a_narrow_band_that_holds_the_truth(case):
    # Cp_other - Cp_base = C z on a closed body: the change of the vertical force is -C x volume (divergence
    # theorem), so dCL = -C V / A_ref; the pitching moment about the centre is zero on a sphere (r parallel to n).
    import trimesh

    body, taps, yb, yo, eb, eo, rho, ch = case
    names, G = figure_face_weights(body, kind="cp", ref_area=np.pi, wheelbase=1.0)
    truth = (C * body.centroids[:, 2]) @ G
    vol = trimesh.Trimesh(body.vertices, body.faces).volume
    assert truth[names.index("CL")] == pytest.approx(-C * vol / np.pi, rel=1e-9)
    for nm in ("CL", "CLF", "CLR", "CD"):
        b = ch.band(nm)
        t = truth[names.index(nm)]
        assert b.lo95 <= t <= b.hi95, nm
        # what the 40 taps miss of the bumpy field is common to both runs: the change's band is far narrower
        # (the sampling part; the per-tap standard errors are independent between the runs and do not cancel)
        assert b.u_sampling < 0.2 * min(ch.base.band(nm).u_sampling, ch.other.band(nm).u_sampling), nm
    # the same field twice: no change, and only the measurement part is left
    n = len(taps)
    same = compute_change(body, taps, yb, yb, err_base=eb, err_other=eo, correlation=1.0, ref_area=np.pi,
                          carrier=ch.difference.carrier, base_result=ch.base, other_result=ch.base)
    assert abs(same.band("CL").value) < K95 * same.band("CL").u
    assert len(same.tap_weights) == n


def test_sentence_and_json_of_a_change(case):
    *_, ch = case
    d = ch.to_dict()
    assert d["meaning"] == "other minus base" and d["error_correlation"] == 0.3
    f = d["figures"]["CLR"]
    assert f["lo95"] == pytest.approx(f["value"] - K95 * f["u"])
    assert f["other_u"] == pytest.approx(ch.other.band("CLR").u)
    s = ch.sentence("CLR")
    # CLR falls with C > 0 (downforce up): the sentence reads it as more rear downforce
    assert ch.band("CLR").value < 0 and "more rear downforce coefficient" in s and "resolved from zero" in s


def test_taps_in_one_file_only_or_moved_are_named():
    pts = np.eye(3)
    with pytest.raises(InputError, match=r"only in wing.csv: T9; only in base.csv: T2"):
        match_taps(["T0", "T1", "T2"], pts, ["T0", "T1", "T9"], pts, tolerance_m=1e-3, base_label="base.csv",
                   other_label="wing.csv")
    oi, bi, dropped = match_taps(["T0", "T1", "T2"], pts, ["T1", "T0", "T9"], pts[[1, 0, 2]], tolerance_m=1e-3,
                                 common_only=True)
    assert list(oi) == [0, 1] and list(bi) == [1, 0] and dropped == ["T9", "T2"]
    moved = pts.copy()
    moved[1, 0] += 0.005
    with pytest.raises(InputError, match=r"tap 'T1' is 5.0 mm from its position"):
        match_taps(["T0", "T1"], pts[:2], ["T0", "T1"], moved[:2], tolerance_m=1e-3)


@pytest.fixture(scope="module")
def sphere_files(tmp_path_factory):
    import trimesh

    tmp = tmp_path_factory.mktemp("change")
    v, f = icosphere(3)
    mesh = tmp / "ball.stl"
    trimesh.Trimesh(v, f).export(mesh)
    p = fib_points(40) * 1.001
    names = [f"T{i:02d}" for i in range(len(p))]
    yb = base_field(p / np.linalg.norm(p, axis=1)[:, None])
    yo = yb + C * p[:, 2]
    u = np.full(len(p), 0.004)
    base = write_taps(tmp / "base.csv", names, p, yb, extra={"u": u})
    wing = write_taps(tmp / "wing.csv", names, p, yo, extra={"u": u})
    return tmp, mesh, base, wing, names, p, yb, yo


def test_cli_uncertainty_with_baseline_writes_the_change(sphere_files, capsys):
    import trimesh

    from meshpress.cli import main

    tmp, mesh, base, wing, *_ = sphere_files
    out = tmp / "change.json"
    args = ["uncertainty", str(mesh), str(wing), "--baseline", str(base), "--front-axle", "0.5", "--rear-axle",
            "-0.5", "--forward=+x", "--ref-area", str(np.pi), "--sensor-accuracy", "0.02", "--quiet",
            "--patches", "400", "--json", str(out)]
    assert main(args) == 0, capsys.readouterr().err
    text = capsys.readouterr().out
    assert "change: " in text and "more downforce coefficient" in text
    d = json.loads(out.read_text())
    ch = d["change"]
    assert ch["base"] == str(base) and ch["other"] == str(wing) and ch["taps"] == 40
    cl = ch["figures"]["CL"]
    assert {"value", "u", "lo95", "hi95", "measurement_u", "sampling_u", "field_value", "base_u", "other_u"} <= set(cl)
    # forward +x turns the body (vehicle x is rearward), not z: dCL = -C V / A_ref still (divergence theorem)
    truth = -C * trimesh.Trimesh(*icosphere(3)).volume / np.pi
    assert cl["lo95"] <= truth <= cl["hi95"]
    assert cl["u"] < 0.2 * min(cl["base_u"], cl["other_u"])
    assert d["uncertainty"]["CL_u"] == pytest.approx(cl["other_u"])
    assert "baseline_uncertainty" in d
    # the same sensors on both runs (correlation 1): the sensor term cancels, so the change's measurement part
    # is that of the two u columns alone, whatever the sensor accuracy
    assert main(args[:-2] + ["--sensor-accuracy", "0.5", "--json", str(tmp / "c2.json")]) == 0
    capsys.readouterr()
    d2 = json.loads((tmp / "c2.json").read_text())
    assert d2["change"]["figures"]["CL"]["measurement_u"] == pytest.approx(cl["measurement_u"], rel=0.05)
    assert d2["uncertainty"]["uncertainty_budget"]["CL"]["measurement_u"] > 3 * \
        d["uncertainty"]["uncertainty_budget"]["CL"]["measurement_u"]


def test_cli_baseline_with_other_taps_is_one_line(sphere_files, capsys):
    from meshpress.cli import main

    tmp, mesh, base, wing, names, p, yb, yo = sphere_files
    fewer = write_taps(tmp / "fewer.csv", names[:-2], p[:-2], yb[:-2])
    args = ["uncertainty", str(mesh), str(wing), "--baseline", str(fewer), "--quiet", "--patches", "300"]
    assert main(args) == 2
    err = capsys.readouterr().err
    assert err.startswith("meshpress: error: the change needs the same taps in both files; only in ")
    assert "T38, T39" in err and len(err.strip().splitlines()) == 1
    assert main(args + ["--common-taps"]) == 0
    assert "2 taps in one file only were left out" in capsys.readouterr().out
    assert main(args + ["--error-correlation", "2"]) == 2
    assert "--error-correlation must be between 0 and 1" in capsys.readouterr().err


def test_a_field_change_far_from_the_estimate_is_flagged(case):
    # The field method's change is given beside the estimate; when it lies outside the 95 % interval the band is
    # suspect (a sign of the method spread), and the notes say so.
    body, taps, yb, yo, eb, eo, rho, ch = case
    kw = dict(err_base=eb, err_other=eo, correlation=rho, ref_area=np.pi, carrier=ch.difference.carrier,
              base_result=ch.base, other_result=ch.other)
    z = body.centroids[:, 2]
    near = compute_change(body, taps, yb, yo, field_change=C * z, **kw)
    assert not any("outside the 95 % interval" in n for n in near.notes)
    assert near.to_dict()["figures"]["CL"]["method_gap_over_u"] < K95 and not near.to_dict()["figures"]["CL"]["flagged"]
    far = compute_change(body, taps, yb, yo, field_change=3 * C * z, **kw)
    assert any("lies outside the 95 % interval for CL" in n for n in far.notes)
