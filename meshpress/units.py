"""Unit conversion at the edges of the program (SI inside).

Backed by pint's default registry.  The accepted names and what each one means
are fixed here, because units libraries name water columns differently from
version to version:

=========  ===============================================  ==================
name       meaning                                          Pa
=========  ===============================================  ==================
Pa         pascal                                           1
kPa, hPa   kilo-, hectopascal                               1000, 100
mbar       millibar (= hPa)                                 100
mmH2O      conventional millimetre of water, 1 mm x 1000    9.80665
           kg/m3 x g_n (g_n = 9.80665 m/s2, exact)
inH2O      conventional inch of water, 0.0254 m x 1000      249.08891
           kg/m3 x g_n
psi        pound-force per square inch (NIST SP 811)        6894.757...
=========  ===============================================  ==================
"""

from __future__ import annotations

from functools import lru_cache

from .errors import InputError

LENGTH_UNITS = {"m": "meter", "cm": "centimeter", "mm": "millimeter", "in": "inch", "ft": "foot"}
PRESSURE_UNITS = {
    "Pa": "pascal",
    "kPa": "kilopascal",
    "hPa": "hectopascal",
    "mbar": "millibar",
    # Conventional water columns, defined in _registry() from g_n and 1000 kg/m3.
    "mmH2O": "mm_water_conventional",
    "inH2O": "in_water_conventional",
    "psi": "psi",
}
SPEED_UNITS = {"m/s": "meter / second", "km/h": "kilometer / hour", "mph": "mile / hour"}


@lru_cache(maxsize=1)
def _registry():
    import pint

    try:
        # Parsing pint's definition file costs ~1 s; its on-disk cache makes later starts ~0.1 s.
        ureg = pint.UnitRegistry(cache_folder=":auto:")
    except Exception:  # read-only home or missing cache backend: parse every time
        ureg = pint.UnitRegistry()
    # Pin the water-column meaning ourselves rather than rely on the library's
    # alias of the day: 1000 kg/m3 water under standard gravity (conventional).
    ureg.define("mm_water_conventional = 1e-3 * meter * 1000 * kilogram / meter ** 3 * g_0")
    ureg.define("in_water_conventional = 0.0254 * meter * 1000 * kilogram / meter ** 3 * g_0")
    return ureg


def _factor(name: str, table: dict[str, str], kind: str, si: str, where: str) -> float:
    key = name.strip() if isinstance(name, str) else name
    if key not in table:
        # Be forgiving about case only where it is unambiguous.
        matches = [k for k in table if k.lower() == str(key).lower()]
        if len(matches) != 1:
            raise InputError(
                f"{where}unknown {kind} unit {name!r}; use one of: {', '.join(table)}"
            )
        key = matches[0]
    ureg = _registry()
    return float(ureg.Quantity(1.0, table[key]).to(si).magnitude)


def length_factor(unit: str, where: str = "") -> float:
    """Metres per one ``unit`` (one of ``m, cm, mm, in, ft``)."""
    return _factor(unit, LENGTH_UNITS, "length", "meter", where)


def pressure_factor(unit: str, where: str = "") -> float:
    """Pascals per one ``unit`` (see the module table for the accepted names)."""
    return _factor(unit, PRESSURE_UNITS, "pressure", "pascal", where)


def speed_factor(unit: str, where: str = "") -> float:
    """Metres per second per one ``unit`` (``m/s``, ``km/h`` or ``mph``)."""
    return _factor(unit, SPEED_UNITS, "speed", "meter / second", where)


def parse_quantity(text: str, default_unit: str, table: dict[str, str], kind: str, where: str = ""):
    """Split ``"120 km/h"``, ``"120km/h"`` or ``"120"`` into (value, unit) and check both.

    Returns
    -------
    value : float
        The number as written.
    unit : str
        The unit as written, or ``default_unit``.
    """
    import re

    # The number and the unit, with or without a space between them ("120 km/h", "120km/h", "-2.5e1 mm").
    m = re.fullmatch(r"\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*", str(text))
    if m is None:
        raise InputError(f"{where}{kind} {text!r} is not a number")
    value = float(m.group(1))
    unit = m.group(2) or default_unit
    _factor(unit, table, kind, _registry_si(kind), where)
    return value, unit


def _registry_si(kind: str) -> str:
    return {"length": "meter", "pressure": "pascal", "speed": "meter / second"}[kind]
