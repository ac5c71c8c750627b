"""Tap readings of a run: reading the file, the steady window, zeros, reference, means.

A readings file is a table (CSV, or .xlsx) in one of two shapes:

- **wide**: one column per tap, one row per sample; optional time, speed, q
  and reference-port columns;
- **long**: columns ``tap`` and ``value`` (and optionally the time column),
  one row per tap and sample.

Without a time column the rows are taken as repeated samples (or one row of
single values).  Pressures are in the run's unit; they are turned into Pa here.

The functions that do the arithmetic (:func:`steady_window`,
:func:`tap_statistics`, :func:`pressure_coefficients`) are pure and work on
arrays.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import InputError
from .tables import read_table
from ..units import pressure_factor, speed_factor


@dataclass
class Series:
    """Samples of one readings file, SI units.

    Attributes
    ----------
    time : (n,) float or None
        Time of each sample, s (None without a time column).
    p : (n, k) float
        Tap pressures against the sensors' reference, Pa, columns in ``taps`` order.
    taps : list of str
    q : (n,) float or None
        Measured dynamic pressure, Pa.
    speed : (n,) float or None
        Speed, m/s.
    ref : (n,) float or None
        Reference port pressure against free-stream static, Pa.
    source : str
    """

    time: np.ndarray | None
    p: np.ndarray
    taps: list
    q: np.ndarray | None = None
    speed: np.ndarray | None = None
    ref: np.ndarray | None = None
    source: str = ""

    def __len__(self) -> int:
        return len(self.p)

    def select(self, mask) -> "Series":
        """The samples where ``mask`` is True."""
        cut = (lambda a: None if a is None else a[mask])
        return Series(cut(self.time), self.p[mask], self.taps, cut(self.q), cut(self.speed), cut(self.ref),
                      self.source)


def _read_table(path) -> pd.DataFrame:
    df = read_table(path, "readings file")
    if df.empty:
        raise InputError(f"{path}: the readings file has no rows")
    return df


def _numeric(df, col, where, factor=1.0) -> np.ndarray:
    """Column ``col`` as numbers times ``factor`` (a unit's), each finite, or an error naming the first bad cell."""
    num = pd.to_numeric(df[col], errors="coerce").to_numpy(dtype=float)
    with np.errstate(over="ignore"):
        scaled = num * factor
    bad = np.flatnonzero(~np.isfinite(scaled))
    if len(bad):
        what = "is not a number" if not np.isfinite(num[bad[0]]) else "is too large"
        raise InputError(f"{where}, data row {bad[0] + 1}, column {col}: {df[col].iloc[bad[0]]!r} {what}")
    return scaled


def read_series(path, layout_names, *, fmt="auto", unit="Pa", time_column="time", q_column=None,
                speed_column=None, speed_unit="m/s", ref_column=None, where="", require_all=True, ignore=()) -> Series:
    """Read a readings file into a :class:`Series` in Pa, m/s and s.

    Parameters
    ----------
    path : Path
    layout_names : list of str
        Taps of the layout; any other tap in the file is an error.
    fmt : {"auto", "wide", "long"}
        ``auto``: long when the file has ``tap`` and ``value`` columns.
    unit : str
        Pressure unit of the taps, q and reference columns.
    time_column, q_column, speed_column, ref_column : str, optional
        Names of the special columns (wide format; in long format q, speed and
        reference appear as pseudo-taps with those names).
    where : str
        Prefix for messages (the sheet key).
    ignore : iterable of str
        Columns to leave out (other channels of the logger).
    require_all : bool
        Every layout tap must be in the file.

    Returns
    -------
    Series
    """
    label = f"{where}: {path.name}" if where else str(path)
    df = _read_table(path)
    cols_lower = {c.lower(): c for c in df.columns}
    if fmt == "auto":
        fmt = "long" if ("tap" in cols_lower and "value" in cols_lower) else "wide"
    elif fmt == "long" and not ("tap" in cols_lower and "value" in cols_lower):
        raise InputError(f"{label}: long readings need columns tap and value (format = 'long')")
    specials = [c for c in (q_column, speed_column, ref_column) if c]
    if fmt == "long":
        df = _long_to_wide(df, cols_lower, time_column, label)
    has_time = time_column in df.columns
    named = set(specials) | ({time_column} if has_time else set()) | set(ignore)
    for c in specials:
        if c not in df.columns:
            raise InputError(f"{label}: no column {c!r} (named in the sheet)")
    layout = set(layout_names)
    extra = [c for c in df.columns if c not in named and c not in layout]
    if extra:
        hint = " (the time column is '" + time_column + "'; set time_column)" if "time" in extra[0].lower() else ""
        raise InputError(f"{label}: column {extra[0]!r} is not a tap of the layout{hint}; list other logger "
                         "channels in ignore_columns")
    taps = [n for n in layout_names if n in df.columns]
    missing = [n for n in layout_names if n not in df.columns]
    if missing and require_all:
        raise InputError(f"{label}: tap {missing[0]!r} of the layout has no readings"
                         + (f" ({len(missing) - 1} more)" if len(missing) > 1 else "")
                         + "; list broken taps in taps.exclude")
    fP = pressure_factor(unit)
    p = np.column_stack([_numeric(df, c, label, fP) for c in taps]) if taps else np.zeros((len(df), 0))
    t = _numeric(df, time_column, label) if has_time else None
    if t is not None and len(t) > 1 and np.any(np.diff(t) <= 0):
        i = int(np.flatnonzero(np.diff(t) <= 0)[0]) + 2
        raise InputError(f"{label}, data row {i}, column {time_column}: time does not increase")
    q = _numeric(df, q_column, label, fP) if q_column else None
    ref = _numeric(df, ref_column, label, fP) if ref_column else None
    speed = _numeric(df, speed_column, label, speed_factor(speed_unit)) if speed_column else None
    return Series(t, p, taps, q, speed, ref, str(path))


def _long_to_wide(df, cols_lower, time_column, label) -> pd.DataFrame:
    tap, value = cols_lower["tap"], cols_lower["value"]
    df = df.copy()
    df[tap] = df[tap].astype(str).str.strip()
    if time_column in df.columns:
        if (df[tap] == time_column).any():
            i = int(np.flatnonzero((df[tap] == time_column).to_numpy())[0])
            raise InputError(f"{label}, data row {i + 1}, column {tap}: a tap has the time column's name "
                             f"{time_column!r}")
        dup = df.duplicated([time_column, tap])
        if dup.any():
            i = int(np.flatnonzero(dup.to_numpy())[0])
            raise InputError(f"{label}, data row {i + 1}: tap {df[tap].iloc[i]!r} appears twice at one time")
        wide = df.pivot(index=time_column, columns=tap, values=value).reset_index()
        wide[time_column] = pd.to_numeric(wide[time_column], errors="coerce")
        wide = wide.sort_values(time_column)
        if wide.isna().any().any():
            raise InputError(f"{label}: not every tap has a value at every time")
        return wide.reset_index(drop=True)
    others = [c for c in df.columns if c not in (tap, value)]
    if others:
        raise InputError(f"{label}: long readings have column {others[0]!r}; expected tap, value and the time column")
    # Without time: repeated rows of a tap are repeated samples, in order.
    df["_k"] = df.groupby(tap).cumcount()
    wide = df.pivot(index="_k", columns=tap, values=value)
    if wide.isna().any().any():
        raise InputError(f"{label}: taps have different numbers of values")
    wide.columns = [str(c) for c in wide.columns]
    return wide.reset_index(drop=True)


# -- arithmetic ------------------------------------------------------------------------------------

def moving_average(x: np.ndarray, n: int) -> np.ndarray:
    """Centred moving average over ``n`` samples (shorter at the ends), same length as ``x``."""
    if n <= 1:
        return np.asarray(x, float)
    c = np.concatenate([[0.0], np.cumsum(x)])
    i = np.arange(len(x))
    lo = np.clip(i - n // 2, 0, len(x))
    hi = np.clip(i - n // 2 + n, 0, len(x))
    return (c[hi] - c[lo]) / (hi - lo)


def longest_band(x: np.ndarray, tol: float) -> tuple[int, int]:
    """Longest run ``x[i:j]`` with max - min <= tol (two monotonic queues, O(n)).

    Returns
    -------
    i, j : int
        Half-open sample range.
    """
    from collections import deque

    hi, lo = deque(), deque()
    best, i = (0, 0), 0
    for j, v in enumerate(x):
        while hi and x[hi[-1]] <= v:
            hi.pop()
        hi.append(j)
        while lo and x[lo[-1]] >= v:
            lo.pop()
        lo.append(j)
        while x[hi[0]] - x[lo[0]] > tol:
            i += 1
            if hi[0] < i:
                hi.popleft()
            if lo[0] < i:
                lo.popleft()
        if j + 1 - i > best[1] - best[0]:
            best = (i, j + 1)
    return best


def longest_run(mask: np.ndarray) -> tuple[int, int]:
    """Longest run of True in ``mask``, as a half-open range (0, 0 when none)."""
    m = np.concatenate([[False], np.asarray(mask, bool), [False]])
    d = np.diff(m.astype(np.int8))
    starts, ends = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
    if len(starts) == 0:
        return 0, 0
    k = int(np.argmax(ends - starts))
    return int(starts[k]), int(ends[k])


def steady_window(t: np.ndarray, x: np.ndarray, *, band: float = 0.03, min_duration: float = 10.0,
                  smooth: float = 1.0) -> tuple[float, float]:
    """The longest stretch where a signal stays within a band of its level.

    The signal (speed or q) is smoothed over ``smooth`` seconds; the stretch is
    the longest one whose smoothed values lie within ``level * (1 +- band)``,
    ``level`` being the stretch's own median.  A first guess is the longest
    stretch with max - min <= 2 band * (median of the record); two passes then
    recentre the band on the stretch's median.

    Parameters
    ----------
    t : (n,) float
        Times, s, increasing.
    x : (n,) float
        Speed or dynamic pressure.
    band : float
        Half-width of the band as a fraction of the level (0.03 = +-3 %).
    min_duration : float
        Shortest acceptable stretch, s.
    smooth : float
        Moving-average length, s (0: none).

    Returns
    -------
    start, end : float
        Times of the first and last samples of the stretch, s.

    Raises
    ------
    InputError
        No stretch is long enough.
    """
    t = np.asarray(t, float)
    x = np.asarray(x, float)
    dt = float(np.median(np.diff(t))) if len(t) > 1 else 1.0
    n_smooth = smooth / dt  # samples; can exceed the record (or overflow) when the time steps are tiny
    xs = moving_average(x, len(x) if not n_smooth < len(x) else max(1, int(round(n_smooth)))) if smooth > 0 else x
    level = float(np.median(np.abs(xs)))
    i, j = longest_band(xs, 2 * band * level)
    for _ in range(2):
        level = float(np.median(np.abs(xs[i:j])))
        i, j = longest_run(np.abs(np.abs(xs) - level) <= band * level)
    if j - i < 2 or t[j - 1] - t[i] < min_duration:
        got = t[j - 1] - t[i] if j - i >= 2 else 0.0
        raise InputError(f"no steady stretch of {min_duration:g} s within +-{100 * band:g} % found "
                         f"(longest {got:.1f} s)")
    return float(t[i]), float(t[j - 1])


@dataclass
class TapStats:
    """Per-tap statistics of a mean over samples.

    Attributes
    ----------
    mean, std, se, se_ar1 : (k,) float
        Mean, sample standard deviation (ddof 1), standard error of the mean
        std/sqrt(n), and the standard error with the lag-1 autocorrelation
        r1 accounted for, std/sqrt(n_eff), n_eff = n (1 - r1)/(1 + r1).
    n : int
        Samples.
    """

    mean: np.ndarray
    std: np.ndarray
    se: np.ndarray
    se_ar1: np.ndarray
    n: int
    n_eff: np.ndarray = field(default=None)


def tap_statistics(x: np.ndarray) -> TapStats:
    """Mean, standard deviation and standard errors of each column of ``x`` (n, k).

    The AR(1) correction of the effective sample size, n_eff = n (1 - r1) /
    (1 + r1), is the usual variance-inflation factor for a serially
    correlated series (Wilks, Statistical Methods in the Atmospheric Sciences,
    section on the variance of a time average) [text]; r1 is clipped to
    [0, 0.99] so that n_eff is never above n.
    """
    x = np.atleast_2d(np.asarray(x, float))
    n = len(x)
    mean = x.mean(axis=0)
    if n < 2:
        nan = np.full(x.shape[1], np.nan)
        return TapStats(mean, nan, nan, nan, n, np.full(x.shape[1], float(n)))
    std = x.std(axis=0, ddof=1)
    d = x - mean
    den = (d * d).sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        r1 = np.where(den > 0, (d[1:] * d[:-1]).sum(axis=0) / den, 0.0)
    r1 = np.clip(r1, 0.0, 0.99)
    n_eff = n * (1 - r1) / (1 + r1)
    return TapStats(mean, std, std / np.sqrt(n), std / np.sqrt(n_eff), n, n_eff)


def pressure_coefficients(p: np.ndarray, q, *, zero=None, cp_ref=0.0) -> np.ndarray:
    """Per-sample Cp from readings against a reference port.

    Cp = (p - p_zero) / q + Cp_ref, where p is read against the reference
    port, p_zero the reading at rest, and Cp_ref the port's own Cp (known, or
    its measured pressure against free-stream static over q).

    Parameters
    ----------
    p : (n, k) float
        Readings, Pa.
    q : float or (n,) float
        Dynamic pressure, Pa (per sample when measured).
    zero : (k,) float, optional
        Zero offsets, Pa (mean reading at rest).
    cp_ref : float or (n,) float
        Reference port Cp.

    Returns
    -------
    (n, k) float
    """
    p = np.asarray(p, float)
    if zero is not None:
        p = p - np.asarray(zero, float)[None, :]
    q = np.asarray(q, float)
    qq = q[:, None] if q.ndim == 1 else q
    cr = np.asarray(cp_ref, float)
    cr = cr[:, None] if cr.ndim == 1 else cr
    return p / qq + cr
