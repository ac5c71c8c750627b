"""A simplified working copy of a big surface, with maps back to the full mesh.

The surface-aware methods (geodesic RBF, biharmonic, nearest tap) factorise a
sparse matrix over the mesh; that grows faster than linearly with the size
(heat method: about 0.3 s at 20k faces, 2.4 s at 80k, 36 s at 330k).  A pressure
field is smooth on the scale of the tap spacing (centimetres), far coarser than
a scan's triangles (millimetres), so the methods solve on a copy decimated to a
target face count with fast-simplification (quadric edge collapse, Garland &
Heckbert, SIGGRAPH 1997) and the field is carried back to every vertex of the
full mesh by linear interpolation in the nearest working face.  Forces are
always integrated on the full mesh.  ``scripts/bench_accuracy.py`` measures the
effect on the loads (docs/accuracy.md).
"""

from __future__ import annotations

import weakref

import numpy as np
from scipy import sparse
from scipy.spatial import cKDTree

#: Default face count of the working copy.
TARGET_FACES = 80_000

_CACHE: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()


def simplify(vertices, faces, target_faces: int):
    """Quadric-decimate a triangle mesh to about ``target_faces`` faces.

    Parameters
    ----------
    vertices : (n, 3) float
    faces : (m, 3) int
    target_faces : int

    Returns
    -------
    vertices : (n', 3) float
    faces : (m', 3) int
    """
    import fast_simplification

    m = len(faces)
    if m <= target_faces:
        return np.asarray(vertices, float), np.asarray(faces, np.int64)
    v, f = np.asarray(vertices, np.float32), np.asarray(faces, np.int32)
    for _ in range(3):  # very anisotropic triangles can stop a pass short of the target
        v, f = fast_simplification.simplify(v, f, target_count=int(target_faces))
        if len(f) <= 1.2 * target_faces:
            break
    v = np.asarray(v, float)
    f = np.asarray(f, np.int64)
    # Drop vertices the collapse left unused (the heat method needs none).
    used = np.zeros(len(v), bool)
    used[f.ravel()] = True
    remap = np.cumsum(used) - 1
    return v[used], remap[f]


def barycentric_map(points, vertices, faces) -> sparse.csr_matrix:
    """(k, n) sparse: linear interpolation at ``points`` (k, 3) from the vertices of the
    nearest face (by centroid) of the mesh ``vertices`` (n, 3), ``faces`` (m, 3).

    The point is projected on the face's plane and its barycentric coordinates
    are clipped to the triangle, so every row is a convex combination.
    """
    tri = vertices[faces]
    cen = tri.mean(axis=1)
    _, fi = cKDTree(cen).query(points)
    a, b, c = tri[fi, 0], tri[fi, 1], tri[fi, 2]
    v0, v1, v2 = b - a, c - a, points - a
    d00 = np.einsum("ij,ij->i", v0, v0)
    d01 = np.einsum("ij,ij->i", v0, v1)
    d11 = np.einsum("ij,ij->i", v1, v1)
    d20 = np.einsum("ij,ij->i", v2, v0)
    d21 = np.einsum("ij,ij->i", v2, v1)
    den = d00 * d11 - d01 * d01
    den[den == 0] = 1.0
    w1 = (d11 * d20 - d01 * d21) / den
    w2 = (d00 * d21 - d01 * d20) / den
    w = np.clip(np.column_stack([1 - w1 - w2, w1, w2]), 0, None)
    s = w.sum(axis=1, keepdims=True)
    s[s == 0] = 1.0
    w /= s
    rows = np.repeat(np.arange(len(points)), 3)
    return sparse.csr_matrix((w.ravel(), (rows, faces[fi].ravel())), shape=(len(points), len(vertices)))


