"""Integrating face pressures into force and moment.

Per face: ``dF = -(p - p_ref) n dA`` with n the outward unit normal, and
``dM = (r - r0) x dF`` with r the face centroid.  Both are linear in the face
values, which later modules use for uncertainty.
"""

from __future__ import annotations

import numpy as np


def face_forces(area_vectors: np.ndarray, values: np.ndarray, p_ref: float = 0.0) -> np.ndarray:
    """(m, 3) float: ``-(p - p_ref) * n dA`` for every face.

    Parameters
    ----------
    area_vectors : (m, 3) float
        Outward normal times area, m2.
    values : (m,) float
        Face pressure, Pa (or Cp, giving force per unit q, m2).
    p_ref : float
        Reference pressure subtracted from every face, same unit as values.
    """
    return -(np.asarray(values, float) - p_ref)[:, None] * area_vectors


def force_and_moment(area_vectors, centroids, values, r0=(0.0, 0.0, 0.0), p_ref=0.0):
    """Total force and moment about ``r0``.

    Parameters
    ----------
    area_vectors : (m, 3) float
        n dA, m2.
    centroids : (m, 3) float
        Face centroids, m.
    values : (m,) float
        Face pressure, Pa (or Cp).
    r0 : (3,) float
        Moment reference point, m.
    p_ref : float

    Returns
    -------
    F : (3,) float
        Force, N (or m2 per unit q for Cp).
    M : (3,) float
        Moment about r0, N m (or m3 per unit q).
    """
    w = -(np.asarray(values, float) - p_ref)
    F = w @ area_vectors
    # sum (r - r0) x (w n dA) = (sum w r x n dA) - r0 x F, avoiding an (m, 3) temporary per term.
    M = w @ np.cross(centroids, area_vectors) - np.cross(np.asarray(r0, float), F)
    return F, M
