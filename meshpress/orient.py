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
    key = lo * (int(faces.max()) + 1) + hi  # one int64 per undirected edge: a 1D sort, not a lexsort
    order = np.argsort(key, kind="stable")
    ks = key[order]
    new = np.ones(len(ks), dtype=bool)
    new[1:] = ks[1:] != ks[:-1]
    group = np.cumsum(new) - 1
    counts = np.bincount(group)
    gc = counts[group]
    # Edges with exactly two faces: consecutive pairs in sorted order.
    two = np.flatnonzero(new & (gc == 2))
    a, b = order[two], order[two + 1]
    fa, fb = owner[a], owner[b]
    same_dir = forward[a] == forward[b]
    bnd = order[gc == 1]
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
    adj = sparse.coo_matrix((np.ones(len(fa)), (fa, fb)), shape=(m, m))
    n_parts, part = csgraph.connected_components(adj, directed=False)
    s = same_dir.astype(np.int64)
    rows = np.concatenate([2 * fa, 2 * fa + 1])
    cols = np.concatenate([2 * fb + s, 2 * fb + 1 - s])
    cover = sparse.coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(2 * m, 2 * m))
    _, lab = csgraph.connected_components(cover, directed=False)
    first = np.full(n_parts, -1)
    # First face of each part.
    idx = np.arange(m)[::-1]
    first[part[idx]] = idx
    root_label = lab[2 * first[part]]
    plain, flipped = lab[0::2], lab[1::2]
    flip = flipped == root_label
    bad = plain == flipped
    orientable = not bad.any()
    flip &= ~bad
    return flip, part, orientable


def outward_flip(vertices, faces, part) -> np.ndarray:
    """Which parts to reverse so that normals point away from the inside.

    Uses the signed volume of each part about the body's centroid (closed parts:
    exact; open scans: the orientation that encloses positive volume, i.e.
    normals away from the body's inside).

    Returns
    -------
    (m,) bool
        Faces to reverse.
    """
    tri = vertices[faces]
    c0 = vertices.mean(axis=0)
    a, b, c = tri[:, 0] - c0, tri[:, 1] - c0, tri[:, 2] - c0
    vol6 = np.einsum("ij,ij->i", a, np.cross(b, c))
    per_part = np.bincount(part, weights=vol6)
    return per_part[part] < 0