class WorkMesh:
    """The surface the surface-aware methods solve on.

    Attributes
    ----------
    body : Body
        The working copy (the body itself when it is small enough).
    identity : bool
        True when no simplification was needed.
    to_full : (n_full_vertices, n_work_vertices) sparse
        Carries working-vertex values to the full mesh's vertices.
    """

    def __init__(self, body, target_faces: int = TARGET_FACES):
        from .body import Body

        self.full = weakref.ref(body)
        self.target_faces = int(target_faces)
        self.identity = body.n_faces <= target_faces
        if self.identity:
            self._body = None  # the full body itself (held weakly, so the cache does not keep it alive)
            self.to_full = sparse.identity(len(body.vertices), format="csr")
        else:
            v, f = simplify(body.vertices, body.faces, target_faces)
            self._body = Body(v, f, axles=body.axles)
            self.to_full = barycentric_map(body.vertices, v, f)
        self._distance = None
        self._tap_cache = {}

    @property
    def body(self):
        return self.full() if self._body is None else self._body

    @property
    def distance(self):
        """:class:`~meshpress.geodesic.SurfaceDistance` on the working copy (built once)."""
        if self._distance is None:
            from .geodesic import SurfaceDistance

            self._distance = SurfaceDistance(self.body.vertices, self.body.faces)
        return self._distance

    def locate(self, points):
        """Faces (k,) and barycentric coordinates (k, 3) of surface points on the working copy."""
        from trimesh.triangles import points_to_barycentric

        from .projection import nearest_on_faces

        p, f, _ = nearest_on_faces(self.body, np.asarray(points, float).reshape(-1, 3))
        return f, points_to_barycentric(self.body.triangles[f], p)

    def tap_distances(self, points, *, progress=None, corners: int | None = None):
        """Surface distances from tap points (k, 3) to every working vertex, (k, n) m (cached).

        A tap inside a face reaches a vertex x through the best of its face's
        corners c: ``min_c d(c, x) + |p - c|`` (heat-method ``d``), never below
        the straight distance ``|p - x|``.  ``corners`` = 3 solves every corner
        (exact to the heat method's accuracy near the tap), 1 only the corner
        with the largest barycentric weight (error at most one edge, near the tap);
        default 3 on copies up to 25,000 vertices, else 1.
        """
        key = np.ascontiguousarray(points, float).tobytes()
        if key not in self._tap_cache:
            p = np.asarray(points, float).reshape(-1, 3)
            f, b = self.locate(p)
            v = self.body.vertices
            if corners is None:
                corners = 3 if len(v) <= 25_000 else 1
            cs = self.body.faces[f] if corners == 3 else self.body.faces[f, np.argmax(b, axis=1)][:, None]
            need = np.unique(cs)
            it = progress.track(need, len(need), "surface distances") if progress else need
            from_c = {int(c): self.distance.from_vertex(int(c)) for c in it}
            out = np.empty((len(p), len(v)))
            for r in range(len(p)):
                best = None
                for c in cs[r]:
                    d = from_c[int(c)] + np.linalg.norm(p[r] - v[c])
                    best = d if best is None else np.minimum(best, d)
                out[r] = np.maximum(best, np.linalg.norm(v - p[r], axis=1))
            self._tap_cache = {key: out}
        return self._tap_cache[key]

    def vertex_to_full_faces(self, values) -> np.ndarray:
        """(m_full,) float: face means on the full mesh of working-vertex values (n_work,)."""
        body = self.full()
        v = self.to_full @ np.asarray(values, float)
        return v[body.faces].mean(axis=1)

    def at_points(self, values, points) -> np.ndarray:
        """(k,) float: working-vertex values interpolated at surface points (k, 3)."""
        f, b = self.locate(points)
        return (np.asarray(values, float)[self.body.faces[f]] * b).sum(axis=1)


def work_mesh(body, target_faces: int = TARGET_FACES) -> WorkMesh:
    """The (cached) working copy of ``body`` at ``target_faces``."""
    per = _CACHE.setdefault(body, {})
    if target_faces not in per:
        per[target_faces] = WorkMesh(body, target_faces)
    return per[target_faces]
