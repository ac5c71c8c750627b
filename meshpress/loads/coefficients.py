"""Coefficients, dynamic pressure and the axle split: short pure functions.

Conventions (SAE J1594 frame, x rearward, y right, z up; origin on the ground
midway between the axles): lift L = F_z (+ up), drag D = F_x (+ rearward),
side force S = F_y (+ right), pitching moment PM = M_y (+ nose up).
"""

from __future__ import annotations

import math

ISA_RHO = 1.225  # kg/m3, ISA sea level (288.15 K, 101325 Pa)


def dynamic_pressure(rho: float, speed: float) -> float:
    """q = 1/2 rho V^2 (Pa), rho in kg/m3 and V in m/s."""
    return 0.5 * rho * speed * speed


def axle_split(lift: float, pitch_moment: float, wheelbase: float) -> tuple[float, float]:
    """Front and rear axle lift from the moment balance about the mid-wheelbase ground point.

    ``L_front = L/2 + PM/WB``, ``L_rear = L/2 - PM/WB`` (PM + nose up, in N m;
    WB in m).  The drag's moment about the ground is part of PM, as it should
    be, because the tyres react at the ground.
    """
    return 0.5 * lift + pitch_moment / wheelbase, 0.5 * lift - pitch_moment / wheelbase


def coefficient(force: float, q: float, area: float) -> float:
    """C = F / (q A)."""
    return force / (q * area)


def front_share(front: float, total: float) -> float | None:
    """Front axle's share of the lift (or downforce), None when the total is ~0."""
    if total == 0 or not math.isfinite(total):
        return None
    return front / total
