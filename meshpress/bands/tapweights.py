"""Tap weights of each figure for fields other than the default model: figure = weights^T readings.

For a linear field method the integrated figures are linear in the tap readings; their weights give the
measurement part of another method's band.  The thin-plate RBF has them in closed form
(:func:`rbf_tap_weights`); any other linear method, by fitting unit readings (:func:`generic_tap_weights`).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError


def rbf_tap_weights(field, face_weights, *, chunk: int = 20_000) -> np.ndarray:
    """Tap weights of each figure for a fitted :class:`~meshpress.fields.rbf.RBFField`, analytically.

    These are the weights of the RBF without bounded extrapolation
    (``extrapolation="none"``): clamping to the tap range is not linear in the
    tap values.

    The RBF interpolant is linear in the data: fitting it once to the identity
    matrix (one right-hand side per tap) gives every tap's cardinal function;
    integrating those against the face weights gives ``W`` with
    ``figure = W[:, k] @ y``.  Evaluation is chunked.

    Parameters
    ----------
    field : RBFField
        Fitted.
    face_weights : (m, k) float

    Returns
    -------
    (n, k) float
    """
    import warnings

    from scipy.interpolate import RBFInterpolator

    field._check()
    body, taps = field.body_, field.taps_
    n = len(taps)
    kw = {"epsilon": field.epsilon_} if field.epsilon_ is not None else {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        card = RBFInterpolator(taps.points, np.eye(n), kernel=field.kernel, smoothing=field.smoothing,
                               degree=field.degree_, **kw)
    G = np.asarray(face_weights, float)
    if field.evaluate_at == "centroids":
        x, g = body.centroids, G
    else:
        x = body.vertices
        g = np.zeros((len(x), G.shape[1]))
        for c in range(3):
            np.add.at(g, body.faces[:, c], G / 3.0)
    W = np.zeros((n, G.shape[1]))
    for s in range(0, len(x), chunk):
        W += card(x[s : s + chunk]).T @ g[s : s + chunk]
    return W


def generic_tap_weights(field, body, taps, face_weights) -> np.ndarray:
    """Tap weights of any linear field method by fitting it to unit vectors (n fits).

    Checks linearity on a random data vector and raises if the method is not
    linear in the tap values (such a method has no single weight vector).
    """
    from copy import deepcopy

    G = np.asarray(face_weights, float)
    n = len(taps)

    def figs(y):
        f = deepcopy(field).fit(body, taps.with_values(y))
        return f.face_values() @ G

    zero = figs(np.zeros(n))
    W = np.array([figs(np.eye(n)[i]) - zero for i in range(n)])
    y = np.random.default_rng(0).normal(size=n)
    if not np.allclose(figs(y), zero + y @ W, rtol=1e-6, atol=1e-9 * (1 + np.abs(W).sum())):
        raise InputError(f"the {field.name} method is not linear in the tap values: use rbf or kriging for bands")
    return W
