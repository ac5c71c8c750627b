"""The kriging model's mean beyond a constant: a trend in the surface normal and its stagnation prior.

Used by :class:`meshpress.bands.kriging.SurfaceGP` (``trend``, ``trend_mean``) and
by the fields that share its trend (:mod:`meshpress.fields.geodesic_rbf`).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

TRENDS = ("normal", "newtonian")  # trend bases (trend_features)


def trend_features(normals, basis="normal"):
    """(n, p) float: the trend's basis functions of the unit normals.

    ``"normal"``: the normal itself (p = 3), a mean linear in the way the
    skin faces.  ``"newtonian"``: ``max(-n_x, 0)^2`` and ``max(n_x, 0)``
    (p = 2): the impact pressure of Newton's sine-squared law on skin facing
    the flow (the oncoming flow runs along +x; Cp = Cp_max cos^2 of the angle
    between the normal and the oncoming flow, Lees 1955, "modified Newtonian"
    theory; Anderson, Hypersonic and High-Temperature Gas Dynamics, ch. 3),
    and a level on rear-facing skin, where a bluff body's base sits in a
    separated wake of nearly uniform pressure (Hoerner, Fluid-Dynamic Drag,
    1965, ch. 3).  Both enter with coefficients of prior variance ``t^2``
    fitted to the taps, so they are a shape the data may use, not a value
    imposed.
    """
    n = np.asarray(normals, float)
    if basis == "normal":
        return n
    if basis == "newtonian":
        return np.column_stack([np.clip(-n[:, 0], 0.0, None) ** 2, np.clip(n[:, 0], 0.0, None)])
    raise InputError(f"trend basis must be one of {', '.join(TRENDS)}, got {basis!r}")


def impact_prior(basis, stagnation):
    """Prior mean of the trend's coefficients: Newton's impact term at full stagnation pressure.

    Parameters
    ----------
    basis : {"newtonian", "normal"}
        The trend basis (:func:`trend_features`).
    stagnation : float
        Stagnation pressure in the taps' unit: Cp = 1 in incompressible flow
        (Bernoulli, with Cp referred to the free stream's static and dynamic
        pressure), or q in Pa.

    Returns
    -------
    (p,) float or None
        ``(stagnation, 0)`` for the Newtonian basis (the impact column at the
        modified-Newtonian maximum, Lees 1955; no prior level on the base);
        None for other bases, which have no such law.
    """
    if basis != "newtonian" or stagnation is None:
        return None
    return np.array([float(stagnation), 0.0])


def stagnation_value(kind, q=None):
    """Stagnation pressure in the taps' unit: 1 for Cp, ``q`` for Pa (None when ``q`` is not known)."""
    return 1.0 if kind == "cp" else (None if q is None else float(q))


STAGNATION_SETTINGS = {"on": True, "off": False, "auto": "auto"}  # a setting's word -> the models' ``prior``


def stagnation_params(trend, kind, q, prior) -> dict:
    """The :class:`~meshpress.bands.kriging.SurfaceGP` arguments ``trend_mean`` and ``trend_mean_choice`` of a stagnation prior setting.

    Parameters
    ----------
    trend : str or None
        The trend basis (only ``"newtonian"`` has a prior mean).
    kind : {"cp", "p"}
        The taps' unit; ``q`` (Pa or None) gives the level of Pa readings.
    prior : {True, False, "auto"}
        On, off, or kept by marginal likelihood.
    """
    stag = stagnation_value(kind, q) if prior else None
    return {"trend_mean": impact_prior(trend, stag), "trend_mean_choice": prior == "auto"}
