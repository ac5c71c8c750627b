"""A coarse carrier surface for covariances on big bodies.

A Gaussian-process model needs the covariance between every pair of places on
the surface, and surface (geodesic) distances need a factorised Laplacian: both
grow too fast to use a million-face body directly.  The body is therefore
simplified (quadric edge collapse, Garland and Heckbert 1997, via
fast-simplification, after vertex clustering where the collapse alone stalls
or would be slow: :mod:`meshpress.bands.coarsen`) to a carrier of a few
thousand vertices.  Each carrier vertex stands for a *patch* of the body (the
fine faces that lean on it); the field is modelled by its values at the carrier
vertices, and

- a fine face's value is an inverse-distance mean of its (up to) 4 nearest
  carrier vertices whose normals agree with the face's (so the two skins of a
  thin panel do not mix), a sparse ``(m, n_c)`` matrix ``B``;
- a surface point (a tap) takes the barycentric mix of the carrier face
  nearest to it, a sparse ``(k, n_c)`` matrix.

Cost in accuracy: detail finer than the patch size (about
``sqrt(area / n_c)``) is not represented; it behaves as extra "nugget" noise at
the taps, which the kriging fit absorbs.  docs/uncertainty.md measures the
effect of ``n_c`` on the benchmark bands.
"""

from __future__ import annotations

import threading

import numpy as np
import scipy.sparse as sp


