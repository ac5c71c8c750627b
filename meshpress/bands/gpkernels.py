"""Correlation functions of the kriging model (:mod:`meshpress.bands.kriging`): along the surface and between normals.

Two families along the surface: distance kernels of the heat-method surface
distance (:func:`kernel`) and Matérn fields of the surface's own
Laplace-Beltrami spectrum (:func:`spectral_density`); and the factor in the
angle between two places' normals (:func:`orientation_factor` of
:func:`normal_c1`).  The model and its references are in
:mod:`meshpress.bands.kriging`'s docstring.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

DISTANCE_KERNELS = ("exponential", "matern32")
SPECTRAL_KERNELS = {"lb-matern12": 0.5, "lb-matern32": 1.5, "lb-matern52": 2.5, "lb-heat": np.inf}
KERNELS = DISTANCE_KERNELS + tuple(SPECTRAL_KERNELS)
AUTO_KERNELS = ("exponential",) + tuple(SPECTRAL_KERNELS)  # candidates of kernel="auto"
ORIENTATION_KERNELS = ("se", "exponential", "matern32", "matern52")  # forms of the normals' factor (orientation_factor)
AUTO_ORIENTATION = ("se", "matern52", "matern32")  # candidates of orientation_kernel="auto"


def orientation_factor(c1, theta, form="se"):
    """The normals' factor and its derivative in ``log theta``.

    Parameters
    ----------
    c1 : array of float
        ``1 - n_i . n_j`` (0 to 2) for unit normals; the chordal distance
        between them is ``r = sqrt(2 c1)``.
    theta : float
        Scale (dimensionless).
    form : {"se", "exponential", "matern32", "matern52"}
        ``exp(-c1 / theta^2)`` (squared exponential of ``r / (sqrt(2) theta)``),
        ``exp(-r / theta)``, or the Matérn forms of smoothness 3/2 and 5/2 of
        ``r / theta`` (Rasmussen and Williams 2006, eq. 4.17).
        Each is a kernel of points in 3-D space restricted to the unit sphere,
        so positive definite there (Gneiting, Bernoulli 19, 2013, sec. 4).

    Returns
    -------
    F, dF : arrays like ``c1``
    """
    if form == "se":
        F = np.exp(-c1 / theta**2)
        return F, F * (2.0 * c1 / theta**2)
    r = np.sqrt(np.maximum(2.0 * c1, 0.0)) / theta
    if form == "exponential":
        F = np.exp(-r)
        return F, F * r
    if form == "matern32":
        e = np.exp(-np.sqrt(3.0) * r)
        return (1.0 + np.sqrt(3.0) * r) * e, 3.0 * r**2 * e
    if form == "matern52":
        s5 = np.sqrt(5.0) * r
        e = np.exp(-s5)
        return (1.0 + s5 + 5.0 * r**2 / 3.0) * e, (5.0 / 3.0) * r**2 * (1.0 + s5) * e
    raise InputError(f"orientation kernel {form!r} is not one of: {', '.join(ORIENTATION_KERNELS)}")


def normal_c1(u, v, kappa=1.0):
    """(p, q) float: half the squared chordal distance between unit normals, ``|n_i - n_j|^2 / 2``.

    With ``kappa`` the streamwise (x) component of the difference counts
    ``kappa`` times the others (``kappa = 1``: ``1 - n_i . n_j``).  This is the
    ``c1`` that :func:`orientation_factor` takes.

    Parameters
    ----------
    u : (p, 3) float
    v : (q, 3) float
        Unit normals.
    kappa : float
    """
    u, v = np.asarray(u, float), np.asarray(v, float)
    if kappa == 1.0:
        return np.maximum(1.0 - u @ v.T, 0.0)
    w = np.array([kappa, 1.0, 1.0])
    a, b = u * w, v * w
    return np.maximum(0.5 * ((a**2).sum(axis=1)[:, None] + (b**2).sum(axis=1)[None, :]) - a @ b.T, 0.0)


def kernel(r: np.ndarray, name: str = "matern32") -> np.ndarray:
    """Correlation at scaled distance ``r = d / l`` (dimensionless)."""
    if name == "matern32":
        s = np.sqrt(3.0) * r
        return (1.0 + s) * np.exp(-s)
    if name == "exponential":
        return np.exp(-r)
    raise InputError(f"kernel {name!r} is not one of: {', '.join(DISTANCE_KERNELS)}")


def spectral_density(lam: np.ndarray, length_scale: float, nu: float) -> np.ndarray:
    """Matérn spectral weights ``(2 nu / l^2 + lambda)^(-nu - 1)`` on a 2-D surface.

    Parameters
    ----------
    lam : (k,) float
        Laplace-Beltrami eigenvalues, 1/m2 (>= 0).
    length_scale : float
        m.
    nu : float
        Smoothness (0.5, 1.5, 2.5); ``inf`` gives the limit, the heat kernel
        ``exp(-l^2 lambda / 2)`` (the surface's squared-exponential kernel).
    """
    if np.isinf(nu):
        return np.exp(-0.5 * length_scale**2 * lam)
    return (2.0 * nu / length_scale**2 + lam) ** (-nu - 1.0)


def kernel_names(kernel: str) -> list:
    """The candidate kernels a ``kernel`` argument names: ``"auto"``, one name, or several comma separated."""
    return list(AUTO_KERNELS) if kernel == "auto" else [k.strip() for k in kernel.split(",")]
