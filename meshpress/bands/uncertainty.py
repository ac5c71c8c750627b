"""How sure a load figure is: measurement and sampling uncertainty in closed form.

Every figure is linear in the face values (``F = -sum (p_f - p_ref) n_f dA_f``,
``M = sum r_f x dF_f``, meshpress.loads.integrate), and a linear field method makes
the face values linear in the tap values.  So each figure is ``w^T y + const``
with a weight vector ``w`` over the taps, and

- independent tap errors of standard uncertainty ``u_i`` give
  ``u^2 = sum_i w_i^2 u_i^2``;
- an error ``u_ref`` of the reference pressure, common to every tap and face,
  gives ``(sum_f g_f)^2 u_ref^2`` (zero on a closed body, as it should be);
- a relative error of q scales the coefficients (readings in Pa) or the forces
  (readings in Cp) by ``u_q / q``.

This is the law of propagation of uncertainty for a linear model (JCGM 100:2008,
GUM, 5.1.2).  A stated sensor accuracy ``+/- a`` is read as the half-width of a
rectangular distribution, ``u = a / sqrt(3)`` (GUM 4.3.7).  The sampling part
(what the field does between the taps) comes from the kriging posterior
(:mod:`meshpress.bands.kriging`).  Intervals are ``value +/- 1.96 u`` (95 %, normal).

Standard uncertainties are ``*_u`` keys beside each figure in the JSON
(``CL`` and ``CL_u``), with ``*_lo95`` / ``*_hi95`` for the interval.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError

K95 = 1.959963984540054  # two-sided 95 % quantile of the standard normal

#: Linear figures that carry a band (front_share is a ratio, left out).
FIGURES = ("lift_N", "drag_N", "side_N", "pitch_moment_Nm", "front_lift_N", "rear_lift_N",
           "CL", "CD", "CS", "CPM", "CLF", "CLR")
_NEWTON = {"lift_N", "drag_N", "side_N", "pitch_moment_Nm", "front_lift_N", "rear_lift_N"}


def figure_face_weights(body, *, kind: str = "cp", q: float | None = None, ref_area: float,
                        wheelbase: float | None = None, names=FIGURES):
    """Weights of each figure on the face values: ``figure = G[:, k] @ values``.

    Parameters
    ----------
    body : Body
    kind : {"p", "cp"}
        Face values in Pa or in Cp.
    q : float, optional
        Dynamic pressure, Pa; figures that need it and lack it are dropped.
    ref_area : float
        m2.
    wheelbase : float, optional
        m; axle figures are dropped without it.
    names : sequence of str

    Returns
    -------
    names : list of str
        The figures kept.
    G : (m, k) float
        N or N m per unit value for forces and moments, 1/unit for coefficients.
    """
    A = np.asarray(body.area_vectors)
    rxA = np.cross(body.centroids, A)
    base = {"lift_N": -A[:, 2], "drag_N": -A[:, 0], "side_N": -A[:, 1], "pitch_moment_Nm": -rxA[:, 1]}
    if wheelbase:
        base["front_lift_N"] = 0.5 * base["lift_N"] + base["pitch_moment_Nm"] / wheelbase
        base["rear_lift_N"] = 0.5 * base["lift_N"] - base["pitch_moment_Nm"] / wheelbase
    coef = {"CL": "lift_N", "CD": "drag_N", "CS": "side_N", "CPM": "pitch_moment_Nm", "CLF": "front_lift_N",
            "CLR": "rear_lift_N"}
    # base weights give N per Pa (kind p) or m2 (m3) per unit Cp (kind cp).
    to_newton = 1.0 if kind == "p" else q
    to_coef = (1.0 / q if (kind == "p" and q) else (1.0 if kind == "cp" else None))
    out_names, cols = [], []
    for nme in names:
        if nme in _NEWTON:
            if nme not in base or to_newton is None:
                continue
            cols.append(base[nme] * to_newton)
        else:
            src = coef[nme]
            if src not in base or to_coef is None or (nme == "CPM" and not wheelbase):
                continue  # CPM's reference length is the wheelbase: none without axles
            w = base[src] * to_coef / ref_area
            if nme == "CPM":
                w = w / wheelbase
            cols.append(w)
        out_names.append(nme)
    return out_names, np.column_stack(cols) if cols else np.zeros((body.n_faces, 0))


def with_part_figures(body, names, G):
    """Add each part's figures, named ``"CL[wing]"``: the whole's weights on that part's faces only.

    Parameters
    ----------
    body : Body
        With ``part_names`` and ``face_part``; nothing is added for one part.
    names : list of str
    G : (m, k) float

    Returns
    -------
    names : list of str
    G : (m, k * (1 + parts)) float
    """
    if len(body.part_names) < 2:
        return names, G
    cols, out = [G], list(names)
    for i, part in enumerate(body.part_names):
        cols.append(G * (body.face_part == i)[:, None])
        out += [f"{n}[{part}]" for n in names]
    return out, np.hstack(cols)


def sensor_u(accuracy: float, *, full_scale: float | None = None) -> float:
    """Standard uncertainty from a stated sensor accuracy ``+/- a``.

    ``accuracy`` in the taps' unit, or in % of ``full_scale`` when that is
    given.  Rectangular distribution: ``u = a / sqrt(3)`` (GUM 4.3.7).
    """
    a = float(accuracy)
    if a < 0:
        raise InputError(f"sensor accuracy must be >= 0, got {a:g}")
    if full_scale is not None:
        a = a / 100.0 * float(full_scale)
    return a / np.sqrt(3.0)


def q_relative_u(*, speed=None, u_speed=0.0, rho=None, u_rho=0.0, q=None, u_q=0.0) -> float:
    """Relative standard uncertainty of q = rho V^2 / 2: ``sqrt((2 u_V/V)^2 + (u_rho/rho)^2)``, or ``u_q / q``."""
    if q is not None:
        return float(u_q) / float(q) if u_q else 0.0
    r = 0.0
    if speed and u_speed:
        r += (2.0 * u_speed / speed) ** 2
    if rho and u_rho:
        r += (u_rho / rho) ** 2
    return float(np.sqrt(r))


@dataclass
class Measurement:
    """What is known about the readings' errors.

    Attributes
    ----------
    tap_u : (n,) float
        Standard uncertainty of each tap value (taps' unit): standard error of
        the mean of its readings, combined with the sensor's.
    u_p_ref : float
        Standard uncertainty of the reference pressure, common to all taps.
    u_q_rel : float
        Relative standard uncertainty of q.
    """

    tap_u: np.ndarray
    u_p_ref: float = 0.0
    u_q_rel: float = 0.0

    @classmethod
    def build(cls, n, *, tap_u=None, sensor=0.0, u_p_ref=0.0, u_q_rel=0.0):
        """Combine per-tap standard errors (array or None) with a sensor standard uncertainty (root sum square)."""
        t = np.zeros(n) if tap_u is None else np.asarray(tap_u, float).reshape(n)
        if np.any(t < 0) or not np.all(np.isfinite(t)):
            raise InputError("per-tap uncertainties must be finite and >= 0")
        return cls(np.sqrt(t**2 + float(sensor) ** 2), float(u_p_ref), float(u_q_rel))


def measurement_var(W, meas: Measurement, closure=None) -> np.ndarray:
    """(k,) float: variance of each figure from tap and reference errors (not q).

    Parameters
    ----------
    W : (n, k) float
        Tap weights.
    meas : Measurement
    closure : (k,) float, optional
        ``sum_f g_f``: the figures' response to one unit on every face (zero
        on a closed body).  A reference error shifts every face value alike
        (and every tap alike, which a field that reproduces constants passes
        on to every face), so it moves the figure by ``closure * u_p_ref``.
    """
    W = np.asarray(W, float)
    v = (W**2 * meas.tap_u[:, None] ** 2).sum(axis=0)
    if meas.u_p_ref:
        # p_ref is subtracted from every face: the figure moves by -p_ref * sum_f g_f.
        c = np.zeros(W.shape[1]) if closure is None else np.asarray(closure, float)
        v = v + (c * meas.u_p_ref) ** 2
    return v


def q_var(values, names, kind, u_q_rel) -> np.ndarray:
    """(k,) float: variance from q's relative uncertainty for the figures that scale with 1/q or q."""
    values = np.asarray(values, float)
    base = [n.split("[", 1)[0] for n in names]  # a part's figure "CL[wing]" scales as "CL"
    scales = np.array([(n not in _NEWTON) if kind == "p" else (n in _NEWTON) for n in base], float)
    return (values * u_q_rel * scales) ** 2


