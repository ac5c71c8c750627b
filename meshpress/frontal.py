"""Frontal area: the body's projection on the y-z plane, by rasterising.

A polygon union of a million projected triangles is slow; instead each
triangle marks the raster pixels whose centres it covers, tested in batches of
triangles of similar pixel size.  The area error is about half a pixel along
the outline and averages out; the resolution is reported with the result.
"""

from __future__ import annotations

import numpy as np


def frontal_area(triangles: np.ndarray, resolution: float, chunk: int = 200_000) -> float:
    """Area (m2) of the union of the triangles projected on the y-z plane.

    Parameters
    ----------
    triangles : (m, 3, 3) float
        Triangles in the vehicle frame, m.
    resolution : float
        Pixel size, m.

    Returns
    -------
    float
        Projected area, m2.
    """
    yz = triangles[:, :, 1:]
    lo = yz.min(axis=(0, 1))
    pix = (yz - lo) / resolution  # pixel coordinates; pixel (i, j) centre at (i+.5, j+.5)
    shape = np.ceil(pix.reshape(-1, 2).max(axis=0)).astype(int) + 1
    mask = np.zeros(shape, dtype=bool)
    i0 = np.floor(pix.min(axis=1) - 0.5).astype(int).clip(0)
    i1 = np.ceil(pix.max(axis=1) - 0.5).astype(int)
    span = (i1 - i0 + 1).max(axis=1)
    # Size classes by powers of two keep each batch's candidate grid small.
    cls = np.ceil(np.log2(np.maximum(span, 1))).astype(int)
    for c in np.unique(cls):
        sel = np.flatnonzero(cls == c)
        s = 2 ** c
        off = np.stack(np.meshgrid(np.arange(s), np.arange(s), indexing="ij"), -1).reshape(-1, 2)
        step = max(1, chunk // (s * s))
        for k in range(0, len(sel), step):
            idx = sel[k : k + step]
            _mark(mask, pix[idx], i0[idx], off)
    return float(mask.sum()) * resolution**2


def _mark(mask, tri, i0, off):
    cand = i0[:, None, :] + off[None, :, :]  # (t, s*s, 2) pixel indices
    c = cand + 0.5
    a, b, d = tri[:, 0][:, None], tri[:, 1][:, None], tri[:, 2][:, None]

    def edge(p, q):
        return (q[..., 0] - p[..., 0]) * (c[..., 1] - p[..., 1]) - (q[..., 1] - p[..., 1]) * (c[..., 0] - p[..., 0])

    e0, e1, e2 = edge(a, b), edge(b, d), edge(d, a)
    inside = ((e0 >= 0) & (e1 >= 0) & (e2 >= 0)) | ((e0 <= 0) & (e1 <= 0) & (e2 <= 0))
    ok = inside & (cand[..., 0] < mask.shape[0]) & (cand[..., 1] < mask.shape[1])
    hit = cand[ok]
    mask[hit[:, 0], hit[:, 1]] = True
