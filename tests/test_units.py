"""Unit conversions against defined values."""

import pytest

from meshpress.errors import InputError
from meshpress.units import length_factor, pressure_factor, speed_factor

G_N = 9.80665  # standard gravity, exact by definition (CGPM 1901)


def test_water_columns_conventional():
    # Conventional water column: height x 1000 kg/m3 x g_n (CONVENTIONS.md; NIST SP 811 Appendix B).
    assert pressure_factor("mmH2O") == pytest.approx(1e-3 * 1000 * G_N, rel=1e-12)
    assert pressure_factor("inH2O") == pytest.approx(0.0254 * 1000 * G_N, rel=1e-12)
    assert pressure_factor("inH2O") == pytest.approx(249.08891, abs=1e-5)


def test_psi_and_metric():
    # 1 psi = 6894.757 Pa (NIST SP 811, Appendix B.8).
    assert pressure_factor("psi") == pytest.approx(6894.757, abs=1e-3)
    assert pressure_factor("mbar") == pressure_factor("hPa") == pytest.approx(100.0)
    assert pressure_factor("kPa") == pytest.approx(1000.0)


def test_lengths_and_speeds():
    # The inch is exactly 25.4 mm (international yard and pound agreement, 1959).
    assert length_factor("in") == pytest.approx(0.0254, rel=1e-12)
    assert length_factor("mm") == pytest.approx(1e-3)
    assert speed_factor("km/h") == pytest.approx(1 / 3.6)
    # 1 mph = 1609.344 m / 3600 s (exact).
    assert speed_factor("mph") == pytest.approx(1609.344 / 3600)


@pytest.mark.parametrize("bad", ["furlong", "Pascals", "", "mmHg2O"])
def test_nonsense_pressure_unit(bad):
    with pytest.raises(InputError, match="unknown pressure unit"):
        pressure_factor(bad)


@pytest.mark.parametrize("text,value,unit", [("100 km/h", 100.0, "km/h"), ("100km/h", 100.0, "km/h"),
                                             (" 27.8 ", 27.8, "m/s"), ("-2.5e1 m/s", -25.0, "m/s")])
def test_quantities_with_or_without_a_space(text, value, unit):
    # How people write quantities: SI Brochure 5.4.3 puts a space between number and unit, common practice often not.
    from meshpress.units import SPEED_UNITS, parse_quantity

    assert parse_quantity(text, "m/s", SPEED_UNITS, "speed") == (value, unit)


@pytest.mark.parametrize("bad", ["fast", "nan", "inf km/h", "km/h"])
def test_not_a_number(bad):
    from meshpress.units import SPEED_UNITS, parse_quantity

    with pytest.raises(InputError, match="is not a number"):
        parse_quantity(bad, "m/s", SPEED_UNITS, "speed")
