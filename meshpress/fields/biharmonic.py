"""Harmonic and biharmonic interpolation on the mesh.

The field minimises a smoothness energy over the surface, subject to matching
the readings at the taps (Jacobson, Baran, Popovic & Sorkine, "Bounded
biharmonic weights", SIGGRAPH 2011, and Jacobson, Tosun, Sorkine & Zorin,
"Mixed finite elements for variational surface modeling", SGP 2010):

- harmonic: ``u^T L u`` (Dirichlet energy; obeys the maximum principle, so it is
  bounded by the readings, but is spiky at isolated taps on a fine mesh);
- biharmonic: ``u^T L M^-1 L u`` (Laplacian energy; smooth, the surface
  analogue of the thin-plate spline);

with ``L`` the cotangent Laplacian and ``M`` the lumped mass matrix of the
intrinsic Delaunay triangulation (robust-laplacian; Sharp & Crane, SGP 2020).
A tap inside a face constrains the barycentric combination ``B u`` of its
corners.

Solution.  With ``G = (Q + eps M)^-1`` (``Q`` the energy matrix; the tiny
``eps`` makes it invertible while keeping constants in a separate trend) the
minimiser is ``u = G B^T c + a`` where ``[c; a]`` solves the kriging-like
saddle system ``[[B G B^T, 1], [1^T, 0]] [c; a] = [d; 0]``.  One sparse LU of
``Q + eps M`` (scipy.sparse.linalg.splu) and one solve per tap; constants are
reproduced exactly, a region with no tap takes the trend ``a``, and
leave-one-out residuals follow in closed form (Rippa 1999).  ``eps`` is set so
its length scale, ``eps^(-1/(2 order))``, is several body lengths.

The biharmonic field overshoots beyond the taps; values are bounded
(:mod:`meshpress.fields.bounds`).
"""

from __future__ import annotations

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import splu

from .base import Field
from .bounds import BoundedMixin
from .kernels import solve_with_loo
from .surface_common import TARGET_FACES, check_common, prepare


def energy_matrix(vertices, faces, order: int):
    """Sparse (n, n) energy ``Q`` and lumped mass ``M`` (m2) for ``order`` 1 or 2."""
    import robust_laplacian

    L, M = robust_laplacian.mesh_laplacian(np.asarray(vertices, float), np.asarray(faces, np.int64))
    L = sparse.csc_matrix(L)
    M = sparse.csc_matrix(M)
    if order == 1:
        return L, M
    minv = sparse.diags(1.0 / np.maximum(M.diagonal(), 1e-300))
    return sparse.csc_matrix(L @ minv @ L), M


class BiharmonicField(BoundedMixin, Field):
    """Biharmonic (``order=2``) or harmonic (``order=1``) interpolation on the mesh.

    Parameters
    ----------
    order : {1, 2}
    work_faces : int
        Face count of the working copy for big meshes.
    extrapolation : {"clamp", "decay", "none"}
    far_value : float, optional
    """

    name = "biharmonic"
    _order = 2

    def __init__(self, work_faces=TARGET_FACES, extrapolation="clamp", far_value=None):
        self.work_faces = work_faces
        self.extrapolation = extrapolation
        self.far_value = far_value

    def _fit(self, body, taps, progress):
        check_common(self)
        wm, f, b = prepare(self, body, taps, progress)
        v, fc = wm.body.vertices, wm.body.faces
        n, k = len(v), len(taps)
        Q, M = energy_matrix(v, fc, self._order)
        size = float(np.ptp(v, axis=0).max()) * 4.0
        eps = size ** (-2 * self._order)
        lu = splu(sparse.csc_matrix(Q + eps * M))
        rows = np.repeat(np.arange(k), 3)
        B = sparse.csr_matrix((b.ravel(), (rows, fc[f].ravel())), shape=(k, n))
        Z = lu.solve(np.ascontiguousarray(B.T.toarray()))  # (n, k) = G B^T
        K = B @ Z
        K = 0.5 * (K + K.T)
        c, a, self.loo_ = solve_with_loo(K, np.ones((k, 1)), taps.values)
        self.work_ = wm
        self.vertex_values_ = Z @ c + a[0]

    def _face_values(self, progress):
        return self._bounded(self.work_.vertex_to_full_faces(self.vertex_values_))

    def at_points(self, points):
        self._check()
        return self.work_.at_points(self.vertex_values_, points)

    def loo_residuals(self):
        """(n,) float: closed-form leave-one-out residuals (Rippa 1999 on the tap system)."""
        self._check()
        return self.loo_.copy()

    def describe(self):
        return "biharmonic (cotangent Laplacian)" if self._order == 2 else "harmonic (cotangent Laplacian)"


class HarmonicField(BiharmonicField):
    __doc__ = BiharmonicField.__doc__
    name = "harmonic"
    _order = 1
