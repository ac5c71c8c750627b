"""An original car-like body and an invented pressure field, for the demo and benchmarks.

The body is a loft of superellipse sections whose width, roof line and floor
line follow smooth (PCHIP) profiles; its two ends close at single vertices.
The Cp field is made up to look like a road car's (stagnation at the nose,
suction over the roof and under the floor, a low-pressure base); it is
**invented demo data**, not a measurement, and serves as a "known truth" in the
benchmarks.
"""

from __future__ import annotations

import numpy as np
from scipy.interpolate import PchipInterpolator

LENGTH = 4.2  # m
WHEELBASE_X = (0.85, 3.45)  # front and rear axle x from the nose, m

_X = np.array([0.0, 0.15, 0.5, 1.0, 1.3, 1.9, 2.3, 2.9, 3.5, 3.9, 4.1, 4.2])
_TOP = np.array([0.45, 0.62, 0.74, 0.82, 0.88, 1.30, 1.36, 1.33, 1.12, 1.00, 0.92, 0.80])
_BOT = np.array([0.34, 0.24, 0.17, 0.15, 0.15, 0.15, 0.15, 0.15, 0.16, 0.24, 0.32, 0.40])
_HALFW = np.array([0.70, 0.82, 0.88, 0.90, 0.90, 0.90, 0.90, 0.90, 0.89, 0.86, 0.80, 0.70])


def profiles(x):
    """Top z, bottom z and half width (m) at stations x (m from the nose)."""
    return PchipInterpolator(_X, _TOP)(x), PchipInterpolator(_X, _BOT)(x), PchipInterpolator(_X, _HALFW)(x)


def car_body(n_stations: int = 200, n_around: int = 100, exponent: float = 3.2, even: bool = False):
    """Closed car-like surface.

    Parameters
    ----------
    n_stations : int
        Sections along the length.
    n_around : int
        Points around each section.
    exponent : float
        Superellipse exponent of the sections (2: ellipse; larger: boxier).
    even : bool
        False (the default, kept for the existing benchmarks and samples): stations cosine-clustered at the
        ends and points evenly spaced in the superellipse parameter, which leaves strips of long, thin
        triangles along the roof and floor centre lines and the mid-height of the sides (160 mm across at
        ``n_around`` = 100, 74 mm at 400) and a fan of slivers about 0.2 m long closing each end at any
        resolution.  True: stations at equal arc length along the mean meridian and points at equal arc
        length around each section, so every part of the surface refines with the counts (choose
        ``n_around`` about 0.9 ``n_stations`` for near-equilateral triangles).

    Returns
    -------
    vertices : (n, 3) float
        Vehicle frame (x rearward from the nose, y right, z up from the ground), m.
    faces : (m, 3) int
        Triangles wound outward; about ``2 * n_stations * n_around`` of them.
    """
    if even:
        x = _even_stations(n_stations)
    else:
        s = np.linspace(0.0, 1.0, n_stations + 2)[1:-1]
        x = LENGTH * 0.5 * (1 - np.cos(np.pi * s))  # cluster stations at the ends
    zc, a, b = _sections(x)
    e = 2.0 / exponent
    t = np.linspace(0, 2 * np.pi, n_around, endpoint=False)
    if even:  # per section, the parameter values that split its perimeter into equal arcs
        tt = np.linspace(0, 2 * np.pi, 16 * n_around + 1)
        py, pz = _superellipse(tt, e)
        seg = np.hypot(a[:, None] * np.diff(py)[None, :], b[:, None] * np.diff(pz)[None, :])
        arc = np.concatenate([np.zeros((len(x), 1)), np.cumsum(seg, axis=1)], axis=1)
        t = np.stack([np.interp(arc[i, -1] * np.arange(n_around) / n_around, arc[i], tt) for i in range(len(x))])
    else:
        t = np.broadcast_to(t, (len(x), n_around))
    cy, sz = _superellipse(t, e)
    X = np.repeat(x[:, None], n_around, axis=1)
    Y = a[:, None] * cy
    Z = zc[:, None] + b[:, None] * sz
    ring = np.stack([X, Y, Z], axis=-1).reshape(-1, 3)
    nose = [0.0, 0.0, float(0.5 * (_TOP[0] + _BOT[0]))]
    tail = [LENGTH, 0.0, float(0.5 * (_TOP[-1] + _BOT[-1]))]
    verts = np.vstack([ring, nose, tail])
    i_nose, i_tail = len(ring), len(ring) + 1
    idx = np.arange(n_stations * n_around).reshape(n_stations, n_around)
    a0 = idx[:-1, :]
    a1 = np.roll(idx[:-1, :], -1, axis=1)
    b0 = idx[1:, :]
    b1 = np.roll(idx[1:, :], -1, axis=1)
    quads = np.concatenate([np.stack([a0, b0, b1], -1).reshape(-1, 3), np.stack([a0, b1, a1], -1).reshape(-1, 3)])
    first, last = idx[0], idx[-1]
    fan_n = np.stack([np.full(n_around, i_nose), first, np.roll(first, -1)], -1)
    fan_t = np.stack([np.full(n_around, i_tail), np.roll(last, -1), last], -1)
    faces = np.vstack([quads, fan_n, fan_t])
    # Make the winding outward (signed volume > 0).
    tri = verts[faces]
    if np.einsum("ij,ij->", tri[:, 0], np.cross(tri[:, 1], tri[:, 2])) < 0:
        faces = faces[:, ::-1]
    return verts, faces


