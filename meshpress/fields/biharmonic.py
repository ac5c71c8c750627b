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

Solution.  With ``G`` the inverse of the energy matrix made definite by a tiny
shift (harmonic: ``G = (L + delta M)^-1``; biharmonic: ``G = A^-1 M A^-1``
with ``A = L + delta M``, the inverse of ``A M^-1 A = L M^-1 L + 2 delta L +
delta^2 M``, the mixed form of Jacobson et al. 2010), the minimiser is
``u = G B^T c + a`` where ``[c; a]`` solves the kriging-like saddle system
``[[B G B^T, 1], [1^T, 0]] [c; a] = [d; 0]``.  ``delta`` is set so that its
length scale ``delta^(-1/2)`` is four body lengths: it only fixes the
constant, which the trend ``a`` carries.  One sparse LU of ``A``
(scipy.sparse.linalg.splu; about four times sparser than an LU of ``L M^-1 L``)
and one or two solves per tap; constants are reproduced exactly, a region with
no tap takes the trend ``a``, and leave-one-out residuals follow in closed form
(Rippa 1999).

Convergence.  On the unit sphere the biharmonic minimiser has a closed form,
Wahba's spline (:func:`meshpress.bodies.exact.sphere_spline`); the discrete field
converges to it at second order in the edge length on uniform, lofted and
decimated meshes (``benchmarks/bench_biharmonic_convergence.py``).  What spoils
it on real meshes is their coarsest part: the field is solved on a copy whose
edges are at most ``max_edge_ratio`` mean edges (:mod:`meshpress.bodies.workmesh`).
The harmonic problem has no continuum limit with point data (a point has zero
capacity in 2-D): refined, the harmonic field tends to a constant with
logarithmic spikes at the taps; it is a bounded cross-check, not a load method
(docs/methods.md).

The biharmonic field overshoots beyond the taps; values are bounded
(:mod:`meshpress.fields.bounds`).
"""

from __future__ import annotations

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import splu

from ..errors import InputError
from .base import Field
from .bounds import BoundedMixin
from .kernels import solve_with_loo
from .surface_common import TARGET_FACES, check_common, prepare

#: Longest edge of the surface the field is solved on, in mean edges (docs/accuracy.md, "The working copy
#: and the loads": the discrete field is only as good as the mesh's coarsest part).
MAX_EDGE_RATIO = 2.0


def green_columns(vertices, faces, order: int, rhs):
    """``G @ rhs`` for the shifted inverse energy ``G`` (module docstring), with its lumped mass.

    Parameters
    ----------
    vertices : (n, 3) float
        m.
    faces : (m, 3) int
    order : {1, 2}
    rhs : (n, k) float

    Returns
    -------
    Z : (n, k) float
    M : (n, n) sparse
        Lumped mass matrix, m2.
    """
    import robust_laplacian

    v = np.asarray(vertices, float)
    L, M = robust_laplacian.mesh_laplacian(v, np.asarray(faces, np.int64))
    M = sparse.csc_matrix(M)
    size = float(np.ptp(v, axis=0).max()) * 4.0
    lu = splu(sparse.csc_matrix(L + size**-2 * M))
    Z = lu.solve(np.ascontiguousarray(rhs, dtype=float))
    if order == 2:
        Z = lu.solve(np.ascontiguousarray(M @ Z))
    return Z, M


class BiharmonicField(BoundedMixin, Field):
    """Biharmonic (``order=2``) or harmonic (``order=1``) interpolation on the mesh.

    Parameters
    ----------
    order : {1, 2}
    work_faces : int
        Face count of the working copy for big meshes.
    extrapolation : {"clamp", "decay", "none"}
    far_value : float, optional
    max_edge_ratio : float or None
        The field is solved on a copy whose edges are at most this many times the
        mean edge (:func:`meshpress.bodies.workmesh.refine_long_edges`; default 2); None
        solves on the mesh (or decimated copy) as it is.
    """

    name = "biharmonic"
    _order = 2

    def __init__(self, work_faces=TARGET_FACES, extrapolation="clamp", far_value=None,
                 max_edge_ratio=MAX_EDGE_RATIO):
        self.work_faces = work_faces
        self.extrapolation = extrapolation
        self.far_value = far_value
        self.max_edge_ratio = max_edge_ratio

    def _fit(self, body, taps, progress):
        check_common(self)
        r = self.max_edge_ratio
        if r is not None and not (isinstance(r, (int, float, np.number)) and r >= 1.0):
            raise InputError(f"max_edge_ratio must be None or a number >= 1, got {r!r}")
        wm, f, b = prepare(self, body, taps, progress)
        v, fc = wm.body.vertices, wm.body.faces
        n, k = len(v), len(taps)
        rows = np.repeat(np.arange(k), 3)
        B = sparse.csr_matrix((b.ravel(), (rows, fc[f].ravel())), shape=(k, n))
        Z, _ = green_columns(v, fc, self._order, B.T.toarray())  # (n, k) = G B^T
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
