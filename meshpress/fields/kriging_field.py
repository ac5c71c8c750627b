"""Kriging along the surface: the Gaussian-process posterior mean as a field.

The field is the posterior mean of the surface Gaussian process of
:mod:`meshpress.bands.kriging` (the model behind ``meshpress uncertainty``), fitted
to the taps by maximum marginal likelihood on a carrier of a few thousand
patches (:mod:`meshpress.bands.patches`) and carried to every face by the carrier's
inverse-distance map.  Unlike the RBF methods, the length scale and the
smoothing (nugget) are learned from the taps; its estimate is the one the
uncertainty bands belong to.  Kriging with a constant mean (Matheron, Econ.
Geol. 58, 1963; Rasmussen and Williams 2006, ch. 2) plus, by default, a
trend of Newton's impact pressure on skin facing the flow and a base level
on rear-facing skin with coefficients of fitted prior variance (universal
kriging in its Bayesian form, Rasmussen and Williams sec. 2.7;
:func:`meshpress.bands.gptrend.trend_features`).

Leave-one-out residuals have a closed form, ``[S^-1 y]_i / [S^-1]_ii``
(Rasmussen and Williams eq. 5.12; Sundararajan and Keerthi, Neural Comput.
13, 2001), with ``S`` the taps' covariance at the fitted hyperparameters.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from .base import Field
from .bounds import BoundedMixin, check_extrapolation


class KrigingField(BoundedMixin, Field):
    """Posterior mean of the surface Gaussian process.

    Parameters
    ----------
    kernel : str
        Correlation along the surface (:data:`meshpress.bands.gpkernels.KERNELS`,
        comma-separated candidates, ``"auto"`` for the one of highest marginal
        likelihood, or ``"loo"``, the default: each of
        :data:`meshpress.bands.gpkernels.AUTO_KERNELS` fitted by maximum likelihood,
        and the one of lowest leave-one-out error at the taps kept.  The
        likelihood is the right judge of the bands' model; for the estimate
        itself cross-validation is the more robust one when no kernel is quite
        right (Bachoc, Comput. Stat. Data Anal. 66, 2013), and it is the score
        ``compare`` ranks methods by.  Its nested form re-makes the choice
        without each tap (:meth:`loo_residuals_nested`).
    patches : int
        Carrier size (patches of the covariance).
    trend : {"newtonian", "normal", None}
        The mean's trend (:func:`meshpress.bands.gptrend.trend_features`):
        ``"newtonian"`` (default) adds Newton's impact pressure on skin facing
        the oncoming flow and a level on rear-facing skin, ``"normal"`` a mean
        linear in the surface normal, ``None`` a constant mean only.  On the
        benchmark car's practical layout the default took the drag error from
        -0.105 to -0.016 and became the recommended method (docs/accuracy.md).
    orientation : bool
        Correlation also falls with the angle between the surface normals
        (:class:`meshpress.bands.kriging.SurfaceGP`); default on, as in the bands.
    stagnation : {"auto", True, False}
        Centre the Newtonian impact term on Cp = 1 (Cp readings only;
        :func:`meshpress.bands.gptrend.impact_prior`); ``"auto"`` (default) keeps it
        or 0, whichever the taps' marginal likelihood prefers.
    orientation_kernel : str
        Form of the normals' factor (default ``matern52``, as in the bands).
    q : float, optional
        Dynamic pressure, Pa: the stagnation level of readings in Pa (without
        it such readings get no stagnation prior).
    extrapolation : {"clamp", "decay", "none"}
        Bounding beyond the taps, as for every method (:mod:`meshpress.fields.bounds`).
    far_value : float, optional
        The value far from every tap for ``"decay"``.
    carrier : Carrier, optional
        A carrier of the body being fitted, to reuse (``meshpress uncertainty``
        shares its own); its size then stands in for ``patches``.  Ignored for
        another body (a region's part, for example).
    """

    name = "kriging"

    def __init__(self, kernel="loo", patches=2500, trend="newtonian", orientation=True, extrapolation="clamp",
                 far_value=None, carrier=None, stagnation="auto", orientation_kernel="matern52", q=None):
        self.kernel = kernel
        self.patches = patches
        self.trend = trend
        self.orientation = orientation
        self.extrapolation = extrapolation
        self.far_value = far_value
        self.carrier = carrier
        self.stagnation = stagnation
        self.orientation_kernel = orientation_kernel
        self.q = q

    def _fit(self, body, taps, progress):
        from ..errors import InputError
        from ..bands.gpkernels import AUTO_KERNELS, SPECTRAL_KERNELS, kernel_names
        from ..bands.gptrend import TRENDS, stagnation_params
        from ..bands.kriging import SurfaceGP
        from ..bands.patches import Carrier

        if len(taps) < 3:
            raise InputError(f"the kriging method needs at least 3 taps, got {len(taps)}")
        check_extrapolation(self.extrapolation, self.far_value)
        if self.trend not in (None,) + TRENDS:  # before the carrier, which takes seconds
            raise InputError(f"kriging trend must be one of {', '.join(TRENDS)} or none, got {self.trend!r}")
        carrier = self.carrier
        if carrier is None or carrier.body is not body:
            carrier = Carrier(body, self.patches, progress=progress)
        stag = stagnation_params(self.trend, taps.kind, self.q, self.stagnation)
        T = carrier.points_matrix(taps.points)
        names = list(AUTO_KERNELS) if self.kernel == "loo" else [self.kernel]
        if any(k in SPECTRAL_KERNELS for name in names for k in kernel_names(name)):
            carrier.spectrum()  # cached: computed once, before the candidates share it

        def fit_all(orientation):
            def fit(name):
                return SurfaceGP.on_carrier(carrier, kernel=name, trend=self.trend, orientation=orientation,
                                            orientation_kernel=self.orientation_kernel, **stag).fit(T, taps.values)

            # The candidates' fits are independent and spend their time in LAPACK (which releases the GIL): two
            # at a time on a 2-core machine.
            with ThreadPoolExecutor(max_workers=min(2, len(names), os.cpu_count() or 1)) as pool:
                return list(pool.map(fit, names))

        gps = fit_all(self.orientation)
        # As for kernel="auto" (SurfaceGP.spans_body): a fit that sees the body as one constant plus noise is not
        # a candidate while another one is not such.
        ok = [gp for gp in gps if not gp.spans_body(gp.length_scale_)]
        if not ok and self.orientation:
            # Every fit with the normals' factor ran to that bound (seen with taps in one plane only, a centre
            # line: the factor then explains the taps' spread and the distance none of it): try without it.
            gps += fit_all(False)
            ok = [gp for gp in gps if not gp.spans_body(gp.length_scale_)]
        ok = ok or gps
        self.rejected_ = [gp.describe() for gp in gps if gp not in ok]
        self.loo_by_kernel_ = {f"{gp.kernel_}{'' if gp.orientation else ' (no orientation)'}": _loo(gp) for gp in ok}
        rms = [float(np.sqrt(np.mean(r**2))) for r in self.loo_by_kernel_.values()]
        self.carrier_, self.gp_ = carrier, ok[int(np.argmin(rms))]
        self.node_values_ = self.gp_.node_mean()

    def _face_values(self, progress):
        return self._bounded(np.asarray(self.carrier_.face_matrix @ self.node_values_))

    def loo_residuals(self) -> np.ndarray:
        self._check()
        return _loo(self.gp_)

    def loo_residuals_nested(self) -> np.ndarray:
        """With ``kernel="loo"``, each tap's residual under the kernel the other taps' leave-one-out error
        picks (the choice re-made without the tap; Cawley & Talbot 2010); else the plain residuals."""
        self._check()
        if len(self.loo_by_kernel_) < 2:
            return self.loo_residuals()
        R = np.array(list(self.loo_by_kernel_.values()))  # (k, n)
        sq = (R**2).sum(axis=1, keepdims=True) - R**2  # (k, n): each kernel's error without tap i
        return R[np.argmin(sq, axis=0), np.arange(R.shape[1])]

    def describe(self) -> str:
        return getattr(self, "gp_", None) and self.gp_.describe() or f"kriging ({self.kernel})"


def _loo(gp) -> np.ndarray:
    """(n,) float: closed-form leave-one-out residuals ``[S^-1 y]_i / [S^-1]_ii`` of a fitted SurfaceGP (``y``: the
    readings less the prior mean)."""
    import scipy.linalg as sla

    n = len(gp.y_)
    Sinv = sla.cho_solve(gp.S_cho_, np.eye(n))
    return (Sinv @ gp.y_) / np.diag(Sinv)