def difference_u(w_a, w_b, cov_a, cov_b, cov_ab=None) -> float:
    """Standard uncertainty of a change ``w_a @ y_a - w_b @ y_b`` between two configurations.

    Parameters
    ----------
    w_a, w_b : (n,) float
        Tap weights of the figure in each configuration, over one shared tap
        list (zero where a configuration lacks the tap).
    cov_a, cov_b : (n, n) or (n,) float
        Covariance (or variances) of each configuration's tap errors.
    cov_ab : (n, n) or (n,) float, optional
        Cross covariance of the errors: the part shared by the two runs (same
        sensors' calibration, same tap position errors) cancels in the change.

    Returns
    -------
    float
        ``sqrt(w_a' C_a w_a + w_b' C_b w_b - 2 w_a' C_ab w_b)`` (GUM 5.2.2).
    """
    def m(c, n):
        c = np.asarray(c, float)
        return np.diag(c) if c.ndim == 1 else c

    w_a, w_b = np.asarray(w_a, float), np.asarray(w_b, float)
    n = len(w_a)
    v = w_a @ m(cov_a, n) @ w_a + w_b @ m(cov_b, n) @ w_b
    if cov_ab is not None:
        v -= 2.0 * w_a @ m(cov_ab, n) @ w_b
    return float(np.sqrt(max(v, 0.0)))


