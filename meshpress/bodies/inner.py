"""Shells inside the body (seats, an engine bay, a scanner's interior junk): found by the winding number.

A shell that lies wholly inside the main shell sees no outside flow, so its pressure is not the car's and its
faces must not be integrated.  Inside-ness is the generalised winding number of the main shell at a few points
of the candidate (Jacobson, Kavan and Sorkine-Hornung 2013, "Robust inside-outside segmentation using
generalized winding numbers"): the solid angle the main shell subtends there over 4 pi, summed face by face
(Van Oosterom and Strackee 1983).  It is 1 inside a closed surface and 0 outside, and degrades gracefully on an
open scan (an open underbody gives values between), so the test is "above one half".

Only that test's answer is needed, not the winding number itself, so :class:`Skin` sums the faces near a point
exactly and replaces every grid cell of faces far from it by the cell's summed area vector at the cell's centre
(the first term of the solid angle's expansion, as in the paper's hierarchy), with a bound on what that leaves
out; where the bound does not settle the answer the point is summed exactly over every face.  The answers are
those of the full sum.
"""

from __future__ import annotations

import numpy as np

from .grouping import group


def winding_number(points, triangles, *, chunk: int = 200_000) -> np.ndarray:
    """(p,) float: generalised winding number of the surface ``triangles`` at each point.

    Parameters
    ----------
    points : (p, 3) float
    triangles : (m, 3, 3) float
        Outward-wound faces.
    chunk : int
        Faces per block (memory: about 100 bytes per face and point).
    """
    pts = np.asarray(points, float)
    out = np.zeros(len(pts))
    for s in range(0, len(triangles), chunk):
        t = np.asarray(triangles[s:s + chunk], float)
        for i, p in enumerate(pts):
            a, b, c = t[:, 0] - p, t[:, 1] - p, t[:, 2] - p
            la, lb, lc = (np.linalg.norm(x, axis=1) for x in (a, b, c))
            num = np.einsum("ij,ij->i", a, np.cross(b, c))
            den = (la * lb * lc + np.einsum("ij,ij->i", a, b) * lc + np.einsum("ij,ij->i", b, c) * la
                   + np.einsum("ij,ij->i", c, a) * lb)
            out[i] += 2.0 * np.arctan2(num, den).sum()
    return out / (4.0 * np.pi)


def _box(points):
    """Lowest and highest coordinates of (..., 3) points (a column at a time: faster than ``min(axis=0)``)."""
    p = np.asarray(points)
    return (np.array([p[..., j].min() for j in range(3)]), np.array([p[..., j].max() for j in range(3)]))


def _labels(component):
    """``np.unique(component, return_inverse=True)`` by hashing and a sort of the distinct labels only."""
    codes, first, _, _ = group(np.asarray(component, dtype=np.int64))
    labels = np.asarray(component)[first]
    order = np.argsort(labels)
    rank = np.empty(len(order), dtype=np.int64)
    rank[order] = np.arange(len(order))
    return labels[order], rank[codes]


