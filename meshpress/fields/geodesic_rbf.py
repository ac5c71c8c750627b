"""RBF interpolation on distance along the surface (geodesic kernels).

``s(x) = sum_i c_i phi(d(x, y_i)) + a`` with ``d`` the heat-method surface
distance (Crane, Weischedel & Wardetzky, ACM TOG 32(5), 2013; potpourri3d) from
tap ``y_i``, ``phi`` a Matern or Gaussian kernel (Rasmussen & Williams 2006,
eq. 4.17) and a constant trend ``a``: kriging with an unknown mean on a
surface.  A roof tap is then far from the floor below it, and a tap on a wing's
upper face far from the lower face.

Well-posedness.  Kernels of a geodesic distance need not be positive definite
on a curved surface (Feragen, Lauze & Hauberg, CVPR 2015), and the heat-method
distances are approximate and not exactly symmetric.  The smallest
eigenvalue ``lam`` of the tap matrix's symmetric part is checked; a ridge
``2 max(-lam, 0) + nugget * {1, 100, 10^4}`` is added to the diagonal (so the
smallest eigenvalue is at least ``|lam| + nugget``, the kernel diagonal being 1),
and the ridge with the lowest leave-one-out error is kept and reported.  The
ridge makes the fit a slight smoothing rather than an exact interpolation.

Length scale.  By default it is chosen among a geometric ladder between the
larger of the mean tap spacing and the fill distance (the furthest any point of
the surface is from a tap) and the body's size by the lowest leave-one-out error, which
Rippa's closed form (1999) makes cheap: the criterion Rippa proposed for
choosing an RBF shape parameter.

Orientation.  With ``orientation=True`` the kernel is also
multiplied by a factor of the angle between the two places' unit normals,
the Matérn-5/2 function of their chordal distance at a scale ``theta``
(:func:`meshpress.bands.gpkernels.orientation_factor`, as in the kriging bands);
``theta`` is a rung of the leave-one-out choice beside the length scale
(infinity, i.e. no factor, 1.0, 0.6 and 0.35).  A tap on a wing's upper face
then says little about the lower face 10 mm away round the leading edge, nor
a roof tap about the nose below it; where leave-one-out prefers distance
alone, the factor is off.  It is not the default: on the Joukowski wing it
takes the CL error from -18 to -35 % to -1 to -3 % without regions, but on
the car-like body with 100 random taps from -8 % to +29 % (leave-one-out
preferring it there as well; docs/accuracy.md).

Trend.  The mean is a constant, or linear in the surface's unit normal
(universal kriging with the normal as covariate, Cressie, Statistics for
Spatial Data, 1993, sec. 3.4): forward, rear, upward and downward faces see
systematically different pressures (stagnation, base pressure, suction over
the top), which a constant mean carries into the gaps between taps as the
average of all of them.  Directions in which the taps' normals hardly vary
(below ``TREND_NORMAL_SPREAD`` rms) are left out of the trend.  The
``newtonian`` trend is a constant plus Newton's impact pressure on skin
facing the flow and a base level on rear-facing skin
(:func:`meshpress.bands.gptrend.trend_features`); a column the taps do not see
(no tap on the base, say) is left out.  With
``trend="auto"`` all three are candidates beside the length scales and ridges,
and the leave-one-out error chooses.  The default is the constant: on the
car-like benchmark the normal trend took the practical 57-tap layout's CL
error from +20 % to -6 % but 100 random taps' from -8 % to +30 %, and the
leave-one-out error (plain or nested) preferred the worse of the two both
times (docs/accuracy.md).

Honest score.  The error the choice minimised is optimistic as a score of the
method; :meth:`GeodesicRBFField.loo_residuals_nested` gives the nested
leave-one-out residuals (the choice re-made without each tap, in closed form:
:func:`meshpress.fields.kernels.solve_with_nested`), which ``compare`` ranks
by.  The ladder of lengths and the ridge floor are set once from all taps.

The fit is made on a simplified working copy of big meshes
(:mod:`meshpress.bodies.workmesh`); values beyond the taps tend to the fitted constant
and are bounded (:mod:`meshpress.fields.bounds`).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..bands.gpkernels import orientation_factor
from ..bands.gptrend import trend_features
from .base import Field
from .bounds import BoundedMixin
from .kernels import GEODESIC_KERNELS, matern, nested_residuals, solve_with_nested
from .surface_common import TARGET_FACES, by_point_chunks, check_common, normals_at, prepare, vertex_normals

TRENDS = ("auto", "constant", "normal", "newtonian")

#: Form of the normals' factor (as the kriging bands'), and its finite scales tried beside "none".
ORIENTATION_FORM = "matern52"
ORIENTATION_RUNGS = (1.0, 0.6, 0.35)

#: Smallest rms spread of the taps' unit normals along a direction (about 6 degrees) for the trend to use it:
#: below it the trend's slope is set by a few taps' small differences in direction and runs away elsewhere.
TREND_NORMAL_SPREAD = 0.1
#: Smallest rms spread at the taps of a Newtonian trend column (impact or base) for the trend to use it.
TREND_NEWTON_SPREAD = 0.05


def newtonian_columns(features):
    """Indices of the Newtonian trend's columns that the taps can fit, from their values at the taps (k, 2)
    (:func:`meshpress.bands.gptrend.trend_features`): those that spread by at least ``TREND_NEWTON_SPREAD`` rms
    (a column no tap sees, e.g. the base with no tap on it, would get an arbitrary coefficient)."""
    return [j for j in range(features.shape[1]) if float(np.std(features[:, j])) >= TREND_NEWTON_SPREAD]


def normal_trend_basis(normals):
    """Centre and directions of a trend linear in the normal, from the taps' unit normals (k, 3).

    Returns
    -------
    centre : (3,) float
    directions : (r, 3) float
        The principal directions (r <= 3) along which the normals' rms spread is
        at least ``TREND_NORMAL_SPREAD``; the trend's columns are
        ``(n - centre) @ directions.T``.
    """
    n = np.asarray(normals, float)
    centre = n.mean(axis=0)
    if len(n) < 2:
        return centre, np.zeros((0, 3))
    _, sv, vt = np.linalg.svd(n - centre, full_matrices=False)
    return centre, vt[sv / np.sqrt(len(n)) >= TREND_NORMAL_SPREAD]


class GeodesicRBFField(BoundedMixin, Field):
    """RBF (kriging with a constant mean) on heat-method surface distance.

    Parameters
    ----------
    kernel : {"matern32", "matern52", "gaussian"}
    trend : {"constant", "normal", "newtonian", "auto"}
        Mean of the field: a constant (default), linear in the unit normal,
        Newtonian (a constant plus the impact and base columns of
        :func:`meshpress.bands.gptrend.trend_features`), or the one of lowest
        leave-one-out error.
    orientation : bool
        Let leave-one-out also choose a factor of the normals' angle (module
        docstring; default off); ``theta_`` is the chosen scale (``inf``:
        none).  Use it on wings and other thin parts.
    length : float, optional
        Kernel length scale, m; default chosen by the lowest leave-one-out error.
    nugget : float
        Smallest eigenvalue kept in the tap matrix, relative to its diagonal (>= 0).
    ridge : float, optional
        Use exactly this ridge (no choice by leave-one-out); with ``length`` given,
        the fit is then a fixed linear map of the readings.
    work_faces : int
        Face count of the working copy for big meshes.
    extrapolation : {"clamp", "decay", "none"}
    far_value : float, optional
        Value far from the taps for ``extrapolation="decay"``.
    """

    name = "geodesic"

    def __init__(self, kernel="matern52", length=None, nugget=1e-6, ridge=None, work_faces=TARGET_FACES,
                 extrapolation="clamp", far_value=None, trend="constant", orientation=False):
        self.orientation = orientation
        self.trend = trend
        self.ridge = ridge
        self.kernel = kernel
        self.length = length
        self.nugget = nugget
        self.work_faces = work_faces
        self.extrapolation = extrapolation
        self.far_value = far_value

    def _fit(self, body, taps, progress):
        if self.kernel not in GEODESIC_KERNELS:
            raise InputError(f"--kernel {self.kernel!r} is not one of the geodesic kernels: "
                             f"{', '.join(GEODESIC_KERNELS)}")
        if self.length is not None and not self.length > 0:
            raise InputError(f"--length must be positive (m), got {self.length}")
        if not self.nugget >= 0:
            raise InputError(f"--nugget must be >= 0, got {self.nugget}")
        if self.trend not in TRENDS:
            raise InputError(f"geodesic trend must be one of {', '.join(TRENDS)}, got {self.trend!r}")
        check_common(self)
        wm, f, b = prepare(self, body, taps, progress)
        D = wm.tap_distances(taps.points, progress=progress)  # (k, n_work)
        # Dt[i, j]: from tap j (a source) to the point of tap i, exactly as the field is
        # evaluated anywhere else, so the tap system and the field are one construction.
        # The heat method is not exactly symmetric (a few % of an edge); the diagonal (a
        # tap's distance to itself through its face's corners, about half an edge) is kept.
        Dt = wm.distance.at_points(D, f, b).T
        self.work_ = wm
        self.distances_ = D
        y = taps.values
        k = len(y)
        self.vertex_normals_ = vertex_normals(wm.body)
        tap_normals = normals_at(self.vertex_normals_, wm.body.faces, f, b)
        centre, dirs = normal_trend_basis(tap_normals)
        trends = {}  # trend name -> (k, p) trend columns at the taps
        if self.trend in ("normal", "auto") and len(dirs) and k > len(dirs) + 1:
            trends["normal"] = np.column_stack([np.ones(k), (tap_normals - centre) @ dirs.T])
        elif self.trend == "normal":
            self.warnings_.append("the taps' normals hardly vary (or there are too few taps): constant trend used")
        newton_f = trend_features(tap_normals, "newtonian")
        newton = newtonian_columns(newton_f)
        if self.trend in ("newtonian", "auto") and len(newton) and k > len(newton) + 1:
            trends["newtonian"] = np.column_stack([np.ones(k), newton_f[:, newton]])
        elif self.trend == "newtonian":
            self.warnings_.append("no tap faces the flow or the base (or there are too few taps): constant trend used")
        if self.trend not in ("normal", "newtonian") or not trends:
            trends["constant"] = np.ones((k, 1))
        if self.length is not None:
            lengths = [float(self.length)]
        else:
            nn = np.sort(Dt + np.diag(np.full(k, np.inf)), axis=1)[:, 0] if k > 1 else np.array([1.0])
            # Not below the fill distance (the furthest any vertex is from a tap): a shorter
            # kernel would fall back to the mean between rows of taps, where the taps'
            # leave-one-out error cannot see it.
            fill = float(D.min(axis=0).max())
            lo = max(float(np.mean(nn)), fill, 1e-6)
            hi = max(float(np.ptp(body.vertices, axis=0).max()), 2 * lo)
            lengths = list(np.geomspace(lo, hi, 12))
        best = None
        loos, inners = [], []
        # Each length's kernel and each scale's factor once; the ladder tries their products.
        C1 = 1.0 - tap_normals @ tap_normals.T
        factors = {np.inf: 1.0}
        if self.orientation:
            factors.update({t: orientation_factor(C1, t, ORIENTATION_FORM)[0] for t in ORIENTATION_RUNGS})
        by_length = {ell: matern(self.kernel, Dt, ell) for ell in lengths}
        for ell, th in [(e, t) for e in lengths for t in factors]:
            K = by_length[ell] * factors[th]
            lam = float(np.linalg.eigvalsh(0.5 * (K + K.T))[0])
            # Lift an indefinite spectrum to +|lam_min|, then try nuggets on top; the
            # leave-one-out error (Rippa's closed form holds with a ridge) picks one.
            base = 2.0 * max(-lam, 0.0)
            ridges = [self.ridge] if self.ridge is not None else base + self.nugget * np.array([1.0, 1e2, 1e4])
            for tname, P in trends.items():
                for ridge in ridges:
                    try:
                        c, a, loo, inner = solve_with_nested(K, P, y, ridge)
                    except np.linalg.LinAlgError:
                        continue
                    score = float(np.sqrt(np.mean(loo**2))) if k > 1 else 0.0
                    if not np.isfinite(score):
                        continue
                    loos.append(loo)
                    inners.append(inner)
                    if best is None or score < best[0]:
                        best = (score, ell, c, a, loo, ridge, lam, tname, th)
        if best is None:
            raise InputError("the geodesic RBF system for these taps cannot be solved; give --nugget > 0")
        _, self.length_, self.coef_, self.trend_coef_, self.loo_, self.ridge_, self.min_eigenvalue_, \
            self.trend_, self.theta_ = best
        self.tap_normals_ = tap_normals
        self.trend_centre_, self.trend_dirs_ = (centre, dirs) if self.trend_ == "normal" else (None, None)
        self.trend_newton_ = newton if self.trend_ == "newtonian" else None
        self.loo_nested_ = nested_residuals(np.array(loos), np.array(inners)) if len(loos) > 1 else self.loo_.copy()
        self.mean_ = float(self.trend_coef_[0])
        if self.min_eigenvalue_ < 0:
            self.warnings_.append(f"geodesic kernel matrix not positive definite (smallest eigenvalue "
                                  f"{self.min_eigenvalue_:.2e}); ridge {self.ridge_:.2e} added")

    def _trend(self, normals):
        """(k,) float: the fitted mean at points of unit normals (k, 3)."""
        if self.trend_ == "constant":
            return np.full(len(normals), self.mean_)
        if self.trend_ == "newtonian":
            return self.mean_ + trend_features(normals, "newtonian")[:, self.trend_newton_] @ self.trend_coef_[1:]
        return self.mean_ + ((normals - self.trend_centre_) @ self.trend_dirs_.T) @ self.trend_coef_[1:]

    def _orient(self, normals):
        """(k, p) float: the normals' factor between the taps and points of unit normals (p, 3), or 1."""
        if not np.isfinite(self.theta_):
            return 1.0
        return orientation_factor(1.0 - self.tap_normals_ @ np.asarray(normals).T, self.theta_, ORIENTATION_FORM)[0]

    def _vertex_values(self):
        return (self.coef_ @ (matern(self.kernel, self.distances_, self.length_) * self._orient(self.vertex_normals_))
                + self._trend(self.vertex_normals_))

    def _face_values(self, progress):
        return self._bounded(self.work_.vertex_to_full_faces(self._vertex_values()))

    def at_points(self, points):
        """(k,) float at surface points (k, 3): the kernel of the distances interpolated at the
        points (the same construction as the tap system, so refits match the closed-form LOO)."""
        self._check()
        f, b = self.work_.locate(points)
        wm = self.work_

        def value(fc, bc):
            d = wm.distance.at_points(self.distances_, fc, bc)
            n = normals_at(self.vertex_normals_, wm.body.faces, fc, bc)
            return self.coef_ @ (matern(self.kernel, d, self.length_) * self._orient(n)) + self._trend(n)
        return by_point_chunks(f, b, value)

    def loo_residuals(self):
        """(n,) float: Rippa's closed-form leave-one-out residuals (same length scale and ridge)."""
        self._check()
        return self.loo_.copy()

    def loo_residuals_nested(self):
        """(n,) float: nested leave-one-out residuals (length, ridge and trend re-chosen without each tap)."""
        self._check()
        return self.loo_nested_.copy()

    def describe(self):
        trend = {"constant": "", "normal": ", mean linear in the normal",
                 "newtonian": ", Newtonian mean (impact and base)"}[self.trend_]
        orient = f", orientation scale {self.theta_:.2g}" if np.isfinite(self.theta_) else ""
        return (f"geodesic RBF ({self.kernel}, length {self.length_:.3g} m, ridge {self.ridge_:.1e}{trend}"
                f"{orient})")