@dataclass
class Band:
    """One figure with its uncertainty budget (standard uncertainties, same unit as the value)."""

    name: str
    value: float
    u: float
    u_measurement: float
    u_sampling: float
    u_q: float
    field_value: float | None = None

    @property
    def lo95(self):
        return self.value - K95 * self.u

    @property
    def hi95(self):
        return self.value + K95 * self.u


COEFFICIENTS = ("CL", "CD", "CS", "CPM", "CLF", "CLR")  # the figures a disagreement is stated for


def field_outside(bands, names=COEFFICIENTS) -> list:
    """Bands whose field-method figure lies outside the 95 % interval of the kriging estimate.

    When the two estimates from the same taps differ by more than the band
    allows, the choice of method matters more than the model says there:
    neither number should be trusted without more taps.

    Parameters
    ----------
    bands : list of Band
    names : sequence of str or None
        Figures to check (default the coefficients, so a force and its
        coefficient are not said twice; None: every band).

    Returns
    -------
    list of Band
        In the order of ``bands``.
    """
    return [b for b in bands if (names is None or b.name in names) and b.field_value is not None
            and not b.lo95 <= b.field_value <= b.hi95]


def find_band(bands, name) -> Band:
    """The band of figure ``name`` in a list of bands (KeyError when it has none)."""
    for b in bands:
        if b.name == name:
            return b
    raise KeyError(name)


@dataclass
class UncertaintyResult:
    """Bands of every figure, plus the per-face map for a 3D view.

    Attributes
    ----------
    bands : list of Band
    face_sd : (m,) float
        Posterior standard deviation of the field on each face (taps' unit).
    face_weights : (m, k) float
        Each figure's weight on each face.
    names : list of str
    model : str
        One line describing the kriging model.
    notes : list of str
    """

    bands: list
    face_sd: np.ndarray
    face_weights: np.ndarray
    names: list
    model: str
    kind: str
    notes: list = field(default_factory=list)
    tap_weights: np.ndarray | None = None

    def band(self, name) -> Band:
        return find_band(self.bands, name)

    def importance(self, name) -> np.ndarray:
        """(m,) float: posterior sd x |face weight| in figure ``name``: where unknown pressure matters most."""
        k = self.names.index(name)
        return self.face_sd * np.abs(self.face_weights[:, k])

    def to_dict(self) -> dict:
        """JSON form: ``NAME``, ``NAME_u``, ``NAME_lo95``, ``NAME_hi95`` per figure, and the budget."""
        d = {}
        for b in self.bands:
            if "[" in b.name:
                continue  # a part's figure: given with its part (part_dict)
            d[b.name] = b.value
            d[f"{b.name}_u"] = b.u
            d[f"{b.name}_lo95"] = b.lo95
            d[f"{b.name}_hi95"] = b.hi95
        d["uncertainty_budget"] = {b.name: {"measurement_u": b.u_measurement, "sampling_u": b.u_sampling,
                                            "q_u": b.u_q, "field_value": b.field_value} for b in self.bands
                                   if "[" not in b.name}
        d["uncertainty_model"] = self.model
        d["uncertainty_coverage"] = "95 % interval = value +/- 1.96 u (normal)"
        d["uncertainty_notes"] = list(self.notes)
        return d


