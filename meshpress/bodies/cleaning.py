"""Cleaning a raw mesh, and naming its separate shells: the loader's two steps that look only at the geometry.

:func:`clean` merges duplicate vertices (by quantised coordinates, hashed), drops degenerate and duplicate faces
and unused vertices; :func:`name_shells` makes parts of a one-surface file's connected shells, named by where
they sit on the car.  Both are called by :func:`meshpress.bodies.body.load_body`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..tolerances import TOL
from .grouping import group
from .readers import unique_names


#: Below this many distinct values per column a row of three packs into one int64 key (3 x 21 bits < 63).
ONE_KEY_LIMIT = 2**21


def group_rows(rows: np.ndarray, n: int):
    """Group equal rows of three non-negative integers, exactly and in linear time.

    Gives the same grouping as ``np.unique(rows, axis=0, return_inverse=True, return_index=True)``, but with the
    groups numbered in order of first appearance (hashing, :func:`.grouping.group`) instead of sorted.  Below
    :data:`ONE_KEY_LIMIT` values per column the row is one int64 key; above it the first two columns make one key
    (the first column's group number in place of its value when ``n**2`` overflows), and that key's group number
    with the third column makes a second: exact while ``len(rows) * n < 2**63``, which holds for any mesh that
    fits in memory.

    Parameters
    ----------
    rows : (k, 3) int64
        Values in ``[0, n)``.
    n : int
        One more than the largest value.

    Returns
    -------
    codes : (k,) int64
        Group of every row, numbered in order of first appearance.
    first : (g,) int64
        Index of the first row of every group.
    """
    rows = np.asarray(rows, dtype=np.int64)
    if n < ONE_KEY_LIMIT:
        codes, first, _, _ = group((rows[:, 0] * n + rows[:, 1]) * n + rows[:, 2])
        return codes, first
    if len(rows) * n >= 2**63:
        raise ValueError(f"{n:,} values per column of {len(rows):,} rows do not fit an int64 key")
    if n * n < 2**63:
        pair, _, _, _ = group(rows[:, 0] * n + rows[:, 1])
    else:  # the first column's group number (< len(rows)) stands in for it
        pair, _, _, _ = group(group(rows[:, 0])[0] * n + rows[:, 1])
    codes, first, _, _ = group(pair * n + rows[:, 2])
    return codes, first


def clean(v: np.ndarray, f: np.ndarray):
    """Merge duplicate vertices, drop degenerate and duplicate faces, unused vertices.

    Returns
    -------
    v : (n, 3) float
    f : (m, 3) int
    area_vectors : (m, 3) float
        Half the edge cross product of every face (n dA as wound), mesh units.
    merged : int
        Vertices removed by merging.
    dropped : int
        Faces dropped.
    kept : (m,) int
        Index of each kept face among the input faces.
    """
    n0, m0 = len(v), len(f)
    if f.min() < 0 or f.max() >= n0:
        raise InputError("mesh faces refer to vertices that do not exist")
    lo = v.min(axis=0)
    span = float((v.max(axis=0) - lo).max()) or 1.0
    # floor(x + 1/2) rounds the non-negative scaled coordinates in one pass.
    q = ((v - lo) * (10.0**TOL.merge_digits / span) + 0.5).astype(np.int64)
    inv, first = group_rows(q, int(q.max()) + 1)
    v = v[first]
    f = inv[f]
    merged = n0 - len(v)
    # Degenerate: repeated index or (near) zero area.
    rep = (f[:, 0] == f[:, 1]) | (f[:, 1] == f[:, 2]) | (f[:, 2] == f[:, 0])
    t = v[f]
    cr = np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0])
    area = 0.5 * np.sqrt(np.einsum("ij,ij->i", cr, cr))
    med = np.median(area[~rep]) if np.any(~rep) else 0.0
    keep = ~rep & (area > TOL.degenerate_area_rel * med)
    f, cr = f[keep], cr[keep]
    # Duplicate faces (same three vertices in any order).
    sf = np.sort(f, axis=1)
    _, uniq = group_rows(sf, int(sf.max()) + 1)
    uniq = np.sort(uniq)
    f, cr = f[uniq], cr[uniq]
    if len(f) == 0:
        raise InputError("the mesh has no faces left after dropping degenerate ones")
    used = np.zeros(len(v), dtype=bool)
    used[f.ravel()] = True
    remap = np.cumsum(used) - 1
    v, f = v[used], remap[f]
    kept = np.flatnonzero(keep)[uniq]
    return v, f, 0.5 * cr, merged, m0 - len(f), kept


def name_shells(component, area_vectors, centroids, lo, hi, *, main_name="body", min_share=0.002):
    """Parts from connected shells, each named by where it sits on the car.

    The largest shell by area keeps ``main_name``.  The others are named by
    their area-weighted centre in the body's bounding box ``lo``..``hi``
    (vehicle frame: x rearward, y right, z up): front / middle / rear by
    thirds of the length, left / right when off the centre plane by more than
    a sixth of the half width, low / high by the lower and upper third of the
    height, e.g. ``"rear high"`` for a rear wing, ``"front left low"`` for a
    wheel.  Shells under ``min_share`` of the total area (scan specks) go
    together as ``"small shells"``.

    Parameters
    ----------
    component : (m,) int
        Connected shell of every face.
    area_vectors, centroids : (m, 3) float
    lo, hi : (3,) float
        Bounding box, m.

    Returns
    -------
    names : list of str
    shell_of : (m,) int
        Index into ``names`` of every face.
    """
    area = np.linalg.norm(area_vectors, axis=1)
    comps, inv = np.unique(component, return_inverse=True)
    a = np.bincount(inv, area, len(comps))
    if len(comps) == 1:
        return [main_name], np.zeros(len(component), dtype=np.int64)
    c = np.stack([np.bincount(inv, area * centroids[:, k], len(comps)) for k in range(3)], axis=1) / a[:, None]
    span = np.maximum(hi - lo, 1e-12)
    rel = (c - lo) / span
    small = a < min_share * a.sum()
    order = np.argsort(-a)
    labels = {}
    raw = []
    for rank, k in enumerate(order):
        if rank == 0:
            raw.append(main_name)
        elif small[k]:
            continue
        else:
            x, y, z = rel[k]
            words = ["front" if x < 1 / 3 else "rear" if x > 2 / 3 else "middle"]
            if abs(y - 0.5) > 1 / 12:
                words.append("right" if y > 0.5 else "left")
            if z < 1 / 3:
                words.append("low")
            elif z > 2 / 3:
                words.append("high")
            raw.append(" ".join(words))
        labels[k] = len(raw) - 1
    names = unique_names(raw)
    if small[order[1:]].any():
        names.append("small shells")
        for k in np.flatnonzero(small):
            if k != order[0]:
                labels[k] = len(names) - 1
    lut = np.array([labels[k] for k in range(len(comps))], dtype=np.int64)
    return names, lut[inv]
