"""Constant-source panel method for closed triangle meshes in a uniform stream (Hess & Smith 1967).

An independent potential-flow truth for the bands benchmark (truth_cases.panel_car): the surface carries one
constant source density per triangle, the normal velocity is set to zero at every face centroid, and the surface
speed there gives Cp = 1 - |V|^2 / U^2 (Bernoulli, steady incompressible flow).

Influence of a panel: the velocity of a flat triangle of unit source density is evaluated with the exact closed
form for every pair of faces, near and far alike (no quadrature, so no near-field switch):

    V(P) = 1/(4 pi) * [ sum over edges of m_e * ln((R_a + R_b + l) / (R_a + R_b - l))  +  Omega(P) n ]

with ``m_e`` the edge's outward in-plane normal, ``R_a, R_b`` the distances from P to the edge's ends, ``l`` its
length, ``n`` the panel normal and ``Omega`` the signed solid angle of the triangle seen from P (van Oosterom and
Strackee, IEEE Trans. Biomed. Eng. 30, 1983).  The in-plane part is the divergence theorem applied to
``grad(1/R)`` on the panel (Hess and Smith, Prog. Aerospace Sci. 8, 1967; Katz and Plotkin, *Low-Speed
Aerodynamics*, 2001, sec. 10.4).  A face's own centroid sees ``Omega = 2 pi`` (the limit from outside, which
gives the jump of sigma/2 in the normal velocity).  ``ln(...)`` is computed as ``2 atanh(l / (R_a + R_b))``,
which keeps its precision on far panels.

Options: a ground plane at z = 0 by the method of images (a mirror body below the ground with sources of equal
strength, so the ground's normal velocity is zero by symmetry), a yaw angle (the stream rotated about z), and a
separated base (:func:`separated_base`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg

MIRROR = np.array([1.0, 1.0, -1.0])  # reflection in the ground plane z = 0


@dataclass
class PanelSolution:
    """A solved panel flow; arrays per face, velocities per unit free-stream speed.

    Attributes
    ----------
    sigma : (m,) float
        Source density of each face, per unit free-stream speed.
    velocity : (m, 3) float
        Surface (tangential) velocity at the centroids, in units of the free-stream speed.
    cp : (m,) float
        ``1 - |V|^2 / U^2`` at the centroids (attached potential flow everywhere).
    stream : (3,) float
        Unit free-stream direction.
    normal_residual : float
        Largest |normal velocity| left at a centroid, per unit stream speed (the solve's check: about 3e-8,
        the influences being kept in float32 for the surface velocity).
    """

    sigma: np.ndarray
    velocity: np.ndarray
    cp: np.ndarray
    stream: np.ndarray
    normal_residual: float


def stream_direction(yaw_deg: float = 0.0) -> np.ndarray:
    """Unit free stream ``(cos yaw, sin yaw, 0)``: along +x (the vehicle frame's rearward) turned about +z.

    Parameters
    ----------
    yaw_deg : float
        Degrees; positive turns the stream towards +y.

    Returns
    -------
    (3,) float
    """
    a = np.radians(yaw_deg)
    return np.array([np.cos(a), np.sin(a), 0.0])


def _geometry(vertices, faces):
    tri = np.asarray(vertices, float)[np.asarray(faces)]  # (m, 3 corners, 3)
    cross = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    area2 = np.linalg.norm(cross, axis=1)
    normals = cross / area2[:, None]
    edges = np.roll(tri, -1, axis=1) - tri  # edge e runs from corner e to corner e+1
    length = np.linalg.norm(edges, axis=2)
    out = np.cross(edges, normals[:, None, :]) / length[..., None]  # outward in-plane edge normals
    return tri, normals, 0.5 * area2, length, out


def source_velocity(points, tri, normals, length, out, own=None):
    """Velocity at ``points`` induced by each triangle of unit source density (exact closed form).

    Parameters
    ----------
    points : (n, 3) float
        m.
    tri, normals, length, out : arrays of :func:`_geometry`
        (m, 3, 3) corners, (m, 3) unit normals, (m, 3) edge lengths, (m, 3, 3) outward edge normals.
    own : (n,) int, optional
        Index of the face whose centroid each point is (-1: none): that pair takes the outside limit.

    Returns
    -------
    (n, m, 3) float
        Velocity per unit source density (1/s per 1/s of sigma: dimensionless).
    """
    d = tri[None, :, :, :] - points[:, None, None, :]  # (n, m, corner, 3)
    r = np.linalg.norm(d, axis=3)
    a, b, c = d[:, :, 0], d[:, :, 1], d[:, :, 2]
    ra, rb, rc = r[..., 0], r[..., 1], r[..., 2]
    num = np.einsum("nmk,nmk->nm", a, np.cross(b, c))
    den = (ra * rb * rc + np.einsum("nmk,nmk->nm", a, b) * rc + np.einsum("nmk,nmk->nm", a, c) * rb
           + np.einsum("nmk,nmk->nm", b, c) * ra)
    omega = -2.0 * np.arctan2(num, den)  # positive seen from the side the normal points to
    if own is not None:
        rows = np.flatnonzero(own >= 0)
        omega[rows, own[rows]] = 2.0 * np.pi
    log = 2.0 * np.arctanh(length[None] / (r + np.roll(r, -1, axis=2)))  # (n, m, edge)
    vel = np.einsum("nme,mek->nmk", log, out) + omega[..., None] * normals[None]
    return vel / (4.0 * np.pi)


def solve(vertices, faces, *, yaw_deg: float = 0.0, ground: bool = False, chunk_mb: float = 40.0):
    """Source strengths and surface Cp of a closed body in a uniform stream.

    Parameters
    ----------
    vertices : (n, 3) float
        m; outward-wound ``faces``.  With ``ground`` every vertex must lie above z = 0.
    faces : (m, 3) int
    yaw_deg : float
        Stream direction, :func:`stream_direction`.
    ground : bool
        Add the mirror body below z = 0 (method of images): a ground plane at rest relative to the body, as on
        the road (no boundary layer on it).
    chunk_mb : float
        Size of the blocks of the influence evaluation, MB.

    Returns
    -------
    PanelSolution
    """
    tri, normals, _, length, out = _geometry(vertices, faces)
    if ground and tri[..., 2].min() <= 0:
        raise ValueError("with a ground plane the body must lie above z = 0")
    m = len(tri)
    cent = tri.mean(axis=1)
    stream = stream_direction(yaw_deg)
    A = np.empty((m, m))
    W = np.empty((m, m, 3), np.float32)  # kept for the surface velocity; float32 halves the memory
    step = max(1, int(chunk_mb * 1e6 / (m * 3 * 3 * 8)))
    for i0 in range(0, m, step):
        rows = np.arange(i0, min(m, i0 + step))
        w = source_velocity(cent[rows], tri, normals, length, out, own=rows)
        if ground:  # the image panel's velocity at P is the mirror of the real panel's at P's mirror point
            w += source_velocity(cent[rows] * MIRROR, tri, normals, length, out) * MIRROR
        A[rows] = np.einsum("nmk,nk->nm", w, normals[rows])
        W[rows] = w
    sigma = scipy.linalg.solve(A, -normals @ stream)
    v = stream + np.einsum("nmk,m->nk", W, sigma, dtype=float)
    vn = np.einsum("nk,nk->n", v, normals)
    tangential = v - vn[:, None] * normals
    cp = 1.0 - np.einsum("nk,nk->n", tangential, tangential)
    return PanelSolution(sigma, tangential, cp, stream, float(np.abs(vn).max()))


def widest_station(centroids, normals, areas, stream):
    """Stream-wise station of the largest cross-section of a closed body.

    On a closed surface the cross-section area at station ``s`` is the frontal projection of the skin ahead of
    it, ``A(s) = -sum over faces with s_f < s of (n_f . e) a_f`` (divergence theorem on the slab ahead of ``s``).

    Parameters
    ----------
    centroids, normals : (m, 3) float
        m, unit outward normals.
    areas : (m,) float
        m2.
    stream : (3,) float
        Unit stream direction ``e``.

    Returns
    -------
    float
        ``s = r . e`` of the widest section, m.
    """
    s = centroids @ stream
    order = np.argsort(s)
    section = -np.cumsum((normals[order] @ stream) * areas[order])
    return float(s[order][np.argmax(section)])


def separated_base(centroids, normals, areas, cp, stream, *, base_cp: float = -0.25, min_facing: float = 0.5):
    """Replace the potential-flow Cp on the base by a constant wake pressure.

    The base is every face behind the widest section (:func:`widest_station`) whose outward normal faces
    downstream by more than ``min_facing`` (``n . e > min_facing``; 0.5 is skin turned more than 30 degrees
    away from the stream).  A constant base pressure of Cp about -0.2 to -0.3 behind a bluff body's separation is
    common practice for road vehicles, not a result derived here, and neither is the facing threshold: both are
    parameters of this benchmark truth.

    Parameters
    ----------
    centroids, normals : (m, 3) float
    areas : (m,) float
    cp : (m,) float
        Attached-flow Cp.
    stream : (3,) float
    base_cp : float
        Cp given to the base.
    min_facing : float
        Threshold on ``n . e``.

    Returns
    -------
    cp : (m,) float
        A copy with the base replaced.
    base : (m,) bool
        The faces replaced.
    """
    behind = centroids @ stream > widest_station(centroids, normals, areas, stream)
    base = behind & (normals @ stream > min_facing)
    out = np.array(cp, float)
    out[base] = base_cp
    return out, base


def face_geometry(vertices, faces):
    """Centroids (m, 3), unit normals (m, 3) and areas (m,) of a triangle mesh (m, m2)."""
    tri, normals, area, _, _ = _geometry(vertices, faces)
    return tri.mean(axis=1), normals, area
