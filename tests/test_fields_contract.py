"""One contract suite run over every field method (scikit-learn style), plus regions and compare."""

from __future__ import annotations

import json

import numpy as np
import pytest
from trimesh.triangles import points_to_barycentric

from conftest import icosphere
from meshpress.loads.analysis import compute_loads
from meshpress.bodies.body import Body
from meshpress.errors import InputError
from meshpress.bodies.exact import HEMISPHERE_CL, sphere_cp, uv_hemisphere
from meshpress.fields import METHODS, Field, make_field
from meshpress.taps.projection import ProjectedTaps, nearest_on_faces

ALL = list(METHODS)
SURFACE = ["geodesic", "biharmonic", "harmonic", "nearest"]


def make_taps(body, points, values, kind="cp"):
    p, f, d = nearest_on_faces(body, np.asarray(points, float))
    b = points_to_barycentric(body.triangles[f], p)
    return ProjectedTaps([f"T{i}" for i in range(len(p))], p, p, f, b, d, np.asarray(values, float), kind)


def fibonacci_sphere(n):
    i = np.arange(n) + 0.5
    phi = np.arccos(1 - 2 * i / n)
    th = np.pi * (1 + 5**0.5) * i
    return np.column_stack([np.cos(th) * np.sin(phi), np.sin(th) * np.sin(phi), np.cos(phi)])


@pytest.fixture(scope="module")
def sphere():
    v, f = icosphere(3)
    return Body(v, f)


@pytest.fixture(scope="module")
def sphere_taps(sphere):
    return make_taps(sphere, fibonacci_sphere(60), np.zeros(60))


@pytest.mark.parametrize("method", ALL)
def test_constant_field_reproduced_exactly(method, sphere, sphere_taps):
    # Any interpolation scheme must reproduce a constant (partition of unity; e.g. Wendland,
    # Scattered Data Approximation, 2005, ch. 8 for RBF with a constant term [from memory]).
    field = make_field(method).fit(sphere, sphere_taps.with_values(np.full(len(sphere_taps), -0.37)))
    np.testing.assert_allclose(field.face_values(), -0.37, atol=1e-9)
    assert isinstance(field, Field)


def test_rbf_linear_term_reproduces_linear_field(sphere, sphere_taps):
    # Polynomial reproduction of an RBF with a degree-1 term (Wendland 2005, ch. 8 [from memory];
    # scipy's RBFInterpolator tests check the same).
    lin = lambda p: 0.3 + 0.5 * p[:, 0] - 0.2 * p[:, 1] + 0.9 * p[:, 2]
    field = make_field("rbf").fit(sphere, sphere_taps.with_values(lin(sphere_taps.points)))
    x = sphere.centroids[::7]
    np.testing.assert_allclose(field.at_points(x), lin(x), atol=1e-8)


@pytest.fixture(scope="module")
def dome():
    v, f = uv_hemisphere(1.0, 30, 60)
    return Body(v, f)


@pytest.mark.slow
@pytest.mark.parametrize("method", ALL)
def test_hemisphere_lift_11_16(method, dome):
    # Sphere in potential flow, Cp = 1 - 9/4 sin^2(theta) (Anderson, Fundamentals of Aerodynamics,
    # sec. 6.4); on a hemisphere on the ground CL = 11/16 on the base area [derived].
    p = fibonacci_sphere(400)
    t = np.linspace(0.05, np.pi - 0.05, 25)  # plus a centre-line row, as in practice
    p = np.vstack([p[p[:, 2] > 0.02], np.column_stack([np.cos(t), 0 * t, np.sin(t)])])
    taps = make_taps(dome, p, sphere_cp(p))
    res = compute_loads(dome, taps, make_field(method), ref_area=np.pi)
    assert res.CL == pytest.approx(HEMISPHERE_CL, rel=0.01)


