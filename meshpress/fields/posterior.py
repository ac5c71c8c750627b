"""The default field: the surface Gaussian process whose posterior also gives the bands.

One model gives both the number and its band.  The field integrated into the
loads is the posterior mean of :class:`meshpress.bands.kriging.SurfaceGP`, fitted
with the settings of ``meshpress uncertainty`` (kernel by marginal likelihood,
Newtonian trend centred on stagnation, normals' factor on); the bands of
:func:`meshpress.bands.uncertainty.compute_uncertainty` reuse this very fit.  Every
figure is linear in the face values, and the face values here are
``B @ m`` (the carrier's face matrix times the posterior mean at its nodes)
with no clamping, so the integrated figure *is* the centre of its band
(Bayesian quadrature, O'Hagan 1991; Rasmussen and Williams 2006, ch. 2).

It differs from ``kriging`` (:mod:`meshpress.fields.kriging_field`) in the
kernel choice (likelihood, not leave-one-out) and in leaving the posterior
mean unbounded; docs/accuracy.md ("The default method") measures both.
"""

from __future__ import annotations

import numpy as np

from .base import Field


class PosteriorField(Field):
    """Posterior mean of the bands' surface Gaussian process.

    Parameters
    ----------
    kernel : str
        Correlation along the surface (``"auto"``, the default: the one of
        highest marginal likelihood among :data:`meshpress.bands.gpkernels.AUTO_KERNELS`).
    patches : int
        Carrier size (patches of the covariance).
    trend : {"newtonian", "normal", None}
    orientation : bool
        Correlation also falls with the angle between the surface normals.
    orientation_kernel : str
    stagnation : {True, False, "auto"}
        Centre the Newtonian impact term on full stagnation pressure.
    q : float, optional
        Dynamic pressure, Pa (stagnation level of readings in Pa).
    tap_var : (n,) float, optional
        Stated variance of each tap's reading (taps' unit squared): the
        measurement part of the bands, which the fit takes as known noise.
    regions : str or (m,) array, optional
        Regions modelled as independent fields (:mod:`meshpress.bodies.regions`).
    carrier : Carrier, optional
        Reused when it belongs to the body being fitted.
    anisotropy : bool
        Fit a weight of the normals' streamwise part in the normals' factor.
    like : PosteriorField, optional
        A fitted field of the same body and tap positions whose model
        (kernel, hyperparameters, noise) is kept: only the readings change, so
        the face values are the same linear map of the readings (used for the
        runs of one configuration).
    """

    name = "posterior"

    def __init__(self, kernel="auto", patches=2500, trend="newtonian", orientation=True,
                 orientation_kernel="matern52", stagnation=True, q=None, tap_var=None, regions=None, carrier=None,
                 anisotropy=False, like=None):
        self.kernel = kernel
        self.patches = patches
        self.trend = trend
        self.orientation = orientation
        self.orientation_kernel = orientation_kernel
        self.stagnation = stagnation
        self.q = q
        self.tap_var = tap_var
        self.regions = regions
        self.carrier = carrier
        self.anisotropy = anisotropy
        self.like = like

    def _fit(self, body, taps, progress):
        from ..errors import InputError
        from ..bands.patches import Carrier

        if len(taps) < 3:
            raise InputError(f"the {self.name} method needs at least 3 taps, got {len(taps)}")
        like = self.like
        if like is not None and like.body_ is body and np.array_equal(like.taps_.points, taps.points):
            self.carrier_, self.groups_, self.face_matrix_ = like.carrier_, like.groups_, like.face_matrix_
            self.gp_, self.tap_var_ = like.gp_.conditioned_on(taps.values), like.tap_var_
            self.node_values_ = self.gp_.node_mean()
            return
        carrier = self.carrier
        if carrier is None or carrier.body is not body:
            carrier = Carrier(body, self.patches, progress=progress)
        tv = None if self.tap_var is None else np.asarray(self.tap_var, float).reshape(len(taps))
        gp, groups, B = fit_surface_gp(carrier, taps, tv, kernel=self.kernel, trend=self.trend,
                                       regions=self.regions, orientation=self.orientation,
                                       orientation_kernel=self.orientation_kernel, anisotropy=self.anisotropy,
                                       q=self.q, stagnation=self.stagnation)
        self.carrier_, self.groups_, self.face_matrix_, self.gp_ = carrier, groups, B, gp
        self.tap_var_ = np.zeros(len(taps)) if tv is None else tv
        self.node_values_ = gp.node_mean()

    def _face_values(self, progress):
        return np.asarray(self.face_matrix_ @ self.node_values_)

    def loo_residuals(self) -> np.ndarray:
        from .kriging_field import _loo

        self._check()
        return _loo(self.gp_)

    def describe(self) -> str:
        return getattr(self, "gp_", None) and f"posterior of {self.gp_.describe()}" or "posterior (surface GP)"


def fit_surface_gp(carrier, taps, tap_var=None, *, kernel="auto", trend="newtonian", length_scale=None,
                   regions=None, orientation=True, orientation_kernel="matern52", anisotropy=False, q=None,
                   stagnation=True):
    """Fit the bands' surface Gaussian process to the taps on a carrier.

    The one place where the model of the default field and of
    :func:`meshpress.bands.uncertainty.compute_uncertainty` is put together, so the
    two cannot drift apart.

    Parameters
    ----------
    carrier : Carrier
    taps : ProjectedTaps
        ``n`` taps with values (Cp or Pa).
    tap_var : (n,) float, optional
        Known variance of each reading (taps' unit squared); None: none stated.
    kernel, trend, length_scale, orientation, orientation_kernel, anisotropy, q, stagnation
        As :class:`PosteriorField` (``length_scale`` fixed when given).
    regions : str or (m,) array, optional

    Returns
    -------
    gp : SurfaceGP
        Fitted.
    groups : (k,) int array
        Region of each carrier node.
    B : (m, k) sparse matrix
        Carrier node values to face values.
    """
    from ..bands.gptrend import stagnation_params
    from ..bands.kriging import SurfaceGP

    groups, B = carrier.regions(regions)
    T = carrier.points_matrix(taps.points)
    gp = SurfaceGP.on_carrier(carrier, kernel=kernel, trend=trend, length_scale=length_scale, groups=groups,
                              orientation=orientation, orientation_kernel=orientation_kernel,
                              normal_anisotropy=None if anisotropy else 1.0,
                              **stagnation_params(trend, taps.kind, q, stagnation))
    gp.fit(T, taps.values, tap_var)
    return gp, groups, B


def is_posterior_model(field) -> bool:
    """True for the default model: the posterior field, or the posterior fitted part by part.

    Then the bands are the field's own (:func:`meshpress.bands.uncertainty.compute_uncertainty`
    reuses its fit), and the loads are their centre.
    """
    from .regional import RegionalField

    return isinstance(field, PosteriorField) or (isinstance(field, RegionalField) and field.method == "posterior")