class Skin:
    """A surface cut into grid cells, to decide whether points lie inside it (winding number above a threshold).

    For a point p and a cell of centre c, summed area vector S (sum of n dA), total area A, whose faces all lie
    within r of c, the cell's solid angle is the integral of (x - p) . n / |x - p|^3 over its faces.  Replaced by
    S . (c - p) / |c - p|^3, it is off by at most 2 r A / (d - r)^3, d = |c - p|, since the gradient of
    (x - p) / |x - p|^3 has norm at most 2 / |x - p|^3 (its eigenvalues are 1, 1, -2 over |x - p|^3) and every
    point of the cell is at least d - r from p.  Cells with r <= ``theta`` (d - r) are replaced; the faces of the
    others are summed exactly (:func:`winding_number`).  When the bound summed over the replaced cells does not
    separate the result from the threshold, the point is summed exactly over every face, so :meth:`inside` gives
    the answer of ``winding_number(points, triangles) > threshold``.

    Parameters
    ----------
    triangles : (m, 3, 3) float
        Outward-wound faces.
    faces_per_cell : float
        Cell edge: the side of a square of this many mean face areas.
    theta : float
        Largest cell radius over its distance from the point (less the radius) for a cell to be replaced.
    """

    #: Most grid cells (occupied or not) over the surface's box.
    max_cells = 2**24

    def __init__(self, triangles, *, faces_per_cell: float = 64.0, theta: float = 0.25, box=None):
        self.triangles = t = np.asarray(triangles, float)
        self.theta = float(theta)
        m = len(t)
        v0 = t[:, 0]
        e1, e2 = t[:, 1] - v0, t[:, 2] - v0
        sv = np.empty_like(e1)  # half the edge cross product: n dA
        sv[:, 0] = e1[:, 1] * e2[:, 2] - e1[:, 2] * e2[:, 1]
        sv[:, 1] = e1[:, 2] * e2[:, 0] - e1[:, 0] * e2[:, 2]
        sv[:, 2] = e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0]
        sv *= 0.5
        area = np.sqrt(np.einsum("ij,ij->i", sv, sv))
        # A face is filed under the cell of its first vertex; its other vertices are within its longest edge from
        # the first.
        reach = np.sqrt(np.maximum(np.einsum("ij,ij->i", e1, e1), np.einsum("ij,ij->i", e2, e2)))
        del e1, e2
        lo, hi = box if box is not None else _box(t)
        h = float(np.sqrt(faces_per_cell * area.sum() / max(m, 1)))
        if not h > 0:
            h = float((hi - lo).max()) or 1.0
        while np.prod(np.floor((hi - lo) / h) + 1) > self.max_cells:
            h *= 1.25
        dims = (np.floor((hi - lo) / h) + 1).astype(np.int64)
        ijk = ((v0 - lo) * (1.0 / h)).astype(np.int64)
        np.minimum(ijk, dims - 1, out=ijk)  # rounding at the top face of the box
        key = (ijk[:, 0] * dims[1] + ijk[:, 1]) * dims[2] + ijk[:, 2]
        del ijk
        used = np.bincount(key, minlength=int(np.prod(dims))) > 0
        cells = np.flatnonzero(used)
        self.cell = np.cumsum(used)[key] - 1  # occupied cells numbered in key order
        del key, used
        k = len(cells)
        idx = np.stack(np.unravel_index(cells, tuple(dims)), axis=1)
        self.centre = lo + (idx + 0.5) * h
        self.count = np.bincount(self.cell, minlength=k)
        most = np.zeros(k)
        np.maximum.at(most, self.cell, reach)
        # Every vertex of a cell's faces is within this of its centre (with room for the rounding of ijk).
        self.radius = (0.5 * np.sqrt(3.0) + 1e-9) * h + most
        self.area = np.bincount(self.cell, area, k)
        self.svec = np.stack([np.bincount(self.cell, sv[:, j], k) for j in range(3)], axis=1)

    def _split(self, p):
        """Winding number at one point from the near faces exactly and the far cells approximately, and the bound."""
        d = np.linalg.norm(self.centre - p, axis=1)
        far = (self.radius <= self.theta * (d - self.radius)) & (d > self.radius)
        w_near = 0.0
        if not far.all():
            faces = np.flatnonzero(~far[self.cell])
            w_near = float(winding_number(p[None], self.triangles[faces])[0])
        c, s, r, a, df = self.centre[far] - p, self.svec[far], self.radius[far], self.area[far], d[far]
        w_far = float(np.einsum("ij,ij->i", s, c) @ df**-3.0) / (4.0 * np.pi)
        bound = float(2.0 * (r * a) @ (df - r) ** -3.0) / (4.0 * np.pi)
        return w_near + w_far, bound

    def inside(self, point, threshold: float = 0.5, *, margin: float = 1e-9) -> bool:
        """``winding_number(point, triangles) > threshold``, mostly without summing every face."""
        p = np.asarray(point, float).reshape(3)
        w, bound = self._split(p)
        if abs(w - threshold) > bound + margin:
            return bool(w > threshold)
        return bool(winding_number(p[None], self.triangles)[0] > threshold)