@pytest.mark.slow
@pytest.mark.parametrize("method", ALL)
def test_archimedes_closed_sphere(method, sphere):
    # Hydrostatic p = rho g (h - z) over a closed body: rho g V upward through the volume
    # centroid (Archimedes; divergence theorem).
    rho_g, h = 1000 * 9.80665, 2.0
    pts = fibonacci_sphere(200)
    taps = make_taps(sphere, pts, rho_g * (h - pts[:, 2]), kind="p")
    res = compute_loads(sphere, taps, make_field(method), q=1.0, ref_area=1.0)
    V = sphere.volume()
    if method == "strip":
        pytest.xfail("the strip method sweeps the centre-line profile across the width by design")
    tol = 0.01 if method == "rbf" else 0.03
    assert res.force_N[2] == pytest.approx(rho_g * V, rel=tol)
    assert abs(res.force_N[0]) < tol * rho_g * V and abs(res.force_N[1]) < tol * rho_g * V
    # Moment about the origin = centroid x F; the centroid is the origin here.
    assert np.abs(res.moment_Nm).max() < tol * rho_g * V


def plates():
    """Closed thin plate 1 m x 1 m, 20 mm thick: two parallel faces 20 mm apart."""
    import trimesh

    m = trimesh.creation.box(extents=(1.0, 1.0, 0.02))
    v, f = trimesh.remesh.subdivide_to_size(m.vertices, m.faces, max_edge=0.04)
    mm = trimesh.Trimesh(v, f)
    return Body(mm.vertices, mm.faces)


@pytest.mark.parametrize("method", ALL)
def test_regions_stop_leakage_between_plates(method):
    # Two parallel faces 20 mm apart, Cp = -1 - 0.5 x on top and +1 underneath: net lift per q
    # = 1 m2 x (1 + mean of 1 + 0.5 x) = 2 (F = -p n dA over flat faces; x symmetric about 0).
    body = plates()
    g = np.linspace(-0.4, 0.4, 5)
    top = np.array([(x, y, 0.01) for x in g for y in g])
    bot = np.array([(x + 0.08, y + 0.08, -0.01) for x in g for y in g])
    bot[:, :2] = np.clip(bot[:, :2], -0.45, 0.45)
    bot[np.abs(bot[:, 1]) < 0.1, 1] = 0.0  # a centre-line row for the strip method
    taps = make_taps(body, np.vstack([top, bot]), np.r_[-1.0 - 0.5 * top[:, 0], np.full(25, 1.0)])
    res = compute_loads(body, taps, make_field(method, regions="normal"), ref_area=1.0)
    assert res.CL == pytest.approx(2.0, rel=0.01)
    if method in SURFACE:  # without regions even the surface methods leak round the 20 mm edge (distance alone)
        leak = compute_loads(body, taps, make_field(method, **({"orientation": False} if method == "geodesic"
                                                               else {})), ref_area=1.0)
        assert abs(leak.CL - 2.0) > 0.05


def test_geodesic_orientation_alone_keeps_the_plate_faces_apart():
    # The plates above without regions (net lift per q = 2, closed form): the factor of the normals' angle in the
    # geodesic kernel (chosen by leave-one-out) brings the distance-only field's leak round the 20 mm edge down
    # to a few per cent, with no region given.
    body = plates()
    g = np.linspace(-0.4, 0.4, 5)
    top = np.array([(x, y, 0.01) for x in g for y in g])
    bot = np.array([(x + 0.08, y + 0.08, -0.01) for x in g for y in g])
    bot[:, :2] = np.clip(bot[:, :2], -0.45, 0.45)
    taps = make_taps(body, np.vstack([top, bot]), np.r_[-1.0 - 0.5 * top[:, 0], np.full(25, 1.0)])
    plain = compute_loads(body, taps, make_field("geodesic", orientation=False), ref_area=1.0)
    turned = make_field("geodesic", orientation=True)
    res = compute_loads(body, taps, turned, ref_area=1.0)
    assert np.isfinite(turned.theta_)
    assert abs(res.CL - 2.0) < 0.25 * abs(plain.CL - 2.0)
    assert res.CL == pytest.approx(2.0, rel=0.05)


