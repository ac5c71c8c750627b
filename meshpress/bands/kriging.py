"""Gaussian-process (kriging) model of a pressure field along the surface.

Model.  The field's values ``f`` at the carrier vertices (:mod:`meshpress.bands.patches`)
are Gaussian with covariance ``K = tau^2 + s^2 R(l)``, where the correlation
``R`` is one of two families, both *along the surface*, never the straight
line through the body:

- distance kernels ``R_ij = k(d_ij / l)`` on the heat-method surface distance
  ``d_ij``: ``exponential`` ``k(r) = exp(-r)`` and ``matern32``
  ``k(r) = (1 + sqrt(3) r) exp(-sqrt(3) r)`` (Rasmussen and Williams 2006,
  eq. 4.17);
- Matérn fields of the surface itself (``lb-matern12``, ``lb-matern32``,
  ``lb-matern52``): the solution of the stochastic PDE
  ``(2 nu / l^2 - Delta)^((nu + 1) / 2) f = white noise`` on the surface
  (Whittle 1963; Lindgren, Rue and Lindström, JRSS B 73, 2011), written with
  the eigenpairs ``Delta phi_k = -lambda_k phi_k`` of the carrier's
  Laplace-Beltrami operator as
  ``R = sum_k (2 nu / l^2 + lambda_k)^(-nu - 1) phi_k phi_k^T / c``
  (Borovitskiy, Terenin, Mostowsky and Deisenroth, NeurIPS 2020), ``c``
  making the area-mean variance 1; ``lb-heat`` is its limit nu -> infinity,
  ``exp(-l^2 lambda_k / 2)``, the heat kernel at time ``l^2 / 2`` (the
  surface's counterpart of the squared-exponential kernel).  These are positive definite by
  construction for every smoothness ``nu``, which distance kernels are not.

``kernel="auto"`` fits every family member and keeps the one of highest
marginal likelihood (type-II maximum likelihood model choice), so a smooth
field gets a smooth kernel and a rough one a rough kernel.  ``tau^2`` is a broad prior on a constant mean
(set from the data's size, so the mean is in effect estimated: the limit is
ordinary kriging).  A tap reads ``y = T f + e`` with ``T`` the tap's
barycentric row on the carrier and ``e`` independent noise of variance
``u_i^2 + nugget`` (its stated measurement variance plus a fitted nugget that
also absorbs detail finer than a patch).

Distances along a curved surface do not make every distance kernel positive definite
(Feragen, Lauze, Hauberg, CVPR 2015; on the sphere Matérn is safe only for
nu <= 1/2, Gneiting, Bernoulli 19, 2013).  A distance kernel's correlation
matrix on the carrier is therefore tried by a Cholesky factorisation and, if
that fails, shifted by the smallest power of ten times the identity that lets
it through (a bound on its most negative eigenvalue); the shift is recorded in
``clipped_``.

Fit.  ``s``, ``l`` and the nugget (at most NUGGET_MAX of ``s^2``) maximise the marginal likelihood of the taps
(Rasmussen and Williams eq. 2.30), by L-BFGS-B on their logarithms from a few
starting length scales.

Orientation.  With ``orientation=True`` the correlation is multiplied by a
factor of the angle between the two places' normals,
``exp(-(1 - n_i . n_j) / theta^2)`` (the exponential of the positive
definite linear kernel, so positive definite; on the unit sphere the
von Mises-Fisher kernel), with ``theta`` fitted with the others: the input of
the field is the place *and* the way the surface faces there.  Pressure
follows orientation (stagnation on forward-facing skin, a wake level on the
base, suction where the flow turns round an edge), so taps on the roof say
little about the nose just below it even at a short distance along the
surface.  The limit ``theta -> 0`` separates up- from down-facing skin as the
``normal`` regions do; ``theta`` large switches the factor off.  The factor
may also be a Matérn-5/2, Matérn-3/2 or exponential function of the chordal
distance ``|n_i - n_j|`` between the normals (kernels of 3-D space restricted
to the sphere, so positive definite; Gneiting 2013): less smooth in the
normal, so a field that turns sharply round a leading edge is not taken for a
smooth one (the squared exponential's smoothness makes its intervals
over-confident; Stein, Interpolation of Spatial Data, 1999, ch. 3).
``orientation_kernel="auto"`` fits :data:`~meshpress.bands.gpkernels.AUTO_ORIENTATION` and keeps the one
of highest marginal likelihood, as ``kernel="auto"`` does for the surface
kernel.  The flow direction may count more than the others: with
``normal_anisotropy=None`` the chordal distance is taken as
``sqrt(kappa^2 dn_x^2 + dn_y^2 + dn_z^2)`` with ``kappa`` fitted with the
rest (automatic relevance determination, Rasmussen and Williams 2006,
sec. 5.1; a kernel of a linear map of 3-D space, so still positive definite):
pressure follows the angle between the skin and the oncoming flow (along x)
more closely than the way the skin faces across it.  Taps use the
normal ``T n`` of their carrier row (renormalised); the joint covariance of
taps and nodes is the Schur product of two positive semi-definite matrices.

Regions.  With ``groups`` (a region label per node, :mod:`meshpress.bodies.regions`) the
correlation and the constant mean are multiplied by the indicator "same
region", ``K = (tau^2 + s^2 R) o B`` with ``B_ij = [g_i = g_j]``: the regions
are independent fields with their own means, as the ``+regions`` interpolation
methods treat them.  ``B`` is positive semi-definite, so ``K`` stays so (Schur
product theorem; Horn and Johnson, Matrix Analysis, thm. 7.5.3).  Each tap is
read from the nodes of its main node's region only.

Figures.  Every load figure is a linear functional ``a^T f`` of the field, so
its posterior is Gaussian with mean ``c^T S^-1 y`` and variance
``a^T K a - c^T S^-1 c`` where ``c = T K a`` and ``S = T K T^T + N`` (Bayesian
quadrature, O'Hagan, J. Stat. Plan. Inference 29, 1991, 245-260).

Size: this module is one class of about 600 lines. Its fit, its conditioning and its posterior share the
factorised covariance and a dozen fitted attributes; split across modules they would have to reach into each
other's state, so it is kept whole. Its correlation functions (:mod:`meshpress.bands.gpkernels`) and its trend
(:mod:`meshpress.bands.gptrend`) are apart.
"""

