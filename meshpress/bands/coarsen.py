"""Simplify a body to the carrier's size, on any mesh.

Quadric edge collapse (Garland and Heckbert, SIGGRAPH 1997, via
fast-simplification) keeps the shape best, but it refuses every collapse that
would leave a flipped or nearly degenerate triangle, and on a mesh of long,
thin triangles nearly every collapse would: the 2,500 x 200 section car of
``benchmarks/bench_loads_1m.py`` (triangles 1.7 mm x 25 mm) stops at 55,000-
63,000 vertices instead of 2,500 however often the collapse is repeated.  On
big bodies it can also reach the target only by leaving slivers that span the
body, on which the heat method's distances are wrong by a large fraction, and
one pass over a million faces costs 2.6-9.5 s.

Vertex clustering (Rossignac and Borrel, "Multi-resolution 3D approximations
for rendering complex scenes", 1993) merges the vertices in each cell of a
uniform grid into their area-weighted mean.  It reaches any size, and its
triangles are about as wide as they are long whatever the input's, so the
collapse runs freely on its result.  Within a cell, vertices whose normals
point to opposite sides of the cell's main normal direction are kept apart,
so the two skins of a panel thinner than a cell are not pressed into one.

A body where the collapse stalls, and every body of more than
:data:`PRECLUSTER_VERTICES` vertices, is therefore clustered to
:data:`CLUSTER_FACTOR` times the target first and then collapsed; if even that
stalls, the body is clustered straight to the target.  The measurements behind
the choice are in docs/performance.md.
"""

from __future__ import annotations

import numpy as np

#: Bodies with more vertices than this are clustered before the collapse.
PRECLUSTER_VERTICES = 50_000
#: The clustered copy has about this many times the target's vertices.
CLUSTER_FACTOR = 8
#: A result within this factor of the target is accepted.
SLACK = 1.2


def coarsen(vertices, faces, n_vertices: int, how: str = "auto", area_vectors=None):
    """Simplify a triangle mesh to about ``n_vertices`` vertices.

    Parameters
    ----------
    vertices : (n, 3) float
    faces : (m, 3) int
    n_vertices : int
        Target vertex count; a mesh within ``SLACK`` of it is returned as it is.
    how : {"auto", "quadric", "cluster"}
        ``"auto"``: as the module says.  ``"quadric"``: collapse only (the
        result may stay above the target).  ``"cluster"``: cluster first, then
        collapse, whatever the body's size.
    area_vectors : (m, 3) float, optional
        The faces' normals times their areas, when already known (a
        :class:`~meshpress.bodies.body.Body` caches them).

    Returns
    -------
    vertices : (n', 3) float
    faces : (m', 3) int
        No unused vertices.
    route : str
        ``"none"``, ``"quadric"``, ``"cluster+quadric"`` or ``"cluster"``: how the result was made.
    """
    if how not in ("auto", "quadric", "cluster"):
        raise ValueError(f"how must be auto, quadric or cluster, got {how!r}")
    v, f = np.asarray(vertices, float), np.asarray(faces, np.int64)
    if len(v) <= SLACK * n_vertices:
        return v, f, "none"
    pre = how == "cluster" or (how == "auto" and len(v) > PRECLUSTER_VERTICES)
    if not pre:
        vq, fq = collapse(v, f, n_vertices)
        if how == "quadric" or len(vq) <= SLACK * n_vertices:
            return vq, fq, "quadric"
    if CLUSTER_FACTOR * n_vertices < len(v):
        vc, fc = cluster_to(v, f, CLUSTER_FACTOR * n_vertices, area_vectors=area_vectors)
        vq, fq = collapse(vc, fc, n_vertices)
        if len(vq) <= SLACK * n_vertices:
            return vq, fq, "cluster+quadric"
    vc, fc = cluster_to(v, f, n_vertices, area_vectors=area_vectors)
    return vc, fc, "cluster"


def collapse(vertices, faces, n_vertices: int, passes: int = 4):
    """Quadric edge collapse towards ``n_vertices``, repeated while each pass at least halves the excess.

    Returns
    -------
    vertices : (n', 3) float
    faces : (m', 3) int
    """
    import fast_simplification

    v, f = np.asarray(vertices, float), np.asarray(faces, np.int64)
    for _ in range(passes):
        if len(v) <= SLACK * n_vertices:
            break
        v2, f2 = fast_simplification.simplify(v.astype(np.float32), f.astype(np.int32),
                                              target_reduction=float(1 - n_vertices / len(v)))
        v2, f2 = drop_unused(np.asarray(v2, float), np.asarray(f2, np.int64))
        stalled = len(v2) - n_vertices > 0.5 * (len(v) - n_vertices)
        if len(v2) < len(v):
            v, f = v2, f2
        if stalled:
            break
    return v, f


def cluster_to(vertices, faces, n_vertices: int, rounds: int = 4, area_vectors=None):
    """Vertex clustering (:func:`cluster_vertices`) on a grid sized to give about ``n_vertices`` clusters.

    The first cell side is ``sqrt(1.5 area / n)`` (a surface crosses about 1.5
    cells of area ``h^2`` per ``h^2`` of its area, averaged over orientations);
    it is then scaled by ``sqrt(clusters / n)`` until the count is within
    ``SLACK``.  ``area_vectors`` as :func:`coarsen`.

    Returns
    -------
    vertices : (n', 3) float
    faces : (m', 3) int
    """
    v, f = np.asarray(vertices, float), np.asarray(faces, np.int64)
    n, w = _vertex_normals_areas(v, f, area_vectors)
    cell = float(np.sqrt(1.5 * w.sum() / n_vertices))
    for _ in range(rounds):
        code = _clusters(v, n, w, cell)
        k = int(code.max()) + 1
        if k <= SLACK * n_vertices and k * SLACK >= n_vertices:
            break
        cell *= float(np.sqrt(k / n_vertices))
        code = None
    return _merge(v, f, w, _clusters(v, n, w, cell) if code is None else code)


