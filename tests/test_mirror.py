"""Half cars: a half body mirrored across its centre plane, and taps mirrored to the other side.

Truth: the hemisphere on the ground in potential flow, Cp = 1 - 9/4 sin^2 theta (Batchelor 1967, sec. 6.8),
whose lift coefficient on the base area is 11/16 (derived in meshpress.bodies.exact; Anderson, Fundamentals
of Aerodynamics, sec. 6.4); and the whole body itself, meshed as the mirrored half is.
"""

from __future__ import annotations

import numpy as np
import pytest
import trimesh

import meshpress as mp
from meshpress.bodies import exact
from meshpress.loads.analysis import run_loads_parts

from conftest import fibonacci_hemisphere, write_taps


@pytest.fixture(scope="module")
def domes(tmp_path_factory):
    d = tmp_path_factory.mktemp("domes")
    v, f = exact.uv_hemisphere(1.0, 40, 80)
    right = v[f].mean(axis=1)[:, 1] >= 0  # the meridians phi = 0 and pi lie in y = 0: a clean half
    trimesh.Trimesh(v, f, process=False).export(str(d / "dome.stl"))
    trimesh.Trimesh(v, f[right], process=False).export(str(d / "half.stl"))
    pts = fibonacci_hemisphere(200)
    cp = exact.sphere_cp(pts)
    write_taps(d / "taps.csv", [f"T{i}" for i in range(len(pts))], pts, cp)
    side = pts[:, 1] >= 0
    write_taps(d / "half_taps.csv", [f"T{i}" for i in np.flatnonzero(side)], pts[side], cp[side])
    return d


def test_the_mirrored_half_is_the_whole_body(domes):
    whole = mp.load_body(domes / "dome.stl")
    half = mp.load_body(domes / "half.stl", mirror=True)
    assert half.n_faces == whole.n_faces
    assert half.area == pytest.approx(whole.area, rel=1e-12)
    assert half.report.holes == whole.report.holes == 1  # the open base only: the two halves closed up
    assert any(w.startswith("mirrored: the other half was built across the centre plane y = 0") for w in half.warnings)
    given = mp.load_body(domes / "half.stl", mirror=0.0)
    assert given.n_faces == whole.n_faces and "(given)" in given.warnings[0]


def test_mirrored_half_gives_the_loads_of_the_whole(domes):
    full = run_loads_parts(domes / "dome.stl", domes / "taps.csv", method="rbf", ref_area=np.pi).result
    half = run_loads_parts(domes / "half.stl", domes / "taps.csv", method="rbf", ref_area=np.pi, mirror=True).result
    assert half.CL == pytest.approx(full.CL, rel=1e-6)
    assert half.CL == pytest.approx(exact.HEMISPHERE_CL, rel=0.01)


def test_taps_on_one_side_mirrored(domes):
    r = run_loads_parts(domes / "half.stl", domes / "half_taps.csv", method="rbf", ref_area=np.pi, mirror=True,
                        mirror_taps=True).result
    assert r.CL == pytest.approx(exact.HEMISPHERE_CL, rel=0.01)
    # A symmetric field on a symmetric body: no side force, by assumption (and the caution says so).
    assert abs(r.CS) < 1e-9
    assert any("zero by assumption" in w for w in r.warnings)
    assert sum(t["name"].endswith("(mirror)") for t in r.taps) > 90


def test_mirror_errors_are_one_line(domes, cli):
    r = cli("loads", domes / "dome.stl", domes / "taps.csv", "--mirror", "--quiet")
    # The dome is open at its base, on no side plane: the plane is not found.
    assert r.returncode == 2 and "--mirror" in r.stderr and "Traceback" not in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    r = cli("loads", domes / "dome.stl", domes / "taps.csv", "--mirror", "0", "--quiet")
    assert r.returncode == 2 and "both sides of the plane" in r.stderr