def test_geodesic_normal_trend_separates_plate_faces():
    # Universal kriging reproduces its trend functions exactly (Cressie, Statistics for Spatial Data, 1993,
    # sec. 3.4): a field linear in the unit normal (Cp = -0.2 + 0.8 n_z on the closed plate) comes back
    # exactly at every vertex, without regions, where a constant mean leaks round the 20 mm edge.
    body = plates()
    g = np.linspace(-0.4, 0.4, 4)
    pts = np.vstack([[(x, y, 0.01) for x in g for y in g], [(x + 0.05, y, -0.01) for x in g for y in g]])
    taps = make_taps(body, pts, -0.2 + 0.8 * np.sign(pts[:, 2]))
    field = make_field("geodesic", trend="normal").fit(body, taps)
    assert field.trend_ == "normal"
    from meshpress.fields.surface_common import vertex_normals

    np.testing.assert_allclose(field._vertex_values(), -0.2 + 0.8 * vertex_normals(body)[:, 2], atol=1e-6)
    auto = make_field("geodesic", trend="auto").fit(body, taps)  # chosen by leave-one-out
    assert auto.trend_ == "normal"
    plain = make_field("geodesic", orientation=False).fit(body, taps)  # a constant mean on distance alone leaks
    assert plain.trend_ == "constant"
    assert np.abs(plain._vertex_values() - (-0.2 + 0.8 * vertex_normals(body)[:, 2])).max() > 0.1


@pytest.mark.parametrize("method,settings", [
    ("rbf", {}), ("rbf", {"kernel": "gaussian", "epsilon": 2.0, "smoothing": 1e-3}), ("rbf", {"kernel": "cubic"}),
    ("geodesic", {"length": 0.6, "ridge": 1e-4}), ("biharmonic", {}), ("harmonic", {}), ("nearest", {}),
])
def test_closed_form_loo_equals_refitting(method, settings, sphere):
    # Rippa, Adv. Comput. Math. 11 (1999) 193-210: LOO residual = c_i / (A^-1)_ii; checked against
    # brute-force refitting without each tap (the generic Field.loo_residuals).
    pts = fibonacci_sphere(18)
    taps = make_taps(sphere, pts, np.sin(2 * pts[:, 0]) + pts[:, 2] ** 2)
    field = make_field(method, **settings).fit(sphere, taps)
    np.testing.assert_allclose(field.loo_residuals(), Field.loo_residuals(field), rtol=1e-6, atol=1e-8)


def test_extrapolation_is_bounded(sphere):
    # Taps on one cap only: the thin-plate spline's linear trend would run away on the far side.
    pts = fibonacci_sphere(200)
    pts = pts[pts[:, 0] > 0.5]
    taps = make_taps(sphere, pts, 3.0 * pts[:, 0])
    # Every method but the default, whose field is the unclamped posterior mean so that each figure is the centre
    # of its band (tests/test_default_method.py).
    for method in [m for m in ALL if m != "posterior"]:
        f = make_field(method).fit(sphere, taps)
        v = f.face_values()
        assert v.min() >= taps.values.min() - 1e-12 and v.max() <= taps.values.max() + 1e-12, method
        assert 0.3 < f.extrapolated_share_ < 0.9, method
    f = make_field("rbf", extrapolation="decay", far_value=0.0).fit(sphere, taps)
    assert f.face_values()[np.argmin(sphere.centroids[:, 0])] == pytest.approx(0.0, abs=0.05)


def test_bad_settings_are_input_errors(sphere, sphere_taps):
    with pytest.raises(InputError, match="--regions"):
        make_field("rbf", regions="sideways").fit(sphere, sphere_taps)
    with pytest.raises(InputError, match="far-value"):
        make_field("biharmonic", extrapolation="decay").fit(sphere, sphere_taps)
    with pytest.raises(InputError, match="--method"):
        make_field("splines")
    with pytest.raises(InputError, match="no tap within"):
        make_field("strip", band=1e-6).fit(sphere, make_taps(sphere, [[0, 0.7, 0.7]], [1.0]))


def test_working_copy_keeps_loads(sphere):
    # Biharmonic on a copy simplified 5x: the hemisphere-free check, the integral of a smooth
    # known field (sphere Cp, drag-free by symmetry: d'Alembert) barely moves.
    v, f = icosphere(4)
    body = Body(v, f)
    pts = fibonacci_sphere(150)
    taps = make_taps(body, pts, sphere_cp(pts))
    full = compute_loads(body, taps, make_field("biharmonic"), ref_area=np.pi)
    work = compute_loads(body, taps, make_field("biharmonic", work_faces=1000), ref_area=np.pi)
    assert any("simplified copy" in w for w in work.warnings)
    z = body.area_vectors[:, 2] * (body.centroids[:, 2] > 0)
    upper = lambda r: -(r.face_values * z).sum()
    assert upper(work) == pytest.approx(upper(full), rel=0.01)