def inner_shells(component, triangles, areas, *, samples: int = 7, threshold: float = 0.5) -> np.ndarray:
    """Shells wholly inside the largest shell.

    Parameters
    ----------
    component : (m,) int
        Shell of every face.
    triangles : (m, 3, 3) float
    areas : (m,) float
    samples : int
        Points tested per shell (its area-weighted centre's nearest vertex and its extreme vertices).
    threshold : float
        Winding number above which a point is inside.

    Returns
    -------
    (k,) int
        Labels (values of ``component``) of the shells found inside; empty when there is one shell.
    """
    comps, inv = _labels(component)
    if len(comps) < 2:
        return np.zeros(0, dtype=component.dtype)
    a = np.bincount(inv, areas, len(comps))
    main = int(np.argmax(a))
    main_tri = np.compress(inv == main, triangles, axis=0)  # (several times faster than a boolean index here)
    lo, hi = _box(main_tri)
    # The faces of the other shells, grouped once (not one pass over all faces per shell).
    rest = np.flatnonzero(inv != main)
    order = rest[np.argsort(inv[rest], kind="stable")]
    bounds = np.concatenate([[0], np.cumsum(np.bincount(inv[rest], minlength=len(comps)))])
    skin = None
    found = []
    for k in range(len(comps)):
        if k == main:
            continue
        v = triangles[order[bounds[k]:bounds[k + 1]]].reshape(-1, 3)
        vlo, vhi = _box(v)
        if np.any(vlo < lo) or np.any(vhi > hi):
            continue  # reaches outside the main shell's box: not inside it
        pick = [int(np.argmin(v[:, j])) for j in range(3)] + [int(np.argmax(v[:, j])) for j in range(3)]
        centre = v.mean(axis=0)
        pick.append(int(np.argmin(np.linalg.norm(v - centre, axis=1))))
        pts = v[np.unique(pick)[:samples]]
        if skin is None:
            skin = Skin(main_tri, box=(lo, hi))
        if all(skin.inside(p, threshold) for p in pts):  # stops at the first point outside
            found.append(comps[k])
    return np.asarray(found, dtype=component.dtype)


def part_overlaps(face_part, names, triangles, areas, *, samples: int = 12, max_faces: int = 2_000_000) -> list:
    """Parts that reach into the largest part (a wheel through the body's side, a stand through a wing).

    The surface of the largest part inside another part sees no air, yet it is integrated; so is the other
    part's inside the largest.  Each smaller part is tested at up to ``samples`` of its vertices (spread over
    it) with the largest part's winding number.

    Returns
    -------
    list of dict
        ``part``, ``into`` (the largest part's name) and ``inside_share`` (share of the tested vertices inside).
    """
    a = np.bincount(face_part, areas, len(names))
    main = int(np.argmax(a))
    main_tri = triangles[face_part == main]
    if len(main_tri) > max_faces or len(names) < 2:
        return []
    lo, hi = main_tri.reshape(-1, 3).min(axis=0), main_tri.reshape(-1, 3).max(axis=0)
    out = []
    for k, name in enumerate(names):
        if k == main or not np.any(face_part == k):
            continue
        v = np.unique(triangles[face_part == k].reshape(-1, 3), axis=0)
        box = np.all((v >= lo) & (v <= hi), axis=1)
        if not box.any():
            continue
        pts = v[box][np.linspace(0, box.sum() - 1, min(samples, int(box.sum()))).astype(int)]
        inside = float(np.mean(winding_number(pts, main_tri) > 0.5)) * box.sum() / len(v)
        if inside > 0:
            out.append({"part": name, "into": names[main], "inside_share": round(inside, 3)})
    return out