def part_bands_dict(result: UncertaintyResult, part: str) -> dict:
    """One part's bands as ``NAME``, ``NAME_u``, ``NAME_lo95``, ``NAME_hi95`` (figures ``NAME[part]``)."""
    d = {}
    tag = f"[{part}]"
    for b in result.bands:
        if b.name.endswith(tag):
            k = b.name[: -len(tag)]
            d.update({k: b.value, f"{k}_u": b.u, f"{k}_lo95": b.lo95, f"{k}_hi95": b.hi95})
    return d


def report_numbers(result: UncertaintyResult, figure: str = "CL") -> dict:
    """Pure hook for the HTML report: the bands as plain numbers and the importance map of one figure.

    Returns
    -------
    dict
        ``figures``: {name: {value, u, lo95, hi95, measurement_u, sampling_u}},
        ``importance``: (m,) float array (posterior sd x face weight in
        ``figure``), ``figure``: the name, ``model``: text.
    """
    figs = {b.name: {"value": b.value, "u": b.u, "lo95": b.lo95, "hi95": b.hi95, "measurement_u": b.u_measurement,
                     "sampling_u": b.u_sampling, "field_value": b.field_value} for b in result.bands}
    return {"figures": figs, "importance": result.importance(figure), "figure": figure, "model": result.model}


