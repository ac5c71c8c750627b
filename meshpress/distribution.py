"""Where on the body the load acts: per-face quantities, lift along x, the centre-line section.

Pure functions over the body's arrays and the field's face values; the plots,
the 3D view and the exports only display what these return.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .integrate import face_forces


@dataclass
class SurfaceQuantities:
    """Field quantities on every face, vehicle frame.

    Attributes
    ----------
    cp : (m,) float or None
        Pressure coefficient ``(p - p_ref) / q``; None when q is unknown and the taps are in Pa.
    p_Pa : (m,) float or None
        Gauge pressure minus p_ref, Pa; None when q is unknown and the taps are Cp.
    force_per_area : (m, 3) float
        ``-(p - p_ref) n``: force on the surface per unit area, N/m2 (or per unit q when
        only Cp is known, see ``force_unit``).
    normal_force_per_area : (m,) float
        Its outward normal component, ``-(p - p_ref)``.
    force_unit : str
        ``"N/m2"`` or ``"per q"`` (force per area divided by q, dimensionless).
    """

    cp: np.ndarray | None
    p_Pa: np.ndarray | None
    force_per_area: np.ndarray
    normal_force_per_area: np.ndarray
    force_unit: str


def surface_quantities(face_normals, face_values, kind, q=None, p_ref=0.0) -> SurfaceQuantities:
    """Cp, pressure and force per area on every face.

    Parameters
    ----------
    face_normals : (m, 3) float
        Outward unit normals.
    face_values : (m,) float
        Field on every face, Pa (``kind="p"``) or Cp (``kind="cp"``).
    kind : {"p", "cp"}
    q : float, optional
        Dynamic pressure, Pa: converts between Pa and Cp, ``Cp = (p - p_ref)/q``.
    p_ref : float
        Reference pressure in the values' unit, subtracted first (as in the integration).
    """
    v = np.asarray(face_values, float) - p_ref
    if kind == "p":
        p = v
        cp = v / q if q else None
    else:
        cp = v
        p = v * q if q else None
    base = p if p is not None else cp
    unit = "N/m2" if p is not None else "per q"
    n = np.asarray(face_normals, float)
    return SurfaceQuantities(cp=cp, p_Pa=p, force_per_area=-base[:, None] * n, normal_force_per_area=-base,
                             force_unit=unit)


@dataclass
class LiftDistribution:
    """Lift per unit length along the car and its running sum from the nose.

    Attributes
    ----------
    edges_m : (k + 1,) float
        Station edges along x (rearward), m.
    x_m : (k,) float
        Station centres, m.
    dL_dx : (k,) float
        Lift per unit length, N/m (+ up), or m (per unit q) when only Cp is known.
    cumulative : (k + 1,) float
        Lift from the nose up to each edge, N (or m2 per q); ``cumulative[-1]`` is the total lift.
    """

    edges_m: np.ndarray
    x_m: np.ndarray
    dL_dx: np.ndarray
    cumulative: np.ndarray

    def at(self, x: float) -> float:
        """Running lift from the nose to station ``x`` (m), linear between edges."""
        return float(np.interp(x, self.edges_m, self.cumulative))


def lift_distribution(centroids, area_vectors, face_values, *, p_ref=0.0, scale=1.0, n_stations=80,
                      edges=None) -> LiftDistribution:
    """Lift along x by summing face forces into stations of equal length.

    ``dL/dx = sum over faces whose centroid lies in the station of -(p - p_ref) n_z dA, divided by its
    length``.  The running sum from the nose ends at the total lift exactly.  A slab of a closed body
    cut by planes x = const carries the lift of its own skin (the cut faces are vertical, so they carry
    no lift); under hydrostatic pressure that is rho g times the slab's volume (Archimedes, slab by slab).

    Parameters
    ----------
    centroids : (m, 3) float
        Face centroids, m.
    area_vectors : (m, 3) float
        Outward n dA, m2.
    face_values : (m,) float
        Pressure on every face, Pa (or Cp).
    p_ref : float
        Reference pressure subtracted, same unit as the values.
    scale : float
        Factor applied to the forces (q, Pa, to turn Cp into N; 1 for Pa).
    n_stations : int
        Stations between the body's ends (ignored when ``edges`` is given).
    edges : (k + 1,) float, optional
        Station edges, m, increasing.

    Returns
    -------
    LiftDistribution
    """
    x = np.asarray(centroids, float)[:, 0]
    fz = scale * face_forces(area_vectors, face_values, p_ref)[:, 2]
    if edges is None:
        lo, hi = float(x.min()), float(x.max())
        pad = 1e-9 * max(hi - lo, 1.0)
        edges = np.linspace(lo - pad, hi + pad, int(n_stations) + 1)
    edges = np.asarray(edges, float)
    if edges.ndim != 1 or len(edges) < 2 or np.any(np.diff(edges) <= 0):
        raise ValueError("edges must be an increasing 1D array of at least 2 stations")
    idx = np.clip(np.searchsorted(edges, x, side="right") - 1, 0, len(edges) - 2)
    per = np.bincount(idx, weights=fz, minlength=len(edges) - 1)
    cum = np.concatenate([[0.0], np.cumsum(per)])
    return LiftDistribution(edges, 0.5 * (edges[1:] + edges[:-1]), per / np.diff(edges), cum)


@dataclass
class Section:
    """The body cut by the plane y = const, with the field along the cut.

    Attributes
    ----------
    x_m, z_m : (k,) float
        Midpoints of the cut segments, m, sorted by x.
    values : (k,) float
        Field value of the face each segment crosses.
    upper : (k,) bool
        True where that face's outward normal points up.
    faces : (k,) int
    """

    x_m: np.ndarray
    z_m: np.ndarray
    values: np.ndarray
    upper: np.ndarray
    faces: np.ndarray


def section_at_y(vertices, faces, face_normals, face_values, y=0.0) -> Section:
    """Cut the surface with the plane ``y`` (m) and read the field along the cut.

    Parameters
    ----------
    vertices : (n, 3) float
    faces : (m, 3) int
    face_normals : (m, 3) float
    face_values : (m,) float
    y : float
        Plane position, m (0: the centre line).
    """
    v = np.asarray(vertices, float)
    f = np.asarray(faces)
    d = v[:, 1] - y
    df = d[f]
    s = np.sign(df)
    s[s == 0] = 1  # a vertex on the plane counts as the positive side, so each crossing is found once
    cross = np.flatnonzero((s.min(axis=1) < 0) & (s.max(axis=1) > 0))
    # Each crossed triangle has exactly two edges whose ends lie on opposite sides: average their cuts.
    acc = np.zeros((len(cross), 3))
    cnt = np.zeros(len(cross))
    for a, b in ((0, 1), (1, 2), (2, 0)):
        ia, ib = f[cross, a], f[cross, b]
        sa, sb = s[cross, a], s[cross, b]
        m = sa != sb
        t = d[ia[m]] / (d[ia[m]] - d[ib[m]])
        acc[m] += v[ia[m]] + t[:, None] * (v[ib[m]] - v[ia[m]])
        cnt[m] += 1
    pts = acc / np.maximum(cnt, 1)[:, None]
    order = np.argsort(pts[:, 0], kind="stable")
    fc = cross[order]
    return Section(pts[order, 0], pts[order, 2], np.asarray(face_values, float)[fc],
                   np.asarray(face_normals)[fc, 2] > 0, fc)
