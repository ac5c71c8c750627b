"""Frontal area: the body's projection on the y-z plane, by rasterising.

A polygon union of a million projected triangles is slow; instead each
triangle marks the raster pixels whose centres it covers, tested in batches of
triangles whose pixel bounding boxes have the same (power-of-two) width and
height, so long thin triangles cost no more than their box.  Pixel-centre
sampling is unbiased: the error is random along the outline, about
``sqrt(outline / pixel)`` half-pixels (0.01-0.05 % of a car's frontal area at
5 mm; a unit sphere's disc comes out within 0.1 % at 2 mm).
"""

from __future__ import annotations

import numpy as np


def frontal_area(triangles: np.ndarray, resolution: float, chunk: int = 400_000) -> float:
    """Area (m2) of the union of the triangles projected on the y-z plane.

    Parameters
    ----------
    triangles : (m, 3, 3) float
        Triangles in the vehicle frame, m.  For a closed body the front-facing
        ones (n_x < 0) are enough and halve the work.
    resolution : float
        Pixel size, m.
    chunk : int
        Candidate pixel tests per batch (bounds memory).

    Returns
    -------
    float
        Projected area, m2.
    """
    yz = np.asarray(triangles, dtype=float)[:, :, 1:]
    lo = yz.reshape(-1, 2).min(axis=0)
    pix = ((yz - lo) / resolution).astype(np.float32)  # pixel (i, j) has its centre at (i + .5, j + .5)
    shape = np.ceil(pix.reshape(-1, 2).max(axis=0)).astype(int) + 1
    mask = np.zeros(shape, dtype=bool)
    i0 = np.floor(pix.min(axis=1) - 0.5).astype(np.int64).clip(0)
    i1 = np.ceil(pix.max(axis=1) - 0.5).astype(np.int64)
    span = np.maximum(i1 - i0 + 1, 1)
    cls = np.ceil(np.log2(span)).astype(np.int64)
    key = cls[:, 0] * 64 + cls[:, 1]
    order = np.argsort(key, kind="stable")
    bounds = np.flatnonzero(np.diff(key[order])) + 1
    for grp in np.split(order, bounds):
        sy, sz = 2 ** int(cls[grp[0], 0]), 2 ** int(cls[grp[0], 1])
        off = np.stack(np.meshgrid(np.arange(sy), np.arange(sz), indexing="ij"), -1).reshape(-1, 2)
        step = max(1, chunk // (sy * sz))
        for k in range(0, len(grp), step):
            idx = grp[k : k + step]
            _mark(mask, pix[idx], i0[idx], off)
    return float(np.count_nonzero(mask)) * resolution**2


def _mark(mask, tri, i0, off):
    cand = i0[:, None, :] + off[None, :, :]  # (t, s, 2) candidate pixel indices
    cy = cand[..., 0].astype(np.float32) + 0.5
    cz = cand[..., 1].astype(np.float32) + 0.5
    ay, az = tri[:, 0, 0:1], tri[:, 0, 1:2]
    by, bz = tri[:, 1, 0:1], tri[:, 1, 1:2]
    dy, dz = tri[:, 2, 0:1], tri[:, 2, 1:2]
    e0 = (by - ay) * (cz - az) - (bz - az) * (cy - ay)
    e1 = (dy - by) * (cz - bz) - (dz - bz) * (cy - by)
    e2 = (ay - dy) * (cz - dz) - (az - dz) * (cy - dy)
    inside = ((e0 >= 0) & (e1 >= 0) & (e2 >= 0)) | ((e0 <= 0) & (e1 <= 0) & (e2 <= 0))
    inside &= (cand[..., 0] < mask.shape[0]) & (cand[..., 1] < mask.shape[1])
    hit = cand[inside]
    mask[hit[:, 0], hit[:, 1]] = True
