"""Bodies whose surface pressure is known in closed form, for tests and benchmarks.

- Sphere in potential flow: ``Cp = 1 - 9/4 sin^2(theta)``, theta from the flow
  axis (e.g. Anderson, Fundamentals of Aerodynamics, sec. 6.4); a hemisphere on
  the ground (the ground plane is a symmetry plane) has ``CL = 11/16`` on its
  base area.
- Ellipsoid in potential flow along x: the perturbation is uniform inside, and
  the surface speed is ``V = U |t| 2 / (2 - alpha0)`` with ``t`` the tangential
  part of the flow direction and ``alpha0 = abc int_0^inf dl / ((a^2+l)^(3/2)
  (b^2+l)^(1/2) (c^2+l)^(1/2))`` (Lamb, Hydrodynamics, sec. 114); a half
  ellipsoid on the ground is again exact by symmetry.
- Joukowski section: the flow past a circle through ``zeta = 1`` mapped by
  ``z = zeta + 1/zeta``, with the Kutta condition at the trailing edge;
  exact surface pressure from the map and exact lift ``rho U Gamma`` per span
  (Kutta-Joukowski), normal to the flow, which comes at the angle of attack
  to the x axis: the z-force is ``L cos(alpha)``.  Extruded along y and closed by flat end caps (which carry
  no lift), the 2D pressure is taken as the known truth on the 3D body.
- Biharmonic interpolation on the unit sphere: the minimiser of ``int (Lap u)^2``
  through given values at points is Wahba's spline (Wahba, SIAM J. Sci. Stat.
  Comput. 2 (1981) 5-16), a constant plus a combination of the kernel
  ``R(t) = 1/(4 pi) sum_{l>=1} (2l+1) / (l (l+1))^2 P_l(t)``; the series sums to
  ``(1 - pi^2/6 + Li2((1 + t)/2)) / (4 pi)`` (derived: at t = 1 it telescopes to
  1/(4 pi); checked against the series in the tests).  It is the continuum limit
  of the ``biharmonic`` method on a sphere.
"""

from __future__ import annotations

import numpy as np
from scipy.integrate import quad


def uv_hemisphere(radius=1.0, n_lat=40, n_lon=80):
    """Open hemisphere z >= 0 with a ring of vertices on z = 0: (vertices (n, 3), faces (m, 3)), outward."""
    th = np.linspace(0, np.pi / 2, n_lat + 1)[1:]
    ph = np.linspace(0, 2 * np.pi, n_lon, endpoint=False)
    T, P = np.meshgrid(th, ph, indexing="ij")
    v = radius * np.stack([np.sin(T) * np.cos(P), np.sin(T) * np.sin(P), np.cos(T)], -1).reshape(-1, 3)
    v = np.vstack([[0, 0, radius], v])
    idx = 1 + np.arange(n_lat * n_lon).reshape(n_lat, n_lon)
    f = [np.stack([np.zeros(n_lon, int), idx[0], np.roll(idx[0], -1)], -1)]
    a0, a1 = idx[:-1], np.roll(idx[:-1], -1, axis=1)
    b0, b1 = idx[1:], np.roll(idx[1:], -1, axis=1)
    f += [np.stack([a0, b0, b1], -1).reshape(-1, 3), np.stack([a0, b1, a1], -1).reshape(-1, 3)]
    return v, np.vstack(f)


def sphere_cp(points, center=(0.0, 0.0, 0.0)):
    """(n,) Cp of a sphere in potential flow along x at surface points (n, 3)."""
    d = np.asarray(points, float) - center
    d /= np.linalg.norm(d, axis=1, keepdims=True)
    return 1.0 - 2.25 * (1.0 - d[:, 0] ** 2)


HEMISPHERE_CL = 11.0 / 16.0  # on the base area pi R^2 [derived from sphere_cp]


def half_ellipsoid(a, b, c, n_lat=40, n_lon=80):
    """Open half ellipsoid z >= 0, semi-axes a (x), b (y), c (z): vertices, faces."""
    v, f = uv_hemisphere(1.0, n_lat, n_lon)
    return v * [a, b, c], f


def ellipsoid_alpha0(a, b, c):
    """Lamb's alpha0 for flow along the a (x) axis."""
    g = lambda l: 1.0 / ((a * a + l) ** 1.5 * np.sqrt((b * b + l) * (c * c + l)))
    return a * b * c * quad(g, 0, np.inf, limit=200)[0]


