"""Air density (CIPM-2007) and dynamic pressure against outside references."""

import math

import numpy as np
import pytest

from meshpress.sheets.air import air_density, moist_air_density, saturation_vapour_pressure
from meshpress.loads.coefficients import dynamic_pressure
from meshpress.errors import InputError
from meshpress.units import speed_factor

GRID = [(t, p, h) for t in (5.0, 20.0, 35.0) for p in (85_000.0, 101_325.0) for h in (0.0, 0.5, 0.9)]


def test_isa_sea_level():
    # ISA sea level (ISO 2533): 1.225 kg/m3 at 15 degC, 101325 Pa, dry air.  ISA is an ideal gas with its own
    # molar mass; CIPM-2007 adds compressibility (Z ~ 0.9996) and 400 ppm CO2, so agreement to 0.1 % is expected.
    rho = moist_air_density(101_325.0, 288.15, 0.0)
    assert rho == pytest.approx(1.225, rel=1e-3)


def test_against_coolprop_humid_air():
    # CoolProp HAPropsSI (real-gas humid-air model of Herrmann, Kretzschmar and Gatley, ASHRAE RP-1485):
    # density = 1 / Vha (volume per kg of humid air).  Both are real-gas formulations; the small residual
    # comes from their dry-air compositions, so 0.02 % is a fair tolerance.
    CP = pytest.importorskip("CoolProp.CoolProp")
    for t, p, h in GRID:
        ref = 1.0 / CP.HAPropsSI("Vha", "T", t + 273.15, "P", p, "R", h)
        assert moist_air_density(p, t + 273.15, h) == pytest.approx(ref, rel=2e-4), (t, p, h)


def test_against_psychrolib():
    # psychrolib (ASHRAE Handbook Fundamentals psychrometrics): ideal-gas moist air, no compressibility factor,
    # so it sits about 0.04 % below CIPM-2007; 0.1 % tolerance.
    psy = pytest.importorskip("psychrolib")
    psy.SetUnitSystem(psy.SI)
    for t, p, h in GRID:
        w = psy.GetHumRatioFromRelHum(t, h, p)
        ref = psy.GetMoistAirDensity(t, w, p)
        assert moist_air_density(p, t + 273.15, h) == pytest.approx(ref, rel=1e-3), (t, p, h)


def test_saturation_pressure_against_psychrolib():
    # Saturation vapour pressure over water: CIPM-2007 eq. vs ASHRAE (Hyland-Wexler) in psychrolib, 0.1 %.
    psy = pytest.importorskip("psychrolib")
    psy.SetUnitSystem(psy.SI)
    for t in (5.0, 15.0, 25.0, 35.0):
        assert saturation_vapour_pressure(t + 273.15) == pytest.approx(psy.GetSatVapPres(t), rel=1e-3)


def test_humid_air_is_lighter():
    # Water vapour (18 g/mol) is lighter than dry air (29 g/mol) [text].
    dry = moist_air_density(101_325.0, 303.15, 0.0)
    wet = moist_air_density(101_325.0, 303.15, 1.0)
    assert wet < dry


def test_dynamic_pressure_isa_100_kmh():
    # q = 1/2 rho V^2 [std]; 100 km/h = 27.777... m/s (exact); 0.5 * 1.225 * 27.7778^2 = 472.608 Pa by hand.
    v = 100 * speed_factor("km/h")
    assert v == pytest.approx(100 / 3.6, rel=1e-12)
    assert dynamic_pressure(1.225, v) == pytest.approx(472.608, abs=1e-3)
    # 1 mph = 0.44704 m/s exactly (international mile).
    assert speed_factor("mph") == pytest.approx(0.44704, rel=1e-12)


@pytest.mark.parametrize("t, p, h", [(20.0, 500.0, 50.0), (20.0, 101_325.0, 120.0), (150.0, 101_325.0, 0.0)])
def test_bad_air_is_an_input_error(t, p, h):
    with pytest.raises(InputError):
        air_density(t, p, h)


def test_outside_cipm_range_is_noted():
    _, notes = air_density(5.0, 101_325.0, 50.0)
    assert notes and "CIPM-2007" in notes[0]
    _, notes = air_density(20.0, 101_325.0, 50.0)
    assert notes == []
    assert math.isfinite(air_density(5.0, 101_325.0, 50.0)[0])
    assert np.isclose(air_density(15.0, 101_325.0, 0.0)[0], moist_air_density(101_325.0, 288.15, 0.0))
