"""Tap planning: greedy variance reduction."""

from __future__ import annotations

import numpy as np
import pytest

from meshpress.bodies.body import Axles, Body
from meshpress.bands.gptrend import impact_prior
from meshpress.bands.kriging import SurfaceGP
from meshpress.bands.patches import Carrier
from meshpress.bands.planning import allowed_nodes, greedy_plan, plan_taps
from meshpress.bands.uncertainty import figure_face_weights

from conftest import icosphere
from test_uncertainty import fib_points, make_taps


@pytest.fixture(scope="module")
def sphere():
    v, f = icosphere(3)
    return Body(v, f, axles=Axles(-0.5, 0.5))


@pytest.mark.slow
@pytest.mark.parametrize("orientation", [False, True])
def test_variance_shrinks_when_taps_are_added_at_the_planned_points(sphere, orientation):
    taps = make_taps(sphere, fib_points(24, "front"))
    plan = plan_taps(sphere, taps, figures=("CL", "CD"), n_add=8, ref_area=np.pi, min_spacing=0.1, kernel="auto",
                     orientation=orientation)
    assert len(plan.nodes) == 8
    assert np.all(plan.u_after < plan.u_before)
    # Refit the same model (fixed hyperparameters) with the planned taps read: the kriging variance of each
    # figure is what the planner expected (posterior variance does not depend on the readings).
    car = plan.carrier
    spec = car.spectrum()
    form = "matern52"  # plan_taps' default form of the orientation factor (and its default trend below)
    gp0 = SurfaceGP.on_carrier(car, kernel="auto", orientation=orientation, orientation_kernel=form,
                               trend="newtonian", trend_mean=impact_prior("newtonian", 1.0))
    gp0.fit(car.points_matrix(taps.points), taps.values)
    both = make_taps(sphere, np.vstack([taps.points, plan.points]))
    gp1 = SurfaceGP(car.distance, kernel=gp0.kernel_, spectrum=spec, length_scale=gp0.length_scale_,
                    variance=gp0.variance_, nugget=gp0.nugget_, mean_variance=gp0.mean_variance_,
                    normals=car.normals, orientation=orientation, trend=True, trend_basis="newtonian",
                    trend_variance=gp0.trend_variance_,
                    normal_scale=gp0.normal_scale_ if orientation else None, orientation_kernel=form)
    gp1.fit(plan.carrier.points_matrix(both.points), both.values)
    _, var1, _ = gp1.figures(plan.figure_weights)
    _, var0, _ = gp0.figures(plan.figure_weights)
    np.testing.assert_allclose(np.sqrt(var0), plan.u_before, rtol=1e-6)
    np.testing.assert_allclose(np.sqrt(var1), plan.u_after, rtol=1e-3)
    assert np.all(var1 < var0)


def test_greedy_beats_random_on_its_own_objective(sphere):
    rng = np.random.default_rng(0)
    car = Carrier(sphere, 3000)
    names, G = figure_face_weights(sphere, kind="cp", ref_area=np.pi, wheelbase=1.0, names=("CL", "CD"))
    a = car.fine_weights(G)
    cov = 1.0 + np.exp(-car.distance / 0.5)
    nodes, path = greedy_plan(cov, a, 6, candidates=np.ones(car.n, bool), noise_var=1e-4)
    j_plan = (path[-1] / path[0]).sum()
    for _ in range(20):
        S = cov.copy()
        for c in rng.choice(car.n, 6, replace=False):
            s = S[:, c].copy()
            S -= np.outer(s, s) / (S[c, c] + 1e-4)
        j_rand = (np.einsum("ik,ik->k", a, S @ a) / path[0]).sum()
        assert j_plan <= j_rand + 1e-12


def test_spacing_and_exclusion_boxes_are_kept(sphere):
    taps = make_taps(sphere, fib_points(20))
    box = (-2.0, -2.0, 0.3, 2.0, 2.0, 2.0)  # no taps on the top cap
    plan = plan_taps(sphere, taps, figures=("CL",), n_add=6, ref_area=np.pi, min_spacing=0.4, boxes=[box])
    car = plan.carrier
    assert np.all(car.vertices[plan.nodes, 2] < 0.3)
    d = car.distance[np.ix_(plan.nodes, plan.nodes)] + np.eye(len(plan.nodes)) * 9
    assert d.min() >= 0.4
    old = car.nearest_vertex(taps.points)
    assert car.distance[np.ix_(plan.nodes, old)].min() >= 0.4
    ok = allowed_nodes(car, sphere, excluded_faces=np.flatnonzero(sphere.centroids[:, 0] > 0))
    assert np.all(car.vertices[ok, 0] < 0.1)


