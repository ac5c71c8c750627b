"""Loads at other speeds, axle and wheel loads, weight share: closed-form checks."""

import numpy as np
import pytest

from meshpress.sheets.sheet import G_N, StaticLoad
from meshpress.sheets.speed import axle_loads, loads_at_speeds, speed_table, weight_share, wheel_loads


def test_loads_scale_with_speed_squared():
    # F = C q A, q = 1/2 rho V^2 [std]: doubling the speed quadruples every load; drag power D V goes as V^3.
    t = loads_at_speeds([20.0, 40.0], 1.225, 2.0, CL=-0.5, CD=0.4, CLF=-0.2, CLR=-0.3)
    assert t["q_Pa"] == pytest.approx([245.0, 980.0])  # 0.5 * 1.225 * 20^2 = 245 by hand
    assert t["lift_N"] == pytest.approx([-245.0, -980.0])
    assert t["downforce_N"] == pytest.approx([245.0, 980.0])
    assert t["front_lift_N"] + t["rear_lift_N"] == pytest.approx(t["lift_N"])
    assert t["drag_power_W"][1] / t["drag_power_W"][0] == pytest.approx(8.0)


def test_axle_and_wheel_loads():
    # Axle load at speed = static load - aero lift on that axle (lift + up); downforce adds load.
    f, r = axle_loads(4000.0, 5000.0, -300.0, -500.0)
    assert (f, r) == pytest.approx((4300.0, 5500.0))
    w = wheel_loads((2000.0, 2000.0, 2500.0, 2500.0), -300.0, -500.0)
    assert w == pytest.approx((2150.0, 2150.0, 2750.0, 2750.0))
    assert weight_share(-900.0, 9000.0) == pytest.approx(0.1)
    # Corner weights in kg times standard gravity 9.80665 m/s2 (exact by definition).
    assert G_N == 9.80665


def test_speed_table_with_static_corners():
    static = StaticLoad(4000.0, 5000.0, (1990.0, 2010.0, 2480.0, 2520.0))
    t = speed_table([10.0, 50.0], 1.2, 2.0, {"CL": -0.6, "CD": 0.35, "CLF": -0.25, "CLR": -0.35}, static)
    total = t["front_axle_load_N"] + t["rear_axle_load_N"]
    assert total == pytest.approx(9000.0 - t["lift_N"])
    wheels = t["wheel_fl_N"] + t["wheel_fr_N"] + t["wheel_rl_N"] + t["wheel_rr_N"]
    assert wheels == pytest.approx(total)
    assert t["weight_share_added"] == pytest.approx(-t["lift_N"] / 9000.0)
    assert np.all(np.diff(t["front_load_share"]) != 0)