from __future__ import annotations

import copy

import numpy as np
import scipy.linalg as sla

from ..errors import InputError

from .gpkernels import (AUTO_KERNELS, AUTO_ORIENTATION, DISTANCE_KERNELS, KERNELS, ORIENTATION_KERNELS,
                        SPECTRAL_KERNELS, kernel, kernel_names, normal_c1, orientation_factor, spectral_density)
from .gptrend import TRENDS, trend_features

NUGGET_MAX = 0.1  # largest fitted nugget, as a fraction of the field variance


class SurfaceGP:
    """Kriging on a set of nodes (carrier vertices) along a surface.

    Parameters
    ----------
    distance : (n_c, n_c) float
        Symmetric node-to-node surface distance, m (heat method on a carrier).
        Used by the distance kernels, and by every kernel for the length
        scale's bounds.
    kernel : str
        One of :data:`~meshpress.bands.gpkernels.KERNELS`; several, comma separated, to keep the one of
        best marginal likelihood; or ``"auto"`` for :data:`~meshpress.bands.gpkernels.AUTO_KERNELS`
        (those the inputs allow).
    spectrum : (lam, phi, area), optional
        Laplace-Beltrami eigenvalues ``(k,)`` 1/m2, mass-orthonormal
        eigenvectors ``(n_c, k)`` and the surface area m2
        (:meth:`meshpress.bands.patches.Carrier.spectrum`); needed by the ``lb-``
        kernels.
    length_scale, variance, nugget : float, optional
        Fix these hyperparameters instead of fitting them (m, value unit^2,
        value unit^2).
    mean_variance : float, optional
        ``tau^2``, prior variance of the constant mean; default
        ``(10 * (|mean y| + std y))^2``.
    normals : (n_c, 3) float, optional
        Unit normals at the nodes, for the orientation factor and (see
        ``trend``) a trend ``beta . h(n)`` with ``h`` the columns of
        ``trend_basis``, ``beta ~ N(0, t^2 I)`` and ``t`` fitted by maximum
        likelihood (universal kriging in its Bayesian form; ``trend_variance_``).
    trend_variance : float, optional
        Fix ``t^2`` (value unit^2) instead of fitting it.
    groups : (n_c,) int, optional
        Region of each node: no correlation, and separate means, across
        regions.
    orientation : bool
        Multiply the correlation by the normals' factor (module docstring);
        needs ``normals``.
    normal_scale : float, optional
        Fix ``theta`` (dimensionless) instead of fitting it.
    normal_anisotropy : float or None
        ``kappa``, the weight of the normals' streamwise component in the
        factor's distance (:func:`normal_c1`): 1 (default) treats every
        direction alike, None fits it by maximum likelihood, as the ratio of
        two scales, ``theta`` across the flow and ``theta / kappa`` along it,
        each within the bounds of ``theta`` (0.1 to 10).
    orientation_kernel : {"se", "matern52", "matern32", "exponential", "auto"}
        Form of the normals' factor (:func:`orientation_factor`); ``auto``
        keeps the best of :data:`~meshpress.bands.gpkernels.AUTO_ORIENTATION` by marginal likelihood.
        (``compute_uncertainty``, ``compute_change`` and ``plan_taps``
        default to ``matern52``; this class to ``se``.)
    trend : bool, optional
        Use ``normals`` for the trend; default: yes unless ``orientation``.
    trend_basis : {"normal", "newtonian"}
        The trend's columns as functions of the normals
        (:func:`~meshpress.bands.gptrend.trend_features`): the normal itself, or Newton's impact
        pressure on forward-facing skin and a base level on rear-facing skin.
    trend_mean : (p,) float, optional
        Prior mean of the trend's coefficients ``beta`` (value unit), default
        0: ``beta ~ N(trend_mean, t^2 I)``.  The model's prior mean is then
        ``h(n) . trend_mean`` and the taps are fitted as departures from it
        (e.g. :func:`~meshpress.bands.gptrend.impact_prior`).
    trend_mean_choice : bool
        Fit the model with ``trend_mean`` and with a prior mean of 0, and
        keep the one of higher marginal likelihood (``trend_mean_used_``,
        ``trend_mean_candidates_``: negative log-likelihoods).

    Attributes (after fit)
    ----------------------
    kernel_ : str
        The kernel used (the chosen one for ``"auto"``).
    length_scale_, variance_, nugget_, mean_variance_, nll_ : float
    normal_scale_ : float
        ``theta``; ``inf`` without orientation.
    normal_anisotropy_ : float
        ``kappa`` (1 when not fitted).
    orientation_form_ : str or None
        The form of the normals' factor used (None without orientation).
    choice_ : str
        The candidate kept: the kernel, with ``/form`` when several forms were
        tried.
    candidates_ : dict
        ``{kernel: negative log marginal likelihood}`` of every kernel tried.
    rejected_ : list of str
        Candidates (named as in ``candidates_``) whose fitted length scale
        exceeds the largest node distance (not used when another one did not).
    clipped_ : float
        Diagonal shift added to a distance kernel's correlation matrix to make
        it positive definite (0 when it already was, always 0 for ``lb-``).
    """

    def __init__(self, distance, *, kernel: str = "exponential", spectrum=None, length_scale=None, variance=None,
                 nugget=None, mean_variance=None, normals=None, trend_variance=None, groups=None,
                 orientation=False, normal_scale=None, trend=None, orientation_kernel="se", trend_basis="normal",
                 trend_mean=None, trend_mean_choice=False, normal_anisotropy=1.0):
        self.distance = np.asarray(distance, float)
        self.orientation = bool(orientation)
        self.normal_scale = normal_scale
        self.normal_anisotropy = normal_anisotropy
        forms = list(AUTO_ORIENTATION) if orientation_kernel == "auto" else [orientation_kernel]
        for k in forms:
            if k not in ORIENTATION_KERNELS:
                raise InputError(f"orientation kernel {k!r} is not one of: auto, {', '.join(ORIENTATION_KERNELS)}")
        self.orientation_kernel = orientation_kernel
        self.orientation_forms = forms if self.orientation else [None]
        self.use_trend = normals is not None and (not orientation if trend is None else bool(trend))
        self.trend_basis = trend_basis
        if self.orientation and normals is None:
            raise InputError("the orientation factor needs the nodes' normals")
        self.groups = None if groups is None else np.asarray(groups).ravel()
        if self.groups is not None and len(self.groups) != len(self.distance):
            raise InputError(f"{len(self.groups)} node regions for {len(self.distance)} nodes")
        names = kernel_names(kernel)
        for k in names:
            if k not in KERNELS:
                raise InputError(f"kernel {k!r} is not one of: auto, {', '.join(KERNELS)}")
        if kernel != "auto" and spectrum is None and any(k in SPECTRAL_KERNELS for k in names):
            raise InputError(f"kernel {kernel!r} needs the surface's Laplace-Beltrami spectrum")
        self.candidate_names = [k for k in names if k in DISTANCE_KERNELS or spectrum is not None]
        self.kernel = kernel
        self.spectrum = spectrum
        self.length_scale = length_scale
        self.variance = variance
        self.nugget = nugget
        self.normals = None if normals is None else np.asarray(normals, float)
        self.basis = None if normals is None else trend_features(self.normals, trend_basis)
        self.trend_variance = trend_variance
        self.trend_mean = None if trend_mean is None else np.asarray(trend_mean, float).ravel()
        self.trend_mean_choice = bool(trend_mean_choice)
        if self.trend_mean is not None and self.basis is not None and len(self.trend_mean) != self.basis.shape[1]:
            raise InputError(f"{len(self.trend_mean)} trend means for {self.basis.shape[1]} trend columns")
        self.mean_variance = mean_variance

    @classmethod
    def on_carrier(cls, carrier, *, kernel: str = "exponential", trend: str | None = None, groups=None,
                   orientation: bool = False, orientation_kernel: str = "se", **params):
        """A model on a :class:`~meshpress.bands.patches.Carrier`: its distances, and its spectrum and normals when
        ``kernel`` and ``trend`` need them.

        Parameters
        ----------
        carrier : Carrier
        kernel : str
            As for the constructor.
        trend : {None, "normal"}
            ``"normal"`` passes the carrier's vertex normals (a normal trend).
        groups : (n_c,) int, optional
            Region of each carrier vertex (:meth:`~meshpress.bands.patches.Carrier.node_regions`).
        orientation : bool
            The normals' factor in the correlation (class docstring).
        **params
            Further constructor arguments (``length_scale`` and the others).
        """
        if trend not in (None,) + TRENDS:
            raise InputError(f"kriging trend must be one of {', '.join(TRENDS)} or none, got {trend!r}")
        needs = any(k in SPECTRAL_KERNELS for k in kernel_names(kernel))
        spectrum = carrier.spectrum() if needs else None  # first: the distances may still be on their way
        return cls(carrier.distance, kernel=kernel, spectrum=spectrum,
                   normals=carrier.normals if (trend is not None or orientation) else None, groups=groups,
                   orientation=orientation, trend=trend is not None, trend_basis=trend or "normal",
                   orientation_kernel=orientation_kernel, **params)

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

        if self.trend_mean_choice and self.trend_mean is not None and np.any(self.trend_mean):
            # Type-II maximum likelihood between the prior mean and none, as between kernels: both fits are full
            # fits; the one whose marginal likelihood of the taps is higher is kept.
            fits = []
            for mean in (self.trend_mean, None):
                g = copy.copy(self)
                g.trend_mean_choice, g.trend_mean = False, mean
                fits.append(g.fit(tap_matrix, y, noise_var, length_bounds=length_bounds))
            keep = fits[1] if fits[1].nll_ < fits[0].nll_ else fits[0]
            self.__dict__.update(keep.__dict__)
            self.trend_mean_choice, self.trend_mean = True, fits[0].trend_mean
            self.trend_mean_candidates_ = {"prior": fits[0].nll_, "none": fits[1].nll_}
            self.trend_mean_used_ = keep is fits[0]
            return self
        T = sp.csr_matrix(tap_matrix)
        y = np.asarray(y, float)
        n = len(y)
        if T.shape[0] != n:
            raise InputError(f"tap_matrix has {T.shape[0]} rows for {n} values")
        # Same-region indicators: among taps (n, n) and taps to nodes (n, n_c); all ones without regions.
        self.tap_groups_ = None
        if self.groups is not None:
            T = _snap_to_groups(T, self.groups)
            self.tap_groups_ = self.groups[np.asarray(T.argmax(axis=1)).ravel()]
        nv = np.zeros(n) if noise_var is None else np.broadcast_to(np.asarray(noise_var, float), (n,)).copy()
        # Trend on the surface normal (universal kriging, Cressie 1993 sec. 3.4; R&W sec. 2.7): forward-, rear-,
        # up- and down-facing skin see systematically different pressure (stagnation on the nose, base pressure,
        # suction over the top), which a stationary residual cannot carry into places no tap sees.
        self.TN_ = None if not self.use_trend else np.asarray(T @ self.basis)  # (n, p)
        # A prior mean h(n) . m of the trend: the taps are fitted as departures from it (prior_nodes_ at the nodes).
        self.prior_nodes_ = None
        if self.TN_ is not None and self.trend_mean is not None and np.any(self.trend_mean):
            self.prior_nodes_ = self.basis @ self.trend_mean
            y = y - self.TN_ @ self.trend_mean
        self.T_, self.y_, self.noise_var_ = T, y, nv
        self.cols_ = np.unique(T.indices)
        scale = float(np.std(y)) if n > 1 and np.std(y) > 0 else max(abs(float(np.mean(y))), 1.0)
        self.mean_variance_ = (self.mean_variance if self.mean_variance is not None
                               else (10.0 * (abs(float(np.mean(y))) + scale)) ** 2)
        if self.orientation:
            nt = np.asarray(T @ self.normals)
            self.tap_normals_ = nt / np.maximum(np.linalg.norm(nt, axis=1, keepdims=True), 1e-12)
        dmax = float(self.distance.max())
        if length_bounds is None:
            # Below the taps' own spacing the data say nothing about the correlation, and a short length
            # scale makes every integral look certain: the lower bound is the median nearest-tap distance.
            length_bounds = (self._tap_spacing(T), 3.0 * dmax)
        self.candidates_, self.rejected_ = {}, []
        best = fallback = None
        from threadpoolctl import threadpool_limits

        for name, form in [(k, o) for k in self.candidate_names for o in self.orientation_forms]:
            # The fit is hundreds of small (taps x taps) factorisations: with two BLAS threads on a 2-core machine
            # that other jobs share, the threads' hand-offs cost more than the work (measured: 83 s against 17 s
            # for the 1M-face benchmark at load 3.4), so they run on one thread.
            with threadpool_limits(limits=1, user_api="blas"):
                p, nll = self._fit_kernel(name, form, T, y, scale, dmax, length_bounds)
            key = self._candidate_key(name, form)
            self.candidates_[key] = nll
            if fallback is None or (np.isfinite(nll) and not nll >= fallback[3]):
                fallback = (name, form, p, nll)
            # A length scale beyond the largest surface distance means the kernel sees the whole body as one
            # constant plus noise: on a closed body every force of a constant is zero, so its bands collapse to
            # nothing (measured on a wing whose upper and lower taps are a few mm apart round the leading edge:
            # CL 0 +/- 2e-9 against a true 0.49).  Such a fit is not used while another kernel fits without it.
            if len(self.candidate_names) > 1 and self.length_scale is None and self.spans_body(p["l"]):
                self.rejected_.append(key)
                continue
            if best is None or (np.isfinite(nll) and not nll >= best[3]):
                best = (name, form, p, nll)
        self.kernel_, self.orientation_form_, p, self.nll_ = best or fallback
        self.length_scale_, self.variance_, self.nugget_ = p["l"], p["s2"], p["nug"]
        self.trend_variance_ = p["tn"]
        self.normal_scale_ = p["th"]
        self.normal_anisotropy_ = p["ka"]
        self._condition()
        return self

    def spans_body(self, length) -> bool:
        """Whether a length scale (m) runs past the largest node distance: the kernel then sees the whole body
        as one constant plus noise (the fit ``kernel="auto"`` sets aside while another one does not)."""
        return length >= float(self.distance.max())

    def _candidate_key(self, name, form) -> str:
        """The name of a candidate in ``candidates_``: the kernel, with ``/form`` when several forms are tried."""
        return name if len(self.orientation_forms) == 1 else f"{name}/{form}"

    @property
    def choice_(self) -> str:
        """The candidate kept, named as in ``candidates_``."""
        return self._candidate_key(self.kernel_, self.orientation_form_)

    def _tap_corr_fn(self, name, T):
        """Function ``l -> (R, dR/dlog l)``: tap-by-tap correlation ``T R(l) T^T`` and its derivative, (n, n)."""
        if name in SPECTRAL_KERNELS:
            lam, phi, area = self.spectrum
            nu = SPECTRAL_KERNELS[name]
            P = np.asarray(T @ phi)  # (n, k): each tap's eigenfunction values

            def corr(l):
                g = spectral_density(lam, l, nu)
                dlog = -(l**2) * lam if np.isinf(nu) else 4.0 * nu * (nu + 1.0) / (2.0 * nu + lam * l**2)
                gn = g * (area / g.sum())
                dlog = dlog - (g * dlog).sum() / g.sum()  # the normalisation moves with l too
                return (P * gn) @ P.T, (P * (gn * dlog)) @ P.T
            return corr
        TJ = T[:, self.cols_].tocsr()
        DJ = self.distance[np.ix_(self.cols_, self.cols_)]

        def corr(l):
            r = DJ / l
            if name == "exponential":
                k = np.exp(-r)
                dk = k * r  # d/dlog l of exp(-d/l)
            else:
                e = np.exp(-np.sqrt(3.0) * r)
                k, dk = (1.0 + np.sqrt(3.0) * r) * e, 3.0 * r**2 * e
            # sparse rows (3 weights each) times dense: cheap
            return np.asarray(TJ @ np.asarray(TJ @ k).T), np.asarray(TJ @ np.asarray(TJ @ dk).T)
        return corr

    def _fit_kernel(self, name, form, T, y, scale, dmax, length_bounds):
        n = len(y)
        corr = self._tap_corr_fn(name, T)
        fixed = {"l": self.length_scale, "s2": self.variance, "nug": self.nugget,
                 "tn": self.trend_variance if self.TN_ is not None else 0.0,
                 "th": self.normal_scale if self.orientation else np.inf}
        # kappa is fitted as theta_x = theta / kappa, the factor's scale along the flow: in (theta, kappa) the
        # likelihood of a field that follows n_x alone runs along a curved ridge (theta and kappa growing
        # together), where L-BFGS-B stalls; in (theta, theta_x) that ridge is theta -> its bound, theta_x fixed.
        fit_ka = self.orientation and self.normal_anisotropy is None
        fixed["tx"] = None if fit_ka else 0.0  # not used when kappa is fixed
        # The nugget is fitted as a fraction of the field variance, at most NUGGET_MAX: left free, a field the
        # kernel cannot follow is "explained" as pure noise, and noise averages out of every integral, so the
        # bands would shrink exactly when the model fits worst.
        # The trend's prior variance is bounded below at a tenth of the data's spread: with no tap on, say, the
        # base, the data cannot tell how much the rear-facing skin differs, and a vanishing trend would say "not
        # at all" with certainty.
        bounds = {"l": np.log(length_bounds), "s2": np.log([1e-4 * scale**2, 1e2 * scale**2]),
                  "nug": np.log([1e-8, NUGGET_MAX]), "tn": np.log([1e-2 * scale**2, 1e2 * scale**2]),
                  "th": np.log([0.1, 10.0]), "tx": np.log([0.1, 10.0])}
        free = [k for k in ("l", "s2", "nug", "tn", "th", "tx") if fixed[k] is None]
        C1 = DX2 = None
        if self.orientation:
            nt = self.tap_normals_
            C1 = normal_c1(nt, nt, 1.0)  # (n, n), 0..2: |dn|^2 / 2
            DX2 = (nt[:, :1] - nt[:, :1].T) ** 2 if fit_ka or self.normal_anisotropy != 1.0 else None  # dn_x^2
        NN = None if self.TN_ is None else self.TN_ @ self.TN_.T
        Btt = self._tap_mask()

        def unpack(theta):
            p = dict(fixed)
            for k, t in zip(free, theta):
                p[k] = float(np.exp(t))
            if fixed["nug"] is None:
                p["nug"] = p["nug"] * p["s2"]
            p["ka"] = p["th"] / p["tx"] if fit_ka else (self.normal_anisotropy or 1.0)
            return p

        def nll_grad(theta):
            """Negative log marginal likelihood (R&W eq. 2.30) and its gradient in the log parameters (eq. 5.9)."""
            p = unpack(theta)
            R, dR = corr(p["l"])
            R, dR = R * Btt, dR * Btt
            if C1 is not None:
                c1 = C1 if p["ka"] == 1.0 else C1 + 0.5 * (p["ka"] ** 2 - 1.0) * DX2  # (kappa^2 dn_x^2 + ...) / 2
                F, dF = orientation_factor(c1, p["th"], form)
                if fit_ka:
                    # F depends on c1 / theta^2 only, so dF/dc1 = -(dF/dlog theta) / (2 c1), and dc1/dlog kappa =
                    # kappa^2 dn_x^2.
                    with np.errstate(invalid="ignore", divide="ignore"):
                        dka = R * np.where(c1 > 0, -dF * (p["ka"] ** 2 * DX2) / (2.0 * c1), 0.0)  # dR/dlog kappa
                R, dR, dth = R * F, dR * F, R * dF  # dth: d R / d log theta
            S = self._tap_cov(p["s2"] * R, p["nug"], p["tn"])
            try:
                c, low = sla.cho_factor(S, lower=True, check_finite=False)
            except (np.linalg.LinAlgError, ValueError):
                return 1e25, np.zeros(len(theta))
            alpha = sla.cho_solve((c, low), y, check_finite=False)
            f = float(0.5 * y @ alpha + np.log(np.diag(c)).sum() + 0.5 * n * np.log(2 * np.pi))
            Sinv = sla.cho_solve((c, low), np.eye(n), check_finite=False)
            A = Sinv - np.outer(alpha, alpha)
            g = []
            for k in free:
                if k == "l":
                    g.append(0.5 * np.sum(A * (p["s2"] * dR)))
                elif k == "s2":
                    tr = np.sum(A * (p["s2"] * R))
                    if fixed["nug"] is None:  # the nugget is a fraction of s2 and moves with it
                        tr += p["nug"] * np.trace(A)
                    g.append(0.5 * tr)
                elif k == "nug":
                    g.append(0.5 * p["nug"] * np.trace(A))
                elif k == "th":  # with kappa fitted, theta_x stays: log kappa moves with log theta
                    g.append(0.5 * np.sum(A * (p["s2"] * (dth + dka if fit_ka else dth))))
                elif k == "tx":  # log kappa = log theta - log theta_x
                    g.append(-0.5 * np.sum(A * (p["s2"] * dka)))
                else:
                    g.append(0.5 * p["tn"] * np.sum(A * NN))
            return f, np.array(g)

        if free and n >= 3:
            from scipy.optimize import minimize

            best = None
            starts_l = [f * dmax for f in (0.1, 0.4)] if "l" in free else [None]
            for l0 in starts_l:
                x0 = []
                for k in free:
                    x0.append({"l": np.log(l0) if l0 else 0.0, "s2": np.log(scale**2),
                               "nug": np.log(1e-3), "tn": np.log(scale**2), "th": 0.0, "tx": 0.0}[k])
                x0 = np.clip(x0, [bounds[k][0] for k in free], [bounds[k][1] for k in free])
                r = minimize(nll_grad, x0, jac=True, method="L-BFGS-B",
                             bounds=[tuple(bounds[k]) for k in free], options={"maxiter": 200})
                if best is None or r.fun < best.fun:
                    best = r
            return unpack(best.x), float(best.fun)
        # Too few taps to learn from: documented defaults (a fifth of the body, the data's spread).
        p = {"l": fixed["l"] or 0.2 * dmax, "s2": fixed["s2"] or scale**2, "nug": fixed["nug"] or 1e-4 * scale**2,
             "tn": fixed["tn"] if fixed["tn"] is not None else scale**2,
             "th": fixed["th"] if fixed["th"] is not None else 1.0, "ka": self.normal_anisotropy or 1.0}
        return p, float("nan")

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
        """Log marginal likelihood of the fitted taps at the given hyperparameters (fitted kernel and theta)."""
        R = self._tap_corr_fn(self.kernel_, self.T_)(length_scale)[0] * self._tap_mask() * self._orient(True, True)
        S = self._tap_cov(variance * R, nugget, self.trend_variance_)
        c = sla.cho_factor(S, lower=True)
        a = sla.cho_solve(c, self.y_)
        return float(-0.5 * self.y_ @ a - np.log(np.diag(c[0])).sum() - 0.5 * len(self.y_) * np.log(2 * np.pi))

    def _tap_cov(self, s_r, nug, tn):
        """(n, n) float: the taps' covariance ``S``, the one place it is assembled (fit, likelihood, posterior).

        ``s_r`` is the field's part ``s^2 R`` between the taps, already with the
        region mask and the orientation factor; added here are the constant
        mean (one per region), the stated noise with the nugget ``nug`` and the
        normal trend of variance ``tn``.
        """
        S = self.mean_variance_ * self._tap_mask() + s_r + np.diag(self.noise_var_ + nug)
        if tn:
            S = S + tn * (self.TN_ @ self.TN_.T)
        return S

    @property
    def _orienting(self) -> bool:
        """Whether the fitted model holds the orientation factor (on, with a finite theta)."""
        return self.orientation and np.isfinite(getattr(self, "normal_scale_", np.inf))

    def _orient(self, rows_taps: bool, cols_taps: bool):
        """Orientation factor between taps and/or nodes at the fitted theta, or 1.0 without it."""
        if not self._orienting:
            return 1.0
        u = self.tap_normals_ if rows_taps else self.normals
        v = self.tap_normals_ if cols_taps else self.normals
        key = (self.normal_scale_, repr(self.normal_anisotropy_), self.orientation_form_)
        node_node = not rows_taps and not cols_taps
        if node_node:
            # The (n_c, n_c) factor is asked for several times per fit (about 0.25 s each at 2,500 nodes).
            hit = getattr(self, "_orient_nodes", None)
            if hit is not None and hit[0] is self.normals and hit[1] == key:
                return hit[2]
        F = orientation_factor(normal_c1(u, v, self.normal_anisotropy_), self.normal_scale_,
                               self.orientation_form_)[0]
        if node_node:
            self._orient_nodes = (self.normals, key, F)
        return F

    def _condition(self):
        """Prior covariance pieces at the fitted values, and the factorised tap covariance.

        Sets ``TK_`` (n, n_c), the prior covariance of taps and nodes, and the
        Cholesky factor of the taps' covariance ``S``.  Both are built from the
        tap-level products (``T R``, ``T R T^T``) so that they agree with the
        likelihood the fit maximised.
        """
        self.clipped_ = 0.0
        tau2, s2 = self.mean_variance_, self.variance_
        T = self.T_
        self._K = self._R = None  # the (n_c, n_c) prior is built on demand (K_)
        if self.kernel_ in SPECTRAL_KERNELS:
            lam, phi, area = self.spectrum
            g = spectral_density(lam, self.length_scale_, SPECTRAL_KERNELS[self.kernel_])
            self._phi, self._g = phi, s2 * g * (area / g.sum())
            P = np.asarray(T @ phi)
            TR = (P * self._g) @ phi.T  # s^2 T R, (n, n_c)
            TRT = (P * self._g) @ P.T
        else:
            R = kernel(self.distance / self.length_scale_, self.kernel_)
            # Smallest diagonal shift (powers of ten) that lets the Cholesky factorisation through: it bounds the
            # most negative eigenvalue and costs one factorisation per try instead of a full eigendecomposition.
            for shift in [0.0] + [10.0**e for e in range(-9, 0)]:
                try:
                    np.linalg.cholesky(R + shift * np.eye(len(R)) if shift else R)
                    break
                except np.linalg.LinAlgError:
                    continue
            if shift:
                R = R + shift * np.eye(len(R))
                self.clipped_ = shift
            self._R = s2 * R
            TR = np.asarray(T @ self._R)
            TRT = np.asarray(T @ TR.T)
        # Rows of T sum to 1, so T (tau^2 1 1^T) = tau^2 1 1^T; with regions each tap reads one region's nodes
        # only, so T (A o B) = (T A) o B_tap.
        TK = (tau2 + TR * self._orient(True, False)) * self._node_mask()
        S = self._tap_cov(TRT * self._orient(True, True) * self._tap_mask(), self.nugget_, self.trend_variance_)
        if self.trend_variance_:
            TK = TK + self.trend_variance_ * (self.TN_ @ self.basis.T)
        self.TK_ = TK
        # Round-off can break the factorisation when the taps' covariance is dominated by the constant mean
        # (e.g. readings that are all equal): a jitter growing from 1e-12 of the mean diagonal restores it.
        jitter = 0.0
        scale = float(np.mean(np.diag(S))) or 1.0
        for e in [None] + list(range(-12, -3)):
            try:
                self.S_cho_ = sla.cho_factor(S if e is None else S + (10.0**e * scale) * np.eye(len(S)), lower=True)
                jitter = 0.0 if e is None else 10.0**e * scale
                break
            except np.linalg.LinAlgError:
                continue
        else:
            raise np.linalg.LinAlgError("the taps' covariance is not positive definite")
        self.jitter_ = jitter

    def _tap_mask(self):
        """(n, n) float same-region indicator among taps, or 1.0 without regions."""
        g = self.tap_groups_
        return 1.0 if g is None else same_region(g, g)

    def _node_mask(self):
        """(n, n_c) float same-region indicator from taps to nodes, or 1.0 without regions."""
        g = self.tap_groups_
        return 1.0 if g is None else same_region(g, self.groups)

    # ------------------------------------------------------- prior pieces
    @property
    def K_(self) -> np.ndarray:
        """(n_c, n_c) float: prior covariance at the nodes."""
        self._check()
        if self._K is None:
            R = self._R if self._R is not None else (self._phi * self._g) @ self._phi.T
            K = self.mean_variance_ + R * self._orient(False, False)
            if self.groups is not None:
                K *= same_region(self.groups, self.groups)
            if self.trend_variance_:
                K += self.trend_variance_ * (self.basis @ self.basis.T)
            self._K = K
        return self._K

    def _K_dot(self, a):
        if self._K is not None or self._R is not None or self._orienting:
            return self.K_ @ a
        if self.groups is None:
            out = self.mean_variance_ * a.sum(axis=0, keepdims=True) + self._phi @ (self._g[:, None] * (self._phi.T @ a))
        else:  # (A o B) a = sum over regions r of 1_r o (A a_r), a_r = a outside r set to 0
            out = np.zeros_like(a)
            for r in np.unique(self.groups):
                m = self.groups == r
                pa = self._phi[m].T @ a[m]
                out[m] = self.mean_variance_ * a[m].sum(axis=0, keepdims=True) + self._phi[m] @ (self._g[:, None] * pa)
        if self.trend_variance_:
            out = out + self.trend_variance_ * (self.basis @ (self.basis.T @ a))
        return out

    def _K_diag(self):
        """(n_c,) float: prior variance at the nodes (the orientation factor and the region mask are 1 there)."""
        d = self.mean_variance_ + (np.diag(self._R).copy() if self._R is not None else (self._phi**2) @ self._g)
        if self.trend_variance_:
            d = d + self.trend_variance_ * (self.basis**2).sum(axis=1)
        return d

    # ------------------------------------------------------------ posterior
    def _check(self):
        if not hasattr(self, "S_cho_"):
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
            Kriging weights: ``mean = weights^T y`` (plus, with a ``trend_mean``,
            the constant ``a^T m - weights^T T m`` of the prior mean ``m``).
        """
        self._check()
        a = np.asarray(a, float).reshape(self.distance.shape[0], -1)
        c = self.TK_ @ a  # (n, k)
        w = sla.cho_solve(self.S_cho_, c)
        prior = np.einsum("ik,ik->k", a, self._K_dot(a))
        var = np.maximum(prior - np.einsum("ik,ik->k", c, w), 0.0)
        mean = w.T @ self.y_
        if self.prior_nodes_ is not None:
            mean = mean + a.T @ self.prior_nodes_
        return mean, var, w

    def conditioned_on(self, y) -> "SurfaceGP":
        """The same fitted model (kernel, hyperparameters, noise) given other readings at the same taps.

        Parameters
        ----------
        y : (n,) float
            New tap values, same unit as the fit's.

        Returns
        -------
        SurfaceGP
            A shallow copy sharing the factorised covariance; its posterior
            mean is the same linear map of ``y`` (plus the prior mean's
            constant) as this one's of the fitted readings.
        """
        self._check()
        y = np.asarray(y, float).reshape(len(self.y_))
        g = copy.copy(self)
        g.y_ = y if self.prior_nodes_ is None else y - self.TN_ @ self.trend_mean
        return g

    def node_mean(self) -> np.ndarray:
        """(n_c,) float: posterior mean at the nodes."""
        self._check()
        m = self.TK_.T @ sla.cho_solve(self.S_cho_, self.y_)
        return m if self.prior_nodes_ is None else m + self.prior_nodes_

    def node_var(self) -> np.ndarray:
        """(n_c,) float: posterior variance at the nodes."""
        self._check()
        z = sla.cho_solve(self.S_cho_, self.TK_)
        return np.maximum(self._K_diag() - np.einsum("ij,ij->j", self.TK_, z), 0.0)

    def posterior_cov(self) -> np.ndarray:
        """(n_c, n_c) float: posterior covariance at the nodes."""
        self._check()
        return self.K_ - self.TK_.T @ sla.cho_solve(self.S_cho_, self.TK_)

    def describe(self) -> str:
        trend = f", {self.trend_basis} trend sd {np.sqrt(self.trend_variance_):.3g}" if self.trend_variance_ else ""
        if trend and self.prior_nodes_ is not None:
            trend += f" about a stagnation level of {self.trend_mean[0]:.3g}"
        elif trend and getattr(self, "trend_mean_used_", True) is False:
            trend += " about 0 (the taps' likelihood preferred it to a stagnation level)"
        regions = "" if self.groups is None else f", {len(np.unique(self.groups))} independent regions"
        if self.orientation and np.isfinite(self.normal_scale_):
            ka = "" if self.normal_anisotropy_ == 1.0 else f", streamwise weight {self.normal_anisotropy_:.2g}"
            regions = f", orientation scale {self.normal_scale_:.2g} ({self.orientation_form_}{ka})" + regions
        return (f"kriging ({self.kernel_} along the surface, length {self.length_scale_:.3g} m, "
                f"sd {np.sqrt(self.variance_):.3g}, nugget sd {np.sqrt(self.nugget_):.3g}{trend}{regions})")


def same_region(a, b) -> np.ndarray:
    """(len(a), len(b)) float: 1 where region labels ``a`` (p,) and ``b`` (q,) agree, else 0."""
    a, b = np.asarray(a), np.asarray(b)
    return (a[:, None] == b[None, :]) * 1.0


def _snap_to_groups(T, groups):
    """Tap rows (n, n_c) restricted to the region of each row's largest weight, renormalised."""
    import scipy.sparse as sp

    T = sp.csr_matrix(T, dtype=float, copy=True)
    main = np.asarray(T.argmax(axis=1)).ravel()
    rows = np.repeat(np.arange(T.shape[0]), np.diff(T.indptr))
    T.data = np.where(groups[T.indices] == groups[main[rows]], T.data, 0.0)
    T.eliminate_zeros()
    s = np.asarray(T.sum(axis=1)).ravel()
    return sp.diags(1.0 / s) @ T
