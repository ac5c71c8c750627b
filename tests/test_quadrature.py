"""Clustered quadrature against face-by-face integration and exact answers."""

import numpy as np
import pytest
import trimesh

import meshpress
from meshpress.bodies.body import Body
from meshpress.loads.integrate import force_and_moment
from meshpress.loads.quadrature import cluster_faces, clustered_force_and_moment
from meshpress.taps.layout import read_taps


def test_linear_field_on_flat_faces_force_is_exact():
    # On a flat cluster sum dA (c - c_bar) = 0, so the midpoint rule integrates a linear field's force exactly;
    # the exact value is Archimedes' rho g V for p = rho g (h - z) on a closed box (trimesh mass properties).
    # The moment keeps a second-order term, sum (g . d) d x n dA with d = c - c_bar.
    box = trimesh.creation.box((2.0, 1.0, 0.6))
    box = box.subdivide().subdivide().subdivide()
    box.apply_translation((0, 0, 0.3))
    b = Body(box.vertices, box.faces)
    lin = lambda p: 9806.65 * (2.0 - p[:, 2]) + 37.0 * p[:, 0]
    cl = cluster_faces(b.centroids, b.area_vectors, 0.3)
    assert len(cl) < b.n_faces / 4
    F, M = clustered_force_and_moment(cl, lin(cl.points))
    F0, M0 = force_and_moment(b.area_vectors, b.centroids, lin(b.centroids))
    np.testing.assert_allclose(F, F0, atol=1e-8 * abs(F0).max())
    cell = 0.3
    bound = 37.0 * cell**2 * b.area + 9806.65 * cell**2 * b.area  # |g| h^2 A
    assert np.abs(M - M0).max() < bound
    assert F[2] == pytest.approx(9806.65 * box.volume, rel=1e-9)


def test_clusters_never_mix_the_two_skins_of_a_thin_plate():
    # Plate 4 mm thick with +1 on top and -1 underneath: net downward load 2 x area (cells 5x thicker).
    box = trimesh.creation.box((1.0, 1.0, 0.004)).subdivide().subdivide()
    b = Body(box.vertices, box.faces)
    cl = cluster_faces(b.centroids, b.area_vectors, 0.02)
    sign_face = np.sign(b.face_normals[:, 2])
    for k in range(len(cl)):
        s = np.unique(sign_face[cl.label == k])
        assert len(s) == 1
    val = lambda n: np.where(n[:, 2] > 0.5, 1.0, np.where(n[:, 2] < -0.5, -1.0, 0.0))
    first_face = np.unique(cl.label, return_index=True)[1]
    vk = val(b.face_normals[first_face])
    F, _ = clustered_force_and_moment(cl, vk)
    assert F[2] == pytest.approx(-2.0, rel=1e-9)


def test_clustered_loads_close_to_every_face(samples_dir):
    kw = dict(length_unit="mm", up="+y", forward="-z", front_axle=-250.0, rear_axle=2350.0)
    body = meshpress.load_body(samples_dir / "coupe.stl", **kw)
    taps = meshpress.project_taps(body, read_taps(samples_dir / "coupe_taps.csv"))
    # The thin-plate RBF: a method that can be evaluated at any surface point (the default gives face values).
    a = meshpress.compute_loads(body, taps, meshpress.make_field("rbf"), q=472.6, quadrature="faces")
    b = meshpress.compute_loads(body, taps, meshpress.make_field("rbf"), q=472.6, quadrature="clusters")
    assert a.quadrature == "every face" and b.quadrature.startswith("clustered")
    for k in ("CL", "CLF", "CLR", "CD"):
        assert getattr(b, k) == pytest.approx(getattr(a, k), abs=2e-3), k