@pytest.mark.slow
@pytest.mark.slow
def test_compare_json_carries_every_method(cli, tmp_path):
    import trimesh

    v, f = icosphere(3)
    trimesh.Trimesh(v, f).export(tmp_path / "ball.stl")
    pts = fibonacci_sphere(40)
    pts[:6, 1] = 0.0
    pts /= np.linalg.norm(pts, axis=1, keepdims=True)
    rows = ["tap,x,y,z,cp"] + [f"T{i},{x:.5f},{y:.5f},{z:.5f},{c:.5f}" for i, ((x, y, z), c)
                                in enumerate(zip(pts, sphere_cp(pts)))]
    (tmp_path / "taps.csv").write_text("\n".join(rows) + "\n")
    out = tmp_path / "cmp.json"
    pic = tmp_path / "cmp.png"
    r = cli("compare", tmp_path / "ball.stl", tmp_path / "taps.csv", "--ref-area", "3.1416", "--json", out,
            "--quiet", "--front-axle", "-0.5", "--rear-axle", "0.5", "--picture", pic)
    assert r.returncode == 0, r.stderr
    # The side-by-side picture: a PNG (signature from the PNG spec), wider than tall, not one flat colour.
    from PIL import Image

    assert pic.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    img = np.asarray(Image.open(pic).convert("RGB"))
    assert img.shape[1] > img.shape[0] > 200 and img.reshape(-1, 3).std(axis=0).max() > 10
    d = json.loads(out.read_text())
    assert [m["method"] for m in d["methods"]] == ALL
    for m in d["methods"]:
        for k in ("loo_rms", "loo_max", "CL", "CD", "CPM", "CLF", "CLR"):
            assert k in m
    assert d["recommended"] in ALL and "spread" in d
    assert "Recommended" in r.stdout
    one = cli("loads", tmp_path / "ball.stl", tmp_path / "taps.csv", "--ref-area", "3.1416", "--quiet",
              "--method", "nearest", "--regions", "normal", "--json", tmp_path / "one.json")
    assert one.returncode == 0, one.stderr
    assert "regions" in json.loads((tmp_path / "one.json").read_text())["method"]
    bad = cli("compare", tmp_path / "ball.stl", tmp_path / "taps.csv", "--methods", "rbf,magic")
    assert bad.returncode == 2 and "magic" in bad.stderr and "Traceback" not in bad.stderr


def test_region_specs(tmp_path):
    # A box has six flat sides meeting at 90 degree edges: six sharp-edge patches (geometry).
    from meshpress.bodies.regions import face_regions

    body = plates()
    names, idx = face_regions(body, "edges")
    assert len(names) == 6
    names, idx = face_regions(body, "normal;x=0")
    assert len(names) == 4
    c = body.centroids
    assert set(idx[(c[:, 0] > 0.01) & (c[:, 2] > 0.009)]) == {names.index("upper / x>=0")}
    labels = np.where(c[:, 1] > 0, "right", "left")
    (tmp_path / "lab.txt").write_text("# one label per face\n" + "\n".join(labels) + "\n")
    names, idx = face_regions(body, str(tmp_path / "lab.txt"))
    assert names == ["left", "right"] and np.array_equal(np.array(names)[idx], labels)
    (tmp_path / "short.txt").write_text("a\nb\n")
    with pytest.raises(InputError, match="2 labels for"):
        face_regions(body, str(tmp_path / "short.txt"))
    names, _ = face_regions(body, "box=-0.1,0.1,-0.1,0.1,-1,1")
    assert names == ["in box", "out of box"]


