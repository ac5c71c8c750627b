"""Pneumatic tubing between a tap and its sensor: its lag and settling time, and aligning logged channels.

The model is the simplest one with a source: a first-order lag, the tube's viscous (Poiseuille) resistance
``R = 128 mu L / (pi d^4)`` charging the isothermal capacitance of the tube's and the sensor's air volume
``C = (V_tube + V_sensor) / p`` (lumped model of a pneumatic line; Doebelin, *Measurement Systems*, the
pneumatic transmission-line section; quoted from memory), so ``tau = R C``, plus the acoustic travel time
``L / c``.  It ignores the air's inertance, so it misses the resonance that long, wide tubes show (Bergh and
Tijdeman 1965 give the full line response); it is meant to say whether a steady window is long enough, which is
a question of the slow, viscous part.

Alignment: when the pressures and q (or speed) are logged on different instruments, their clocks or the tubing
shift one against the other; the lag that maximises the cross-correlation of their changes is found and the
taps are shifted back by it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Dynamic viscosity of air at about 15-20 C, Pa s (handbook value, from memory: 1.8e-5 at 20 C).
AIR_MU = 1.81e-5
#: Speed of sound in air at about 15 C, m/s (ISA sea level: 340.3).
AIR_C = 340.3


@dataclass(frozen=True)
class TubeResponse:
    """Lag of one tube to its sensor.

    Attributes
    ----------
    delay_s : float
        Acoustic travel time ``L / c``.
    tau_s : float
        First-order time constant ``R C``.
    """

    delay_s: float
    tau_s: float

    def settling_s(self, within: float = 0.01) -> float:
        """Time to come within ``within`` (a fraction) of a step: ``delay + tau ln(1 / within)``."""
        return self.delay_s + self.tau_s * math.log(1.0 / within)


def tube_response(length_m: float, bore_m: float, *, sensor_volume_m3: float = 0.0, p_abs_Pa: float = 101_325.0,
                  mu: float = AIR_MU, c: float = AIR_C) -> TubeResponse:
    """First-order lag and travel time of a tube of ``length_m`` and inner diameter ``bore_m`` to a sensor.

    Parameters
    ----------
    length_m, bore_m : float
        m.
    sensor_volume_m3 : float
        The sensor's own air volume (its cavity and fittings), m3.
    p_abs_Pa : float
        Absolute pressure in the line, Pa.
    mu, c : float
        Air's dynamic viscosity (Pa s) and speed of sound (m/s).
    """
    if not (length_m > 0 and bore_m > 0 and sensor_volume_m3 >= 0 and p_abs_Pa > 0):
        raise ValueError("tube length, bore and pressure must be positive, the sensor volume not negative")
    R = 128.0 * mu * length_m / (math.pi * bore_m**4)
    C = (math.pi * bore_m**2 / 4.0 * length_m + sensor_volume_m3) / p_abs_Pa
    return TubeResponse(length_m / c, R * C)


def alignment_lag(t: np.ndarray, reference: np.ndarray, signals: np.ndarray, *, max_lag_s: float = 2.0):
    """The lag of the tap channels behind a reference channel (q or speed), by cross-correlation of changes.

    Parameters
    ----------
    t : (n,) float
        Sample times, s, increasing and about evenly spaced.
    reference : (n,) float
        The q (or speed) channel.
    signals : (n, k) float
        Tap pressures; their sum weighted by the sign of each tap's mean follows q.
    max_lag_s : float
        Largest lag looked for, s.

    Returns
    -------
    lag_s : float
        Positive when the taps lag the reference.
    peak : float
        The correlation at that lag (-1..1); a weak peak means no clear lag.
    """
    dt = float(np.median(np.diff(t)))
    s = signals @ np.sign(signals.mean(axis=0) + 1e-300)
    a, b = np.diff(np.asarray(reference, float)), np.diff(s)
    a, b = a - a.mean(), b - b.mean()
    na, nb = np.linalg.norm(a), np.linalg.norm(b)
    if not (na > 0 and nb > 0) or len(a) < 8:
        return 0.0, 0.0
    m = int(min(max_lag_s / dt, len(a) // 4))
    lags = np.arange(-m, m + 1)
    corr = np.array([(a[max(0, -k):len(a) - max(0, k)] @ b[max(0, k):len(b) - max(0, -k)]) for k in lags])
    corr /= na * nb
    i = int(np.argmax(corr))
    return float(lags[i] * dt), float(corr[i])


def shift(t: np.ndarray, signals: np.ndarray, lag_s: float) -> np.ndarray:
    """The signals moved earlier by ``lag_s`` (linear interpolation; ends held)."""
    return np.column_stack([np.interp(t + lag_s, t, signals[:, j]) for j in range(signals.shape[1])])


def tubing_warnings(tubing, taps, window_s: float, rho: float, *, settlings: float = 5.0) -> list:
    """A warning per tube group whose settling time is more than 1/``settlings`` of the steady window.

    The window must hold several settling times of the slowest tube for its mean to be the steady pressure
    (common practice: five); the settling time is to 1 % of a step (:mod:`meshpress.taps.tubing`).
    """
    out = []
    for g in tubing:
        names = [t for t in taps if g.covers(t)]
        if not names:
            continue
        r = tube_response(g.length_m, g.bore_m, sensor_volume_m3=g.sensor_volume_m3)
        ts = r.settling_s()
        if settlings * ts > window_s:
            shown = ", ".join(names[:4]) + (f" and {len(names) - 4} more" if len(names) > 4 else "")
            out.append(f"tubing: {g.where} ({g.length_m:g} m of {g.bore_m * 1000:g} mm bore; taps {shown}) settles in "
                       f"about {ts:.2f} s (time constant {r.tau_s:.2f} s), more than a fifth of the {window_s:.1f} s "
                       "steady window: its mean is still moving; hold the speed longer or use a shorter, wider tube")
    return out