class Carrier:
    """Simplified copy of a body with all-pairs surface distances.

    Parameters
    ----------
    body : Body
    n_vertices : int
        Target number of carrier vertices (patches); the body itself is used
        when it is smaller.
    progress : Progress, optional
    simplify : {"auto", "quadric", "cluster"}
        How the body is simplified (:func:`meshpress.bands.coarsen.coarsen`):
        ``"auto"`` collapses edges and falls back on vertex clustering when
        the collapse stalls or the body is big.

    Attributes
    ----------
    vertices : (n_c, 3) float
        Carrier vertex positions, m, vehicle frame.
    faces : (f_c, 3) int
    route : str
        How the carrier was made: ``"none"`` (the body itself), ``"quadric"``,
        ``"cluster+quadric"`` or ``"cluster"``.
    normals : (n_c, 3) float
        Area-weighted unit vertex normals.
    distance : (n_c, n_c) float
        Symmetrised heat-method surface distance between carrier vertices, m.
    face_matrix : (m, n_c) scipy.sparse.csr_matrix
        Fine face values from carrier vertex values; rows sum to 1.
    """

    def __init__(self, body, n_vertices: int = 2500, *, progress=None, simplify: str = "auto"):
        from ..aside import aside_possible, start_aside
        from .coarsen import coarsen

        vc, fc, self.route = coarsen(body.vertices, body.faces, n_vertices, how=simplify,
                                     area_vectors=body.area_vectors)
        if len(vc) > 4 * n_vertices:  # only with simplify="quadric": "auto" always reaches the target
            from ..errors import InputError

            raise InputError(f"could not simplify the body below {len(vc)} vertices for the covariance "
                             f"(wanted about {n_vertices}); clean the mesh or lower its size first, or skip the "
                             "covariance: --method rbf --no-bands")
        self.body = body
        self.vertices, self.faces = vc, fc
        self.normals = _vertex_normals(vc, fc)
        self._progress = progress
        self._distance_lock = threading.Lock()
        # The distances (one heat-method solve per vertex, holding the GIL) go to a second process where
        # that is safe, while this one builds the face matrix and the spectrum; `distance` collects them.
        self._distance_job = start_aside(lambda: _surface_distances(vc, fc, None)) if aside_possible() else None
        self._distance = None
        self.face_matrix = self.points_matrix_idw(body.centroids, body.face_normals)

    @property
    def distance(self) -> np.ndarray:
        """(n_c, n_c) float: symmetrised heat-method surface distance between carrier vertices, m."""
        if self._distance is None:
            with self._distance_lock:  # the kriging candidates are fitted from two threads
                if self._distance is None:
                    job = self._distance_job
                    d = job.result() if job is not None else _surface_distances(self.vertices, self.faces,
                                                                               self._progress)
                    self._distance, self._distance_job = d, None
        return self._distance

    @distance.setter
    def distance(self, d):
        self._distance, self._distance_job = np.asarray(d, float), None

    def __getstate__(self):  # copies and pickles carry the distances, not the process making them
        self.distance
        state = dict(self.__dict__)
        state.pop("_distance_lock", None)
        state["_distance_job"] = None
        return state

    def __setstate__(self, state):
        self.__dict__.update(state)
        self._distance_lock = threading.Lock()

    @property
    def n(self) -> int:
        return len(self.vertices)

    @property
    def spacing(self) -> float:
        """Typical patch size, m: sqrt(carrier area / n_c)."""
        t = self.vertices[self.faces]
        area = 0.5 * np.linalg.norm(np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0]), axis=1).sum()
        return float(np.sqrt(area / self.n))

    def spectrum(self):
        """Laplace-Beltrami eigenpairs of the carrier, for the ``lb-`` kriging kernels.

        The cotangent Laplacian ``L`` and lumped mass ``M`` of the intrinsic
        Delaunay triangulation (robust-laplacian; Sharp and Crane, SGP 2020)
        give the generalised problem ``L phi = lambda M phi``, solved densely
        (all ``n_c`` pairs, about n_c^3 flops: seconds at 2,500 patches) as the
        symmetric ``M^-1/2 L M^-1/2``.  Cached.

        Returns
        -------
        lam : (n_c,) float
            Eigenvalues, 1/m2, >= 0 ascending.
        phi : (n_c, n_c) float
            Eigenvectors, columns orthonormal in the mass: ``phi^T M phi = I``.
        area : float
            Carrier area, m2 (``sum M``).
        """
        if getattr(self, "_spectrum", None) is None:
            import robust_laplacian
            import scipy.linalg as sla

            L, M = robust_laplacian.mesh_laplacian(self.vertices, self.faces)
            m = np.maximum(np.asarray(M.diagonal(), float), 1e-30)
            r = 1.0 / np.sqrt(m)
            A = (L.toarray() * r[:, None]) * r[None, :]
            from threadpoolctl import threadpool_limits

            # While the distances are computed in a child process, one BLAS thread here: two would only take
            # turns with the child for the two cores (measured on the demo: 2.8 s against 3.7 s).
            busy = self._distance_job is not None and self._distance is None
            with threadpool_limits(limits=1 if busy else None, user_api="blas"):
                lam, U = sla.eigh(0.5 * (A + A.T), driver="evd", overwrite_a=True, check_finite=False)
            self._spectrum = (np.maximum(lam, 0.0), U * r[:, None], float(m.sum()))
        return self._spectrum

    def points_matrix_idw(self, points, normals, k: int = 4, chunk: int = 200_000):
        """(p, n_c) sparse: inverse-distance weights of the ``k`` nearest normal-compatible carrier vertices."""
        from scipy.spatial import cKDTree

        tree = cKDTree(self.vertices)
        points = np.asarray(points, float)
        normals = np.asarray(normals, float)
        kq = min(3 * k, self.n)
        counts, cols, vals = [], [], []
        for s in range(0, len(points), chunk):
            p, nrm = points[s : s + chunk], normals[s : s + chunk]
            d, j = tree.query(p, k=kq, workers=-1)  # threads in C; same result
            d, j = d.reshape(len(p), kq), j.reshape(len(p), kq)
            ok = np.einsum("pkd,pd->pk", self.normals[j], nrm) > 0.0
            ok[:, 0] |= ~ok.any(axis=1)  # nothing compatible: take the nearest anyway
            # keep the k nearest compatible ones
            rank = np.cumsum(ok, axis=1)
            ok &= rank <= k
            w = np.where(ok, 1.0 / np.maximum(d, 1e-9) ** 2, 0.0)
            w /= w.sum(axis=1, keepdims=True)
            counts.append(ok.sum(axis=1))
            cols.append(j[ok])
            vals.append(w[ok])
        # Built as CSR directly (row by row, in order): through COO it took 0.6 s more on 1M faces.
        indptr = np.concatenate([[0], np.cumsum(np.concatenate(counts))])
        B = sp.csr_matrix((np.concatenate(vals), np.concatenate(cols), indptr), shape=(len(points), self.n))
        B.sort_indices()
        return B

    def points_matrix(self, points):
        """(p, n_c) sparse: barycentric weights on the nearest carrier face of each surface point (m)."""
        from trimesh.triangles import closest_point, points_to_barycentric
        from scipy.spatial import cKDTree

        points = np.asarray(points, float).reshape(-1, 3)
        tri = self.vertices[self.faces]
        cen = tri.mean(axis=1)
        tree = cKDTree(cen)
        kq = min(16, len(self.faces))
        _, cand = tree.query(points, k=kq)
        cand = cand.reshape(len(points), kq)
        best = np.empty(len(points), np.int64)
        bestp = np.empty((len(points), 3))
        for i, p in enumerate(points):
            c = cand[i]
            cp = closest_point(tri[c], np.repeat(p[None], len(c), axis=0))
            j = int(np.argmin(np.linalg.norm(cp - p, axis=1)))
            best[i], bestp[i] = c[j], cp[j]
        bary = np.clip(points_to_barycentric(tri[best], bestp), 0.0, 1.0)
        bary /= bary.sum(axis=1, keepdims=True)
        rows = np.repeat(np.arange(len(points)), 3)
        return sp.csr_matrix((bary.ravel(), (rows, self.faces[best].ravel())), shape=(len(points), self.n))

    def fine_weights(self, face_weights, face_matrix=None) -> np.ndarray:
        """(n_c, k) float: per-face figure weights (m, k) gathered onto the carrier, ``B^T G``.

        ``face_matrix`` replaces ``B`` (e.g. :meth:`regions_face_matrix`).
        """
        g = np.asarray(face_weights, float)
        B = self.face_matrix if face_matrix is None else face_matrix
        return np.asarray(B.T @ g)

    def regions(self, spec):
        """Carrier vertex regions and the region-respecting face matrix of a region specification.

        Parameters
        ----------
        spec : str or (m,) array, or None
            As :func:`meshpress.bodies.regions.face_regions`.

        Returns
        -------
        groups : (n_c,) int or None
        face_matrix : (m, n_c) sparse
            :attr:`face_matrix` without regions.
        """
        if spec is None:
            return None, self.face_matrix
        # Every model on this carrier (a configuration's, its baseline's, their difference's) asks for the same
        # regions: a specification string is worked out once.
        cache = self.__dict__.setdefault("_regions", {})
        if isinstance(spec, str) and spec in cache:
            return cache[spec]
        from ..bodies.regions import face_regions

        _, labels = face_regions(self.body, spec)
        groups = self.node_regions(labels)
        out = groups, self.regions_face_matrix(groups, labels)
        if isinstance(spec, str):
            cache[spec] = out
        return out

    def node_regions(self, face_labels) -> np.ndarray:
        """(n_c,) int: region of each carrier vertex from the fine faces' regions (m,) int.

        A vertex takes the region holding most area among the fine faces it
        weighs most in; a vertex no face leans on most takes the nearest face's.
        """
        labels = np.asarray(face_labels, np.int64).ravel()
        main = np.asarray(self.face_matrix.argmax(axis=1)).ravel()
        votes = sp.coo_matrix((self.body.face_areas, (main, labels)), shape=(self.n, labels.max() + 1)).toarray()
        out = votes.argmax(axis=1)
        empty = votes.max(axis=1) <= 0
        if empty.any():
            from scipy.spatial import cKDTree

            out[empty] = labels[cKDTree(self.body.centroids).query(self.vertices[empty])[1]]
        return out

    def regions_face_matrix(self, node_regions, face_labels):
        """(m, n_c) sparse: :attr:`face_matrix` with each face drawing on vertices of its own region only.

        Rows renormalised; a face whose carrier neighbours all lie in other
        regions keeps its original row.
        """
        B = self.face_matrix.tocsr(copy=True)
        labels = np.asarray(face_labels).ravel()
        rows = np.repeat(np.arange(B.shape[0]), np.diff(B.indptr))
        same = np.asarray(node_regions)[B.indices] == labels[rows]
        kept = np.bincount(rows, weights=np.where(same, B.data, 0.0), minlength=B.shape[0])
        keep_row = kept > 0
        B.data = np.where(same | ~keep_row[rows], B.data, 0.0)
        B.eliminate_zeros()
        s = np.asarray(B.sum(axis=1)).ravel()
        return sp.diags(1.0 / s) @ B

    def nearest_vertex(self, points) -> np.ndarray:
        """(p,) int: nearest carrier vertex of each point (straight line)."""
        from scipy.spatial import cKDTree

        return cKDTree(self.vertices).query(np.asarray(points, float).reshape(-1, 3))[1]


def _vertex_normals(v, f):
    t = v[f]
    a = 0.5 * np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0])
    n = np.zeros_like(v)
    for c in range(3):
        np.add.at(n, f[:, c], a)
    ln = np.linalg.norm(n, axis=1, keepdims=True)
    return n / np.maximum(ln, 1e-300)


def _surface_distances(vertices, faces, progress=None) -> np.ndarray:
    """(n, n) float: symmetrised heat-method distances between the vertices of a mesh, m."""
    from ..bodies.geodesic import SurfaceDistance

    solver = SurfaceDistance(vertices, faces)
    n = len(vertices)
    rows = range(n)
    it = progress.track(rows, n, "surface distances") if progress else rows
    d = np.empty((n, n))
    for i in it:
        d[i] = solver.from_vertex(i)
    d = 0.5 * (d + d.T)
    # Vertices the heat flow cannot reach (separate shells) come back as inf/nan: treat as far apart.
    bad = ~np.isfinite(d)
    if bad.any():
        d[bad] = 10.0 * np.nanmax(np.where(bad, np.nan, d))
    np.fill_diagonal(d, 0.0)
    return d