def test_region_without_taps_takes_empty_value():
    # Taps only on the top face: the lower region has none and takes --empty-value (here Cp 0.5),
    # so lift per q = (0.5 - (-1)) x 1 m2 (F = -p n A on flat faces).
    body = plates()
    g = np.linspace(-0.4, 0.4, 4)
    taps = make_taps(body, [(x, y, 0.01) for x in g for y in g], np.full(16, -1.0))
    f = make_field("biharmonic", regions="normal", empty_value=0.5)
    res = compute_loads(body, taps, f, ref_area=1.0)
    assert res.CL == pytest.approx(1.5, rel=1e-9)
    assert any("without taps" in w for w in res.warnings)


def test_sphere_spline_kernel_closed_form_matches_series():
    # Wahba (1981) defines the kernel by its Legendre series; the closed form with the dilogarithm is
    # derived (meshpress.bodies.exact); 2000 terms leave a truncation error below 1/2000^2.
    from meshpress.bodies.exact import sphere_spline_kernel, sphere_spline_kernel_series

    t = np.linspace(-1, 1, 41)
    np.testing.assert_allclose(sphere_spline_kernel(t), sphere_spline_kernel_series(t), atol=1e-6)
    assert sphere_spline_kernel(1.0) == pytest.approx(1 / (4 * np.pi), rel=1e-12)  # telescoping sum [derived]


def test_biharmonic_converges_to_wahba_spline_on_sphere():
    # The continuum minimiser of int (Lap u)^2 through point values on the unit sphere is Wahba's spline
    # (Wahba, SIAM J. Sci. Stat. Comput. 2 (1981) 5-16); a second-order method on uniform meshes should cut
    # the error about 4x per halving of the edge (icosphere levels 3 -> 4).
    from meshpress.bodies.exact import sphere_spline

    pts = fibonacci_sphere(60)
    vals = sphere_cp(pts) + 0.5 * pts[:, 2]
    u = sphere_spline(pts, vals)
    errs = []
    for level in (3, 4):
        v, f = icosphere(level)
        body = Body(v, f)
        field = make_field("biharmonic", extrapolation="none").fit(body, make_taps(body, pts, vals))
        errs.append(np.sqrt(np.mean((field.work_.at_points(field.vertex_values_, v) - u(v)) ** 2)))
    assert errs[1] < errs[0] / 3 and errs[1] < 3e-3


def test_refine_long_edges_is_conforming_and_keeps_the_surface():
    # Bisection puts new vertices on the old faces: area and enclosed volume are unchanged, the mesh stays
    # closed and consistently wound, and a closed genus-0 surface keeps Euler characteristic 2 (Euler's
    # polyhedron formula).  The sample car's default mesh has strips of long thin triangles.
    import trimesh

    from meshpress.bodies.samples import car_body
    from meshpress.bodies.workmesh import mean_edge, refine_long_edges

    v, f = car_body(40, 30)
    m0 = trimesh.Trimesh(v, f, process=False)
    hmax = 1.5 * mean_edge(m0.area, len(f))
    v2, f2 = refine_long_edges(v, f, hmax)
    m = trimesh.Trimesh(v2, f2, process=False)
    assert len(f2) > len(f) and np.array_equal(v2[: len(v)], v)
    assert m.is_watertight and m.is_winding_consistent and m.euler_number == 2
    assert m.area == pytest.approx(m0.area, rel=1e-12) and m.volume == pytest.approx(m0.volume, rel=1e-12)
    assert np.linalg.norm(v2[f2] - v2[np.roll(f2, -1, axis=1)], axis=2).max() <= hmax


def test_compare_never_recommends_harmonic_for_loads():
    # The harmonic field from point data has no continuum limit (zero capacity of a point in 2-D; e.g.
    # Evans, Partial Differential Equations, 2010, on capacity [from memory]); the next test
    # checks the drift numerically.  Even with the lowest leave-one-out error it is not recommended.
    from meshpress.loads.compare import recommend, summary

    rows = [{"method": "harmonic", "loo_rms": 0.01, "loo_unit": "Cp", "CL": 0.3},
            {"method": "biharmonic", "loo_rms": 0.02, "loo_unit": "Cp", "CL": 0.35}]
    assert recommend(rows) == "biharmonic"
    text = summary(rows, {"CL": 0.05}, "biharmonic")
    assert "never recommended for loads" in text and "harmonic scored lower" in text
    assert recommend(rows[:1]) is None


