"""RBF interpolation on distance along the surface (geodesic kernels).

``s(x) = sum_i c_i phi(d(x, y_i)) + a`` with ``d`` the heat-method surface
distance (Crane, Weischedel & Wardetzky, ACM TOG 32(5), 2013; potpourri3d) from
tap ``y_i``, ``phi`` a Matern or Gaussian kernel (Rasmussen & Williams 2006,
eq. 4.17) and a constant trend ``a``: kriging with an unknown mean on a
surface.  A roof tap is then far from the floor below it, and a tap on a wing's
upper face far from the lower face.

Well-posedness.  Kernels of a geodesic distance need not be positive definite
on a curved surface (Feragen, Lauze & Hauberg, CVPR 2015), and the heat-method
distances are approximate and not exactly symmetric.  The smallest
eigenvalue ``lam`` of the tap matrix's symmetric part is checked; a ridge
``2 max(-lam, 0) + nugget * {1, 100, 10^4}`` is added to the diagonal (so the
smallest eigenvalue is at least ``|lam| + nugget``, the kernel diagonal being 1),
and the ridge with the lowest leave-one-out error is kept and reported.  The
ridge makes the fit a slight smoothing rather than an exact interpolation.

Length scale.  By default it is chosen among a geometric ladder between the
larger of the mean tap spacing and the fill distance (the furthest any point of
the surface is from a tap) and the body's size by the lowest leave-one-out error, which
Rippa's closed form (1999) makes cheap: the criterion Rippa proposed for
choosing an RBF shape parameter.

The fit is made on a simplified working copy of big meshes
(:mod:`meshpress.workmesh`); values beyond the taps tend to the fitted constant
and are bounded (:mod:`meshpress.fields.bounds`).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .base import Field
from .bounds import BoundedMixin
from .kernels import GEODESIC_KERNELS, matern, solve_with_loo
from .surface_common import TARGET_FACES, check_common, prepare


class GeodesicRBFField(BoundedMixin, Field):
    """RBF (kriging with a constant mean) on heat-method surface distance.

    Parameters
    ----------
    kernel : {"matern32", "matern52", "gaussian"}
    length : float, optional
        Kernel length scale, m; default chosen by the lowest leave-one-out error.
    nugget : float
        Smallest eigenvalue kept in the tap matrix, relative to its diagonal (>= 0).
    ridge : float, optional
        Use exactly this ridge (no choice by leave-one-out); with ``length`` given,
        the fit is then a fixed linear map of the readings.
    work_faces : int
        Face count of the working copy for big meshes.
    extrapolation : {"clamp", "decay", "none"}
    far_value : float, optional
        Value far from the taps for ``extrapolation="decay"``.
    """

    name = "geodesic"

    def __init__(self, kernel="matern52", length=None, nugget=1e-6, ridge=None, work_faces=TARGET_FACES,
                 extrapolation="clamp", far_value=None):
        self.ridge = ridge
        self.kernel = kernel
        self.length = length
        self.nugget = nugget
        self.work_faces = work_faces
        self.extrapolation = extrapolation
        self.far_value = far_value

    def _fit(self, body, taps, progress):
        if self.kernel not in GEODESIC_KERNELS:
            raise InputError(f"--kernel {self.kernel!r} is not one of the geodesic kernels: "
                             f"{', '.join(GEODESIC_KERNELS)}")
        if self.length is not None and not self.length > 0:
            raise InputError(f"--length must be positive (m), got {self.length}")
        if not self.nugget >= 0:
            raise InputError(f"--nugget must be >= 0, got {self.nugget}")
        check_common(self)
        wm, f, b = prepare(self, body, taps, progress)
        D = wm.tap_distances(taps.points, progress=progress)  # (k, n_work)
        # Dt[i, j]: from tap j (a source) to the point of tap i, exactly as the field is
        # evaluated anywhere else, so the tap system and the field are one construction.
        # The heat method is not exactly symmetric (a few % of an edge); the diagonal (a
        # tap's distance to itself through its face's corners, about half an edge) is kept.
        Dt = wm.distance.at_points(D, f, b).T
        self.work_ = wm
        self.distances_ = D
        y = taps.values
        k = len(y)
        P = np.ones((k, 1))
        if self.length is not None:
            lengths = [float(self.length)]
        else:
            nn = np.sort(Dt + np.diag(np.full(k, np.inf)), axis=1)[:, 0] if k > 1 else np.array([1.0])
            # Not below the fill distance (the furthest any vertex is from a tap): a shorter
            # kernel would fall back to the mean between rows of taps, where the taps'
            # leave-one-out error cannot see it.
            fill = float(D.min(axis=0).max())
            lo = max(float(np.mean(nn)), fill, 1e-6)
            hi = max(float(np.ptp(body.vertices, axis=0).max()), 2 * lo)
            lengths = list(np.geomspace(lo, hi, 12))
        best = None
        for ell in lengths:
            K = matern(self.kernel, Dt, ell)
            lam = float(np.linalg.eigvalsh(0.5 * (K + K.T))[0])
            # Lift an indefinite spectrum to +|lam_min|, then try nuggets on top; the
            # leave-one-out error (Rippa's closed form holds with a ridge) picks one.
            base = 2.0 * max(-lam, 0.0)
            ridges = [self.ridge] if self.ridge is not None else base + self.nugget * np.array([1.0, 1e2, 1e4])
            for ridge in ridges:
                try:
                    c, a, loo = solve_with_loo(K, P, y, ridge)
                except np.linalg.LinAlgError:
                    continue
                score = float(np.sqrt(np.mean(loo**2))) if k > 1 else 0.0
                if np.isfinite(score) and (best is None or score < best[0]):
                    best = (score, ell, c, a, loo, ridge, lam)
        if best is None:
            raise InputError("the geodesic RBF system for these taps cannot be solved; give --nugget > 0")
        _, self.length_, self.coef_, a, self.loo_, self.ridge_, self.min_eigenvalue_ = best
        self.mean_ = float(a[0])
        if self.min_eigenvalue_ < 0:
            self.warnings_.append(f"geodesic kernel matrix not positive definite (smallest eigenvalue "
                                  f"{self.min_eigenvalue_:.2e}); ridge {self.ridge_:.2e} added")

    def _vertex_values(self):
        return self.coef_ @ matern(self.kernel, self.distances_, self.length_) + self.mean_

    def _face_values(self, progress):
        return self._bounded(self.work_.vertex_to_full_faces(self._vertex_values()))

    def at_points(self, points):
        """(k,) float at surface points (k, 3): the kernel of the distances interpolated at the
        points (the same construction as the tap system, so refits match the closed-form LOO)."""
        self._check()
        f, b = self.work_.locate(points)
        d = self.work_.distance.at_points(self.distances_, f, b)
        return self.coef_ @ matern(self.kernel, d, self.length_) + self.mean_

    def loo_residuals(self):
        """(n,) float: Rippa's closed-form leave-one-out residuals (same length scale and ridge)."""
        self._check()
        return self.loo_.copy()

    def describe(self):
        return f"geodesic RBF ({self.kernel}, length {self.length_:.3g} m, ridge {self.ridge_:.1e})"
