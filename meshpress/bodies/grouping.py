"""Grouping equal integer keys in linear time (hash table), for the mesh's hot paths.

numpy's ``unique`` sorts (n log n); pandas' ``factorize`` hashes, which is
several times faster on the millions of vertex and edge keys of a big scan.
"""

from __future__ import annotations

import numpy as np


def group(keys: np.ndarray):
    """Group equal keys.

    Parameters
    ----------
    keys : (n,) int64

    Returns
    -------
    codes : (n,) int64
        Group of every key, numbered in order of first appearance.
    first : (g,) int64
        Index of the first key of every group.
    last : (g,) int64
        Index of the last key of every group.
    counts : (g,) int64
        Size of every group.
    """
    import pandas as pd

    codes, uniques = pd.factorize(np.asarray(keys), sort=False)
    codes = codes.astype(np.int64, copy=False)
    g = len(uniques)
    idx = np.arange(len(codes), dtype=np.int64)
    first = np.empty(g, dtype=np.int64)
    first[codes[::-1]] = idx[::-1]  # later writes win: reversed, the first occurrence is written last
    last = np.empty(g, dtype=np.int64)
    last[codes] = idx
    counts = np.bincount(codes, minlength=g)
    return codes, first, last, counts
