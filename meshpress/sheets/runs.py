"""A whole test: runs -> per-run Cp -> configurations -> comparisons -> speeds.

The body is loaded and the taps are projected once; every run and every
configuration then goes through :func:`~meshpress.loads.analysis.compute_loads` with
:meth:`ProjectedTaps.with_values`.  Runs of one configuration are averaged tap
by tap (equal weights), which for a linear field method is the same as
averaging their loads; the default field is fitted once per configuration
and each run's figures come from that fitted model, so it holds there too.

Hook for the report: :func:`configuration_results` returns the per-
configuration results (each with its :class:`LoadResult`, per-face Cp and the
runs behind it); :attr:`TestResult.body` is the loaded body.

With the default field method (the posterior of the bands' surface Gaussian
process, :mod:`meshpress.fields.posterior`) the bands are on unless the sheet
says ``[uncertainty] bands = false``: one carrier serves every fit, each
configuration's loads are fitted with its taps' measurement variances, and the
bands reuse that fit, so each figure is the centre of its band.  With another
method they are off unless ``bands = true`` (or ``process_sheet(..., bands=True)``).
With bands every configuration also gets its figures with a standard uncertainty from a
kriging model along the surface (:func:`meshpress.bands.uncertainty.compute_uncertainty`),
each tap's measurement uncertainty being the standard error of its mean over
the runs' steady windows, and every comparison the band of its change
(:func:`meshpress.bands.change.compute_change`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from ..loads.analysis import compute_loads
from ..bodies.body import load_body
from ..errors import InputError
from ..fields import DEFAULT_METHOD, make_field
from ..fields.posterior import PosteriorField
from ..progress import Progress
from ..taps.projection import project_taps
from ..taps.readings import Series, TapStats, pressure_coefficients, read_series, steady_window, tap_statistics
from ..loads.results import LoadResult
from .sheet import Run, Sheet
from .bands import add_bands, configuration_errors
from .speed import speed_table
from ..taps.tubing import tubing_warnings
from ..taps.layout import TapTable, read_taps

WIND_BIAS_WARNING = (
    "q comes from a speed, not from an on-board pitot-static measurement: if that speed is a ground speed, a "
    "steady wind w along the road biases the result even when both directions are averaged, because the mean of "
    "(V+w)^2 and (V-w)^2 is V^2 + w^2; q is then too low by 1/2 rho w^2 and the coefficients too high by the factor "
    "1 + (w/V)^2. Measure q on board (q_column) to remove it."
)

FIGURES = ("CL", "CD", "CS", "CPM", "CLF", "CLR", "front_share", "lift_N", "drag_N", "front_lift_N", "rear_lift_N")
DIFF_FIGURES = ("CL", "CD", "CS", "CPM", "CLF", "CLR", "front_share")


@dataclass
class RunReading:
    """What a run's readings reduce to.

    Attributes
    ----------
    cp : (k,) float
        Mean Cp per layout tap, reference-corrected.
    cp_stats : TapStats
        Over the window's samples (Cp).
    p_stats : TapStats
        Zero-corrected readings, Pa, against the sensors' reference.
    q_Pa : float
        Mean dynamic pressure over the window.
    q_std_Pa : float
    window_s : (float, float) or None
    samples : int
    cp_ref : float
        Mean Cp of the reference port applied.
    notes : list of str
    """

    cp: np.ndarray
    cp_stats: TapStats
    p_stats: TapStats
    q_Pa: float
    q_std_Pa: float
    window_s: tuple | None
    samples: int
    samples_total: int
    cp_ref: float
    rho: float
    zero_Pa: np.ndarray | None
    notes: list = field(default_factory=list)
    #: (k,) float: standard error of each tap's zero (mean at rest), Pa; None without a zero file.
    zero_se_Pa: np.ndarray | None = None

    def tap_u(self) -> np.ndarray:
        """(k,) float: standard uncertainty of each tap's mean Cp from the readings' spread.

        The standard error of the window's mean with the lag-1 autocorrelation
        accounted for (:func:`~meshpress.taps.readings.tap_statistics`), combined in
        quadrature with the zero's standard error over q.  Zero where a run has
        a single sample (no spread to estimate it from).
        """
        se = np.nan_to_num(np.asarray(self.cp_stats.se_ar1, float), nan=0.0)
        if self.zero_se_Pa is not None:
            se = np.sqrt(se**2 + (np.nan_to_num(self.zero_se_Pa, nan=0.0) / self.q_Pa) ** 2)
        return se


@dataclass
class RunResult:
    run: Run
    reading: RunReading
    load: LoadResult


@dataclass
class ConfigurationResult:
    """One configuration: its runs, their mean, the spread between them, the loads.

    Attributes
    ----------
    name : str
    runs : list of RunResult
    cp : (k,) float
        Mean Cp per tap over the runs.
    cp_spread : (k,) float
        Largest minus smallest run Cp per tap (0 for one run).
    load : LoadResult
        The main-job result of the mean Cp at the mean q; ``face_values`` is Cp per face
        (filled from the fitted field when the loads were summed by clusters).
    spread : dict
        Per figure: ``min, max, range, std`` over the runs.
    speeds : dict or None
        :func:`meshpress.sheets.speed.speed_table` over the sheet's speed range.
    warnings : list of str
    """

    name: str
    runs: list
    cp: np.ndarray
    cp_spread: np.ndarray
    load: LoadResult
    spread: dict
    rho: float
    speeds: dict | None = None
    warnings: list = field(default_factory=list)
    #: UncertaintyResult of the mean Cp (with bands), else None.
    bands: object = None
    #: ErrorSources of the mean Cp per tap (with bands), else None.
    errors: object = None


@dataclass
class TestResult:
    """A processed sheet.  ``changes`` holds a ChangeResult per comparison (with bands; else empty)."""

    sheet: Sheet
    body: object
    taps: object
    runs: list
    configurations: dict
    comparisons: list
    warnings: list = field(default_factory=list)
    changes: list = field(default_factory=list)
    bands_seconds: float | None = None
    carrier: object = None


def face_values(load: LoadResult) -> np.ndarray | None:
    """(m,) values on every face of a result: its own, or from its fitted field after clustered quadrature."""
    if load.face_values is not None:
        return np.asarray(load.face_values)
    field_ = getattr(load, "field", None)
    if field_ is None:
        return None
    load.face_values = np.asarray(field_.face_values())
    return load.face_values


def configuration_results(result: TestResult) -> dict:
    """Hook for reports: configuration name -> :class:`ConfigurationResult`, in sheet order."""
    return dict(result.configurations)


def read_layout(path, exclude=()) -> TapTable:
    """Read the tap layout: columns tap, x, y, z [, side], in the mesh's unit and axes, less ``exclude``."""
    table = read_taps(path, values=False)
    known = set(table.names)
    for e in exclude:
        if e not in known:
            raise InputError(f"taps.exclude: {e!r} is not a tap of the layout {Path(path).name}")
    keep = [i for i, n in enumerate(table.names) if n not in set(exclude)]
    return TapTable([table.names[i] for i in keep], table.points[keep], table.values[keep], table.kind,
                    [table.sides[i] for i in keep], table.source)


