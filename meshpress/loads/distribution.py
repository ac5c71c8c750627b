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


def _tent_cdf(x0, x1, x2, e):
    """Share of a triangle's area with x below ``e``; its corners' x sorted as x0 <= x1 <= x2.

    The area of a triangle per unit x is a tent: rising linearly from x0 to x1, falling to x2, so
    the share is ``(e - x0)^2 / ((x2 - x0)(x1 - x0))`` up to x1 and ``1 - (x2 - e)^2 / ((x2 - x0)(x2 - x1))``
    after it.
    """
    span = x2 - x0
    with np.errstate(divide="ignore", invalid="ignore"):
        a = (e - x0) ** 2 / (span * (x1 - x0))
        b = 1.0 - (x2 - e) ** 2 / (span * (x2 - x1))
    out = np.where(e <= x1, a, b)
    return np.clip(np.nan_to_num(out, nan=0.5), 0.0, 1.0)


def lift_distribution(triangles, area_vectors, face_values, *, p_ref=0.0, scale=1.0, n_stations=80,
                      edges=None) -> LiftDistribution:
    """Lift along x: the face forces summed over stations of equal length.

    Each face carries ``dF_z = -(p - p_ref) n_z dA`` spread over its own x-extent as its area is
    (a tent between its corners' x), so a face cut by a station edge shares its lift between the two
    stations exactly and the running sum is the exact lift ahead of each edge for face-constant
    pressure; it ends at the total lift.  A slab of a closed body cut by planes x = const carries the
    lift of its own skin (the cut faces are vertical and carry no lift); under hydrostatic pressure
    that is rho g times the slab's volume (Archimedes, slab by slab), a check with an exact answer.

    Parameters
    ----------
    triangles : (m, 3, 3) float
        Face corners, m.
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
    xs = np.sort(np.asarray(triangles, float)[:, :, 0], axis=1)
    fz = scale * face_forces(area_vectors, face_values, p_ref)[:, 2]
    if edges is None:
        lo, hi = float(xs[:, 0].min()), float(xs[:, 2].max())
        edges = np.linspace(lo, hi, int(n_stations) + 1)
    edges = np.asarray(edges, float)
    if edges.ndim != 1 or len(edges) < 2 or np.any(np.diff(edges) <= 0):
        raise ValueError("edges must be an increasing 1D array of at least 2 stations")
    # Faces wholly ahead of an edge count in full (sorted cumulative sum); faces it cuts, in part.
    order = np.argsort(xs[:, 2])
    ahead = np.concatenate([[0.0], np.cumsum(fz[order])])
    cum = ahead[np.searchsorted(xs[order, 2], edges, side="right")]
    for k, e in enumerate(edges):
        cut = np.flatnonzero((xs[:, 0] < e) & (xs[:, 2] > e))
        if len(cut):
            t = xs[cut]
            cum[k] += float(_tent_cdf(t[:, 0], t[:, 1], t[:, 2], e) @ fz[cut])
    # Faces behind the last edge or ahead of the first (when edges are given) are outside the stations.
    per = np.diff(cum)
    return LiftDistribution(edges, 0.5 * (edges[1:] + edges[:-1]), per / np.diff(edges), cum)


@dataclass
class Section:
    """The body cut by the plane y = const, with the field along the cut.

    Attributes
    ----------
    x_m, z_m : (k,) float
        Midpoints of the cut segments, m, sorted by x.
    values : (k,) float
        Field at the segment midpoints.
    upper : (k,) bool
        True where that face's outward normal points up.
    faces : (k,) int
    """

    x_m: np.ndarray
    z_m: np.ndarray
    values: np.ndarray
    upper: np.ndarray
    faces: np.ndarray


def section_at_y(vertices, faces, face_normals, vertex_values, y=0.0) -> Section:
    """Cut the surface with the plane ``y`` (m) and read the field along the cut.

    Parameters
    ----------
    vertices : (n, 3) float
    faces : (m, 3) int
    face_normals : (m, 3) float
    vertex_values : (n,) float
        Field at the vertices; read along each cut edge by linear interpolation.
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
    vv = np.asarray(vertex_values, float)
    acc = np.zeros((len(cross), 3))
    val = np.zeros(len(cross))
    cnt = np.zeros(len(cross))
    for a, b in ((0, 1), (1, 2), (2, 0)):
        ia, ib = f[cross, a], f[cross, b]
        sa, sb = s[cross, a], s[cross, b]
        m = sa != sb
        t = d[ia[m]] / (d[ia[m]] - d[ib[m]])
        acc[m] += v[ia[m]] + t[:, None] * (v[ib[m]] - v[ia[m]])
        val[m] += vv[ia[m]] + t * (vv[ib[m]] - vv[ia[m]])
        cnt[m] += 1
    pts = acc / np.maximum(cnt, 1)[:, None]
    val = val / np.maximum(cnt, 1)
    order = np.argsort(pts[:, 0], kind="stable")
    fc = cross[order]
    return Section(pts[order, 0], pts[order, 2], val[order], np.asarray(face_normals)[fc, 2] > 0, fc)
