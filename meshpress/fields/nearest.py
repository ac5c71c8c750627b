"""Nearest tap along the surface: tributary areas.

Each point of the surface takes the reading of the tap closest to it *along the
surface* (a geodesic Voronoi diagram of the taps, from heat-method distances:
Crane et al., ACM TOG 32(5), 2013), so a face's force is its tap's pressure
times its area: the tributary-area weighting long used to integrate pressure
taps in building wind-tunnel practice (common practice).

The field is piecewise constant, hence bounded by the readings; faces cut by a
cell boundary take the mean of their corners.  Leave-one-out has an exact
closed form: without tap i, its point takes the reading of the next-nearest
tap.
"""

from __future__ import annotations

import numpy as np

from .base import Field
from .bounds import BoundedMixin
from .surface_common import TARGET_FACES, by_point_chunks, check_common, prepare


class NearestTapField(BoundedMixin, Field):
    """Tributary areas: each face takes the reading of its nearest tap along the surface.

    Parameters
    ----------
    work_faces : int
        Face count of the working copy for big meshes.
    extrapolation : {"clamp", "decay", "none"}
        (The field is already bounded; ``"decay"`` relaxes far faces to ``far_value``.)
    far_value : float, optional
    """

    name = "nearest"

    def __init__(self, work_faces=TARGET_FACES, extrapolation="clamp", far_value=None):
        self.work_faces = work_faces
        self.extrapolation = extrapolation
        self.far_value = far_value

    def _fit(self, body, taps, progress):
        check_common(self)
        wm, f, b = prepare(self, body, taps, progress)
        D = wm.tap_distances(taps.points, progress=progress)
        self.work_ = wm
        self.distances_ = D
        self.owner_ = np.argmin(D, axis=0)  # (n_work,) tap index of each working vertex
        Dt = wm.distance.at_points(D, f, b)  # [j, i]: from tap j to the point of tap i
        np.fill_diagonal(Dt, np.inf)
        y = taps.values
        self.loo_ = y - y[np.argmin(Dt, axis=0)] if len(y) > 1 else np.zeros(1)

    def _face_values(self, progress):
        return self._bounded(self.work_.vertex_to_full_faces(self.taps_.values[self.owner_]))

    def at_points(self, points):
        self._check()
        f, b = self.work_.locate(points)
        dist = self.work_.distance
        return by_point_chunks(f, b, lambda fc, bc: self.taps_.values[np.argmin(
            dist.at_points(self.distances_, fc, bc), axis=0)])

    def loo_residuals(self):
        """(n,) float: reading minus the reading of the next-nearest tap (exact leave-one-out)."""
        self._check()
        return self.loo_.copy()

    def describe(self):
        return "nearest tap along the surface (tributary areas)"
