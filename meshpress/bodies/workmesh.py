"""A simplified working copy of a big surface, with maps back to the full mesh.

The surface-aware methods (geodesic RBF, biharmonic, nearest tap) factorise a
sparse matrix over the mesh; that grows faster than linearly with the size
(heat method: about 0.3 s at 20k faces, 2.4 s at 80k, 36 s at 330k).  A pressure
field is smooth on the scale of the tap spacing (centimetres), far coarser than
a scan's triangles (millimetres), so the methods solve on a copy decimated to a
target face count with fast-simplification (quadric edge collapse, Garland &
Heckbert, SIGGRAPH 1997) and the field is carried back to every vertex of the
full mesh by linear interpolation in the nearest working face.  Forces are
always integrated on the full mesh.  ``benchmarks/bench_accuracy.py`` measures the
effect on the loads (docs/accuracy.md).

Quadric decimation keeps vertices where the *shape* bends and removes them
where it is flat, and a mesh as given can be just as uneven (strips of long,
thin triangles, fans of slivers closing a loft).  A pressure field varies over
flat parts as much as over curved ones, and a method that solves a differential
equation on the mesh (biharmonic, harmonic) is only as good as the mesh's
coarsest part there.  Such a method asks for a copy whose edges are all at most
``max_edge_ratio`` times the mean edge (the edge of an equilateral triangle of
the copy's mean face area): after decimation, every longer edge is bisected
(longest-edge bisection with conforming closure, Rivara, Int. J. Numer. Meth.
Eng. 20 (1984) 745-756), which keeps the surface exactly and the smallest angles
bounded.  ``benchmarks/bench_biharmonic_convergence.py`` measures the effect.
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


def mean_edge(area: float, n_faces: int) -> float:
    """Edge (m) of an equilateral triangle of the mean face area ``area / n_faces`` (area in m2)."""
    return float(np.sqrt(4.0 * area / (np.sqrt(3.0) * max(int(n_faces), 1))))


def refine_long_edges(vertices, faces, max_edge: float, max_rounds: int = 40):
    """Bisect every edge longer than ``max_edge`` until none is left; the result is conforming.

    Each round marks the edges longer than ``max_edge``, then, until no face
    changes, the longest edge of every face with a marked edge (the closure that
    keeps the refinement conforming and the angles bounded); a face is cut at
    the midpoint of its longest edge, and each half again at the midpoint of
    its other marked edge, if any (Rivara 1984).  New vertices lie on the old
    faces, so the surface and its area are unchanged.

    Parameters
    ----------
    vertices : (n, 3) float
    faces : (m, 3) int
    max_edge : float
        Longest edge allowed, in the unit of ``vertices``.
    max_rounds : int

    Returns
    -------
    vertices : (n', 3) float
        The input vertices first, in order, then the new midpoints.
    faces : (m', 3) int
        Wound as the faces they split.
    """
    v = np.asarray(vertices, float)
    f = np.asarray(faces, np.int64)
    for _ in range(max_rounds):
        n = len(v)
        a, b = f, np.roll(f, -1, axis=1)  # half-edge k runs f[:, k] -> f[:, k + 1]
        length = np.linalg.norm(v[b] - v[a], axis=2)
        if not (length > max_edge).any():
            break
        key = np.minimum(a, b).ravel() * n + np.maximum(a, b).ravel()
        edges, eid = np.unique(key, return_inverse=True)
        eid = eid.reshape(-1, 3)
        # Longest edge of each face; ties (isosceles faces) go the same way in both faces of an edge.
        k = np.argmax(length + 1e-9 * length.max() * (eid / len(edges)), axis=1)
        rows = np.arange(len(f))
        longest = eid[rows, k]
        edge_len = np.zeros(len(edges))
        edge_len[eid.ravel()] = length.ravel()
        mark = edge_len > max_edge
        while True:
            need = mark[eid].any(axis=1) & ~mark[longest]
            if not need.any():
                break
            mark[longest[need]] = True
        mid = np.full(len(edges), -1, np.int64)
        mid[mark] = n + np.arange(int(mark.sum()))
        v = np.vstack([v, 0.5 * (v[edges[mark] // n] + v[edges[mark] % n])])
        A, B, C = f[rows, k], f[rows, (k + 1) % 3], f[rows, (k + 2) % 3]
        m0, m1, m2 = mid[longest], mid[eid[rows, (k + 1) % 3]], mid[eid[rows, (k + 2) % 3]]
        cut = m0 >= 0
        c2, k2 = cut & (m2 >= 0), cut & (m2 < 0)  # half (A, M0, C), its edge C-A cut too or not
        c1, k1 = cut & (m1 >= 0), cut & (m1 < 0)  # half (M0, B, C), its edge B-C cut too or not
        f = np.vstack([f[~cut],
                       np.column_stack([A[k2], m0[k2], C[k2]]),
                       np.column_stack([A[c2], m0[c2], m2[c2]]), np.column_stack([m0[c2], C[c2], m2[c2]]),
                       np.column_stack([m0[k1], B[k1], C[k1]]),
                       np.column_stack([m0[c1], B[c1], m1[c1]]), np.column_stack([m0[c1], m1[c1], C[c1]])])
    return v, f


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


def _nearest_among(body, q, kq):
    """Nearest points (k, 3) and their faces (k,) among the faces of the ``kq`` nearest centroids of the
    points ``q`` (k, 3)."""
    from trimesh.triangles import closest_point

    kq = min(kq, body.n_faces)
    _, idx = body.centroid_tree.query(q, k=kq)
    idx = idx.reshape(len(q), kq)
    cp = closest_point(body.triangles[idx.ravel()], np.repeat(q, kq, axis=0)).reshape(len(q), kq, 3)
    j = np.argmin(np.linalg.norm(cp - q[:, None, :], axis=2), axis=1)
    r = np.arange(len(q))
    return cp[r, j], idx[r, j]


class WorkMesh:
    """The surface the surface-aware methods solve on.

    Attributes
    ----------
    body : Body
        The working copy (the body itself when it is small enough).
    identity : bool
        True when the copy is the body itself (no simplification or refinement was needed).
    simplified, refined : bool
        Whether the copy was decimated, and whether long edges were then bisected.
    max_edge : float or None
        Longest edge allowed on the copy, m (None: no limit).
    to_full : (n_full_vertices, n_work_vertices) sparse
        Carries working-vertex values to the full mesh's vertices.
    """

    def __init__(self, body, target_faces: int = TARGET_FACES, max_edge_ratio: float | None = None):
        from .body import Body

        self.full = weakref.ref(body)
        self.target_faces = int(target_faces)
        self.simplified = body.n_faces > target_faces
        if self.simplified:
            v, f = simplify(body.vertices, body.faces, target_faces)
        else:
            v, f = body.vertices, body.faces
        self.max_edge = None
        n_given = len(v)
        if max_edge_ratio:
            self.max_edge = max_edge_ratio * mean_edge(body.area, len(f))
            v, f = refine_long_edges(v, f, self.max_edge)
        self.refined = len(v) > n_given
        self.identity = not (self.simplified or self.refined)
        if self.identity:
            self._body = None  # the full body itself (held weakly, so the cache does not keep it alive)
            self.to_full = sparse.identity(len(body.vertices), format="csr")
        else:
            self._body = Body(v, f, axles=body.axles)
            if self.simplified:
                self.to_full = barycentric_map(body.vertices, v, f)
            else:  # the body's own vertices come first in the refined copy
                n = len(body.vertices)
                self.to_full = sparse.csr_matrix((np.ones(n), (np.arange(n), np.arange(n))), shape=(n, len(v)))
        self._distance = None
        self._tap_cache = {}

    @property
    def body(self):
        return self.full() if self._body is None else self._body

    @property
    def distance(self):
        """:class:`~meshpress.bodies.geodesic.SurfaceDistance` on the working copy (built once)."""
        if self._distance is None:
            from .geodesic import SurfaceDistance

            self._distance = SurfaceDistance(self.body.vertices, self.body.faces)
        return self._distance

    def locate(self, points, exact: bool | None = None):
        """Faces (k,) and barycentric coordinates (k, 3) of surface points on the working copy.

        ``exact`` (default: for up to 2,000 points, such as taps): the nearest
        point on the copy by the exhaustive search of
        :func:`meshpress.taps.projection.nearest_on_faces`.  Otherwise (many points on
        the full surface, e.g. the integration clusters) the nearest point on the
        faces of the 16 nearest centroids, found at once; where a thin face
        whose centroid is farther is nearer still, the value comes from a face
        that is nearly as near, and the field is continuous across faces.
        """
        from trimesh.triangles import points_to_barycentric

        from ..taps.projection import nearest_on_faces

        body = self.body
        p = np.asarray(points, float).reshape(-1, 3)
        if exact is None:
            exact = len(p) <= 2000
        if exact:
            out_p, out_f, _ = nearest_on_faces(body, p)
        else:
            out_p, out_f = np.empty_like(p), np.empty(len(p), np.int64)
            for s in range(0, len(p), 4000):  # blocks bound the memory of the candidate arrays
                out_p[s:s + 4000], out_f[s:s + 4000] = _nearest_among(body, p[s:s + 4000], 16)
        return out_f, points_to_barycentric(body.triangles[out_f], out_p)

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


def work_mesh(body, target_faces: int = TARGET_FACES, max_edge_ratio: float | None = None) -> WorkMesh:
    """The (cached) working copy of ``body`` at ``target_faces`` (and ``max_edge_ratio``)."""
    per = _CACHE.setdefault(body, {})
    key = (int(target_faces), max_edge_ratio or None)
    if key not in per:
        per[key] = WorkMesh(body, target_faces, max_edge_ratio)
    return per[key]
