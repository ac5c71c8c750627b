"""Gaussian-process (kriging) model of a pressure field along the surface.

Model.  The field's values ``f`` at the carrier vertices (:mod:`meshpress.patches`)
are Gaussian with covariance

    K_ij = tau^2 + s^2 * k(d_ij / l),   k(r) = (1 + sqrt(3) r) exp(-sqrt(3) r)

(Matérn nu = 3/2, Rasmussen and Williams 2006, eq. 4.17) with ``d_ij`` the
heat-method distance *along the surface* between carrier vertices, never the
straight line through the body.  ``tau^2`` is a broad prior on a constant mean
(set from the data's size, so the mean is in effect estimated: the limit is
ordinary kriging).  A tap reads ``y = T f + e`` with ``T`` the tap's
barycentric row on the carrier and ``e`` independent noise of variance
``u_i^2 + nugget`` (its stated measurement variance plus a fitted nugget that
also absorbs detail finer than a patch).

Distances along a curved surface do not make every kernel positive definite
(Feragen, Lauze, Hauberg, CVPR 2015; on the sphere Matérn is safe only for
nu <= 1/2, Gneiting, Bernoulli 19, 2013).  The carrier covariance is therefore
checked by its eigenvalues and negative ones are clipped to zero (the nearest
positive semi-definite matrix in the Frobenius norm, Higham 1988); the size of
the clipped part is recorded in ``clipped_``.

Fit.  ``s``, ``l`` and the nugget (at most NUGGET_MAX of ``s^2``) maximise the marginal likelihood of the taps
(Rasmussen and Williams eq. 2.30), by L-BFGS-B on their logarithms from a few
starting length scales.

Figures.  Every load figure is a linear functional ``a^T f`` of the field, so
its posterior is Gaussian with mean ``c^T S^-1 y`` and variance
``a^T K a - c^T S^-1 c`` where ``c = T K a`` and ``S = T K T^T + N`` (Bayesian
quadrature, O'Hagan, J. Stat. Plan. Inference 29, 1991, 245-260).
"""

from __future__ import annotations

import numpy as np
import scipy.linalg as sla

from .errors import InputError

KERNELS = ("matern32", "exponential")
NUGGET_MAX = 0.1  # largest fitted nugget, as a fraction of the field variance


def kernel(r: np.ndarray, name: str = "matern32") -> np.ndarray:
    """Correlation at scaled distance ``r = d / l`` (dimensionless)."""
    if name == "matern32":
        s = np.sqrt(3.0) * r
        return (1.0 + s) * np.exp(-s)
    if name == "exponential":
        return np.exp(-r)
    raise InputError(f"kernel {name!r} is not one of: {', '.join(KERNELS)}")


