"""What a test sheet says, as plain dataclasses: the vehicle, the air, the runs, the bands' settings.

Built and validated by :func:`meshpress.sheets.sheet.read_sheet`; consumed by :mod:`meshpress.sheets.runs`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ..tolerances import TOL

@dataclass(frozen=True)
class StaticLoad:
    """Static wheel or axle loads, N (vertical, + down on the ground).

    ``corners`` (FL, FR, RL, RR) is None when only axle loads were given.
    """

    front_N: float
    rear_N: float
    corners_N: tuple | None = None

    @property
    def total_N(self) -> float:
        return self.front_N + self.rear_N


@dataclass(frozen=True)
class Vehicle:
    mesh: Path
    length_unit: str = "m"
    up: str = "+z"
    forward: str = "-x"
    front_axle: float | None = None
    rear_axle: float | None = None
    ground: float | None = None
    reference_area_m2: float | None = None
    static_load: StaticLoad | None = None


@dataclass(frozen=True)
class Air:
    temperature_C: float
    pressure_Pa: float
    humidity_percent: float = 0.0
    co2_ppm: float = 400.0

    def density(self, where: str = "air") -> tuple[float, list]:
        """(rho kg/m3, notes) by CIPM-2007 (:func:`meshpress.sheets.air.air_density`)."""
        from .air import air_density

        return air_density(self.temperature_C, self.pressure_Pa, self.humidity_percent, self.co2_ppm * 1e-6,
                           where=where)

    def describe(self) -> str:
        return (f"{self.temperature_C:g} degC, {self.pressure_Pa / 100:g} hPa, {self.humidity_percent:g} % RH, "
                f"{self.co2_ppm:g} ppm CO2")


@dataclass(frozen=True)
class BandSettings:
    """The ``[uncertainty]`` table: bands on every configuration's figures and on the changes.

    Attributes
    ----------
    enabled : bool or None
        Compute the bands (``bands = true``, or ``meshpress run --bands``).
        None (not stated): on with the default field method, whose fit the
        bands reuse, off with any other.
    patches : int
        Carrier patches for the covariance.
    kernel : str
        Kriging correlation on surface distance.
    orientation : bool
        The normals' factor in the kriging correlation (``--orientation-gp``).
    sensor_u_Pa : float
        Standard uncertainty of each tap sensor, Pa (the stated accuracy read
        as a rectangular bound, GUM 4.3.7); systematic: the same in every run.
    error_correlation : float
        Correlation of the systematic errors between configurations (0 to 1).
    """

    enabled: bool | None = None
    patches: int = 2500
    kernel: str = "auto"
    orientation: bool = True
    sensor_u_Pa: float = 0.0
    error_correlation: float = 1.0


@dataclass(frozen=True)
class Reference:
    """What the tap sensors read against.

    ``port`` names it; ``cp`` is its known Cp, or ``column`` names a readings
    column holding its pressure against free-stream static (same unit as the
    taps).  The default (port "free-stream static", cp 0) means no correction.
    """

    port: str = "free-stream static"
    cp: float | None = 0.0
    column: str | None = None

    def describe(self) -> str:
        if self.column:
            return f"{self.port} (Cp measured, column {self.column!r})"
        if self.cp == 0 and self.port == "free-stream static":
            return "free-stream static (no correction)"
        return f"{self.port} (Cp {self.cp:+.3f}, given)"


@dataclass(frozen=True)
class Run:
    """One run of the test, with every default filled in.

    Speeds in m/s, pressures in Pa, times in the readings' time unit (s).
    Exactly one of ``speed_mps``, ``speed_column``, ``q_Pa``, ``q_column``
    is set.
    """

    index: int
    name: str
    configuration: str
    readings: Path
    format: str = "auto"
    unit: str = "Pa"
    time_column: str = "time"
    speed_mps: float | None = None
    speed_column: str | None = None
    speed_unit: str = "m/s"
    q_Pa: float | None = None
    q_column: str | None = None
    window: tuple | str = "auto"
    steady_band_percent: float = 3.0
    steady_min_s: float = 10.0
    steady_smooth_s: float = 1.0
    zero: Path | None = None
    reference: Reference = Reference()
    direction: str = ""
    air: Air | None = None
    notes: str = ""
    ignore_columns: tuple = ()
    align: bool = True

    @property
    def where(self) -> str:
        return f"runs[{self.index}]"

    @property
    def q_from_speed(self) -> bool:
        """True when q comes from a speed rather than a measured dynamic pressure."""
        return self.speed_mps is not None or self.speed_column is not None


@dataclass(frozen=True)
class TubeGroup:
    """The ``[[tubing]]`` of a group of taps: their tubes' length and bore and the sensors' volume.

    Attributes
    ----------
    taps : tuple of str
        Tap names or shell-style patterns (``"CT*"``).
    length_m, bore_m : float
        Tube length and inner diameter, m.
    sensor_volume_m3 : float
        Air volume of each sensor and its fittings, m3.
    where : str
        The sheet key, for messages.
    """

    taps: tuple
    length_m: float
    bore_m: float
    sensor_volume_m3: float = 0.0
    where: str = "tubing"

    def covers(self, name: str) -> bool:
        from fnmatch import fnmatchcase

        return any(fnmatchcase(name, p) for p in self.taps)


@dataclass
class Sheet:
    path: Path
    title: str
    vehicle: Vehicle
    layout: Path
    air: Air
    runs: list
    max_tap_distance_m: float = TOL.max_tap_distance_m
    exclude: tuple = ()
    method: str = "posterior"
    method_settings: dict = field(default_factory=dict)
    speeds_mps: tuple | None = None
    speed_unit: str = "km/h"
    compare: list = field(default_factory=list)
    notes: str = ""
    bands: BandSettings = BandSettings()
    tubing: tuple = ()

    @property
    def configurations(self) -> list:
        """Configuration names in the order they first appear."""
        seen = []
        for r in self.runs:
            if r.configuration not in seen:
                seen.append(r.configuration)
        return seen

    def input_files(self) -> list:
        """Every file the sheet reads (outputs must never land on one)."""
        files = [self.path, self.vehicle.mesh, self.layout]
        for r in self.runs:
            files.append(r.readings)
            if r.zero:
                files.append(r.zero)
        return files