@np.errstate(over="ignore", invalid="ignore")  # overflow is checked on the means, with a message
def reduce_run(run: Run, series: Series, rho: float, zero: Series | None = None, tubing=()) -> RunReading:
    """Reduce a run's samples to mean Cp per tap (window, zero, reference, statistics).

    Parameters
    ----------
    run : Run
    series : Series
        Readings in Pa (taps in layout order).
    rho : float
        Air density, kg/m3 (for q from a speed).
    zero : Series, optional
        Readings at rest; their per-tap mean is subtracted (from q and the
        reference channel too, when the zero file has them).
    tubing : sequence of TubeGroup
        The sheet's ``[[tubing]]``: a warning when a tube settles too slowly
        for the steady window.

    With ``run.align`` (the default) and both taps and q (or speed) logged
    with times, the tap channels are shifted by their lag behind q found by
    cross-correlation (:func:`meshpress.taps.tubing.alignment_lag`) when the
    correlation is clear (above 0.5) and the lag at least two samples.
    """
    where = f"{run.where} ({run.name})"
    notes = []
    n_total = len(series)
    zero_p = zq = zr = None
    zero_se = None
    if zero is not None:
        zero_p = zero.p.mean(axis=0)
        if len(zero) > 1:
            zero_se = tap_statistics(zero.p).se_ar1
        zq = None if zero.q is None else float(zero.q.mean())
        zr = None if zero.ref is None else float(zero.ref.mean())
    # Per-sample dynamic pressure.
    if run.q_Pa is not None:
        q = np.full(n_total, run.q_Pa)
    elif run.q_column:
        q = series.q - (zq or 0.0)
    elif run.speed_column:
        q = 0.5 * rho * series.speed ** 2
    else:
        q = np.full(n_total, 0.5 * rho * run.speed_mps ** 2)
    lag = None
    if run.align and series.time is not None and (run.q_column or run.speed_column) and n_total >= 32:
        from ..taps.tubing import alignment_lag, shift

        ref = series.q if run.q_column else series.speed
        lag, peak = alignment_lag(series.time, ref, series.p)
        dt = float(np.median(np.diff(series.time)))
        if peak > 0.5 and abs(lag) >= 2 * dt:
            # The taps lag (or lead) the q channel: move them back so each sample's Cp divides by its own q.
            series = replace(series, p=shift(series.time, series.p, lag))
            notes.append(f"tap channels aligned to {'q' if run.q_column else 'speed'}: they lagged by {lag:+.2f} s "
                         f"(cross-correlation {peak:.2f})")
        else:
            lag = 0.0
    window = run.window
    mask = np.ones(n_total, bool)
    win = None
    if window == "auto":
        signal = series.q if run.q_column else series.speed if run.speed_column else None
        if signal is not None and series.time is not None:
            if run.q_column:
                signal = q
            try:
                win = steady_window(series.time, signal, band=run.steady_band_percent / 100,
                                    min_duration=run.steady_min_s, smooth=run.steady_smooth_s)
            except InputError as exc:
                raise InputError(f"{where}: {exc}; give window = [start, end] in seconds") from None
            notes.append(f"steady window found automatically on {'q' if run.q_column else 'speed'} "
                         f"(+-{run.steady_band_percent:g} %, at least {run.steady_min_s:g} s)")
        else:
            notes.append("whole record used (no time and speed/q columns to find a steady window)")
    elif isinstance(window, tuple):
        if series.time is None:
            raise InputError(f"{where}.window: the readings have no time column {run.time_column!r}")
        win = window
        notes.append("steady window given in the sheet")
    if win is not None:
        mask = (series.time >= win[0]) & (series.time <= win[1])
        if mask.sum() < 1:
            raise InputError(f"{where}.window: no samples between {win[0]:g} and {win[1]:g} s")
    s = series.select(mask)
    q = q[mask]
    if np.any(q <= 0):
        raise InputError(f"{where}: dynamic pressure is not positive in the window (check q_column and its zero)")
    if run.reference.column:
        cp_ref = (s.ref - (zr or 0.0)) / q
    else:
        cp_ref = np.full(len(q), run.reference.cp)
    cp = pressure_coefficients(s.p, q, zero=zero_p, cp_ref=cp_ref)
    cps = tap_statistics(cp)
    ps = tap_statistics(s.p - (0 if zero_p is None else zero_p[None, :]))
    q_mean = float(q.mean())
    if not (np.isfinite(q_mean) and np.isfinite(cps.mean).all() and np.isfinite(ps.mean).all()):
        raise InputError(f"{where}: readings or dynamic pressure too large to average (they overflow)")
    if zero is None:
        notes.append("no zero readings: offsets at rest not removed")
    if tubing and win is not None:
        notes += tubing_warnings(tubing, series.taps, win[1] - win[0], rho)
    return RunReading(cp=cps.mean, cp_stats=cps, p_stats=ps, q_Pa=q_mean,
                      q_std_Pa=float(q.std(ddof=1)) if len(q) > 1 else 0.0, window_s=win, samples=int(mask.sum()),
                      samples_total=n_total, cp_ref=float(np.mean(cp_ref)), rho=rho, zero_Pa=zero_p, notes=notes,
                      zero_se_Pa=zero_se)


