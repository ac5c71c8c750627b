"""Kriging along the surface: the Gaussian-process posterior mean as a field.

The field is the posterior mean of the surface Gaussian process of
:mod:`meshpress.kriging` (the model behind ``meshpress uncertainty``), fitted
to the taps by maximum marginal likelihood on a carrier of a few thousand
patches (:mod:`meshpress.patches`) and carried to every face by the carrier's
inverse-distance map.  Unlike the RBF methods, the length scale and the
smoothing (nugget) are learned from the taps; its estimate is the one the
uncertainty bands belong to.  Kriging with a constant mean (Matheron, Econ.
Geol. 58, 1963; Rasmussen and Williams 2006, ch. 2) plus, by default, a
trend of Newton's impact pressure on skin facing the flow and a base level
on rear-facing skin with coefficients of fitted prior variance (universal
kriging in its Bayesian form, Rasmussen and Williams sec. 2.7;
:func:`meshpress.kriging.trend_features`).

Leave-one-out residuals have a closed form, ``[S^-1 y]_i / [S^-1]_ii``
(Rasmussen and Williams eq. 5.12; Sundararajan and Keerthi, Neural Comput.
13, 2001), with ``S`` the taps' covariance at the fitted hyperparameters.
"""

from __future__ import annotations

import numpy as np

from .base import Field
from .bounds import BoundedMixin, check_extrapolation


class KrigingField(BoundedMixin, Field):
    """Posterior mean of the surface Gaussian process.

    Parameters
    ----------
    kernel : str
        Correlation along the surface (:data:`meshpress.kriging.KERNELS`,
        comma-separated candidates, or ``"auto"``).  Default ``exponential``:
        on the benchmark car it was the most accurate estimate (docs/accuracy.md).
    patches : int
        Carrier size (patches of the covariance).
    trend : {"newtonian", "normal", None}
        The mean's trend (:func:`meshpress.kriging.trend_features`):
        ``"newtonian"`` (default) adds Newton's impact pressure on skin facing
        the oncoming flow and a level on rear-facing skin, ``"normal"`` a mean
        linear in the surface normal, ``None`` a constant mean only.  On the
        benchmark car's practical layout the default took the drag error from
        -0.105 to -0.016 and became the recommended method (docs/accuracy.md).
    orientation : bool
        Correlation also falls with the angle between the surface normals
        (:class:`meshpress.kriging.SurfaceGP`).
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

    def __init__(self, kernel="exponential", patches=2500, trend="newtonian", orientation=False, extrapolation="clamp",
                 far_value=None, carrier=None, stagnation=True, orientation_kernel="se"):
        self.kernel = kernel
        self.patches = patches
        self.trend = trend
        self.orientation = orientation
        self.extrapolation = extrapolation
        self.far_value = far_value
        self.carrier = carrier
        self.stagnation = stagnation
        self.orientation_kernel = orientation_kernel

    def _fit(self, body, taps, progress):
        from ..errors import InputError
        from ..kriging import TRENDS, SurfaceGP, impact_prior, stagnation_value
        from ..patches import Carrier

        if len(taps) < 3:
            raise InputError(f"the kriging method needs at least 3 taps, got {len(taps)}")
        check_extrapolation(self.extrapolation, self.far_value)
        if self.trend not in (None,) + TRENDS:  # before the carrier, which takes seconds
            raise InputError(f"kriging trend must be one of {', '.join(TRENDS)} or none, got {self.trend!r}")
        carrier = self.carrier
        if carrier is None or carrier.body is not body:
            carrier = Carrier(body, self.patches, progress=progress)
        # Readings in Pa: the field method is not told q, so no stagnation level is known.
        stag = stagnation_value(taps.kind) if self.stagnation else None
        gp = SurfaceGP.on_carrier(carrier, kernel=self.kernel, trend=self.trend, orientation=self.orientation,
                                  orientation_kernel=self.orientation_kernel, trend_mean=impact_prior(self.trend, stag))
        gp.fit(carrier.points_matrix(taps.points), taps.values)
        self.carrier_, self.gp_ = carrier, gp
        self.node_values_ = gp.node_mean()

    def _face_values(self, progress):
        return self._bounded(np.asarray(self.carrier_.face_matrix @ self.node_values_))

    def loo_residuals(self) -> np.ndarray:
        import scipy.linalg as sla

        self._check()
        n = len(self.taps_)
        Sinv = sla.cho_solve(self.gp_.S_cho_, np.eye(n))
        return (Sinv @ self.gp_.y_) / np.diag(Sinv)  # y_: the readings less the prior mean

    def describe(self) -> str:
        return getattr(self, "gp_", None) and self.gp_.describe() or f"kriging ({self.kernel})"