def ellipsoid_cp(points, a, b, c):
    """(n,) Cp on the ellipsoid x^2/a^2 + y^2/b^2 + z^2/c^2 = 1 in potential flow along x."""
    p = np.asarray(points, float)
    n = p / np.array([a, b, c]) ** 2
    n /= np.linalg.norm(n, axis=1, keepdims=True)
    k = 2.0 / (2.0 - ellipsoid_alpha0(a, b, c))
    return 1.0 - k * k * (1.0 - n[:, 0] ** 2)


class Joukowski:
    """Joukowski section: circle centre ``(-eps, mu)`` (times the map's unit), radius through zeta = 1.

    Parameters
    ----------
    eps : float
        Thickness parameter (eps = 0.1 gives 11.8 % thickness/chord with mu = 0.04, measured on the contour).
    mu : float
        Camber parameter.
    alpha_deg : float
        Angle of attack, degrees (flow along +x, lift along +z).
    chord : float
        Scale the section to this chord, m.
    """

    def __init__(self, eps=0.08, mu=0.04, alpha_deg=4.0, chord=0.3):
        self.z0 = complex(-eps, mu)
        self.a = abs(1 - self.z0)
        self.beta = np.arcsin(mu / self.a)
        self.alpha = np.radians(alpha_deg)
        xs = self._map(self._circle(np.linspace(0, 2 * np.pi, 20001))).real
        self.x_le, self.x_te = xs.min(), xs.max()
        self.scale = chord / (self.x_te - self.x_le)
        self.chord = chord

    def _circle(self, th):
        # theta measured so that th = 0 is the trailing edge zeta = 1.
        return self.z0 + self.a * np.exp(1j * (th - self.beta))

    @staticmethod
    def _map(zeta):
        return zeta + 1.0 / zeta

    def contour(self, th):
        """(k, 2) points (x from the leading edge, z), m, at circle angles th."""
        z = self._map(self._circle(th))
        return np.column_stack([(z.real - self.x_le) * self.scale, z.imag * self.scale])

    def cp(self, th):
        """(k,) exact Cp at circle angles th (Kutta condition; finite at the trailing edge)."""
        th = np.asarray(th, float)
        with np.errstate(invalid="ignore", divide="ignore"):
            v = np.abs(self._velocity(th))
        te = ~np.isfinite(v) | (np.abs(1 - 1 / self._circle(th) ** 2) < 1e-6)
        for i in np.flatnonzero(te):  # the finite limit at the cusp, from the neighbouring angles
            v[i] = 0.5 * np.abs(self._velocity(th[i] + np.array([1e-4, -1e-4]))).sum()
        return 1 - v**2

    def _velocity(self, th):
        """Complex surface velocity (U = 1) at circle angles th: W(zeta) / (dz/dzeta)."""
        zeta = self._circle(th)
        s = zeta - self.z0
        gamma = 4 * np.pi * self.a * np.sin(self.alpha + self.beta)
        W = np.exp(-1j * self.alpha) - self.a**2 * np.exp(1j * self.alpha) / s**2 + 1j * gamma / (2 * np.pi * s)
        return W / (1 - 1 / zeta**2)

    @property
    def cl(self):
        """Exact section lift coefficient on the chord, Kutta-Joukowski: 2 Gamma / (U c), normal to the flow."""
        gamma = 4 * np.pi * self.a * np.sin(self.alpha + self.beta) * self.scale
        return 2 * gamma / self.chord

    @property
    def cz(self):
        """Exact force coefficient along +z (normal to the chord line's x axis): ``cl cos(alpha)``, the
        flow coming at ``alpha`` to x and the drag being zero in potential flow (d'Alembert)."""
        return self.cl * np.cos(self.alpha)

    def body(self, span=0.8, n_around=240, n_span=80):
        """Extruded section closed by flat end caps: vertices (n, 3), faces (m, 3), and (n,) circle angle
        of every side vertex (nan on cap centres). x along the chord, y span, z up."""
        # Cluster points at the leading and trailing edges: uniform in circle angle does that.
        th = np.linspace(0, 2 * np.pi, n_around, endpoint=False)
        xz = self.contour(th)
        ys = np.linspace(-span / 2, span / 2, n_span + 1)
        V = np.array([[x, y, z] for y in ys for x, z in xz])
        idx = np.arange(len(V)).reshape(n_span + 1, n_around)
        a0, a1 = idx[:-1], np.roll(idx[:-1], -1, axis=1)
        b0, b1 = idx[1:], np.roll(idx[1:], -1, axis=1)
        faces = [np.stack([a0, a1, b1], -1).reshape(-1, 3), np.stack([a0, b1, b0], -1).reshape(-1, 3)]
        # Caps: a ladder between the upper (th in (0, pi)) and lower surfaces, matched by index.
        half = n_around // 2
        up = list(range(0, half + 1))  # TE -> LE over the upper side (th increasing)
        lo = [0] + list(range(n_around - 1, half - 1, -1))  # TE -> LE along the lower side
        for row, flip in ((idx[0], True), (idx[-1], False)):
            cap = []
            for i in range(len(up) - 1):
                u0, u1, l0, l1 = row[up[i]], row[up[i + 1]], row[lo[i]], row[lo[i + 1]]
                if u0 != l0:
                    cap.append([u0, l0, u1] if not flip else [u0, u1, l0])
                if u1 != l1:
                    cap.append([u1, l0, l1] if not flip else [u1, l1, l0])
            faces.append(np.array(cap))
        F = np.vstack(faces)
        tri = V[F]
        vol = np.einsum("ij,ij->", tri[:, 0], np.cross(tri[:, 1], tri[:, 2]))
        if vol < 0:
            F = F[:, ::-1]
        return V, F

    def cp_at(self, points):
        """(n,) exact Cp at points on the sides: each takes the Cp of the nearest contour point."""
        from scipy.spatial import cKDTree

        th = np.linspace(0, 2 * np.pi, 40001)
        tree = cKDTree(self.contour(th))
        _, i = tree.query(np.asarray(points, float)[:, [0, 2]])
        return self.cp(th[i])