def test_harmonic_loads_drift_under_refinement_while_biharmonic_converges():
    # The same 60 taps on the unit sphere at icosphere levels 3 and 5: -int u n_z dA of the biharmonic field
    # approaches the exact value of the sampled field (for Cp + 0.5 z: -0.5 * 4 pi / 3, sphere volume
    # [geometry]); the harmonic field's moves away as the spikes at the taps narrow (point capacity -> 0).
    pts = fibonacci_sphere(60)
    vals = sphere_cp(pts) + 0.5 * pts[:, 2]
    exact_fz = -0.5 * 4 * np.pi / 3
    err = {}
    for method in ("harmonic", "biharmonic"):
        for level in (3, 5):
            v, f = icosphere(level)
            body = Body(v, f)
            fv = make_field(method, extrapolation="none").fit(body, make_taps(body, pts, vals)).face_values()
            err[method, level] = abs(-(fv * body.area_vectors[:, 2]).sum() / exact_fz - 1)
    assert err["biharmonic", 5] < err["biharmonic", 3] and err["biharmonic", 5] < 0.01
    assert err["harmonic", 5] > err["harmonic", 3] + 0.02


def test_even_car_body_has_no_long_edges():
    # samples.car_body(even=True): equal arc lengths along and around, so no edge is much longer than the
    # mean edge (that of an equilateral triangle of the mean face area [geometry]); a closed surface.
    import trimesh

    from meshpress.bodies.samples import car_body
    from meshpress.bodies.workmesh import mean_edge

    v, f = car_body(60, 54, even=True)
    m = trimesh.Trimesh(v, f, process=False)
    assert m.is_watertight and m.volume > 0
    assert np.linalg.norm(v[f] - v[np.roll(f, -1, axis=1)], axis=2).max() < 2.5 * mean_edge(m.area, len(f))


def test_newtonian_trend_features_follow_sine_squared_law(sphere):
    # Newton's sine-squared law (Anderson, Hypersonic and High-Temperature Gas Dynamics, 2nd ed. 2006, sec. 3.2):
    # Cp / Cp_max = sin^2(delta), delta the angle between the oncoming flow and the surface, i.e. cos^2 of the
    # angle between the inward normal and the flow; zero on the leeward side.  The flow runs along +x.
    from meshpress.bands.gptrend import trend_features

    n = sphere.face_normals
    F = trend_features(n, "newtonian")
    cos_stag = -n[:, 0]  # cosine of the angle from the stagnation point at -x
    np.testing.assert_allclose(F[:, 0], np.where(cos_stag > 0, cos_stag**2, 0.0), atol=1e-12)
    np.testing.assert_allclose(F[:, 1], np.where(cos_stag < 0, -cos_stag, 0.0), atol=1e-12)
    with pytest.raises(InputError, match="trend basis"):
        trend_features(n, "cubic")


@pytest.mark.parametrize("method", ["kriging", "geodesic"])
def test_newtonian_trend_fills_an_untapped_windward_cap(method, sphere):
    # Universal kriging reproduces its trend functions (Cressie, Statistics for Spatial Data, 1993, sec. 3.4):
    # a field in the span of the trend, Cp = -0.3 + 1.2 cos^2 (windward) - 0.25 |cos| (leeward), is recovered on
    # a windward cap with no tap in it, where a constant mean reverts towards the taps' average (no clamping to
    # the tap range here: the cap lies above every reading).
    from meshpress.bands.gptrend import trend_features

    def cp(normals):
        F = trend_features(normals, "newtonian")
        return -0.3 + 1.2 * F[:, 0] - 0.25 * F[:, 1]

    pts = fibonacci_sphere(60)
    pts = pts[pts[:, 0] > -0.8]  # no tap within about 37 degrees of the stagnation point
    taps = make_taps(sphere, pts, cp(pts))
    cap = sphere.face_normals[:, 0] < -0.9
    errs = {}
    for trend in ("newtonian", None):
        field = make_field(method, trend=trend or "constant" if method == "geodesic" else trend,
                           extrapolation="none").fit(sphere, taps)
        errs[trend] = np.abs(np.asarray(field.face_values())[cap] - cp(sphere.face_normals[cap])).max()
    assert errs["newtonian"] < 0.05
    assert errs[None] > 0.15
