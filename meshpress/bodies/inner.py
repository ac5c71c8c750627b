"""Shells inside the body (seats, an engine bay, a scanner's interior junk): found by the winding number.

A shell that lies wholly inside the main shell sees no outside flow, so its pressure is not the car's and its
faces must not be integrated.  Inside-ness is the generalised winding number of the main shell at a few points
of the candidate (Jacobson, Kavan and Sorkine-Hornung 2013, "Robust inside-outside segmentation using
generalized winding numbers"): the solid angle the main shell subtends there over 4 pi, summed face by face
(Van Oosterom and Strackee 1983).  It is 1 inside a closed surface and 0 outside, and degrades gracefully on an
open scan (an open underbody gives values between), so the test is "above one half".
"""

from __future__ import annotations

import numpy as np


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
    comps, inv = np.unique(component, return_inverse=True)
    if len(comps) < 2:
        return np.zeros(0, dtype=component.dtype)
    a = np.bincount(inv, areas, len(comps))
    main = int(np.argmax(a))
    main_tri = triangles[inv == main]
    lo, hi = main_tri.reshape(-1, 3).min(axis=0), main_tri.reshape(-1, 3).max(axis=0)
    found = []
    for k in range(len(comps)):
        if k == main:
            continue
        v = triangles[inv == k].reshape(-1, 3)
        if np.any(v.min(axis=0) < lo) or np.any(v.max(axis=0) > hi):
            continue  # reaches outside the main shell's box: not inside it
        pick = [int(np.argmin(v[:, j])) for j in range(3)] + [int(np.argmax(v[:, j])) for j in range(3)]
        centre = v.mean(axis=0)
        pick.append(int(np.argmin(np.linalg.norm(v - centre, axis=1))))
        pts = v[np.unique(pick)[:samples]]
        if np.all(winding_number(pts, main_tri) > threshold):
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
