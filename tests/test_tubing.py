"""Tubing: the first-order lag of a tube, the warning for a short steady window, aligning taps to q."""

import math

import numpy as np
import pytest

from meshpress.sheets.runs import reduce_run
from meshpress.taps.tubing import tubing_warnings
from meshpress.sheets.sheet import Run, TubeGroup
from meshpress.taps.readings import Series
from meshpress.taps.tubing import alignment_lag, tube_response


def test_time_constant_of_a_tube_alone_is_the_closed_form():
    # Poiseuille resistance R = 128 mu L / (pi d^4) into the tube's own isothermal capacitance
    # C = (pi d^2 L / 4) / p gives tau = 32 mu L^2 / (d^2 p) [derived]; travel time L / c.
    L, d, p, mu = 3.0, 1.0e-3, 101_325.0, 1.81e-5
    r = tube_response(L, d, p_abs_Pa=p, mu=mu, c=340.3)
    assert r.tau_s == pytest.approx(32 * mu * L**2 / (d**2 * p), rel=1e-12)
    assert r.delay_s == pytest.approx(L / 340.3)
    # A first-order lag comes within 1 % of a step after tau ln(100) (exponential response).
    assert r.settling_s() == pytest.approx(r.delay_s + r.tau_s * math.log(100.0))
    # The sensor's volume adds to the capacitance in proportion.
    v_tube = math.pi * d**2 / 4 * L
    assert tube_response(L, d, sensor_volume_m3=v_tube, p_abs_Pa=p, mu=mu).tau_s == pytest.approx(2 * r.tau_s)


def test_a_slow_tube_for_a_short_window_is_named():
    slow = TubeGroup(("CT*",), length_m=10.0, bore_m=0.5e-3, where="tubing[1]")  # tau about 2.3 s
    quick = TubeGroup(("D*",), length_m=1.0, bore_m=1.6e-3, where="tubing[2]")
    w = tubing_warnings([slow, quick], ["CT01", "CT02", "D1"], window_s=20.0, rho=1.2)
    assert len(w) == 1 and "tubing[1]" in w[0] and "CT01, CT02" in w[0]
    assert tubing_warnings([slow], ["CT01"], window_s=200.0, rho=1.2) == []


def _ramp_q(n=1200, dt=0.05, seed=4):
    # q that varies (a speed that wanders) so the lag is visible to the cross-correlation.
    rng = np.random.default_rng(seed)
    t = np.arange(n) * dt
    q = 450 + 40 * np.sin(2 * np.pi * t / 13.0) + 15 * np.sin(2 * np.pi * t / 3.1) + rng.normal(0, 1.0, n)
    return t, q


def test_alignment_finds_a_known_lag():
    t, q = _ramp_q()
    cp = np.array([0.9, -0.6, -1.1])
    lag = 0.35
    p = cp[None] * np.interp(t - lag, t, q)[:, None]
    got, peak = alignment_lag(t, q, p)
    assert got == pytest.approx(lag, abs=0.05 + 1e-9)  # to the sample (dt = 0.05 s)
    assert peak > 0.9


def test_reduce_run_aligns_lagged_taps_so_each_sample_divides_by_its_own_q():
    # Taps that lag q by 0.5 s: averaged as they are, Cp is biased where q varies; aligned, each tap's Cp is the
    # true one (Cp = p / q sample by sample, then the mean).
    t, q = _ramp_q()
    cp = np.array([0.9, -0.6, -1.1])
    p = cp[None] * np.interp(t - 0.5, t, q)[:, None]
    s = Series(t, p, ["a", "b", "c"], q=q)
    run = Run(index=1, name="r", configuration="c", readings=None, q_column="q", window=(5.0, 55.0))
    r = reduce_run(run, s, 1.2)
    assert r.cp == pytest.approx(cp, abs=2e-3)
    assert any("aligned" in n for n in r.notes)
    raw = reduce_run(Run(index=1, name="r", configuration="c", readings=None, q_column="q", window=(5.0, 55.0),
                         align=False), s, 1.2)
    assert np.abs(raw.cp_stats.std).max() > 10 * np.abs(r.cp_stats.std).max()
