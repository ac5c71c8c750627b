"""Air density from temperature, pressure and humidity (CIPM-2007).

Pure functions, SI units (Pa, K, kg/m3) unless a name says otherwise.

Source: A. Picard, R. S. Davis, M. Glaser, K. Fujii, "Revised formula for the
density of moist air (CIPM-2007)", Metrologia 45 (2008) 149-155, which keeps
the structure of the CIPM-81/91 equation (Davis, Metrologia 29 (1992) 67-70)
with a new molar mass of dry air (argon) and R = 8.314 472 J/(mol K).
Range of validity stated there: 600-1100 hPa, 15-27 degC, 0-100 % relative
humidity; outside it the formula still behaves well for road and track use,
but :func:`air_density` says so in its ``notes``.
"""

from __future__ import annotations

import math

from ..errors import InputError

R_MOLAR = 8.314472  # J/(mol K), CIPM-2007
M_WATER = 18.01528e-3  # kg/mol
X_CO2_DEFAULT = 0.0004  # mol/mol, the CIPM-2007 reference CO2 fraction

# Saturation vapour pressure over water, Pa (Davis 1992 / CIPM-2007, eq. A1.6)
_A, _B, _C, _D = 1.2378847e-5, -1.9121316e-2, 33.93711047, -6.3431645e3
# Enhancement factor f = alpha + beta p + gamma t^2 (t in degC)
_ALPHA, _BETA, _GAMMA = 1.00062, 3.14e-8, 5.6e-7
# Compressibility factor Z
_A0, _A1, _A2 = 1.58123e-6, -2.9331e-8, 1.1043e-10
_B0, _B1 = 5.707e-6, -2.051e-8
_C0, _C1 = 1.9898e-4, -2.376e-6
_DZ, _EZ = 1.83e-11, -0.765e-8


def saturation_vapour_pressure(T: float) -> float:
    """p_sv = exp(A T^2 + B T + C + D/T), Pa, T in K (CIPM-2007, over liquid water)."""
    return math.exp(_A * T * T + _B * T + _C + _D / T)


def enhancement_factor(p: float, t_C: float) -> float:
    """f = alpha + beta p + gamma t^2 (p in Pa, t in degC) (CIPM-2007)."""
    return _ALPHA + _BETA * p + _GAMMA * t_C * t_C


def vapour_mole_fraction(p: float, T: float, rh: float) -> float:
    """x_v = h f(p, t) p_sv(T) / p, with h the relative humidity as a fraction 0..1."""
    return rh * enhancement_factor(p, T - 273.15) * saturation_vapour_pressure(T) / p


def compressibility(p: float, T: float, x_v: float) -> float:
    """Z = 1 - p/T [a0 + a1 t + a2 t^2 + (b0 + b1 t) x_v + (c0 + c1 t) x_v^2] + p^2/T^2 (d + e x_v^2)."""
    t = T - 273.15
    return (1 - p / T * (_A0 + _A1 * t + _A2 * t * t + (_B0 + _B1 * t) * x_v + (_C0 + _C1 * t) * x_v * x_v)
            + (p / T) ** 2 * (_DZ + _EZ * x_v * x_v))


def dry_air_molar_mass(x_co2: float = X_CO2_DEFAULT) -> float:
    """M_a = [28.96546 + 12.011 (x_CO2 - 0.0004)] 1e-3 kg/mol (CIPM-2007)."""
    return (28.96546 + 12.011 * (x_co2 - 0.0004)) * 1e-3


def moist_air_density(p: float, T: float, rh: float, x_co2: float = X_CO2_DEFAULT) -> float:
    """Density of moist air, kg/m3, by the CIPM-2007 formula.

    rho = p M_a / (Z R T) [1 - x_v (1 - M_v / M_a)]

    Parameters
    ----------
    p : float
        Barometric (absolute) pressure, Pa.
    T : float
        Temperature, K.
    rh : float
        Relative humidity as a fraction, 0..1.
    x_co2 : float
        CO2 mole fraction, mol/mol (default 0.0004).
    """
    Ma = dry_air_molar_mass(x_co2)
    xv = vapour_mole_fraction(p, T, rh)
    Z = compressibility(p, T, xv)
    return p * Ma / (Z * R_MOLAR * T) * (1 - xv * (1 - M_WATER / Ma))


def air_density(temperature_C: float, pressure_Pa: float, humidity_percent: float = 0.0,
                x_co2: float = X_CO2_DEFAULT, where: str = "air") -> tuple[float, list[str]]:
    """Checked front end of :func:`moist_air_density` for user input.

    Returns
    -------
    rho : float
        kg/m3.
    notes : list of str
        Remarks for the report (outside the formula's stated range).
    """
    if not -60 <= temperature_C <= 70:
        raise InputError(f"{where}.temperature_C: {temperature_C:g} degC is not a plausible air temperature")
    if not 30_000 <= pressure_Pa <= 120_000:
        raise InputError(f"{where}.pressure: {pressure_Pa:g} Pa is not a plausible barometric pressure (give "
                         "the absolute station pressure, e.g. '1013 hPa')")
    if not 0 <= humidity_percent <= 100:
        raise InputError(f"{where}.humidity_percent: {humidity_percent:g} % must be between 0 and 100")
    notes = []
    if not (15 <= temperature_C <= 27 and 60_000 <= pressure_Pa <= 110_000):
        notes.append(f"air at {temperature_C:g} degC, {pressure_Pa / 100:g} hPa is outside the CIPM-2007 range "
                     "(15-27 degC, 600-1100 hPa); the density is extrapolated (good to about 0.1 % for road use)")
    return moist_air_density(pressure_Pa, temperature_C + 273.15, humidity_percent / 100.0, x_co2), notes
