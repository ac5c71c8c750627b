"""Mapping a mesh's own axes and unit into the vehicle frame.

Vehicle frame (SAE J1594): x rearward, y to the right, z up, metres.  With
``forward`` and ``up`` unit vectors in the mesh's axes, the frame's axes are
``e_x = -forward``, ``e_z = up`` and ``e_y = e_z x e_x`` (= forward x up, the
driver's right), which is right-handed.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

_AXES = {"x": 0, "y": 1, "z": 2}


def parse_axis(text: str, name: str = "axis") -> np.ndarray:
    """Parse a signed axis such as ``+z``, ``-y`` or ``x``.

    Returns
    -------
    (3,) float
        The unit vector in the mesh's own axes.
    """
    s = str(text).strip().lower()
    sign = 1.0
    if s[:1] in "+-" and len(s) > 1:
        sign = -1.0 if s[0] == "-" else 1.0
        s = s[1:]
    if s not in _AXES:
        raise InputError(f"{name} {text!r} is not a signed axis; use one of +x, -x, +y, -y, +z, -z")
    v = np.zeros(3)
    v[_AXES[s]] = sign
    return v


def rotation(up: str, forward: str) -> np.ndarray:
    """Rotation from mesh axes to vehicle axes.

    Parameters
    ----------
    up, forward : str
        Signed mesh axes that point up and forward, e.g. ``"+y"`` and ``"-z"``.

    Returns
    -------
    (3, 3) float
        ``R`` such that ``R @ v_mesh`` gives vehicle-frame components.
    """
    u = parse_axis(up, "up axis")
    f = parse_axis(forward, "forward axis")
    if abs(np.dot(u, f)) > 0.5:
        raise InputError(f"up axis {up!r} and forward axis {forward!r} must be different axes")
    ex = -f
    ez = u
    ey = np.cross(ez, ex)
    return np.vstack([ex, ey, ez])


class FrameMap:
    """Affine map mesh coordinates (mesh unit) -> vehicle frame (m).

    ``p_vehicle = scale * R @ p_mesh - origin``, where the origin is found from
    the body (ground height, mid-wheelbase, mid-track) by the loader.

    Parameters
    ----------
    R : (3, 3) float
        Rotation from :func:`rotation`.
    scale : float
        Metres per mesh unit.
    origin : (3,) float
        Vehicle-frame origin expressed in rotated, scaled mesh coordinates (m).
    """

    def __init__(self, R: np.ndarray, scale: float, origin: np.ndarray):
        self.R = np.asarray(R, dtype=float)
        self.scale = float(scale)
        self.origin = np.asarray(origin, dtype=float)

    def to_vehicle(self, points: np.ndarray) -> np.ndarray:
        """(n, 3) mesh coordinates -> (n, 3) vehicle coordinates in m."""
        p = np.asarray(points, dtype=float).reshape(-1, 3)
        return self.scale * p @ self.R.T - self.origin

    def to_mesh(self, points: np.ndarray) -> np.ndarray:
        """(n, 3) vehicle coordinates in m -> (n, 3) mesh coordinates."""
        p = np.asarray(points, dtype=float).reshape(-1, 3)
        return ((p + self.origin) @ self.R) / self.scale

    def direction_to_vehicle(self, v: np.ndarray) -> np.ndarray:
        """(n, 3) mesh directions -> (n, 3) vehicle directions (rotation only)."""
        return np.asarray(v, dtype=float).reshape(-1, 3) @ self.R.T

    def forward_coordinate_to_x(self, value: float, forward: str) -> float:
        """Vehicle x (m, before the origin shift along x) of a point whose
        coordinate on the mesh's forward axis is ``value`` (mesh unit)."""
        f = parse_axis(forward)
        axis = np.abs(f)
        # Position along the unsigned axis, as read off the file.
        p = axis * value
        return float((self.scale * self.R @ p)[0])