class SurfaceGP:
    """Kriging on a set of nodes with a given distance matrix.

    Parameters
    ----------
    distance : (n_c, n_c) float
        Symmetric node-to-node distance, m (surface distance on a carrier).
    kernel : {"matern32", "exponential"}
    length_scale, variance, nugget : float, optional
        Fix these hyperparameters instead of fitting them (m, value unit^2,
        value unit^2).
    mean_variance : float, optional
        ``tau^2``, prior variance of the constant mean; default
        ``(10 * (|mean y| + std y))^2``.

    Attributes (after fit)
    ----------------------
    length_scale_, variance_, nugget_, mean_variance_ : float
    clipped_ : float
        Diagonal shift added to the carrier correlation matrix to make it
        positive definite (0 when it already was).
    """

    def __init__(self, distance, *, kernel: str = "exponential", length_scale=None, variance=None, nugget=None,
                 mean_variance=None):
        self.distance = np.asarray(distance, float)
        if kernel not in KERNELS:
            raise InputError(f"kernel {kernel!r} is not one of: {', '.join(KERNELS)}")
        self.kernel = kernel
        self.length_scale = length_scale
        self.variance = variance
        self.nugget = nugget
        self.mean_variance = mean_variance

    # ------------------------------------------------------------------ fit
    def fit(self, tap_matrix, y, noise_var=None, *, length_bounds=None):
        """Fit the hyperparameters to tap readings by maximum likelihood.

        Parameters
        ----------
        tap_matrix : (n, n_c) sparse or dense
            Row i: weights of the nodes giving tap i (barycentric on the carrier).
        y : (n,) float
            Tap values (Pa or Cp).
        noise_var : (n,) float, optional
            Stated measurement variance of each tap, value unit^2 (default 0).
        length_bounds : (float, float), optional
            Bounds of the length scale, m; default (median distance from a tap
            to its nearest neighbour, 3 * largest distance).
        """
        import scipy.sparse as sp

        T = sp.csr_matrix(tap_matrix)
        y = np.asarray(y, float)
        n = len(y)
        if T.shape[0] != n:
            raise InputError(f"tap_matrix has {T.shape[0]} rows for {n} values")
        nv = np.zeros(n) if noise_var is None else np.broadcast_to(np.asarray(noise_var, float), (n,)).copy()
        self.T_, self.y_, self.noise_var_ = T, y, nv
        self.cols_ = np.unique(T.indices)
        TJ = T[:, self.cols_].tocsr()
        DJ = self.distance[np.ix_(self.cols_, self.cols_)]
        scale = float(np.std(y)) if n > 1 and np.std(y) > 0 else max(abs(float(np.mean(y))), 1.0)
        self.mean_variance_ = (self.mean_variance if self.mean_variance is not None
                               else (10.0 * (abs(float(np.mean(y))) + scale)) ** 2)
        dmax = float(self.distance.max())
        if length_bounds is None:
            # Below the taps' own spacing the data say nothing about the correlation, and a short length
            # scale makes every integral look certain: the lower bound is the median nearest-tap distance.
            length_bounds = (self._tap_spacing(T), 3.0 * dmax)
        fixed = {"l": self.length_scale, "s2": self.variance, "nug": self.nugget}
        # The nugget is fitted as a fraction of the field variance, at most NUGGET_MAX: left free, a field the
        # kernel cannot follow is "explained" as pure noise, and noise averages out of every integral, so the
        # bands would shrink exactly when the model fits worst.
        bounds = {"l": np.log(length_bounds), "s2": np.log([1e-4 * scale**2, 1e2 * scale**2]),
                  "nug": np.log([1e-8, NUGGET_MAX])}
        free = [k for k in ("l", "s2", "nug") if fixed[k] is None]

        def unpack(theta):
            p = dict(fixed)
            for k, t in zip(free, theta):
                p[k] = float(np.exp(t))
            if fixed["nug"] is None:
                p["nug"] = p["nug"] * p["s2"]
            return p

        def nll(theta):
            p = unpack(theta)
            S = self._tap_cov(TJ, DJ, p["l"], p["s2"], p["nug"], nv)
            try:
                c, low = sla.cho_factor(S, lower=True, check_finite=False)
            except np.linalg.LinAlgError:
                return 1e25
            alpha = sla.cho_solve((c, low), y, check_finite=False)
            return float(0.5 * y @ alpha + np.log(np.diag(c)).sum() + 0.5 * n * np.log(2 * np.pi))

        if free and n >= 3:
            from scipy.optimize import minimize

            best = None
            starts_l = [f * dmax for f in (0.1, 0.4)] if "l" in free else [None]
            for l0 in starts_l:
                x0 = []
                for k in free:
                    x0.append({"l": np.log(l0) if l0 else 0.0, "s2": np.log(scale**2),
                               "nug": np.log(1e-3)}[k])
                x0 = np.clip(x0, [bounds[k][0] for k in free], [bounds[k][1] for k in free])
                r = minimize(nll, x0, method="L-BFGS-B", bounds=[tuple(bounds[k]) for k in free],
                             options={"maxiter": 80})
                self._runs = getattr(self, "_runs", []) + [(r.fun, r.nfev, r.message, np.exp(r.x))]
                if best is None or r.fun < best.fun:
                    best = r
            p = unpack(best.x)
            self.nll_ = float(best.fun)
        else:
            # Too few taps to learn from: documented defaults (a fifth of the body, the data's spread).
            p = {"l": fixed["l"] or 0.2 * dmax, "s2": fixed["s2"] or scale**2, "nug": fixed["nug"] or 1e-4 * scale**2}
            self.nll_ = float("nan")
        self.length_scale_, self.variance_, self.nugget_ = p["l"], p["s2"], p["nug"]
        self._condition()
        return self

    def _tap_spacing(self, T) -> float:
        """Median surface distance from each tap's main node to the nearest other tap's, m."""
        main = np.asarray(T.argmax(axis=1)).ravel()
        if len(main) < 2:
            return 0.05 * float(self.distance.max())
        d = self.distance[np.ix_(main, main)].copy()
        np.fill_diagonal(d, np.inf)
        nn = d.min(axis=1)
        nn = nn[np.isfinite(nn) & (nn > 0)]
        return float(np.median(nn)) if nn.size else 0.05 * float(self.distance.max())

    def log_marginal_likelihood(self, length_scale, variance, nugget) -> float:
        """Log marginal likelihood of the fitted taps at the given hyperparameters."""
        TJ = self.T_[:, self.cols_].tocsr()
        DJ = self.distance[np.ix_(self.cols_, self.cols_)]
        S = self._tap_cov(TJ, DJ, length_scale, variance, nugget, self.noise_var_)
        c = sla.cho_factor(S, lower=True)
        a = sla.cho_solve(c, self.y_)
        return float(-0.5 * self.y_ @ a - np.log(np.diag(c[0])).sum() - 0.5 * len(self.y_) * np.log(2 * np.pi))

    def _tap_cov(self, TJ, DJ, l, s2, nug, nv):
        K = self.mean_variance_ + s2 * kernel(DJ / l, self.kernel)
        A = np.asarray(TJ @ K)  # sparse rows (3 weights each) times dense: cheap
        return np.asarray(TJ @ A.T) + np.diag(nv + nug)

    def _condition(self):
        """Carrier covariance at the fitted values, clipped to positive semi-definite."""
        R = kernel(self.distance / self.length_scale_, self.kernel)
        # Smallest diagonal shift (powers of ten) that lets the Cholesky factorisation through: it bounds the
        # most negative eigenvalue and costs one factorisation per try instead of a full eigendecomposition.
        self.clipped_ = 0.0
        for shift in [0.0] + [10.0**e for e in range(-9, 0)]:
            try:
                np.linalg.cholesky(R + shift * np.eye(len(R)) if shift else R)
                break
            except np.linalg.LinAlgError:
                continue
        if shift:
            R = R + shift * np.eye(len(R))
            self.clipped_ = shift
        self.K_ = self.mean_variance_ + self.variance_ * R
        TK = np.asarray(self.T_ @ self.K_)  # (n, n_c)
        S = np.asarray(self.T_ @ TK.T) + np.diag(self.noise_var_ + self.nugget_)
        self.TK_ = TK
        self.S_cho_ = sla.cho_factor(S, lower=True)

    # ------------------------------------------------------------ posterior
    def _check(self):
        if not hasattr(self, "K_"):
            raise RuntimeError("SurfaceGP is not fitted; call fit(tap_matrix, y) first")

    def figures(self, a):
        """Posterior of linear functionals ``a^T f`` (Bayesian quadrature).

        Parameters
        ----------
        a : (n_c,) or (n_c, k) float
            Node weights of each figure.

        Returns
        -------
        mean : (k,) float
        var : (k,) float
            Posterior variance (includes the tap noise and the nugget).
        weights : (n, k) float
            Kriging weights: ``mean = weights^T y``.
        """
        self._check()
        a = np.asarray(a, float).reshape(self.distance.shape[0], -1)
        c = self.TK_ @ a  # (n, k)
        w = sla.cho_solve(self.S_cho_, c)
        prior = np.einsum("ik,ik->k", a, self.K_ @ a)
        var = np.maximum(prior - np.einsum("ik,ik->k", c, w), 0.0)
        return w.T @ self.y_, var, w

    def node_mean(self) -> np.ndarray:
        """(n_c,) float: posterior mean at the nodes."""
        self._check()
        return self.TK_.T @ sla.cho_solve(self.S_cho_, self.y_)

    def node_var(self) -> np.ndarray:
        """(n_c,) float: posterior variance at the nodes."""
        self._check()
        z = sla.cho_solve(self.S_cho_, self.TK_)
        return np.maximum(np.diag(self.K_) - np.einsum("ij,ij->j", self.TK_, z), 0.0)

    def posterior_cov(self) -> np.ndarray:
        """(n_c, n_c) float: posterior covariance at the nodes."""
        self._check()
        return self.K_ - self.TK_.T @ sla.cho_solve(self.S_cho_, self.TK_)

    def describe(self) -> str:
        return (f"kriging ({self.kernel} on surface distance, length {self.length_scale_:.3g} m, "
                f"sd {np.sqrt(self.variance_):.3g}, nugget sd {np.sqrt(self.nugget_):.3g})")
