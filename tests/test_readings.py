"""Readings: means, standard errors, zeros, reference correction, the steady-window finder, file shapes."""

import numpy as np
import pytest

from meshpress.errors import InputError
from meshpress.taps.readings import (Series, longest_band, pressure_coefficients, read_series, steady_window,
                                tap_statistics)
from meshpress.sheets.runs import reduce_run
from meshpress.sheets.sheet import Reference, Run


def test_statistics_hand_made():
    # By hand: 1, 2, 3, 4 -> mean 2.5, sample std sqrt(5/3), standard error std / sqrt(4).
    s = tap_statistics(np.array([[1.0, 10.0], [2.0, 10.0], [3.0, 10.0], [4.0, 10.0]]))
    assert s.mean == pytest.approx([2.5, 10.0])
    assert s.std == pytest.approx([np.sqrt(5 / 3), 0.0])
    assert s.se == pytest.approx([np.sqrt(5 / 3) / 2, 0.0])
    assert s.n == 4


def test_ar1_standard_error_of_correlated_noise():
    # AR(1) noise with phi = 0.8: the variance of the mean is inflated by (1 + phi)/(1 - phi) = 9 for large n
    # (Wilks, Statistical Methods in the Atmospheric Sciences [text]); white noise: no inflation.
    rng = np.random.default_rng(1)
    n, phi = 20000, 0.8
    e = rng.standard_normal(n)
    x = np.empty(n)
    x[0] = e[0]
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    s = tap_statistics(x[:, None])
    assert (s.se_ar1[0] / s.se[0]) ** 2 == pytest.approx(9.0, rel=0.1)
    w = tap_statistics(rng.standard_normal((n, 1)))
    assert w.se_ar1[0] == pytest.approx(w.se[0], rel=0.05)


def test_zero_and_reference_corrections():
    # Known answer: sensors read p_tap - p_ref + offset; p_ref = Cp_ref q.  Removing the zero (the offset read at
    # rest) and adding Cp_ref back gives the true Cp exactly (Cp = Cp_read + Cp_ref).
    cp_true = np.array([1.0, -0.5, -1.2, 0.3])
    q = np.array([400.0, 420.0, 380.0])
    cp_ref = -0.2
    offset = np.array([5.0, -3.0, 12.0, 0.5])
    p = cp_true[None] * q[:, None] - cp_ref * q[:, None] + offset[None]
    got = pressure_coefficients(p, q, zero=offset, cp_ref=cp_ref)
    assert got.ravel() == pytest.approx(np.tile(cp_true, 3))
    # Without the corrections the answer is off by exactly the parts left out.
    raw = pressure_coefficients(p, q)
    assert (raw - got).ravel() == pytest.approx((offset[None] / q[:, None] - cp_ref).ravel())


def _run(**kw):
    base = dict(index=1, name="r", configuration="c", readings=None, q_column="q", window="all")
    base.update(kw)
    return Run(**base)


def test_reduce_run_with_measured_reference_and_zero():
    # A run whose reference port (cabin) is measured against free-stream static on its own channel.
    rng = np.random.default_rng(3)
    n = 200
    cp_true = np.array([0.8, -0.9, -0.3])
    q = 500 + 5 * rng.standard_normal(n)
    cab = -0.15 * q
    off = np.array([4.0, -6.0, 2.0])
    p = cp_true[None] * q[:, None] - cab[:, None] + off[None]
    s = Series(np.arange(n) * 0.1, p, ["a", "b", "c"], q=q + 1.0, ref=cab + 0.5)
    z = Series(np.arange(20) * 0.1, np.tile(off, (20, 1)), ["a", "b", "c"], q=np.full(20, 1.0),
               ref=np.full(20, 0.5))
    r = reduce_run(_run(reference=Reference("cabin", None, "cab")), s, 1.2, z)
    assert r.cp == pytest.approx(cp_true, abs=1e-12)
    assert r.cp_ref == pytest.approx(-0.15, abs=1e-12)
    assert r.q_Pa == pytest.approx(q.mean())
    assert r.cp_stats.std == pytest.approx([0, 0, 0], abs=1e-12)