def test_plan_for_a_new_car_without_taps(sphere):
    plan = plan_taps(sphere, None, figures=("CL", "CLF"), n_add=5, ref_area=np.pi, min_spacing=0.2)
    assert len(plan.nodes) == 5
    assert np.all(np.diff(plan.u_path[:, 0]) <= 1e-12)


def test_plan_from_a_layout_without_readings(sphere):
    # A layout's places condition the prior without fitting it: a Gaussian posterior variance never exceeds the
    # prior's (Rasmussen and Williams 2006, eq. 2.26), so each figure's u before adding is at most the new car's,
    # and no planned tap comes within the spacing of the layout's taps.
    layout = make_taps(sphere, fib_points(12, "front"))
    new = plan_taps(sphere, None, figures=("CL", "CLF"), n_add=4, ref_area=np.pi, min_spacing=0.3)
    plan = plan_taps(sphere, layout, figures=("CL", "CLF"), n_add=4, ref_area=np.pi, min_spacing=0.3, fit=False,
                     carrier=new.carrier)
    assert np.all(plan.u_before < new.u_before) and not plan.absolute
    old = new.carrier.nearest_vertex(layout.points)
    assert new.carrier.distance[np.ix_(plan.nodes, old)].min() >= 0.3
    assert np.all(np.diff(plan.u_path[:, 0]) <= 1e-12)


@pytest.mark.slow
def test_cli_plan_writes_mesh_unit_csv_and_rejects_bad_figures(cli, tmp_path):
    import trimesh

    m = trimesh.creation.icosphere(subdivisions=3, radius=1000.0)  # mm
    mesh = tmp_path / "ball.stl"
    m.export(mesh)
    out = tmp_path / "plan.csv"
    png = tmp_path / "plan.png"
    r = cli("plan", mesh, "--length-unit", "mm", "--front-axle", "-500", "--rear-axle", "500", "--add", "4",
            "--figures", "CL,CLR", "--out", out, "--picture", png, "--quiet", "--min-spacing", "200 mm")
    assert r.returncode == 0, r.stderr
    rows = [line.split(",") for line in out.read_text().splitlines() if line and not line.startswith("#")][1:]
    assert len(rows) == 4
    pts = np.array([[float(c) for c in row[1:4]] for row in rows])
    # on the sphere of radius 1000 mm, in the mesh's own unit
    np.testing.assert_allclose(np.linalg.norm(pts - m.vertices.mean(axis=0), axis=1), 1000.0, rtol=0.02)
    assert png.stat().st_size > 10_000
    # The table: one row per figure planned for, u after <= u now (adding taps cannot raise a posterior variance).
    table = {ln.split()[0]: [float(v) for v in ln.split()[1:4]] for ln in r.stdout.splitlines()
             if ln.split() and ln.split()[0] in ("CL", "CLR")}
    assert set(table) == {"CL", "CLR"} and "sampling part" in r.stdout
    assert all(after <= now for now, after, _ in table.values())
    # a layout without readings is planned around, not refused
    layout = tmp_path / "layout.csv"
    layout.write_text("tap,x,y,z\nA,1000,0,0\nB,0,1000,0\nC,0,0,1000\nD,-1000,0,0\n")
    r = cli("plan", mesh, "--taps", layout, "--length-unit", "mm", "--add", "2", "--quiet", "--figures", "CL", "--out",
            tmp_path / "l.csv", "--min-spacing", "200 mm")
    assert r.returncode == 0, r.stderr
    assert "a layout without readings" in r.stdout and "relative units" in r.stdout
    r = cli("plan", mesh, "--figures", "CL,XYZ", "--quiet", "--out", tmp_path / "x.csv")
    assert r.returncode == 2 and r.stderr.startswith("meshpress: error: --figures")
