"""Moving taps onto the surface.

Each tap goes to the nearest point of the surface, among the faces allowed by
its ``side`` (``upper``: faces whose outward normal points up, ``lower``: down,
``+y`` etc.: along that mesh axis).  Candidates come from a k-d tree over face
centroids: any face that can hold the nearest point has its centroid within
(nearest centroid distance + largest face radius), so the search is exact.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from trimesh.triangles import closest_point as _closest_on_triangles, points_to_barycentric

from ..bodies.body import Body
from ..errors import InputError
from ..bodies.frame import parse_axis
from .layout import TapTable
from ..tolerances import TOL


@dataclass
class ProjectedTaps:
    """Taps placed on the body, vehicle frame.

    Attributes
    ----------
    names : list of str
    raw_points : (n, 3) float
        Tap positions as given, mapped into the vehicle frame, m.
    points : (n, 3) float
        Nearest surface points, m.
    faces : (n,) int
        Face holding each projected point.
    barycentric : (n, 3) float
        Barycentric coordinates of each point in its face.
    distance : (n,) float
        Projection distance, m.
    values : (n,) float
        Pa or Cp (see ``kind``).
    kind : {"p", "cp"}
    """

    names: list
    raw_points: np.ndarray
    points: np.ndarray
    faces: np.ndarray
    barycentric: np.ndarray
    distance: np.ndarray
    values: np.ndarray
    kind: str

    def __len__(self) -> int:
        return len(self.names)

    def with_values(self, values) -> "ProjectedTaps":
        """A copy carrying other values at the same positions."""
        from dataclasses import replace

        return replace(self, values=np.asarray(values, dtype=float))


def _side_mask(body: Body, side: str) -> np.ndarray:
    n = body.face_normals
    if side == "upper":
        return n[:, 2] > 0
    if side == "lower":
        return n[:, 2] < 0
    d = body.frame.direction_to_vehicle(parse_axis(side))[0] if body.frame else parse_axis(side)
    return n @ d > 0


def nearest_on_faces(body: Body, points: np.ndarray, allowed: np.ndarray | None = None):
    """Nearest surface point for each query point.

    Parameters
    ----------
    body : Body
    points : (n, 3) float
        Query points, m.
    allowed : (m,) bool, optional
        Faces that may be chosen.

    Returns
    -------
    closest : (n, 3) float
    face : (n,) int
    distance : (n,) float
    """
    points = np.asarray(points, dtype=float).reshape(-1, 3)
    cen = body.centroids
    idx_all = np.arange(body.n_faces)
    if allowed is not None:
        idx_all = np.flatnonzero(allowed)
        if len(idx_all) == 0:
            raise InputError("no face of the body faces the requested side")
        from scipy.spatial import cKDTree

        tree = cKDTree(cen[idx_all])
    else:
        tree = body.centroid_tree
    d0, _ = tree.query(points)
    rmax = body.max_face_radius
    out_p = np.empty_like(points)
    out_f = np.empty(len(points), dtype=np.int64)
    out_d = np.empty(len(points))
    # Exact: a face holding a point at distance d has its centroid within d + its own radius.
    for i, (p, r) in enumerate(zip(points, d0 + rmax)):
        cand = idx_all[np.asarray(tree.query_ball_point(p, r * (1 + 1e-9) + 1e-12), dtype=np.int64)]
        tri = body.triangles[cand]
        cp = _closest_on_triangles(tri, np.repeat(p[None], len(cand), axis=0))
        dist = np.linalg.norm(cp - p, axis=1)
        j = int(np.argmin(dist))
        out_p[i], out_f[i], out_d[i] = cp[j], cand[j], dist[j]
    return out_p, out_f, out_d


def project_taps(body: Body, taps: TapTable, *, max_distance: float = TOL.max_tap_distance_m) -> ProjectedTaps:
    """Place the taps on the surface.

    Parameters
    ----------
    body : Body
    taps : TapTable
        Positions in the mesh's own coordinates (mapped with ``body.frame``).
    max_distance : float
        Largest allowed projection distance, m.

    Returns
    -------
    ProjectedTaps

    Raises
    ------
    InputError
        A tap lies further than ``max_distance`` from the surface, naming it.
    """
    raw = body.frame.to_vehicle(taps.points) if body.frame else np.asarray(taps.points, float)
    n = len(taps)
    pts = np.empty((n, 3))
    fc = np.empty(n, dtype=np.int64)
    dist = np.empty(n)
    sides = np.array(taps.sides, dtype=object)
    for side in sorted(set(taps.sides)):
        sel = np.flatnonzero(sides == side)
        allowed = _side_mask(body, side) if side else None
        pts[sel], fc[sel], dist[sel] = nearest_on_faces(body, raw[sel], allowed)
    far = np.flatnonzero(dist > max_distance)
    if len(far):
        i = far[np.argmax(dist[far])]
        more = f" ({len(far) - 1} more beyond the limit)" if len(far) > 1 else ""
        raise InputError(
            f"{taps.source}: tap {taps.names[i]!r} is {dist[i] * 1000:.1f} mm from the surface, more than "
            f"the {max_distance * 1000:g} mm allowed (--max-tap-distance){more}; check its coordinates, unit and axes"
            + "".join(f"; note: {w}" for w in body.setup_warnings)
        )
    same = coincident(pts)
    if same:
        i, j = same[0]
        more = f" ({len(same) - 1} more pairs)" if len(same) > 1 else ""
        raise InputError(
            f"{taps.source}: taps {taps.names[i]!r} and {taps.names[j]!r} are at the same place on the surface"
            f"{more}; an interpolated field cannot pass through two readings at one point: check their coordinates, "
            "or keep one (average their readings)"
        )
    bary = points_to_barycentric(body.triangles[fc], pts)
    return ProjectedTaps(list(taps.names), raw, pts, fc, bary, dist, np.asarray(taps.values, float), taps.kind)


def coincident(points, tol: float = 1e-6) -> list:
    """Pairs ``(i, j)``, i < j, of points closer than ``tol`` (m), sorted.

    Interpolation needs distinct centres (Wendland, Scattered Data
    Approximation, 2005, ch. 8): two taps at one place make every
    interpolating field's system singular, or its solution meaningless.
    """
    from scipy.spatial import cKDTree

    return sorted(cKDTree(np.asarray(points, float)).query_pairs(tol))