def compute_uncertainty(body, taps, *, q=None, ref_area, meas: Measurement | None = None, carrier=None,
                        n_patches: int = 2500, field=None, kernel: str = "auto", length_scale=None,
                        trend: str | None = "newtonian", regions=None, orientation: bool = True,
                        orientation_kernel: str = "matern52", stagnation_prior=True, anisotropy: bool = False,
                        progress=None) -> UncertaintyResult:
    """Kriging estimate and band of every figure.

    Parameters
    ----------
    body : Body
    taps : ProjectedTaps
    q : float, optional
        Pa.
    ref_area : float
        m2.
    meas : Measurement, optional
        Default: no stated measurement error (the nugget still is fitted).
    carrier : Carrier, optional
        Reused when given (planning and benchmarks build it once).
    n_patches : int
        Carrier size when one is built.
    field : Field, optional
        A fitted field.  The default method's
        (:class:`~meshpress.fields.posterior.PosteriorField`, fitted to these
        taps with these tap variances) is this model: its fit is reused and
        the other settings here are ignored.  Any other field's figures are
        shown beside the estimate (``Band.field_value``).
    kernel, length_scale
        Passed to :class:`~meshpress.bands.kriging.SurfaceGP`.
    trend : {"newtonian", "normal", None}
        The field's mean beyond a constant (:func:`~meshpress.bands.gptrend.trend_features`):
        ``"newtonian"`` (default) Newton's impact pressure on skin facing the
        flow and a level on rear-facing skin, ``"normal"`` a term linear in
        the surface normal, ``None`` none; coefficients of fitted prior
        variance (docs/uncertainty.md measures them).
    regions : str or (m,) array, optional
        Region specification (:func:`meshpress.bodies.regions.face_regions`): the
        model treats the regions as independent fields, as the ``+regions``
        field methods do.
    orientation : bool
        Correlation also falls with the angle between the surface normals,
        at a scale fitted with the rest (:class:`~meshpress.bands.kriging.SurfaceGP`;
        default on, docs/uncertainty.md measures both).
    orientation_kernel : {"matern52", "se", "matern32", "exponential", "auto"}
        Form of that factor (:func:`~meshpress.bands.gpkernels.orientation_factor`);
        default Matérn-5/2 of the angle between the normals (docs/uncertainty.md
        measures each); ``auto`` keeps the one of highest marginal likelihood
        among ``se``, ``matern52`` and ``matern32``.
    stagnation_prior : {"auto", True, False}
        With the Newtonian trend, centre the impact term's coefficient on full
        stagnation pressure (Cp = 1, or q for readings in Pa when ``q`` is
        given; :func:`~meshpress.bands.gptrend.impact_prior`) instead of 0, so that a
        nose no tap sees is expected near stagnation, not at the mean of the
        taps (default True); ``"auto"`` fits both and keeps the one of higher
        marginal likelihood.  The likelihood cannot judge a nose no tap sees,
        which is where the prior matters to a band: on the benchmark car
        ``"auto"`` dropped it on 5 random layouts of 100 and CD's coverage
        fell from 0.90 to 0.88 (docs/uncertainty.md measures all three).
        False for a field of changes.
    anisotropy : bool
        In that factor, let the normals' streamwise component count more (or
        less) than the others, by a weight fitted with the rest
        (``normal_anisotropy`` of :class:`~meshpress.bands.kriging.SurfaceGP`).

    Returns
    -------
    UncertaintyResult
    """
    from ..fields.posterior import fit_surface_gp
    from .patches import Carrier

    n = len(taps)
    if n < 1:
        raise InputError("no taps: nothing to estimate a band from")
    meas = meas or Measurement.build(n)
    if len(meas.tap_u) != n:
        raise InputError(f"{len(meas.tap_u)} tap uncertainties for {n} taps")
    from ..fields.regional import RegionalField

    if isinstance(field, RegionalField) and field.method == "posterior" and hasattr(field, "parts_"):
        from .regional import regional_uncertainty

        return regional_uncertainty(body, taps, field, q=q, ref_area=ref_area, meas=meas, progress=progress)
    wb = body.axles.wheelbase if body.axles is not None else None
    names, G = figure_face_weights(body, kind=taps.kind, q=q, ref_area=ref_area, wheelbase=wb)
    names, G = with_part_figures(body, names, G)
    if _same_model(field, body, taps, meas):
        # The default field is this very model: reuse its fit, so the loads' figure is the band's centre.
        gp, carrier, groups, B = field.gp_, field.carrier_, field.groups_, field.face_matrix_
        field = None
    else:
        if carrier is None:
            carrier = Carrier(body, n_patches, progress=progress)
        gp, groups, B = fit_surface_gp(carrier, taps, meas.tap_u**2, kernel=kernel, trend=trend,
                                       length_scale=length_scale, regions=regions, orientation=orientation,
                                       orientation_kernel=orientation_kernel, anisotropy=anisotropy, q=q,
                                       stagnation=stagnation_prior)
    a = carrier.fine_weights(G, B)
    mean, var, Wk = gp.figures(a)
    closure = G.sum(axis=0)
    v_meas = measurement_var(Wk, meas, closure)
    # The posterior variance already holds the tap noise; the sampling part is what is left.
    v_samp = np.maximum(var - (Wk**2 * meas.tap_u[:, None] ** 2).sum(axis=0), 0.0)
    v_q = q_var(mean, names, taps.kind, meas.u_q_rel)
    field_vals = [None] * len(names)
    notes = []
    if field is not None:
        fv = np.asarray(field.face_values()) @ G
        field_vals = [float(x) for x in fv]
    if gp.clipped_ > 0:
        notes.append(f"surface-distance covariance was not positive definite: regularised by a diagonal shift "
                     f"of {gp.clipped_:.0e} of the variance")
    notes.append(f"covariance on {carrier.n} patches of about {carrier.spacing * 1000:.0f} mm")
    if len(gp.candidates_) > 1:
        nll = {k: v for k, v in gp.candidates_.items() if np.isfinite(v)}
        if nll:
            others = ", ".join(f"{k} {v - gp.nll_:+.1f}" for k, v in sorted(nll.items(), key=lambda kv: kv[1])
                               if k != gp.choice_)
            notes.append(f"kernel {gp.choice_} chosen by marginal likelihood (the others' negative log-likelihood "
                         f"above it: {others})")
        if gp.rejected_:
            notes.append(f"not used: {', '.join(gp.rejected_)} (length scale beyond the largest surface distance: "
                         f"the fit treats the body as one constant plus noise)")
    bands = [Band(nm, float(mean[k]), float(np.sqrt(v_meas[k] + v_samp[k] + v_q[k])), float(np.sqrt(v_meas[k])),
                  float(np.sqrt(v_samp[k])), float(np.sqrt(v_q[k])), field_vals[k]) for k, nm in enumerate(names)]
    if groups is not None:
        notes.append(f"{len(np.unique(groups))} regions modelled as independent fields")
    face_sd = np.asarray(B @ np.sqrt(gp.node_var()))
    res = UncertaintyResult(bands, face_sd, G, names, gp.describe(), taps.kind, notes, Wk)
    res.gp, res.carrier = gp, carrier
    return res


def _same_model(field, body, taps, meas) -> bool:
    """True when ``field`` is a fitted default (posterior) field of this body and taps, with these tap variances."""
    from ..fields.posterior import PosteriorField

    return (isinstance(field, PosteriorField) and getattr(field, "gp_", None) is not None and field.body_ is body
            and field.taps_ is taps and np.allclose(field.tap_var_, meas.tap_u**2))