def _read_run(run: Run, names, exclude=()) -> tuple[Series, Series | None]:
    """Read a run's readings and zero files (excluded taps' columns are skipped)."""
    from ..taps.tables import read_table

    ignore = tuple(run.ignore_columns) + tuple(exclude)
    kw = dict(fmt=run.format, unit=run.unit, time_column=run.time_column, q_column=run.q_column,
              speed_column=run.speed_column, speed_unit=run.speed_unit, ref_column=run.reference.column,
              ignore=ignore)
    series = read_series(run.readings, names, where=f"{run.where}.readings", **kw)
    zero = None
    if run.zero:
        # At rest there is no speed; q and reference channels are zeroed when the zero file has them.
        cols = set(read_table(run.zero, "zero file").columns)
        zkw = dict(kw, speed_column=None, ignore=ignore + ((run.speed_column,) if run.speed_column else ()))
        for k in ("q_column", "ref_column"):
            if zkw[k] and zkw[k] not in cols:
                zkw[k] = None
        zero = read_series(run.zero, names, where=f"{run.where}.zero", **zkw)
    return series, zero


def process_sheet(sheet: Sheet, progress: Progress | None = None, *, bands: bool | None = None) -> TestResult:
    """Run a whole test sheet.

    Parameters
    ----------
    sheet : Sheet
    progress : Progress, optional
    bands : bool, optional
        Compute the bands of every configuration and comparison; default the
        sheet's ``[uncertainty] bands``, and when it is not stated, on with
        the default field method.

    Returns
    -------
    TestResult
    """
    progress = progress or Progress(enabled=False)
    v = sheet.vehicle
    layout = read_layout(sheet.layout, sheet.exclude)
    names = list(layout.names)
    # Read every file first, so a mistake in the last run is reported before minutes of work.
    prefix = f"{sheet.path.name}: "

    def named(fn, *a):
        try:
            return fn(*a)
        except InputError as exc:
            msg = str(exc)
            raise InputError(msg if msg.startswith(prefix) else prefix + msg) from None

    with progress.step("reading runs"):
        data = [(run, *named(_read_run, run, names, sheet.exclude)) for run in sheet.runs]
    body = load_body(v.mesh, length_unit=v.length_unit, up=v.up, forward=v.forward, front_axle=v.front_axle,
                     rear_axle=v.rear_axle, ground=v.ground, progress=progress)
    with progress.step("projecting taps"):
        taps = project_taps(body, layout, max_distance=sheet.max_tap_distance_m)
    taps = replace(taps, kind="cp")
    rho0, air_notes = sheet.air.density(f"{sheet.path.name}: air")
    ref_area = v.reference_area_m2
    if ref_area is None:
        with progress.step("frontal area"):
            ref_area = body.frontal_area()
        area_src = "frontal area (computed)"
    else:
        area_src = "given in the sheet"

    st = sheet.bands
    want_bands = bands if bands is not None else (st.enabled if st.enabled is not None
                                                   else sheet.method == DEFAULT_METHOD)
    carrier = None
    if sheet.method == PosteriorField.name:
        from ..bands.patches import Carrier

        with progress.step("covariance patches"):
            carrier = Carrier(body, st.patches, progress=progress)

    # A body of parts (a scene, or shells): no field crosses from one part to another.  Runs share one carrier,
    # so the default model keeps the parts as independent regions of one fit (not one fit per part).
    regions = None
    if len(body.part_names) > 1:
        from ..bodies.regions import with_parts

        regions = with_parts(body, None)

    def loads(cp, q, tap_var=None, like=None):
        if carrier is not None:
            # The bands' model with the bands' settings, on the one carrier; tap_var makes it the bands' very fit.
            fld = PosteriorField(kernel=st.kernel, orientation=st.orientation, patches=st.patches, carrier=carrier,
                                 tap_var=tap_var, like=like, regions=regions, **sheet.method_settings)
        else:
            fld = make_field(sheet.method, regions=regions, **sheet.method_settings)
        r = compute_loads(body, taps.with_values(cp), fld, q=q, ref_area=ref_area)
        r.ref_area_source = area_src
        r.inputs["sheet"] = str(sheet.path)
        return r

    runs = []
    for run, series, zero in progress.track(data, len(data), "runs"):
        rho = rho0 if run.air is None else run.air.density(f"{sheet.path.name}: {run.where}.air")[0]
        reading = named(reduce_run, run, series, rho, zero, sheet.tubing)
        runs.append(RunResult(run, reading, None))

    configs = {}
    for name in sheet.configurations:
        members = [r for r in runs if r.run.configuration == name]
        cps = np.array([r.reading.cp for r in members])
        cp = cps.mean(axis=0)
        q = float(np.mean([r.reading.q_Pa for r in members]))
        rho = float(np.mean([r.reading.rho for r in members]))
        tap_var = configuration_errors(members, st.sensor_u_Pa).measurement().tap_u ** 2 if want_bands else None
        with progress.step(f"loads of {name}"):
            load = loads(cp, q, tap_var)
            for r in members:
                # Each run through the configuration's own fitted model (the posterior mean is linear in the
                # readings once its hyperparameters are fixed), so the runs' figures average to the configuration's.
                r.load = loads(r.reading.cp, r.reading.q_Pa, like=load.field if carrier is not None else None)
                r.load.inputs["readings"] = str(r.run.readings)
        spread = {}
        for k in FIGURES:
            vals = [getattr(r.load, k) for r in members]
            if any(x is None for x in vals):
                continue
            vals = np.array(vals, float)
            spread[k] = {"min": float(vals.min()), "max": float(vals.max()), "range": float(np.ptp(vals)),
                         "std": float(vals.std(ddof=1)) if len(vals) > 1 else 0.0}
        warnings = []
        if any(r.run.q_from_speed for r in members):
            warnings.append(WIND_BIAS_WARNING)
            w = wind_from_pair(members)
            if w is not None:
                V = math.sqrt(2 * q / rho)
                warnings.append(f"the two runs' Cp differ as a wind of about {w:.1f} m/s along the road would make "
                                f"them; if so the coefficients are about {100 * (w / V) ** 2:.1f} % too high")
        if len(members) == 1:
            warnings.append("one run only: no spread between runs, and no wind cancellation")
        sp = None
        if sheet.speeds_mps:
            sp = speed_table(sheet.speeds_mps, rho, load.ref_area_m2,
                             {"CL": load.CL, "CD": load.CD, "CLF": load.CLF, "CLR": load.CLR}, v.static_load)
        load.warnings.extend(warnings)
        face_values(load)
        configs[name] = ConfigurationResult(name, members, cp, np.ptp(cps, axis=0), load, spread, rho, sp, warnings)
    comparisons = [compare_configurations(configs[a], configs[b], names) for a, b in sheet.compare]
    result = TestResult(sheet, body, taps, runs, configs, comparisons, list(air_notes), carrier=carrier)
    if want_bands:
        add_bands(result, progress)
    return result