def _sections(x):
    """Centre height, half width and half height (m) of the sections at stations x (m from the nose); the
    ends close to a point with a blunt (superellipse) end factor."""
    top, bot, hw = profiles(x)
    u = np.minimum(np.abs(2 * x / LENGTH - 1), 1.0)
    end = (1 - u**8) ** (1 / 8)
    return 0.5 * (top + bot), hw * end, 0.5 * (top - bot) * end


def _superellipse(t, e):
    c, sn = np.cos(t), np.sin(t)
    return np.sign(c) * np.abs(c) ** e, np.sign(sn) * np.abs(sn) ** e


def _even_stations(n):
    """n stations (m from the nose) at equal arc length along the mean of the body's side and top/bottom
    meridians, the blunt ends included."""
    t = np.linspace(0, 1, 200_001)
    s = 0.5 * (1 - np.cos(np.pi * t))
    s = np.where(s < 0.5, 0.5 * (2 * s) ** 4, 1 - 0.5 * (2 * (1 - s)) ** 4)  # resolve the ends' steep rise
    x = LENGTH * s
    zc, a, b = _sections(x)
    seg = lambda r: np.hypot(np.diff(x), np.diff(r))
    arc = np.concatenate([[0.0], np.cumsum(0.5 * seg(a) + 0.25 * (seg(zc + b) + seg(zc - b)))])
    return np.interp(np.linspace(0, arc[-1], n + 2)[1:-1], arc, x)


def car_cp(points, normals):
    """Invented Cp field over the car-like body (demo data and known truth).

    Parameters
    ----------
    points : (n, 3) float
        Vehicle frame, x from the nose (m), z from the ground (m).
    normals : (n, 3) float
        Outward unit normals.

    Returns
    -------
    (n,) float
        Cp, between about -1.3 and 1.
    """
    x, y, z = np.asarray(points, float).T
    nx, ny, nz = np.asarray(normals, float).T
    top, bot, hw = profiles(np.clip(x, 0, LENGTH))
    up = np.clip(nz, 0, 1)
    down = np.clip(-nz, 0, 1)
    fwd = np.clip(-nx, 0, 1)
    back = np.clip(nx, 0, 1)
    side = np.abs(ny)
    # Stagnation on forward faces, strongest low on the nose.
    cp = 1.0 * fwd**2 * np.exp(-((x - 0.0) / 0.6) ** 2)
    # Positive pressure at the base of the windscreen, suction over the header and roof.
    cp += up * (0.35 * np.exp(-((x - 1.35) / 0.18) ** 2) - 1.1 * np.exp(-((x - 2.05) / 0.35) ** 2)
                - 0.45 * np.exp(-((x - 3.0) / 0.5) ** 2) - 0.6 * np.exp(-((x - 0.35) / 0.25) ** 2))
    # Underbody: accelerating flow under the nose and at the diffuser throat.
    cp += down * (-0.08 - 0.45 * np.exp(-((x - 0.5) / 0.3) ** 2) - 0.3 * np.exp(-((x - 3.5) / 0.35) ** 2))
    # Sides: suction behind the front corners, milder along the doors.
    cp += side * (-0.25 - 0.7 * np.exp(-((x - 0.45) / 0.3) ** 2))
    # Base: a uniform-ish wake pressure on rearward faces.
    cp += back * (-0.32) * (1 - fwd)
    # A gentle cross-car variation so the field is not 2D.
    cp *= 1 - 0.15 * (y / np.maximum(hw, 1e-6)) ** 2
    return cp