def test_steady_window_exact():
    # Known steady part 15-50 s (10 Hz): a ramp up before, a ramp down after.
    t = np.arange(0, 60, 0.1)
    v = np.where(t < 15, 20 + t, np.where(t <= 50, 35.0, 35 - 2 * (t - 50)))
    a, b = steady_window(t, v, band=0.01, min_duration=10, smooth=0)
    # The band (+-1 %) also admits the last 0.35 m/s of each ramp: 14.65 s and 50.17 s by hand.
    assert a == pytest.approx(14.7, abs=1e-9)
    assert b == pytest.approx(50.1, abs=1e-9)


def test_steady_window_noisy():
    rng = np.random.default_rng(5)
    t = np.arange(0, 80, 0.1)
    q = np.where(t < 12, 300 + 30 * t, 660.0) * (1 + 0.01 * rng.standard_normal(len(t)))
    q[t > 70] *= 0.7  # lifting off at the end
    a, b = steady_window(t, q, band=0.03, min_duration=20, smooth=1.0)
    # The ramp enters the -3 % band at 11.34 s (by hand); 1 s smoothing moves each edge by up to 0.5 s.
    assert 10.8 <= a <= 12.0
    assert 69.4 <= b <= 70.5


def test_steady_window_too_short():
    t = np.arange(0, 30, 0.1)
    with pytest.raises(InputError, match="no steady stretch"):
        steady_window(t, 10 + t, band=0.01, min_duration=10)


def test_longest_band_against_naive():
    rng = np.random.default_rng(7)
    for _ in range(30):
        x = np.cumsum(rng.standard_normal(60))
        tol = rng.uniform(0.5, 4)
        best = 0
        for i in range(len(x)):
            for j in range(i + 1, len(x) + 1):
                if np.ptp(x[i:j]) <= tol:
                    best = max(best, j - i)
        i, j = longest_band(x, tol)
        assert j - i == best and np.ptp(x[i:j]) <= tol


def test_wide_and_long_files_agree(tmp_path):
    wide = tmp_path / "w.csv"
    wide.write_text("# a comment\ntime,q,A,B\n0,10,1.0,2.0\n0.5,11,1.5,2.5\n")
    long = tmp_path / "l.csv"
    long.write_text("time,tap,value\n0,A,1.0\n0,B,2.0\n0,q,10\n0.5,A,1.5\n0.5,B,2.5\n0.5,q,11\n")
    a = read_series(wide, ["A", "B"], unit="hPa", q_column="q")
    b = read_series(long, ["A", "B"], unit="hPa", q_column="q")
    assert a.p == pytest.approx(b.p)
    assert a.p.ravel() == pytest.approx([100.0, 200.0, 150.0, 250.0])  # 1 hPa = 100 Pa (exact)
    assert a.q == pytest.approx([1000.0, 1100.0])
    single = tmp_path / "s.csv"
    single.write_text("tap,value\nA,3\nB,4\n")
    s = read_series(single, ["A", "B"])
    assert s.time is None and s.p.ravel() == pytest.approx([3.0, 4.0])


def test_reading_errors(tmp_path):
    f = tmp_path / "w.csv"
    f.write_text("time,A,C\n0,1,2\n")
    with pytest.raises(InputError, match="column 'C' is not a tap of the layout"):
        read_series(f, ["A", "B"])
    f.write_text("time,A\n0,1\n")
    with pytest.raises(InputError, match="tap 'B' of the layout has no readings"):
        read_series(f, ["A", "B"])
    f.write_text("time,A\n0,1\n0,2\n")
    with pytest.raises(InputError, match="time does not increase"):
        read_series(f, ["A"])
    f.write_text("time,A\n0,x\n")
    with pytest.raises(InputError, match="column A: 'x' is not a number"):
        read_series(f, ["A"])
