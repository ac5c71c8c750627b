"""Straight-line radial-basis-function interpolation (scipy's RBFInterpolator).

The field is ``s(x) = sum_i w_i phi(|x - y_i|) + P(x)`` with ``y_i`` the tap
positions and ``P`` a polynomial (degree 1 by default for the thin-plate
spline, ``phi(r) = r^2 log r``; Duchon 1977; scipy.interpolate.RBFInterpolator).

Taps that all lie in one plane (a centre-line row) leave the linear term across
that plane undetermined: this is detected before fitting and the polynomial is
lowered to a constant, with a warning.

Evaluation is chunked (``chunk`` points at a time) so memory stays bounded on a
million faces.  By default the field is evaluated at the vertices and each face
takes the mean of its three corners, which is the exact face mean of the
piecewise-linear interpolant of the vertex values and needs about half as many
kernel evaluations as face centres on a closed mesh.

Beyond the outermost taps the values are bounded (:mod:`meshpress.fields.bounds`;
clamped to the range of the readings by default).  Leave-one-out residuals use
Rippa's closed form (Adv. Comput. Math. 11 (1999) 193-210) on the augmented
saddle-point system, ``e_i = c_i / (A^-1)_ii`` (:mod:`meshpress.fields.kernels`).

Straight-line distance ignores the surface: a tap on the upper face of a wing
is "near" the lower face 20 mm below it.  Use a surface-aware method (geodesic,
biharmonic, nearest) or regions on thin parts (docs/methods.md).
"""

from __future__ import annotations

import warnings

import numpy as np

from ..errors import InputError
from ..tolerances import TOL
from .base import Field
from .bounds import BoundedMixin, check_extrapolation
from .kernels import monomials, scipy_kernel, solve_with_loo

KERNELS = ("thin_plate_spline", "cubic", "quintic", "linear", "multiquadric",
           "inverse_multiquadric", "inverse_quadratic", "gaussian")
_SHAPE_KERNELS = {"multiquadric", "inverse_multiquadric", "inverse_quadratic", "gaussian"}


def affine_rank(points: np.ndarray) -> int:
    """Dimension (0-3) of the affine hull of ``points`` (n, 3), with the
    relative tolerance ``TOL.coplanar_rel``."""
    if len(points) < 2:
        return 0
    c = points - points.mean(axis=0)
    s = np.linalg.svd(c, compute_uv=False)
    if s[0] == 0:
        return 0
    return int(np.sum(s > TOL.coplanar_rel * s[0]))


