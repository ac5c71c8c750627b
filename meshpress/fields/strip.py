"""The centre-line strip method: the baseline many teams use today.

Only taps near the centre plane (``|y| <= band``) are used.  They are split into
an upper row (tap on a face whose normal points up) and a lower row, each read
as a profile p(x) (linear between taps, held constant beyond the end taps).
Every face takes the profile value at its x, from the upper row if it faces up
and the lower row otherwise; integrating ``-p n dA`` then gives exactly the
strip integral ``L = int (p_lower(x) - p_upper(x)) w(x) dx`` with ``w(x)`` the
local plan width of the body (common practice).  It ignores every cross-car
variation and every off-centre tap: comparing it with the surface methods
shows what they gain.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .base import Field
from .bounds import BoundedMixin


def _profile(x, v):
    order = np.argsort(x)
    xs, vs = x[order], v[order]
    ux, inv = np.unique(xs, return_inverse=True)
    uv = np.bincount(inv, vs) / np.bincount(inv)
    return ux, uv


class CentreLineStripField(BoundedMixin, Field):
    """Centre-line strips: upper and lower centre-line profiles swept across the width.

    Parameters
    ----------
    band : float
        Half-width (m) of the band around the centre plane y = 0 whose taps are used.
    extrapolation, far_value
        As for the other methods (the profiles are already held constant beyond their ends).
    """

    name = "strip"

    def __init__(self, band=0.05, extrapolation="clamp", far_value=None):
        self.band = band
        self.extrapolation = extrapolation
        self.far_value = far_value

    def _fit(self, body, taps, progress):
        from .bounds import check_extrapolation

        check_extrapolation(self.extrapolation, self.far_value)
        if not self.band > 0:
            raise InputError(f"--band must be positive (m), got {self.band}")
        sel = np.abs(taps.points[:, 1]) <= self.band
        if not sel.any():
            raise InputError(f"the strip method found no tap within {self.band * 1000:g} mm of the centre "
                             "plane y = 0 (--band)")
        up = body.face_normals[taps.faces, 2] >= 0
        rows = {}
        for name, m in (("upper", sel & up), ("lower", sel & ~up)):
            if m.any():
                rows[name] = _profile(taps.points[m, 0], taps.values[m])
        for name, other in (("upper", "lower"), ("lower", "upper")):
            if name not in rows:
                rows[name] = rows[other]
                self.warnings_.append(f"strip method: no {name} centre-line taps; the {other} row is used there")
        self.rows_ = rows
        self.n_used_ = int(sel.sum())

    def _values(self, x, up):
        return np.where(up, np.interp(x, *self.rows_["upper"]), np.interp(x, *self.rows_["lower"]))

    def _face_values(self, progress):
        b = self.body_
        return self._bounded(self._values(b.centroids[:, 0], b.face_normals[:, 2] >= 0))

    def at_points(self, points):
        self._check()
        p = np.asarray(points, float).reshape(-1, 3)
        _, fi = self.body_.centroid_tree.query(p)
        return self._values(p[:, 0], self.body_.face_normals[fi, 2] >= 0)

    def loo_residuals(self):
        """(n,) float: leave-one-out residuals; taps outside the band do not change the fit, so only
        the band's taps are refitted (nan where none would be left)."""
        from .base import _subset

        self._check()
        taps = self.taps_
        out = taps.values - self.at_points(taps.points)
        inband = np.flatnonzero(np.abs(taps.points[:, 1]) <= self.band)
        for i in inband:
            keep = np.ones(len(taps), bool)
            keep[i] = False
            try:
                other = CentreLineStripField(**self.get_params()).fit(self.body_, _subset(taps, keep))
            except InputError:
                out[i] = np.nan
                continue
            out[i] = taps.values[i] - other.at_points(taps.points[i : i + 1])[0]
        return out

    def describe(self):
        return f"centre-line strips ({self.n_used_} taps within {self.band * 1000:g} mm of y = 0)"