def wind_from_pair(members) -> float | None:
    """Wind along the road (m/s) that explains the Cp ratio of two opposite runs with q from speed.

    With ground speed V and a wind w, run Cp scale as (V +- w)^2 / V^2, so the
    ratio k of their mean |Cp| gives (V + w)/(V - w) = sqrt(k) [derived].
    None unless there are exactly two runs at about the same speed.
    """
    if len(members) != 2 or not all(m.run.q_from_speed for m in members):
        return None
    a, b = members
    Va = math.sqrt(2 * a.reading.q_Pa / a.reading.rho)
    Vb = math.sqrt(2 * b.reading.q_Pa / b.reading.rho)
    if abs(Va - Vb) > 0.05 * max(Va, Vb):
        return None
    sa, sb = np.abs(a.reading.cp).mean(), np.abs(b.reading.cp).mean()
    if not (sa > 0 and sb > 0):
        return None
    r = math.sqrt(max(sa, sb) / min(sa, sb))
    return 0.5 * (Va + Vb) * (r - 1) / (r + 1)


def compare_configurations(a: ConfigurationResult, b: ConfigurationResult, names) -> dict:
    """Change from configuration ``a`` (base) to ``b``: figures, per tap, per face."""
    d = compare_loads(a.load, b.load)
    d.update(base=a.name, other=b.name)
    d["taps"] = [{"name": n, "cp_base": float(x), "cp_other": float(y), "delta_cp": float(y - x)}
                 for n, x, y in zip(names, a.cp, b.cp)]
    return d