class RBFField(BoundedMixin, Field):
    """Straight-line (3D Euclidean) RBF interpolation.

    Parameters
    ----------
    kernel : str
        One of scipy's RBF kernels; default thin-plate spline.
    smoothing : float
        Smoothing parameter (0 interpolates the taps exactly).
    epsilon : float, optional
        Shape parameter, 1/m, for the kernels that need one (default 1/(mean
        tap spacing)).
    degree : int, optional
        Polynomial degree; default scipy's for the kernel (1 for thin-plate).
    evaluate_at : {"vertices", "centroids"}
        Where the field is evaluated to get face values.
    chunk : int
        Evaluation points per chunk.
    extrapolation : {"clamp", "decay", "none"}
        Bound on values beyond the taps (:func:`~meshpress.fields.bounds.bound_values`).
    far_value : float, optional
        Value far from every tap, for ``extrapolation="decay"``.
    """

    name = "rbf"

    def __init__(self, kernel="thin_plate_spline", smoothing=0.0, epsilon=None, degree=None,
                 evaluate_at="vertices", chunk=50_000, extrapolation="clamp", far_value=None):
        self.kernel = kernel
        self.smoothing = smoothing
        self.epsilon = epsilon
        self.degree = degree
        self.evaluate_at = evaluate_at
        self.chunk = chunk
        self.extrapolation = extrapolation
        self.far_value = far_value

    def _fit(self, body, taps, progress):
        from scipy.interpolate import RBFInterpolator

        if self.kernel not in KERNELS:
            raise InputError(f"--kernel {self.kernel!r} is not one of: {', '.join(KERNELS)}")
        if self.smoothing < 0:
            raise InputError(f"smoothing must be >= 0, got {self.smoothing}")
        if self.evaluate_at not in ("vertices", "centroids"):
            raise InputError(f"evaluate_at must be 'vertices' or 'centroids', got {self.evaluate_at!r}")
        check_extrapolation(self.extrapolation, self.far_value)
        y = taps.points
        if len(y) < 1:
            raise InputError("no taps to interpolate")
        degree = self.degree
        if degree is None:
            degree = 1 if self.kernel in ("thin_plate_spline", "cubic", "linear") else 0
            if self.kernel == "quintic":
                degree = 2
        rank = affine_rank(y)
        need = {0: 1, 1: 4, 2: 10}.get(degree, 1)
        if degree >= 1 and rank < 3:
            what = {0: "coincide", 1: "lie on one line", 2: "lie in one plane (e.g. a centre-line row)"}[rank]
            self.warnings_.append(
                f"the taps {what}, so a linear trend across them cannot be determined; "
                "the RBF's polynomial term was lowered to a constant"
            )
            degree = 0
        if len(y) < need:
            degree = 0
        eps = self.epsilon
        if eps is None and self.kernel in _SHAPE_KERNELS:
            from scipy.spatial import cKDTree

            d, _ = cKDTree(y).query(y, k=2) if len(y) > 1 else (np.ones((1, 2)), None)
            eps = 1.0 / max(float(np.mean(d[:, 1])), 1e-6)
        kw = {"epsilon": eps} if eps is not None else {}
        with warnings.catch_warnings():
            # scipy warns when the degree is below the kernel's minimum; we chose that knowingly.
            warnings.simplefilter("ignore", UserWarning)
            try:
                self.interpolator_ = RBFInterpolator(
                    y, taps.values, kernel=self.kernel, smoothing=self.smoothing, degree=degree, **kw
                )
            except (np.linalg.LinAlgError, ValueError) as exc:
                raise InputError(f"the RBF system for these taps cannot be solved ({exc}); "
                                 "try --smoothing > 0 or another kernel") from None
        self.degree_ = degree
        self.epsilon_ = eps

    def at_points(self, points):
        self._check()
        x = np.asarray(points, dtype=float).reshape(-1, 3)
        return self._evaluate(x, None)

    def _evaluate(self, x, progress, label="interpolating"):
        out = np.empty(len(x))
        starts = range(0, len(x), self.chunk)
        it = progress.track(starts, len(starts), label) if progress else starts
        for s in it:
            out[s : s + self.chunk] = self.interpolator_(x[s : s + self.chunk])
        return out

    def _face_values(self, progress):
        body = self.body_
        if self.evaluate_at == "centroids":
            return self._bounded(self._evaluate(body.centroids, progress))
        v = self._evaluate(body.vertices, progress)
        return self._bounded(v[body.faces].mean(axis=1))

    def loo_residuals(self):
        """(n,) float: Rippa's closed-form leave-one-out residuals (value minus prediction).

        Built on the same system as scipy's solver (kernel of ``epsilon * r``,
        polynomial of the degree used, smoothing on the diagonal).
        """
        self._check()
        y = self.taps_.points
        eps = 1.0 if self.epsilon_ is None else self.epsilon_
        r = np.linalg.norm(y[:, None, :] - y[None, :, :], axis=2) * eps
        K = scipy_kernel(self.kernel, r)
        c = y - y.mean(axis=0)
        scale = float(np.abs(c).max()) or 1.0
        P = monomials(c / scale, self.degree_)
        _, _, loo = solve_with_loo(K, P, self.taps_.values, self.smoothing)
        return loo

    def describe(self):
        s = f"rbf ({self.kernel}, degree {self.degree_}, smoothing {self.smoothing:g})"
        return s
