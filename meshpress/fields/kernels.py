"""Kernel systems with a polynomial trend, and Rippa's closed-form leave-one-out.

An interpolant ``s(x) = sum_i c_i phi(x, y_i) + sum_j a_j p_j(x)`` fitted to
values ``d`` at the taps ``y`` solves the saddle-point system

    A [c; a] = [d; 0],   A = [[K + s I, P], [P^T, 0]]

with ``K_ij = phi(y_i, y_j)``, ``P_ij = p_j(y_i)`` and smoothing (or nugget)
``s``.  Rippa (Adv. Comput. Math. 11 (1999) 193-210) showed that the
leave-one-out residual, value minus the prediction of the interpolant fitted to
the other taps, is ``e_i = c_i / (A^-1)_ii`` for the kernel rows i; it holds for
the augmented system and with a diagonal smoothing term, so n refits cost one
inverse.
"""

from __future__ import annotations

import numpy as np


def saddle_matrix(K, P, smoothing=0.0):
    """(n + p, n + p) float: the augmented system matrix of (n, n) ``K`` and (n, p) ``P``."""
    n, p = P.shape
    A = np.zeros((n + p, n + p))
    A[:n, :n] = K + np.diag(np.broadcast_to(smoothing, (n,)))
    A[:n, n:] = P
    A[n:, :n] = P.T
    return A


def solve_with_loo(K, P, d, smoothing=0.0):
    """Solve the augmented system and give Rippa's leave-one-out residuals.

    Parameters
    ----------
    K : (n, n) float
    P : (n, p) float
    d : (n,) float
    smoothing : float or (n,) float

    Returns
    -------
    c : (n,) float
        Kernel coefficients.
    a : (p,) float
        Trend coefficients.
    loo : (n,) float
        ``d_i`` minus the prediction at tap i of the fit without tap i.
    """
    n = len(d)
    A = saddle_matrix(K, P, smoothing)
    Ainv = np.linalg.inv(A)
    z = Ainv[:, :n] @ d
    c, a = z[:n], z[n:]
    return c, a, c / np.diag(Ainv)[:n]


def solve_with_nested(K, P, d, smoothing=0.0):
    """:func:`solve_with_loo`, and for each tap the leave-one-out error of the fit without it.

    Parameters
    ----------
    K, P, d, smoothing
        As for :func:`solve_with_loo`.

    Returns
    -------
    c, a, loo
        As for :func:`solve_with_loo`.
    inner : (n,) float
        ``inner[i]``: RMS over the taps j != i of the leave-one-out residuals of
        the fit to every tap but i (module docstring); nan where that fit is
        undetermined.
    """
    n = len(d)
    A = saddle_matrix(K, P, smoothing)
    G = np.linalg.inv(A)
    z = G[:, :n] @ d
    c, a = z[:n], z[n:]
    g = np.diag(G)[:n]
    Gn = G[:n, :n]
    with np.errstate(divide="ignore", invalid="ignore"):
        # row i, column j: the fit without tap i, Rippa's residual at tap j
        E = (c[None, :] - Gn.T * (c / g)[:, None]) / (g[None, :] - Gn.T * Gn / g[:, None])
    E[np.arange(n), np.arange(n)] = np.nan
    E[~np.isfinite(E)] = np.nan
    with np.errstate(invalid="ignore"):
        ok = np.isfinite(E).sum(axis=1)
        inner = np.sqrt(np.nansum(E**2, axis=1) / np.where(ok > 0, ok, 1))
    inner[ok < n - 1] = np.nan
    return c, a, c / g, inner


def nested_residuals(loos, inners):
    """Nested leave-one-out residuals of a choice among candidate fits by the lowest LOO RMS.

    Parameters
    ----------
    loos : (m, n) float
        Leave-one-out residuals of each of m candidates (fits to all n taps).
    inners : (m, n) float
        ``inners[k, i]``: candidate k's LOO RMS without tap i (:func:`solve_with_nested`).

    Returns
    -------
    (n,) float
        For each tap i, the LOO residual of the candidate chosen without it; nan
        where no candidate could be scored without tap i.
    """
    loos, inners = np.atleast_2d(loos), np.atleast_2d(inners)
    n = loos.shape[1]
    score = np.where(np.isfinite(inners), inners, np.inf)
    pick = np.argmin(score, axis=0)
    out = loos[pick, np.arange(n)]
    return np.where(np.isfinite(score[pick, np.arange(n)]), out, np.nan)


def monomials(x, degree):
    """(k, p) float: monomials of total degree <= ``degree`` (0-2) at points (k, 3), on
    centred and scaled coordinates (as scipy does; the interpolant is unchanged)."""
    x = np.asarray(x, float)
    if degree < 0:
        return np.zeros((len(x), 0))
    cols = [np.ones(len(x))]
    if degree >= 1:
        cols += [x[:, 0], x[:, 1], x[:, 2]]
    if degree >= 2:
        cols += [x[:, i] * x[:, j] for i in range(3) for j in range(i, 3)]
    return np.column_stack(cols)


def scipy_kernel(name, r):
    """scipy.interpolate.RBFInterpolator's kernels of (scaled) distance r."""
    if name == "thin_plate_spline":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(r > 0, r**2 * np.log(np.where(r > 0, r, 1.0)), 0.0)
    return {
        "cubic": lambda r: r**3,
        "quintic": lambda r: -(r**5),
        "linear": lambda r: -r,
        "multiquadric": lambda r: -np.sqrt(r**2 + 1),
        "inverse_multiquadric": lambda r: 1 / np.sqrt(r**2 + 1),
        "inverse_quadratic": lambda r: 1 / (r**2 + 1),
        "gaussian": lambda r: np.exp(-(r**2)),
    }[name](r)


def matern(name, d, length):
    """Stationary kernels of a (geodesic) distance d (m) and length scale (m).

    ``matern32``: (1 + sqrt3 r) exp(-sqrt3 r); ``matern52``: (1 + sqrt5 r + 5/3 r^2)
    exp(-sqrt5 r); ``gaussian``: exp(-r^2/2); r = d / length (Rasmussen & Williams,
    Gaussian Processes for Machine Learning, 2006, eq. 4.17).
    """
    r = np.asarray(d, float) / length
    if name == "matern32":
        s = np.sqrt(3.0) * r
        return (1 + s) * np.exp(-s)
    if name == "matern52":
        s = np.sqrt(5.0) * r
        return (1 + s + s * s / 3.0) * np.exp(-s)
    if name == "gaussian":
        return np.exp(-0.5 * r * r)
    raise ValueError(name)


GEODESIC_KERNELS = ("matern32", "matern52", "gaussian")
