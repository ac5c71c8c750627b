"""Consistent, outward face winding, done with sparse graph algorithms.

Two faces sharing an edge are consistently wound when they traverse that edge
in opposite directions.  Orientation is solved on the *double cover* of the
face graph: node ``2f`` is face f as stored, ``2f+1`` is f flipped; an edge
joins (f, s) to (g, s xor inconsistent(f, g)).  Within one connected part, the
component holding the part's first face (unflipped) says which faces to flip,
in one call to scipy's connected components rather than a Python search.
"""

from __future__ import annotations

import numpy as np
from scipy import sparse
from scipy.sparse import csgraph

from .grouping import group


def edge_pairs(faces: np.ndarray):
    """Interior edges shared by exactly two faces.

    Parameters
    ----------
    faces : (m, 3) int

    Returns
    -------
    fa, fb : (k,) int
        The two faces of each interior edge.
    same_dir : (k,) bool
        True where both faces traverse the edge in the same direction
        (inconsistent winding).
    boundary : (b, 2) int
        Directed boundary edges (used by exactly one face), as wound.
    boundary_face : (b,) int
        The face of each boundary edge.
    """
    m = len(faces)
    e = np.stack([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]], axis=1).reshape(-1, 2)
    owner = np.repeat(np.arange(m), 3)
    lo, hi = np.minimum(e[:, 0], e[:, 1]), np.maximum(e[:, 0], e[:, 1])
    forward = e[:, 0] < e[:, 1]
    # One int64 per undirected edge, grouped by hashing: a pair's two half-edges are the group's
    # first and last member, so no sort is needed.
    _, first, last, counts = group(lo * (int(faces.max()) + 1) + hi)
    two = counts == 2
    a, b = first[two], last[two]
    fa, fb = owner[a], owner[b]
    same_dir = forward[a] == forward[b]
    bnd = first[counts == 1]
    return fa, fb, same_dir, e[bnd], owner[bnd]


def consistent_flip(faces: np.ndarray, fa, fb, same_dir):
    """Which faces to flip so that each connected part is consistently wound.

    Returns
    -------
    flip : (m,) bool
        Faces to reverse.
    part : (m,) int
        Connected-part label of each face (over manifold edges).
    orientable : bool
        False when some part cannot be wound consistently (e.g. a Moebius strip
        or a non-manifold tangle); its faces are then left as they are.
    """
    m = len(faces)
    s = same_dir.astype(np.int64)
    rows = np.concatenate([2 * fa, 2 * fa + 1])
    cols = np.concatenate([2 * fb + s, 2 * fb + 1 - s])
    cover = sparse.coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(2 * m, 2 * m))
    _, lab = csgraph.connected_components(cover, directed=False)
    plain, flipped = lab[0::2], lab[1::2]
    # A part of the face graph is two components of the cover (one per orientation), or one when it
    # cannot be oriented; either way the smaller label names the part.
    _, part = np.unique(np.minimum(plain, flipped), return_inverse=True)
    n_parts = int(part.max()) + 1
    first = np.full(n_parts, -1)
    # First face of each part.
    idx = np.arange(m)[::-1]
    first[part[idx]] = idx
    root_label = lab[2 * first[part]]
    flip = flipped == root_label
    bad = plain == flipped
    orientable = not bad.any()
    flip &= ~bad
    return flip, part, orientable


def outward_flip(centroids, area_vectors, part) -> np.ndarray:
    """Which parts to reverse so that normals point away from the inside.

    Uses the signed volume of each part about the body's centroid c0,
    ``1/3 sum (c_f - c0) . n_f dA_f`` (closed parts: exact and independent of
    c0; open scans: the orientation that encloses positive volume, i.e. normals
    away from the body's inside).

    Parameters
    ----------
    centroids : (m, 3) float
    area_vectors : (m, 3) float
        n dA of every face as currently wound.
    part : (m,) int
        Connected-part label of every face.

    Returns
    -------
    (m,) bool
        Faces to reverse.
    """
    c0 = centroids.mean(axis=0)
    vol3 = np.einsum("ij,ij->i", centroids - c0, area_vectors)
    per_part = np.bincount(part, weights=vol3)
    return per_part[part] < 0
