"""What the loader found in a mesh: size, closure, holes."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np
from scipy import sparse
from scipy.sparse import csgraph


@dataclass
class MeshReport:
    """Mesh diagnostics, in the vehicle frame (m, m2).

    Attributes
    ----------
    faces, vertices : int
        Counts after cleaning.
    parts : int
        Parts of the body: a scene's parts, the parts given with ``--part``,
        or the connected shells of a one-surface file.
    components : int
        Connected surface pieces after cleaning.
    merged_vertices, dropped_faces, flipped_faces : int
        What cleaning did: duplicate vertices merged, degenerate or duplicate
        faces dropped, faces reversed to make winding consistent and outward.
    area_m2 : float
        Total surface area.
    bbox_min_m, bbox_max_m : list of 3 float
        Bounding box in the vehicle frame.
    watertight : bool
        Every edge is shared by exactly two faces, and winding is consistent.
    holes : int
        Boundary loops.
    hole_areas_m2 : list of float
        Area of each boundary loop (|vector area| of the loop), largest first.
    closure : float
        ``|sum n dA| / sum dA``: zero for a closed surface; the share of the
        surface that an open scan fails to close.  A uniform pressure offset
        dp then produces a spurious force ``dp * |sum n dA|``.
    orientable : bool
        False when some piece could not be wound consistently.
    volume_m3 : float or None
        Enclosed volume when watertight.
    part_list : list of dict
        Each part's ``name``, ``faces`` and ``area_m2``.
    inner_shells, inner_faces : int
        Shells found wholly inside the body and left out, and their faces.
    overlaps : list of dict
        Parts reaching into the largest part: ``part``, ``into``, ``inside_share``.
    nonmanifold : dict
        Edges shared by three faces or more: ``count`` and, when there are
        any, where (``centre_m``, ``bbox_min_m``, ``bbox_max_m``, vehicle frame).
    source_frame : str
        The file's unit and axes as read (e.g. ``"in, up +y, forward +z"``),
        and whether a scene's transforms were applied.
    """

    faces: int
    vertices: int
    parts: int
    components: int
    merged_vertices: int
    dropped_faces: int
    flipped_faces: int
    area_m2: float
    bbox_min_m: list
    bbox_max_m: list
    watertight: bool
    holes: int
    hole_areas_m2: list = field(default_factory=list)
    closure: float = 0.0
    orientable: bool = True
    volume_m3: float | None = None
    part_list: list = field(default_factory=list)
    source_frame: str = ""
    inner_shells: int = 0
    inner_faces: int = 0
    overlaps: list = field(default_factory=list)
    nonmanifold: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return asdict(self)


def boundary_loops(boundary: np.ndarray, vertices: np.ndarray) -> list[float]:
    """Areas of the boundary loops.

    Parameters
    ----------
    boundary : (b, 2) int
        Directed boundary edges (as wound by their faces).
    vertices : (n, 3) float

    Returns
    -------
    list of float
        Area (m2) of each loop, largest first.  The vector area of a closed
        polygon is ``1/2 sum a x b`` over its directed edges, so no ordering of
        the loop is needed.
    """
    if len(boundary) == 0:
        return []
    n = len(vertices)
    g = sparse.coo_matrix((np.ones(len(boundary)), (boundary[:, 0], boundary[:, 1])), shape=(n, n))
    _, lab = csgraph.connected_components(g, directed=False)
    loop = lab[boundary[:, 0]]
    uniq, loop = np.unique(loop, return_inverse=True)
    cr = 0.5 * np.cross(vertices[boundary[:, 0]], vertices[boundary[:, 1]])
    va = np.stack([np.bincount(loop, weights=cr[:, k], minlength=len(uniq)) for k in range(3)], axis=1)
    return sorted(np.linalg.norm(va, axis=1).tolist(), reverse=True)


def nonmanifold_edges(faces: np.ndarray, vertices: np.ndarray) -> dict:
    """Edges used by three faces or more (overlapping or T-joined shells): how many and where.

    Parameters
    ----------
    faces : (m, 3) int
    vertices : (n, 3) float
        Vehicle frame, m.

    Returns
    -------
    dict
        ``count``; with any, ``centre_m`` (their mean midpoint) and their bounding box.
    """
    from .grouping import group

    e = np.sort(np.concatenate([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]]), axis=1)
    _, first, _, counts = group(e[:, 0] * (int(faces.max()) + 1) + e[:, 1])
    bad = e[first[counts > 2]]
    if len(bad) == 0:
        return {"count": 0}
    mid = vertices[bad].mean(axis=1)
    return {"count": int(len(bad)), "centre_m": mid.mean(axis=0).round(4).tolist(),
            "bbox_min_m": mid.min(axis=0).round(4).tolist(), "bbox_max_m": mid.max(axis=0).round(4).tolist()}
