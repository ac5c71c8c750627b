"""Half cars: the other half of a half-body scan, and taps mirrored across the centre plane.

A scan of one side of a car is open along its centre plane.  :func:`mirror_half` finds that plane (the side of
the body where the open edges lie) or takes it from the user, drops any cap lying in it, and adds the
reflection of every face with its winding reversed (a reflection turns a surface inside out).  Vertices on the
plane are shared by the two halves once the body's vertex merge runs, so the whole body closes there.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError


def boundary_vertices(faces: np.ndarray) -> np.ndarray:
    """Indices of the vertices on edges used by one face only (the mesh's open edges)."""
    from .orient import edge_pairs

    return np.unique(edge_pairs(faces)[3])


def mirror_half(v, f, face_part, lateral, plane=None, *, tol_rel=0.005):
    """The whole body from one half: reflect across the plane ``lateral . x = plane``.

    Parameters
    ----------
    v : (n, 3) float
        Vertices (merged), mesh units.
    f : (m, 3) int
    face_part : (m,) int
    lateral : (3,) float
        Unit vector of the mesh's lateral axis (the vehicle's y in mesh axes).
    plane : float, optional
        The centre plane's coordinate along ``lateral``, mesh units.  Default:
        found from the open edges (the side of the body's lateral extent where
        most of them lie).
    tol_rel : float
        Vertices within this share of the body's width of the plane lie on it.

    Returns
    -------
    v, f, face_part
        The doubled mesh (vertices on the plane are duplicated; the caller's
        merge joins them).
    plane : float
    how : str
        "found" or "given".
    """
    s = v @ lateral
    width = float(s.max() - s.min()) or 1.0
    tol = tol_rel * width
    how = "given"
    if plane is None:
        b = boundary_vertices(f)
        if len(b) == 0:
            raise InputError("--mirror: the body is closed, so it is not half a body; give the centre plane's "
                             "coordinate (--mirror VALUE) to mirror it anyway")
        diag = float(np.linalg.norm(v.max(axis=0) - v.min(axis=0)))

        def score(c):
            # A cut along the centre plane is a long open edge in it: count its vertices if they span a good
            # part of the body (a few open vertices near the side of an open-bottomed body are not a cut).
            on = b[np.abs(s[b] - c) < tol]
            span = float(np.linalg.norm(np.ptp(v[on], axis=0))) if len(on) > 1 else 0.0
            return (len(on) if len(on) >= 3 and span >= 0.25 * diag else 0), c

        n_on, plane = max(score(c) for c in (s.min(), s.max()))
        if n_on < 3:
            raise InputError("--mirror: no open edge lies on either side of the body, so the centre plane was not "
                             "found; give its coordinate on the mesh's lateral axis: --mirror VALUE")
        how = "found"
    plane = float(plane)
    on = np.abs(s - plane) < tol
    far = np.maximum(s - plane, 0).max() > tol and np.maximum(plane - s, 0).max() > tol
    if far:
        raise InputError(f"--mirror: the body lies on both sides of the plane at {plane:g}; mirror only half a body")
    # A cap in the plane (a closed half body) would end up inside the whole body: faces on the plane that face
    # along the lateral axis go.  Thin slivers near the plane but across it (a pole's fan) stay.
    t = v[f]
    n = np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0])
    along = np.abs(n @ lateral) > 0.99 * np.linalg.norm(n, axis=1)
    keep = ~(on[f].all(axis=1) & along)
    f, face_part = f[keep], face_part[keep]
    vm = v - 2.0 * (s - plane)[:, None] * lateral[None, :]
    out_v = np.vstack([v, vm])
    out_f = np.vstack([f, f[:, ::-1] + len(v)])
    return out_v, out_f, np.concatenate([face_part, face_part]), plane, how


def mirror_taps(table, body, *, on_plane_m: float = 1e-3):
    """The taps and their mirror images across the vehicle's centre plane y = 0.

    Taps within ``on_plane_m`` of the plane are not doubled.  Mirrored taps
    are named ``NAME (mirror)`` and read the same value.

    Parameters
    ----------
    table : TapTable
        Positions in the mesh's own coordinates.
    body : Body
        Gives the frame (the vehicle's y = 0 is the body's centre plane).

    Returns
    -------
    TapTable
    """
    from dataclasses import replace

    pv = body.frame.to_vehicle(table.points)
    off = np.abs(pv[:, 1]) > on_plane_m
    mv = pv[off].copy()
    mv[:, 1] *= -1.0
    names = list(table.names) + [f"{n} (mirror)" for n, o in zip(table.names, off) if o]
    sides = None if table.sides is None else list(table.sides) + [s for s, o in zip(table.sides, off) if o]
    return replace(table, names=names, points=np.vstack([table.points, body.frame.to_mesh(mv)]),
                   values=np.concatenate([table.values, table.values[off]]), sides=sides)


MIRROR_TAPS_CAUTION = ("taps mirrored across the centre plane: the car is taken as symmetric, so side force, yawing "
                       "and rolling moments are zero by assumption, not by measurement; at yaw, in a crosswind or "
                       "with an asymmetric car the mirrored side is wrong")
