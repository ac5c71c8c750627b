"""The default method: one model gives both the loads and their bands."""

import json

import numpy as np
import pytest

from conftest import fibonacci_hemisphere, run_cli
from test_fields_contract import make_taps

from meshpress.loads.analysis import compute_loads
from meshpress.bodies.body import Axles, Body
from meshpress.bodies.exact import HEMISPHERE_CL, Joukowski, sphere_cp, uv_hemisphere
from meshpress.fields import DEFAULT_METHOD, PosteriorField, make_field
from meshpress.bands.uncertainty import Measurement, compute_uncertainty

SAMPLE = ["--length-unit", "mm", "--up", "+y", "--forward=-z", "--front-axle", "-250", "--rear-axle", "2350"]
COEFS = ("CL", "CD", "CS", "CPM", "CLF", "CLR")


@pytest.fixture(scope="module")
def hemisphere_run():
    v, f = uv_hemisphere(1.0, 40, 80)
    body = Body(v, f, axles=Axles(-0.5, 0.5))
    pts = fibonacci_hemisphere(120)
    taps = make_taps(body, pts, sphere_cp(pts))
    field = make_field()
    res = compute_loads(body, taps, field, ref_area=np.pi)
    return body, taps, field, res


def test_default_is_the_posterior():
    assert DEFAULT_METHOD == "posterior" and isinstance(make_field(), PosteriorField)


def test_hemisphere_default_within_1_percent(hemisphere_run):
    # Potential flow over a sphere, Cp = 1 - 9/4 sin^2 theta (Anderson, Fundamentals of Aerodynamics,
    # sec. 6.4); CL = 11/16 on the base area for the hemisphere on the ground [derived].
    *_, res = hemisphere_run
    assert res.CL == pytest.approx(HEMISPHERE_CL, rel=0.01)


def test_loads_are_the_centre_of_their_band(hemisphere_run):
    body, taps, field, res = hemisphere_run
    unc = compute_uncertainty(body, taps, ref_area=np.pi, meas=Measurement.build(len(taps)), field=field)
    for k in COEFS:
        # equal but for the order of the sums (faces, then patches)
        assert unc.band(k).value == pytest.approx(getattr(res, k), rel=1e-7, abs=1e-9)
        assert unc.band(k).field_value is None  # the same model: no second figure to disagree with
    assert unc.gp is field.gp_  # the bands reuse the field's fit (no second fit)
    # The exact Cp integrated on this mesh lies in the band (the band is of the field between taps, not of the
    # mesh's own 0.1 % faceting error; one case: a sanity check, the coverage is measured in scripts/).
    truth = -(sphere_cp(body.centroids) * body.area_vectors[:, 2]).sum() / np.pi
    b = unc.band("CL")
    assert b.lo95 <= truth <= b.hi95


def test_stated_noise_refits_and_widens(hemisphere_run):
    # A tap error the field was not fitted with is not the same model: compute_uncertainty fits its own.
    body, taps, field, res = hemisphere_run
    unc = compute_uncertainty(body, taps, ref_area=np.pi, meas=Measurement.build(len(taps), sensor=0.05),
                              field=field)
    assert unc.gp is not field.gp_
    assert unc.band("CL").u_measurement > 0


def test_wing_without_flags_within_5_percent():
    # Joukowski section: exact Cp from the conformal map, lift from Kutta-Joukowski (Milne-Thomson,
    # Theoretical Hydrodynamics, ch. 6), z-force CL cos(alpha); three chordwise rows, no --regions.
    J = Joukowski(eps=0.1, mu=0.04, alpha_deg=4.0, chord=0.3)
    V, F = J.body(span=0.8, n_around=120, n_span=30)
    body = Body(V, F)
    pts = []
    for y in (-0.25, 0.0, 0.25):
        th = np.linspace(0, 2 * np.pi, 25, endpoint=False) + 0.05
        xz = J.contour(th)
        pts.append(np.column_stack([xz[:, 0], np.full(len(th), y), xz[:, 1]]))
    pts = np.vstack(pts)
    taps = make_taps(body, pts, J.cp_at(pts))
    cp = lambda p, n: np.where(np.abs(n[:, 1]) > 0.9, 0.0, J.cp_at(p))
    exact = -(cp(body.centroids, body.face_normals) * body.area_vectors[:, 2]).sum() / (J.chord * 0.8)
    assert exact == pytest.approx(J.cz, rel=0.01)  # the mesh holds the truth
    res = compute_loads(body, taps, make_field(), ref_area=J.chord * 0.8)
    assert res.CL == pytest.approx(J.cz, rel=0.05)


def test_cli_one_answer_text_and_json_agree(tmp_path, samples_dir):
    out = tmp_path / "r.json"
    r = run_cli("loads", samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv", *SAMPLE, "--speed", "100 km/h",
                "--json", out, "--quiet")
    assert r.returncode == 0, r.stderr
    d = json.loads(out.read_text())
    u = d["uncertainty"]
    for k in COEFS:
        assert u[k] == pytest.approx(d[k], rel=1e-7, abs=1e-9)
        assert u[f"{k}_lo95"] < d[k] < u[f"{k}_hi95"]
    row = next(line for line in r.stdout.splitlines() if line.strip().startswith("lift (+ up)"))
    assert f"{d['CL']:+.3f} +/- {u['CL_u']:.3f}" in row
    assert "outside the band" not in r.stdout
    fast = run_cli("loads", samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv", *SAMPLE, "--q", "400",
                   "--method", "rbf", "--no-bands", "--quiet")
    assert fast.returncode == 0 and "+/-" not in fast.stdout and "rbf" in fast.stdout


def test_compare_says_when_the_default_is_not_its_recommendation():
    # The ranking rule (lowest nested leave-one-out RMS) on two made-up rows: text only, no fit.
    from meshpress.loads.compare import recommend, summary

    rows = [dict(method="posterior", loo_rms=0.20, loo_nested_rms=0.21, loo_unit="Cp", CL=0.30, CLF=0.1, CLR=0.2),
            dict(method="rbf", loo_rms=0.10, loo_nested_rms=0.11, loo_unit="Cp", CL=0.40, CLF=0.1, CLR=0.3)]
    best = recommend(rows)
    assert best == "rbf"
    assert "default (posterior" in summary(rows, {}, best) and "--method rbf" in summary(rows, {}, best)
    rows[0]["loo_nested_rms"] = 0.05
    assert "is not the recommendation" not in summary(rows, {}, recommend(rows))