def sphere_spline_kernel(t):
    """Wahba's order-2 spline kernel on the unit sphere, R(t) of the cosine t of the angle between two points.

    ``R(t) = 1/(4 pi) sum_{l>=1} (2l+1)/(l(l+1))^2 P_l(t) = (1 - pi^2/6 + Li2((1+t)/2)) / (4 pi)``, with
    ``Li2(z) = scipy.special.spence(1 - z)``.
    """
    from scipy.special import spence

    t = np.clip(np.asarray(t, float), -1.0, 1.0)
    return (1.0 - np.pi**2 / 6.0 + spence((1.0 - t) / 2.0)) / (4.0 * np.pi)


def sphere_spline_kernel_series(t, terms=2000):
    """The same kernel by its Legendre series (``terms`` terms; truncation error below 1/terms^2)."""
    t = np.asarray(t, float)
    p0, p1 = np.ones_like(t), t.copy()
    out = 3.0 / 4.0 * p1
    for l in range(1, terms):
        p0, p1 = p1, ((2 * l + 1) * t * p1 - l * p0) / (l + 1)
        n = l + 1
        out = out + (2 * n + 1) / (n * (n + 1)) ** 2 * p1
    return out / (4.0 * np.pi)


def sphere_spline(points, values):
    """Wahba's biharmonic spline on the unit sphere through ``values`` (k,) at unit vectors ``points`` (k, 3).

    Returns
    -------
    callable
        ``u(x)`` for unit vectors x (n, 3) (normalised inside), the minimiser of ``int (Lap u)^2`` over the
        sphere with ``u(points) = values``.
    """
    y = np.asarray(points, float)
    y = y / np.linalg.norm(y, axis=1, keepdims=True)
    k = len(y)
    A = np.zeros((k + 1, k + 1))
    A[:k, :k] = sphere_spline_kernel(y @ y.T)
    A[:k, k] = A[k, :k] = 1.0
    z = np.linalg.solve(A, np.r_[np.asarray(values, float), 0.0])
    c, a = z[:k], z[k]

    def u(x):
        x = np.asarray(x, float)
        x = x / np.linalg.norm(x, axis=1, keepdims=True)
        out = np.full(len(x), a)
        for s in range(0, len(x), 20_000):
            out[s:s + 20_000] += sphere_spline_kernel(x[s:s + 20_000] @ y.T) @ c
        return out

    return u