def cluster_vertices(vertices, faces, cell: float):
    """Merge the vertices of each grid cell, on each side of it, into their area-weighted mean.

    A cell's vertices are split by the sign of their normal along the cell's
    main normal axis (the leading eigenvector of the area-weighted sum of
    ``n n^T``), so the skins of a part thinner than the cell, whose normals are
    opposite, stay two.  Faces whose corners fall in fewer than three clusters
    vanish; faces left on the same three vertices are kept once, and two of
    opposite winding cancel, so that what is left keeps the input's
    orientation.

    Parameters
    ----------
    vertices : (n, 3) float
    faces : (m, 3) int
    cell : float
        Grid cell side, in the unit of ``vertices``.

    Returns
    -------
    vertices : (n', 3) float
    faces : (m', 3) int
        No unused vertices.
    """
    v, f = np.asarray(vertices, float), np.asarray(faces, np.int64)
    n, w = _vertex_normals_areas(v, f)
    return _merge(v, f, w, _clusters(v, n, w, cell))


def _clusters(v, n, w, cell):
    """(n,) int: cluster of each vertex, numbered from 0 (grid cell and side)."""
    g = np.floor((v - v.min(axis=0)) / cell).astype(np.int64)
    dims = g.max(axis=0) + 1
    _, cells = np.unique((g[:, 0] * dims[1] + g[:, 1]) * dims[2] + g[:, 2], return_inverse=True)
    cells = cells.ravel()
    side = np.einsum("ij,ij->i", n, _main_axis(cells, n, w)[cells]) < 0
    _, code = np.unique(2 * cells + side, return_inverse=True)
    return code.ravel()


def _merge(v, f, w, code):
    """The mesh of the clusters ``code`` (n,): area-weighted mean positions, faces renumbered and deduplicated."""
    k = int(code.max()) + 1
    wsum = np.bincount(code, w, minlength=k)
    pos = np.stack([np.bincount(code, w * v[:, d], minlength=k) for d in range(3)], axis=1) / wsum[:, None]
    fc = code[f]
    fc = fc[(fc[:, 0] != fc[:, 1]) & (fc[:, 1] != fc[:, 2]) & (fc[:, 2] != fc[:, 0])]
    # Rotate each face so its smallest index comes first: equal faces then agree exactly, and
    # opposite windings differ only in the order of the last two.
    r = np.argmin(fc, axis=1)
    fc = np.take_along_axis(fc, (r[:, None] + np.arange(3)) % 3, axis=1)
    even = fc[:, 1] < fc[:, 2]
    lo, hi = np.minimum(fc[:, 1], fc[:, 2]), np.maximum(fc[:, 1], fc[:, 2])
    _, first, inv = np.unique((fc[:, 0] * k + lo) * k + hi, return_index=True, return_inverse=True)
    net = np.bincount(inv.ravel(), np.where(even, 1.0, -1.0))
    keep = net != 0
    out = np.column_stack([fc[first, 0], lo[first], hi[first]])[keep]
    flip = net[keep] < 0
    out[flip] = out[flip][:, ::-1]
    return drop_unused(pos, out)


def drop_unused(vertices, faces):
    """The mesh without the vertices no face uses, ``(vertices, faces)`` renumbered."""
    used = np.unique(faces)
    remap = -np.ones(len(vertices), np.int64)
    remap[used] = np.arange(len(used))
    return vertices[used], remap[faces]


def _main_axis(cells, n, w):
    """(c, 3): leading eigenvector of each cell's area-weighted normal scatter ``sum w n n^T`` (sign-free)."""
    c = int(cells.max()) + 1
    S = np.empty((c, 3, 3))
    for a in range(3):
        for b in range(a, 3):
            S[:, a, b] = S[:, b, a] = np.bincount(cells, w * n[:, a] * n[:, b], minlength=c)
    return np.linalg.eigh(S)[1][:, :, -1]


def _vertex_normals_areas(v, f, area_vectors=None):
    """Area-weighted unit normals (n, 3) and a third of the area of the faces round each vertex (n,)."""
    if area_vectors is None:
        a, b, c = v[f[:, 0]], v[f[:, 1]], v[f[:, 2]]
        u, t = b - a, c - a
        area_vectors = 0.5 * np.column_stack([u[:, 1] * t[:, 2] - u[:, 2] * t[:, 1],
                                              u[:, 2] * t[:, 0] - u[:, 0] * t[:, 2],
                                              u[:, 0] * t[:, 1] - u[:, 1] * t[:, 0]])
    av = np.asarray(area_vectors, float)
    idx = f.ravel()
    n = np.stack([np.bincount(idx, np.repeat(av[:, d], 3), minlength=len(v)) for d in range(3)], axis=1)
    n /= np.maximum(np.linalg.norm(n, axis=1, keepdims=True), 1e-300)
    w = np.bincount(idx, np.repeat(np.sqrt((av**2).sum(axis=1)) / 3.0, 3), minlength=len(v)) + 1e-300
    return n, w