def compare_loads(a: LoadResult, b: LoadResult) -> dict:
    """Figure changes (b - a) and per-face Cp change of two results on the same body."""
    d = {"delta": {}, "base_figures": {}, "other_figures": {}}
    for k in DIFF_FIGURES:
        x, y = getattr(a, k), getattr(b, k)
        d["base_figures"][k], d["other_figures"][k] = x, y
        d["delta"][k] = None if x is None or y is None else y - x
    fa, fb = face_values(a), face_values(b)
    if fa is not None and fb is not None and len(fa) == len(fb):
        dc = np.asarray(fb) - np.asarray(fa)
        if a.value_kind == "p" and a.q_Pa and b.q_Pa:
            dc = np.asarray(fb) / b.q_Pa - np.asarray(fa) / a.q_Pa
        d["face_delta_cp"] = dc
        d["faces"] = {"count": len(dc), "min_delta_cp": float(dc.min()), "max_delta_cp": float(dc.max()),
                      "mean_abs_delta_cp": float(np.abs(dc).mean())}
    if a.parts and b.parts and [p.name for p in a.parts] == [p.name for p in b.parts]:
        # What the change did to each part: to the wing itself, and to the body around it.
        d["parts"] = {pa.name: {k: None if getattr(pa.loads, k) is None or getattr(pb.loads, k) is None
                                else getattr(pb.loads, k) - getattr(pa.loads, k) for k in DIFF_FIGURES}
                      for pa, pb in zip(a.parts, b.parts)}
    return d
