"""Any method, fitted separately on each region of the body.

The body is cut into regions (:mod:`meshpress.bodies.regions`); each region is fitted
on its own taps with the chosen method, on its own faces only, so no value
leaks across a region boundary (roof vs underbody, upper vs lower face of a
wing).

A region with no taps takes ``empty_value`` if one is given (e.g. Cp 0, or a
known base pressure); otherwise the reading of the nearest tap in straight
line, and a warning names the region and its share of the area.  Leave-one-out
is done inside each region; a region's only tap is predicted by the same
empty-region rule.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..errors import InputError
from .base import Field, _subset


class RegionalField(Field):
    """Fit ``method`` on each region separately.

    Parameters
    ----------
    method : str
        Name of the method used inside each region.
    regions : str or (m,) array
        Region specification (:func:`meshpress.bodies.regions.face_regions`).
    empty_value : float, optional
        Value of a region that holds no tap (Pa or Cp as the taps).
    settings : dict, optional
        Settings of the inner method.
    """

    def __init__(self, method="biharmonic", regions="normal", empty_value=None, settings=None):
        self.method = method
        self.regions = regions
        self.empty_value = empty_value
        self.settings = dict(settings or {})

    @property
    def name(self):
        return f"{self.method}+regions"

    def _fit(self, body, taps, progress):
        from ..bodies.regions import face_regions, sub_body
        from . import make_field

        if self.method == "regions":
            raise InputError("--regions needs an inner --method (e.g. biharmonic)")
        names, index = face_regions(body, self.regions)
        self.region_names_ = names
        self.face_region_ = index
        tap_region = index[taps.faces]
        self.parts_ = []
        self.loo_ = np.full(len(taps), np.nan)
        self.loo_nested_ = np.full(len(taps), np.nan)
        values = np.empty(body.n_faces)
        area = body.face_areas
        total = float(area.sum())
        extrap = clamped = 0.0
        empty = []
        tree = cKDTree(taps.points)
        for r, name in enumerate(names):
            fm = index == r
            tm = tap_region == r
            share = float(area[fm].sum()) / total
            if tm.sum() == 0:
                if self.empty_value is not None:
                    values[fm] = self.empty_value
                else:
                    _, j = tree.query(body.centroids[fm])
                    values[fm] = taps.values[j]
                empty.append(f"{name} ({100 * share:.1f} % of the area)")
                extrap += share
                continue
            sub, new_face = sub_body(body, fm)
            st = _subset(taps, tm)
            st.faces = new_face[st.faces]
            if tm.sum() == 1:
                values[fm] = st.values[0]
                i = np.flatnonzero(tm)[0]
                self.loo_[i] = self.loo_nested_[i] = taps.values[i] - self._empty_prediction(taps, i)
                self.parts_.append((name, None))
                continue
            inner = make_field(self.method, **self._settings_for(tm, sub))
            inner.fit(sub, st, progress=progress)
            values[fm] = inner.face_values(progress=progress)
            self.loo_[tm] = inner.loo_residuals()
            self.loo_nested_[tm] = inner.loo_residuals_nested()
            extrap += share * getattr(inner, "extrapolated_share_", 0.0)
            clamped += share * getattr(inner, "clamped_share_", 0.0)
            self.warnings_ += [f"region {name}: {w}" for w in inner.warnings_]
            self.parts_.append((name, inner))
        if empty:
            rule = (f"take {self.empty_value:g}" if self.empty_value is not None
                    else "take the reading of the nearest tap (--empty-value sets a value instead)")
            self.warnings_.append("regions without taps " + rule + ": " + ", ".join(empty))
        self.values_ = values
        self.extrapolated_share_ = extrap
        self.clamped_share_ = clamped

    def _settings_for(self, tap_mask, sub):
        """The inner method's settings for one region: per-tap settings cut to its taps, a carrier its size."""
        st = dict(self.settings)
        if st.get("tap_var") is not None:
            st["tap_var"] = np.asarray(st["tap_var"], float)[tap_mask]
        if self.method == "posterior":
            # Each part its own carrier, no bigger than the part itself.
            st["patches"] = int(min(st.get("patches", 2500), len(sub.vertices)))
            st.pop("carrier", None)
        return st

    def _empty_prediction(self, taps, i):
        if self.empty_value is not None:
            return self.empty_value
        d = np.linalg.norm(taps.points - taps.points[i], axis=1)
        d[i] = np.inf
        return taps.values[int(np.argmin(d))] if np.isfinite(d).any() else taps.values[i]

    def _face_values(self, progress):
        return self.values_.copy()

    def loo_residuals(self):
        """(n,) float: leave-one-out inside each region (exact for the inner method's closed forms)."""
        self._check()
        return self.loo_.copy()

    def loo_residuals_nested(self):
        """(n,) float: the inner method's nested leave-one-out inside each region."""
        self._check()
        return self.loo_nested_.copy()

    def get_params(self):
        return {"method": self.method, "regions": self.regions, "empty_value": self.empty_value,
                "settings": self.settings}

    def describe(self):
        inner = next((p.describe() for _, p in self.parts_ if p is not None), self.method)
        return f"{inner}, fitted on {len(self.region_names_)} regions separately"
