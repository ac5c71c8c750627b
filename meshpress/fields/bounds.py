"""Bounded extrapolation beyond the outermost taps, shared by every method.

Interpolants such as the thin-plate spline or the biharmonic field continue
their trend beyond the last tap (a wing tip, a bumper corner) and can run away.
Every method passes its face values through :func:`bound_values`:

- ``"clamp"`` (default): values are clipped to the range of the tap readings;
- ``"decay"``: beyond the coverage radius the value relaxes to a user-given
  ``default`` (e.g. Cp 0, free-stream static) over ``decay_length`` m, then is
  clipped to the range of the readings and the default;
- ``"none"``: values are left as the method gives them.

A face counts as *extrapolated* when its centre is further (straight line)
from every tap than the coverage radius, the largest distance from a tap to its
nearest neighbouring tap: inside that radius a face lies between taps.  The
area share of such faces, and of faces whose value had to be clipped, is
reported on the field (``extrapolated_share_``, ``clamped_share_``).
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..errors import InputError

EXTRAPOLATION = ("clamp", "decay", "none")


def coverage_radius(tap_points: np.ndarray) -> float:
    """Largest nearest-neighbour distance (m) among the taps (n, 3); inf for one tap."""
    if len(tap_points) < 2:
        return np.inf
    d, _ = cKDTree(tap_points).query(tap_points, k=2)
    return float(d[:, 1].max())


def check_extrapolation(mode, default):
    if mode not in EXTRAPOLATION:
        raise InputError(f"--extrapolation {mode!r} is not one of: {', '.join(EXTRAPOLATION)}")
    if mode == "decay" and default is None:
        raise InputError("--extrapolation decay needs a --far-value (the value far from every tap, e.g. 0)")


def bound_values(values, centres, areas, tap_points, tap_values, *, mode="clamp", default=None,
                 decay_length=None):
    """Bound a field's face values and measure how much of the area is extrapolated.

    Parameters
    ----------
    values : (m,) float
        Face values from the method (Pa or Cp).
    centres : (m, 3) float
        Face centres, m.
    areas : (m,) float
        Face areas, m2.
    tap_points : (n, 3) float
        Tap positions on the surface, m.
    tap_values : (n,) float
    mode : {"clamp", "decay", "none"}
    default : float, optional
        Far value for ``"decay"``.
    decay_length : float, optional
        e-folding length (m) of the decay; default the coverage radius.

    Returns
    -------
    bounded : (m,) float
    extrapolated_share : float
        Area share of faces beyond the coverage radius, 0-1.
    clamped_share : float
        Area share of faces whose value was changed by the bounds, 0-1.
    """
    values = np.asarray(values, dtype=float)
    r = coverage_radius(tap_points)
    d, _ = cKDTree(tap_points).query(centres)
    far = d > r
    total = float(areas.sum()) or 1.0
    out = values.copy()
    if mode == "decay":
        L = decay_length or (r if np.isfinite(r) else 1.0)
        w = np.exp(-np.clip(d - r, 0, None) / L)
        out = w * out + (1 - w) * default
        lo, hi = min(tap_values.min(), default), max(tap_values.max(), default)
    else:
        lo, hi = tap_values.min(), tap_values.max()
    if mode != "none":
        out = np.clip(out, lo, hi)
    changed = np.abs(out - values) > 1e-12 * max(1.0, float(np.abs(tap_values).max()))
    return out, float(areas[far].sum() / total), float(areas[changed].sum() / total)


class BoundedMixin:
    """Applies :func:`bound_values` to a method's raw face values and keeps the shares."""

    def _bounded(self, raw):
        body, taps = self.body_, self.taps_
        out, self.extrapolated_share_, self.clamped_share_ = bound_values(
            raw, body.centroids, body.face_areas, taps.points, taps.values,
            mode=self.extrapolation, default=self.far_value)
        if self.extrapolated_share_ > 0.0:
            note = (f"{100 * self.extrapolated_share_:.1f} % of the area lies beyond the taps' coverage "
                    f"(extrapolated, {self.extrapolation}); {100 * self.clamped_share_:.1f} % was bounded")
            if note not in self.warnings_:
                self.warnings_.append(note)
        return out
