"""How sure a change between two configurations is: bands on "config minus baseline".

Two configurations measured on the same taps share much of their error, and
that shared part cancels in the change:

- **Sampling.**  What the taps miss (the field between them) is mostly the
  same in both runs.  The change is therefore estimated by a kriging model
  fitted to the tap-by-tap difference ``y_other - y_base`` (same positions, so
  the difference is a field of its own, usually small and smooth), and its
  Bayesian-quadrature variance (O'Hagan 1991; :mod:`meshpress.bands.kriging`) is the
  change's sampling part.  It is usually far smaller than either run's.
- **Measurement.**  Each configuration's tap errors are split into a *random*
  part (the standard error of the readings' mean over the steady window,
  independent between runs) and a *systematic* part (a sensor's calibration or
  full-scale error, the reference pressure, q), which repeats in the other run
  with correlation ``rho`` (1 when the same sensors, reference and q
  measurement served both).  With the change's kriging weights ``w`` the
  measurement variance is ``w' (C_a + C_b - 2 C_ab) w`` (GUM, JCGM 100:2008,
  5.2.2; :func:`meshpress.bands.uncertainty.difference_u`), with ``C_ab = rho
  diag(s_a s_b)``.  The reference pressure adds ``closure^2 (u_a^2 + u_b^2 -
  2 rho u_a u_b)`` and q's relative error ``u_q`` adds ``u_q^2 (F_a^2 + F_b^2
  - 2 rho F_a F_b)`` for the figures that scale with q.
- **Tap positions** are common to both runs (the same holes); their error
  enters the change only through the gradient of the change field and is not
  modelled (as for a single run).

Intervals are ``change +/- 1.96 u`` (95 %, normal).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .uncertainty import K95, Band, Measurement, compute_uncertainty, difference_u, field_outside, find_band

#: Lift figures whose minus sign reads as downforce in a sentence.
_DOWNFORCE = {"CL": "downforce coefficient", "CLF": "front downforce coefficient",
              "CLR": "rear downforce coefficient", "lift_N": "downforce, N", "front_lift_N": "front downforce, N",
              "rear_lift_N": "rear downforce, N"}


@dataclass
class ErrorSources:
    """One configuration's tap errors, split by whether they repeat in another run.

    Attributes
    ----------
    random_u : (n,) float
        Standard uncertainty independent between runs (taps' unit): the
        standard error of the mean of the readings over the steady window.
    systematic_u : (n,) float
        Standard uncertainty of each tap that repeats in the other run with
        the chosen correlation (taps' unit): the sensor's calibration or
        full-scale error.
    u_p_ref : float
        Standard uncertainty of the reference pressure (systematic).
    u_q_rel : float
        Relative standard uncertainty of q (systematic).
    """

    random_u: np.ndarray
    systematic_u: np.ndarray
    u_p_ref: float = 0.0
    u_q_rel: float = 0.0

    @classmethod
    def build(cls, n, *, random_u=None, systematic_u=0.0, u_p_ref=0.0, u_q_rel=0.0) -> "ErrorSources":
        """From an optional per-tap array and a per-tap (or common) systematic part."""
        r = np.zeros(n) if random_u is None else np.asarray(random_u, float).reshape(n)
        s = np.broadcast_to(np.asarray(systematic_u, float), (n,)).copy()
        for a in (r, s):
            if np.any(a < 0) or not np.all(np.isfinite(a)):
                raise InputError("per-tap uncertainties must be finite and >= 0")
        return cls(r, s, float(u_p_ref), float(u_q_rel))

    def measurement(self) -> Measurement:
        """The single-run :class:`~meshpress.bands.uncertainty.Measurement` (both parts in quadrature)."""
        return Measurement(np.sqrt(self.random_u**2 + self.systematic_u**2), self.u_p_ref, self.u_q_rel)

    def subset(self, idx) -> "ErrorSources":
        return ErrorSources(self.random_u[idx], self.systematic_u[idx], self.u_p_ref, self.u_q_rel)


def tap_covariances(base: ErrorSources, other: ErrorSources, correlation: float):
    """Diagonal covariances of the two runs' tap errors and their cross covariance.

    Returns
    -------
    var_base, var_other, cov : (n,) float
        ``u_r^2 + u_s^2`` of each run, and ``rho s_base s_other`` (taps' unit^2).
    """
    rho = _check_rho(correlation)
    vb = base.random_u**2 + base.systematic_u**2
    vo = other.random_u**2 + other.systematic_u**2
    return vb, vo, rho * base.systematic_u * other.systematic_u


def _check_rho(r) -> float:
    r = float(r)
    if not 0.0 <= r <= 1.0:
        raise InputError(f"error correlation must be between 0 and 1, got {r:g}")
    return r


@dataclass
class ChangeResult:
    """Bands of every figure's change (other minus base), and each configuration's own bands.

    Attributes
    ----------
    bands : list of Band
        ``value`` is the kriging estimate of the change; ``field_value`` the
        field method's change, when known.
    base, other : UncertaintyResult
        Each configuration's own bands (same taps, same carrier).
    names : list of str
    model : str
        The kriging model of the difference field.
    base_label, other_label : str
    n_taps : int
    correlation : float
    assumptions, notes : list of str
    tap_weights : (n, k) float
        Kriging weights of the change: ``change = tap_weights[:, k] @ (y_other - y_base)``.
    difference : UncertaintyResult
        The kriging model of the difference field itself (its ``importance``
        map shows where unknown change matters most).
    """

    bands: list
    base: object
    other: object
    names: list
    model: str
    base_label: str
    other_label: str
    n_taps: int
    correlation: float
    assumptions: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    tap_weights: np.ndarray | None = None
    difference: object = None

    def band(self, name) -> Band:
        return find_band(self.bands, name)

    def own_u(self, which, name):
        """Standard uncertainty of ``name`` in one configuration's own band (None when it has none)."""
        res = self.base if which == "base" else self.other
        try:
            return res.band(name).u
        except KeyError:
            return None

    def to_dict(self) -> dict:
        """JSON form: ``{"base", "other", "taps", "figures": {NAME: {value, u, lo95, hi95, ...}}, ...}``."""
        figs = {}
        flagged = {b.name for b in field_outside(self.bands, names=None)}
        for b in self.bands:
            bo, bb = _get(self.other, b.name), _get(self.base, b.name)
            figs[b.name] = {"value": b.value, "u": b.u, "lo95": b.lo95, "hi95": b.hi95,
                            "measurement_u": b.u_measurement, "sampling_u": b.u_sampling, "q_u": b.u_q,
                            "field_value": b.field_value,
                            "other_value": None if bo is None else bo.value, "other_u": None if bo is None else bo.u,
                            "base_value": None if bb is None else bb.value, "base_u": None if bb is None else bb.u,
                            "resolved": bool(abs(b.value) > K95 * b.u),
                            "method_gap_over_u": None if b.field_value is None else abs(b.field_value - b.value) / b.u,
                            "flagged": b.name in flagged}
        return {"base": self.base_label, "other": self.other_label, "meaning": "other minus base", "taps": self.n_taps,
                "figures": figs, "model": self.model, "error_correlation": self.correlation,
                "coverage": "95 % interval = change +/- 1.96 u (normal)", "assumptions": list(self.assumptions),
                "notes": list(self.notes)}

    def sentence(self, name, spec="+.3f") -> str:
        """One line a report can quote, e.g. ``CLR -0.120 +/- 0.030 (95 %: ...): 0.120 more rear downforce ...``."""
        b = self.band(name)
        us = spec.lstrip("+")
        s = (f"{name} {format(b.value, spec)} +/- {format(b.u, us)} "
             f"(95 %: {format(b.lo95, spec)} to {format(b.hi95, spec)})")
        if name in _DOWNFORCE:
            more = "more" if b.value < 0 else "less"
            s += f": {format(abs(b.value), us)} +/- {format(b.u, us)} {more} {_DOWNFORCE[name]}"
        s += "; the change is " + ("resolved from zero" if abs(b.value) > K95 * b.u else
                                   "not resolved from zero") + " at 95 %"
        return s


def _get(res, name):
    try:
        return res.band(name)
    except KeyError:
        return None


def assumptions_text(correlation: float) -> list:
    """The stated model of what the two runs share (printed and written with every change)."""
    return [
        "same taps at the same positions in both runs; the field between the taps is modelled for the tap-by-tap "
        "difference (a kriging model of its own), so what the taps miss in both runs cancels",
        "per-tap standard error of the mean (readings' spread over the window): independent between the runs",
        f"sensor calibration / full-scale error of a tap, reference pressure and q: systematic, correlated "
        f"{correlation:g} between the runs (1 = same sensors, reference and q measurement)",
        "tap position errors are common to both runs and are not modelled",
    ]


def compute_change(body, taps, y_base, y_other, *, err_base: ErrorSources, err_other: ErrorSources,
                   correlation: float = 1.0, q=None, ref_area, carrier=None, n_patches: int = 2500,
                   kernel: str = "auto", base_result=None, other_result=None, field_change=None,
                   base_label="base", other_label="other", regions=None, trend: str | None = "newtonian",
                   orientation: bool = True, orientation_kernel: str = "matern52", stagnation_prior=True,
                   anisotropy: bool = False, progress=None) -> ChangeResult:
    """Kriging estimate and band of every figure's change ``other - base`` on shared taps.

    Parameters
    ----------
    body : Body
    taps : ProjectedTaps
        The shared taps (positions); their values are not used.
    y_base, y_other : (n,) float
        Tap values of the two configurations, in the taps' unit (Pa or Cp).
    err_base, err_other : ErrorSources
    correlation : float
        Correlation of the systematic errors between the runs, 0 to 1.
    q : float, optional
        Pa; None leaves out the figures in N (kind "cp") or in coefficients
        (kind "p") that need it.
    ref_area : float
        m2.
    carrier : Carrier, optional
        Reused when given; built once otherwise and shared by the three fits.
    base_result, other_result : UncertaintyResult, optional
        Each configuration's own bands, when already computed (on ``carrier``).
    field_change : (m,) float, optional
        The field method's change on every face (taps' unit): its figures are
        given beside the estimate.
    kernel : str
        Passed to :class:`~meshpress.bands.kriging.SurfaceGP`.
    regions : str or (m,) array, optional
        Independent regions of the model (:func:`~meshpress.bands.uncertainty.compute_uncertainty`).
    trend : {"newtonian", "normal", None}
        The model's mean (:func:`~meshpress.bands.uncertainty.compute_uncertainty`).
    orientation, orientation_kernel, anisotropy
        The normals' factor in the model's correlation, its form and its
        streamwise weight (as there).
    stagnation_prior : {"auto", True, False}
        For each configuration's own bands (as there); the change itself is
        modelled with a prior mean of 0.

    Returns
    -------
    ChangeResult
    """
    from .patches import Carrier

    n = len(taps)
    y_base, y_other = np.asarray(y_base, float).reshape(n), np.asarray(y_other, float).reshape(n)
    if len(err_base.random_u) != n or len(err_other.random_u) != n:
        raise InputError(f"tap uncertainties for {len(err_base.random_u)} / {len(err_other.random_u)} taps, "
                         f"values for {n}")
    rho = _check_rho(correlation)
    if carrier is None:
        carrier = Carrier(body, n_patches, progress=progress)
    kw = dict(q=q, ref_area=ref_area, carrier=carrier, kernel=kernel, regions=regions, trend=trend,
              orientation=orientation, orientation_kernel=orientation_kernel, anisotropy=anisotropy,
              progress=progress)
    if base_result is None:
        base_result = compute_uncertainty(body, taps.with_values(y_base), meas=err_base.measurement(),
                                          stagnation_prior=stagnation_prior, **kw)
    if other_result is None:
        other_result = compute_uncertainty(body, taps.with_values(y_other), meas=err_other.measurement(),
                                           stagnation_prior=stagnation_prior, **kw)
    vb, vo, cab = tap_covariances(err_base, err_other, rho)
    nv = np.maximum(vb + vo - 2.0 * cab, 0.0)  # variance of each tap's measured difference
    u_ref2 = max(err_base.u_p_ref**2 + err_other.u_p_ref**2 - 2 * rho * err_base.u_p_ref * err_other.u_p_ref, 0.0)
    # A change has no stagnation pressure of its own: its prior mean stays 0.
    dres = compute_uncertainty(body, taps.with_values(y_other - y_base),
                               meas=Measurement(np.sqrt(nv), float(np.sqrt(u_ref2)), 0.0), stagnation_prior=False,
                               **kw)
    W, G = dres.tap_weights, dres.face_weights
    closure = G.sum(axis=0)
    fchange = None if field_change is None else np.asarray(field_change, float) @ G
    bands = []
    scaled = _q_scaled(dres.names, taps.kind)
    for k, name in enumerate(dres.names):
        b = dres.bands[k]
        # The change's measurement part from the two runs' covariances (GUM 5.2.2): the systematic part cancels.
        um = difference_u(W[:, k], W[:, k], vb, vo, cab)
        vm = um**2 + (closure[k] ** 2) * u_ref2
        vq = 0.0
        if scaled[k]:
            fa, fb = _get(other_result, name), _get(base_result, name)
            if fa is not None and fb is not None:
                ua, ub = err_other.u_q_rel, err_base.u_q_rel
                vq = max((ua * fa.value) ** 2 + (ub * fb.value) ** 2 - 2 * rho * ua * ub * fa.value * fb.value, 0.0)
        vs = b.u_sampling**2
        fv = None if fchange is None else float(fchange[k])
        bands.append(Band(name, b.value, float(np.sqrt(vm + vs + vq)), float(np.sqrt(vm)), float(b.u_sampling),
                          float(np.sqrt(vq)), fv))
    notes = list(dres.notes)
    gap = [b.name for b in field_outside(bands, names=None)]
    if gap:
        notes.append(f"the field method's change lies outside the 95 % interval for {', '.join(gap)}: the band "
                     "may be too narrow there (a change concentrated where few taps are; docs/uncertainty.md)")
    return ChangeResult(bands, base_result, other_result, list(dres.names), dres.model, base_label, other_label, n,
                        rho, assumptions_text(rho), notes, W, dres)


def _q_scaled(names, kind):
    from .uncertainty import _NEWTON

    return [(nm not in _NEWTON) if kind == "p" else (nm in _NEWTON) for nm in names]


def match_taps(base_names, base_points, other_names, other_points, *, tolerance_m, base_label="baseline",
               other_label="taps", common_only=False):
    """Pair the two files' taps by name.

    Parameters
    ----------
    base_names, other_names : list of str
    base_points, other_points : (n, 3) float
        Positions, m, vehicle frame.
    tolerance_m : float
        Largest distance between a name's two positions.
    common_only : bool
        Use the taps both files have instead of stopping at the first that is
        only in one.

    Returns
    -------
    other_idx, base_idx : (k,) int
        Indices of the shared taps in each file, in the other file's order.
    dropped : list of str
        Taps left out (only with ``common_only``).

    Raises
    ------
    InputError
        A tap in one file only (without ``common_only``), or at two positions.
    """
    where = {n: i for i, n in enumerate(base_names)}
    only_other = [n for n in other_names if n not in where]
    only_base = [n for n in base_names if n not in set(other_names)]
    if (only_other or only_base) and not common_only:
        parts = []
        if only_other:
            parts.append(f"only in {other_label}: {_names(only_other)}")
        if only_base:
            parts.append(f"only in {base_label}: {_names(only_base)}")
        raise InputError("the change needs the same taps in both files; " + "; ".join(parts)
                         + " (remove them, or use --common-taps to use only the shared ones)")
    oi = np.array([i for i, n in enumerate(other_names) if n in where], dtype=np.int64)
    bi = np.array([where[other_names[i]] for i in oi], dtype=np.int64)
    if len(oi) == 0:
        raise InputError(f"{other_label} and {base_label} have no tap name in common")
    d = np.linalg.norm(np.asarray(other_points, float)[oi] - np.asarray(base_points, float)[bi], axis=1)
    if np.any(d > tolerance_m):
        j = int(np.argmax(d))
        raise InputError(f"tap {other_names[oi[j]]!r} is {d[j] * 1000:.1f} mm from its position in {base_label} "
                         f"(more than {tolerance_m * 1000:g} mm): the change needs the same tap positions")
    return oi, bi, only_other + only_base


def _names(names, k=6):
    s = ", ".join(names[:k])
    return s + (f" and {len(names) - k} more" if len(names) > k else "")
