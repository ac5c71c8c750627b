"""The test sheet: one TOML file that describes a whole test.

Read with the standard library's :mod:`tomllib` and validated up front: every
problem is one :class:`~meshpress.errors.InputError` whose message names the
file and the key, e.g. ``sheet.toml: runs[2].speed: must be positive`` (runs
are counted from 1, as they appear in the file).  Relative paths are relative
to the sheet's folder.  The keys are documented in docs/test-sheet.md.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

from ..errors import InputError
from ..bodies.frame import parse_axis
from ..tolerances import TOL
from .model import Air, BandSettings, Reference, Run, Sheet, StaticLoad, TubeGroup, Vehicle
from ..units import (LENGTH_UNITS, PRESSURE_UNITS, SPEED_UNITS, length_factor, parse_quantity, pressure_factor,
                    speed_factor)

G_N = 9.80665  # m/s2, standard gravity (exact, CGPM 1901), to turn corner weights in kg into N

RUN_KEYS = {
    "name", "configuration", "readings", "format", "unit", "time_column", "speed", "speed_column",
    "speed_unit", "q", "q_column", "window", "steady_band_percent", "steady_min_s", "steady_smooth_s",
    "zero", "reference", "direction", "air", "notes", "ignore_columns", "align",
}
#: Keys of [defaults]: every run key that makes sense for several runs at once.
DEFAULT_KEYS = RUN_KEYS - {"name", "configuration", "readings", "zero", "direction", "notes"}
TOP_KEYS = {"title", "notes", "vehicle", "taps", "air", "field", "defaults", "runs", "speeds", "compare", "tubing",
            "uncertainty"}
VEHICLE_KEYS = {"mesh", "length_unit", "up", "forward", "front_axle", "rear_axle", "ground", "reference_area_m2",
                "static_load"}
STATIC_KEYS = {"unit", "front_left", "front_right", "rear_left", "rear_right", "front_axle", "rear_axle"}
TAPS_KEYS = {"layout", "max_distance", "exclude"}
AIR_KEYS = {"temperature_C", "pressure", "humidity_percent", "co2_ppm"}
FIELD_KEYS = {"method", "kernel", "smoothing"}
SPEEDS_KEYS = {"from", "to", "step"}
COMPARE_KEYS = {"base", "other"}
UNCERTAINTY_KEYS = {"bands", "patches", "kernel", "orientation", "sensor_accuracy", "full_scale", "error_correlation"}
REFERENCE_KEYS = {"port", "cp", "column"}
FORMATS = ("auto", "wide", "long")


class _Ctx:
    """Where we are in the sheet, for error messages."""

    def __init__(self, path: Path):
        self.path = path
        self.name = path.name

    def err(self, key: str, msg: str) -> InputError:
        text = f"{self.name}: {key}: {msg}"
        # One line, whatever the sheet's keys and strings hold (a quoted TOML key may contain a line break).
        return InputError(text.replace("\r", "\\r").replace("\n", "\\n"))


def read_sheet(path) -> Sheet:
    """Read and validate a test sheet.

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    Sheet

    Raises
    ------
    InputError
        Naming the file and the key of the first problem found.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"test sheet {str(path)!r} does not exist")
    cx = _Ctx(path)
    try:
        with open(path, "rb") as fh:
            doc = tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{cx.name}: not valid TOML: {exc}") from None
    except UnicodeDecodeError:
        raise InputError(f"{cx.name}: not a text file (TOML must be UTF-8)") from None
    _check_keys(cx, doc, TOP_KEYS, "")
    base = path.resolve().parent

    vehicle = _vehicle(cx, _table(cx, doc, "vehicle", required=True), base)
    taps = _table(cx, doc, "taps", required=True)
    _check_keys(cx, taps, TAPS_KEYS, "taps")
    layout = _file(cx, taps, "layout", "taps", base, required=True)
    max_d = TOL.max_tap_distance_m
    if "max_distance" in taps:
        max_d = _length_m(cx, taps["max_distance"], vehicle.length_unit, "taps.max_distance")
    exclude = taps.get("exclude", [])
    if not isinstance(exclude, list) or not all(isinstance(e, str) for e in exclude):
        raise cx.err("taps.exclude", "must be a list of tap names")

    air = _air(cx, _table(cx, doc, "air", required=True), "air")
    method, settings = _field(cx, _table(cx, doc, "field"))
    defaults = _table(cx, doc, "defaults")
    _check_keys(cx, defaults, DEFAULT_KEYS, "defaults")

    runs_doc = doc.get("runs")
    if not isinstance(runs_doc, list) or not runs_doc:
        raise cx.err("runs", "the sheet needs at least one [[runs]] table")
    runs, names = [], {}
    for i, r in enumerate(runs_doc, start=1):
        if not isinstance(r, dict):
            raise cx.err(f"runs[{i}]", "must be a table ([[runs]])")
        run = _run(cx, i, {**defaults, **r}, base, set(r))
        if run.name in names:
            raise cx.err(f"runs[{i}].name", f"{run.name!r} is already the name of runs[{names[run.name]}]")
        names[run.name] = i
        runs.append(run)

    speeds, speed_unit = None, "km/h"
    if "speeds" in doc:
        speeds, speed_unit = _speeds(cx, _table(cx, doc, "speeds"))
    configs = []
    for r in runs:
        if r.configuration not in configs:
            configs.append(r.configuration)
    compare = []
    comp_doc = doc.get("compare", [])
    if not isinstance(comp_doc, list):
        raise cx.err("compare", "must be an array of tables ([[compare]])")
    for i, c in enumerate(comp_doc, start=1):
        key = f"compare[{i}]"
        if not isinstance(c, dict):
            raise cx.err(key, "must be a table with base and other")
        _check_keys(cx, c, COMPARE_KEYS, key)
        pair = []
        for k in ("base", "other"):
            v = c.get(k)
            if v not in configs:
                raise cx.err(f"{key}.{k}", f"{v!r} is not a configuration of the runs ({', '.join(configs)})")
            pair.append(v)
        compare.append(tuple(pair))
    if not compare:
        compare = [(configs[0], c) for c in configs[1:]]
    title = doc.get("title", path.stem)
    if not isinstance(title, str):
        raise cx.err("title", "must be a string")
    bands = _bands(cx, _table(cx, doc, "uncertainty"))
    tubing = _tubing(cx, doc.get("tubing", []), vehicle.length_unit)
    return Sheet(path=path, title=title, vehicle=vehicle, layout=layout, air=air, runs=runs, max_tap_distance_m=max_d,
                 exclude=tuple(exclude), method=method, method_settings=settings, speeds_mps=speeds,
                 speed_unit=speed_unit, compare=compare, notes=str(doc.get("notes", "")), bands=bands,
                 tubing=tubing)


# -- pieces ----------------------------------------------------------------------------------------

def _check_keys(cx, d, allowed, where):
    for k in d:
        if k not in allowed:
            near = [a for a in sorted(allowed) if a.lower() == k.lower() or a.replace("_", "") == k.replace("_", "")]
            hint = f"; did you mean {near[0]!r}?" if near else f"; known keys: {', '.join(sorted(allowed))}"
            raise cx.err(f"{where}.{k}" if where else k, f"unknown key{hint}")


def _table(cx, doc, key, required=False) -> dict:
    if key not in doc:
        if required:
            raise cx.err(key, f"missing: the sheet needs a [{key}] table")
        return {}
    v = doc[key]
    if not isinstance(v, dict):
        raise cx.err(key, f"must be a table ([{key}])")
    return v


def _number(cx, d, key, where, *, required=False, default=None, positive=False, nonneg=False):
    if key not in d:
        if required:
            raise cx.err(f"{where}.{key}", "missing")
        return default
    v = d[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise cx.err(f"{where}.{key}", f"{v!r} is not a number")
    if positive and not v > 0:
        raise cx.err(f"{where}.{key}", "must be positive")
    if nonneg and v < 0:
        raise cx.err(f"{where}.{key}", "must not be negative")
    return float(v)


def _string(cx, d, key, where, *, required=False, default=None):
    if key not in d:
        if required:
            raise cx.err(f"{where}.{key}", "missing")
        return default
    v = d[key]
    if not isinstance(v, str) or not v.strip():
        raise cx.err(f"{where}.{key}", f"{v!r} must be a non-empty string")
    return v.strip()


def _file(cx, d, key, where, base, required=False) -> Path | None:
    s = _string(cx, d, key, where, required=required)
    if s is None:
        return None
    try:
        p = Path(s).expanduser()
    except RuntimeError:  # ~user of no known user
        raise cx.err(f"{where}.{key}", f"file {s!r}: no home folder for its '~'") from None
    p = p if p.is_absolute() else base / p
    if p.is_dir():
        raise cx.err(f"{where}.{key}", f"{s!r} is a folder, not a file")
    if not p.is_file():
        raise cx.err(f"{where}.{key}", f"file {s!r} does not exist (looked for {p})")
    if p.resolve() == cx.path.resolve():
        raise cx.err(f"{where}.{key}", f"{s!r} is the test sheet itself")
    return p


def _quantity(cx, value, default_unit, table, kind, key):
    """Number (in ``default_unit``) or string with a unit -> (value, unit)."""
    if isinstance(value, bool):
        raise cx.err(key, f"{value!r} is not a {kind}")
    if isinstance(value, (int, float)):
        return float(value), default_unit
    if not isinstance(value, str):
        raise cx.err(key, f"{value!r} is not a {kind}")
    try:
        return parse_quantity(value, default_unit, table, kind)
    except InputError as exc:
        raise cx.err(key, str(exc)) from None


def _length_m(cx, value, unit, key):
    v, u = _quantity(cx, value, unit, LENGTH_UNITS, "length", key)
    if not v > 0:
        raise cx.err(key, "must be positive")
    return v * length_factor(u)


def _speed_mps(cx, value, key):
    v, u = _quantity(cx, value, "m/s", SPEED_UNITS, "speed", key)
    if not math.isfinite(v) or not v > 0:
        raise cx.err(key, "must be positive")
    return v * speed_factor(u), u


def _pressure_Pa(cx, value, key, default_unit="Pa"):
    v, u = _quantity(cx, value, default_unit, PRESSURE_UNITS, "pressure", key)
    if not math.isfinite(v):
        raise cx.err(key, "is not a number")
    return v * pressure_factor(u)


def _vehicle(cx, d, base) -> Vehicle:
    _check_keys(cx, d, VEHICLE_KEYS, "vehicle")
    mesh = _file(cx, d, "mesh", "vehicle", base, required=True)
    unit = _string(cx, d, "length_unit", "vehicle", default="m")
    if unit not in LENGTH_UNITS:
        raise cx.err("vehicle.length_unit", f"{unit!r} is not one of {', '.join(LENGTH_UNITS)}")
    axes = {}
    for k, dflt in (("up", "+z"), ("forward", "-x")):
        axes[k] = _string(cx, d, k, "vehicle", default=dflt)
        try:
            parse_axis(axes[k])
        except InputError as exc:
            raise cx.err(f"vehicle.{k}", str(exc)) from None
    fa = _number(cx, d, "front_axle", "vehicle")
    ra = _number(cx, d, "rear_axle", "vehicle")
    if (fa is None) != (ra is None):
        raise cx.err("vehicle.front_axle" if fa is None else "vehicle.rear_axle",
                     "give both front_axle and rear_axle, or neither")
    ground = _number(cx, d, "ground", "vehicle")
    area = _number(cx, d, "reference_area_m2", "vehicle", positive=True)
    static = None
    if "static_load" in d:
        static = _static(cx, _table(cx, d, "static_load"))
        if fa is None:
            raise cx.err("vehicle.static_load", "axle loads need the axle positions (front_axle, rear_axle)")
    return Vehicle(mesh, unit, axes["up"], axes["forward"], fa, ra, ground, area, static)


def _static(cx, d) -> StaticLoad:
    where = "vehicle.static_load"
    _check_keys(cx, d, STATIC_KEYS, where)
    unit = _string(cx, d, "unit", where, default="kg")
    if unit not in ("kg", "N"):
        raise cx.err(f"{where}.unit", f"{unit!r} must be 'kg' (corner weights, times g_n) or 'N'")
    f = G_N if unit == "kg" else 1.0
    corners = ("front_left", "front_right", "rear_left", "rear_right")
    have_c = [k for k in corners if k in d]
    have_a = [k for k in ("front_axle", "rear_axle") if k in d]
    if have_c and have_a:
        raise cx.err(where, "give corner loads or axle loads, not both")
    if have_c:
        missing = [k for k in corners if k not in d]
        if missing:
            raise cx.err(f"{where}.{missing[0]}", "missing (give all four corners)")
        c = tuple(f * _number(cx, d, k, where, positive=True) for k in corners)
        return StaticLoad(c[0] + c[1], c[2] + c[3], c)
    if len(have_a) != 2:
        raise cx.err(where, "give front_axle and rear_axle, or all four corners (front_left, ...)")
    return StaticLoad(f * _number(cx, d, "front_axle", where, positive=True),
                      f * _number(cx, d, "rear_axle", where, positive=True))


def _air(cx, d, where) -> Air:
    _check_keys(cx, d, AIR_KEYS, where)
    t = _number(cx, d, "temperature_C", where, required=True)
    if "pressure" not in d:
        raise cx.err(f"{where}.pressure", "missing (barometric station pressure, e.g. '1013 hPa')")
    p = _pressure_Pa(cx, d["pressure"], f"{where}.pressure", default_unit="hPa")
    h = _number(cx, d, "humidity_percent", where, default=0.0, nonneg=True)
    co2 = _number(cx, d, "co2_ppm", where, default=400.0, nonneg=True)
    air = Air(t, p, h, co2)
    air.density(f"{cx.name}: {where}")  # validates the ranges now, with the key in the message
    return air


def _field(cx, d):
    _check_keys(cx, d, FIELD_KEYS, "field")
    from ..fields import DEFAULT_METHOD, METHODS

    method = _string(cx, d, "method", "field", default=DEFAULT_METHOD)
    if method not in METHODS:
        raise cx.err("field.method", f"{method!r} is not one of: {', '.join(METHODS)}")
    settings = {}
    if method == "rbf":
        from ..fields.rbf import KERNELS

        kernel = _string(cx, d, "kernel", "field", default="thin_plate_spline")
        if kernel not in KERNELS:
            raise cx.err("field.kernel", f"{kernel!r} is not one of: {', '.join(KERNELS)}")
        settings = {"kernel": kernel, "smoothing": _number(cx, d, "smoothing", "field", default=0.0, nonneg=True)}
    return method, settings


def _bands(cx, d) -> BandSettings:
    where = "uncertainty"
    _check_keys(cx, d, UNCERTAINTY_KEYS, where)
    enabled = d.get("bands")
    if enabled is not None and not isinstance(enabled, bool):
        raise cx.err(f"{where}.bands", f"{enabled!r} must be true or false")
    patches = d.get("patches", 2500)
    if isinstance(patches, bool) or not isinstance(patches, int) or patches < 50:
        raise cx.err(f"{where}.patches", f"{patches!r} must be a whole number >= 50")
    kernel = _string(cx, d, "kernel", where, default="auto")
    from ..bands.gpkernels import KERNELS  # the kriging correlations, as 'meshpress uncertainty --kernel-gp'

    if kernel not in ("auto",) + KERNELS:
        raise cx.err(f"{where}.kernel", f"{kernel!r} is not one of: {', '.join(('auto',) + KERNELS)}")
    orientation = d.get("orientation", True)
    if not isinstance(orientation, bool):
        raise cx.err(f"{where}.orientation", f"{orientation!r} must be true or false")
    sensor = 0.0
    if "sensor_accuracy" in d:
        key = f"{where}.sensor_accuracy"
        v = d["sensor_accuracy"]
        if isinstance(v, str) and v.strip().endswith("%"):
            try:
                pct = float(v.strip()[:-1])
            except ValueError:
                pct = math.nan
            if not math.isfinite(pct):
                raise cx.err(key, f"{v!r} is not a percentage like '0.25 %'")
            if "full_scale" not in d:
                raise cx.err(key, "a percentage needs uncertainty.full_scale (the sensors' range, e.g. '2500 Pa')")
            fs = _pressure_Pa(cx, d["full_scale"], f"{where}.full_scale")
            if not fs > 0:
                raise cx.err(f"{where}.full_scale", "must be positive")
            a = pct / 100.0 * fs
        else:
            a = _pressure_Pa(cx, v, key)
        if not a >= 0:
            raise cx.err(key, "must not be negative")
        sensor = a / math.sqrt(3.0)  # a stated bound +/- a read as a rectangular distribution (GUM 4.3.7)
    elif "full_scale" in d:
        raise cx.err(f"{where}.full_scale", "only used with sensor_accuracy in %")
    rho = _number(cx, d, "error_correlation", where, default=1.0)
    if not 0.0 <= rho <= 1.0:
        raise cx.err(f"{where}.error_correlation", "must be between 0 and 1")
    return BandSettings(enabled, int(patches), kernel, orientation, sensor, rho)


def _speeds(cx, d):
    _check_keys(cx, d, SPEEDS_KEYS, "speeds")
    vals, unit = {}, "km/h"
    for k in ("from", "to", "step"):
        if k not in d:
            raise cx.err(f"speeds.{k}", "missing")
        vals[k], u = _speed_mps(cx, d[k], f"speeds.{k}")
        if k == "from":
            unit = u if isinstance(d[k], str) else "m/s"
    if not vals["to"] > vals["from"]:
        raise cx.err("speeds.to", "must be above speeds.from")
    steps = (vals["to"] - vals["from"]) / vals["step"]  # inf for a tiny step: compare before int()
    n = int(math.floor(steps + 1e-9)) + 1 if steps < 1000 else 1001
    if n > 1000:
        raise cx.err("speeds.step", "gives more than 1000 speeds; use a larger step")
    return tuple(vals["from"] + i * vals["step"] for i in range(n)), unit


def _run(cx, i, d, base, own_keys) -> Run:
    where = f"runs[{i}]"
    for k in own_keys:
        if k not in RUN_KEYS:
            _check_keys(cx, {k: None}, RUN_KEYS, where)
    name = _string(cx, d, "name", where, default=f"run{i}")
    config = _string(cx, d, "configuration", where, required=True)
    readings = _file(cx, d, "readings", where, base, required=True)
    zero = _file(cx, d, "zero", where, base)
    fmt = _string(cx, d, "format", where, default="auto")
    if fmt not in FORMATS:
        raise cx.err(f"{where}.format", f"{fmt!r} is not one of: {', '.join(FORMATS)}")
    unit = _string(cx, d, "unit", where, default="Pa")
    if unit not in PRESSURE_UNITS:
        raise cx.err(f"{where}.unit", f"{unit!r} is not one of: {', '.join(PRESSURE_UNITS)}")
    time_column = _string(cx, d, "time_column", where, default="time")

    # Exactly one source of dynamic pressure.  A run's own key beats a default.
    sources = [k for k in ("speed", "speed_column", "q", "q_column") if k in d]
    own = [k for k in sources if k in own_keys]
    if own:
        sources = own
    if not sources:
        raise cx.err(where, "needs one of speed, speed_column, q or q_column")
    if len(sources) > 1:
        raise cx.err(f"{where}.{sources[1]}", f"give only one of speed, speed_column, q, q_column "
                                              f"(found {', '.join(sources)})")
    src = sources[0]
    speed = speed_column = q = q_column = None
    speed_unit = "m/s"
    if src == "speed":
        speed, _ = _speed_mps(cx, d["speed"], f"{where}.speed")
    elif src == "speed_column":
        speed_column = _string(cx, d, "speed_column", where)
        speed_unit = _string(cx, d, "speed_unit", where, default="m/s")
        if speed_unit not in SPEED_UNITS:
            raise cx.err(f"{where}.speed_unit", f"{speed_unit!r} is not one of: {', '.join(SPEED_UNITS)}")
    elif src == "q":
        q = _pressure_Pa(cx, d["q"], f"{where}.q")
        if not q > 0:
            raise cx.err(f"{where}.q", "must be positive")
    else:
        q_column = _string(cx, d, "q_column", where)

    window = d.get("window", "auto")
    if isinstance(window, str):
        if window not in ("auto", "all"):
            raise cx.err(f"{where}.window", f"{window!r} must be 'auto', 'all' or [start, end] in seconds")
    elif (isinstance(window, list) and len(window) == 2
          and all(isinstance(w, (int, float)) and not isinstance(w, bool) for w in window)):
        if not window[1] > window[0]:
            raise cx.err(f"{where}.window", "end must be after start")
        window = (float(window[0]), float(window[1]))
    else:
        raise cx.err(f"{where}.window", f"{window!r} must be 'auto', 'all' or [start, end] in seconds")
    band = _number(cx, d, "steady_band_percent", where, default=3.0, positive=True)
    min_s = _number(cx, d, "steady_min_s", where, default=10.0, positive=True)
    smooth = _number(cx, d, "steady_smooth_s", where, default=1.0, nonneg=True)
    reference = _reference(cx, d.get("reference"), f"{where}.reference")
    air = _air(cx, _table(cx, d, "air"), f"{where}.air") if "air" in d else None
    direction = str(d.get("direction", ""))
    ignore = d.get("ignore_columns", [])
    if not isinstance(ignore, list) or not all(isinstance(c, str) for c in ignore):
        raise cx.err(f"{where}.ignore_columns", "must be a list of column names")
    align = d.get("align", True)
    if not isinstance(align, bool):
        raise cx.err(f"{where}.align", f"{align!r} must be true or false")
    return Run(i, name, config, readings, fmt, unit, time_column, speed, speed_column, speed_unit, q, q_column,
               window, band, min_s, smooth, zero, reference, direction, air, str(d.get("notes", "")), tuple(ignore),
               align)


def _reference(cx, v, key) -> Reference:
    if v is None or v == "static":
        return Reference()
    if not isinstance(v, dict):
        raise cx.err(key, "must be 'static' or a table like { port = \"cabin\", cp = -0.1 } "
                          "or { port = \"cabin\", column = \"cabin\" }")
    _check_keys(cx, v, REFERENCE_KEYS, key)
    port = _string(cx, v, "port", key, required=True)
    has_cp, has_col = "cp" in v, "column" in v
    if has_cp == has_col:
        raise cx.err(key, "give the reference port's cp (known) or column (measured), one of them")
    if has_cp:
        cp = _number(cx, v, "cp", key)
        if not -3 < cp < 1.5:
            raise cx.err(f"{key}.cp", f"{cp:g} is not a plausible pressure coefficient")
        return Reference(port, cp, None)
    return Reference(port, None, _string(cx, v, "column", key))


TUBING_KEYS = {"taps", "length", "bore", "sensor_volume_mm3"}


def _tubing(cx, doc, length_unit) -> tuple:
    """``[[tubing]]`` tables -> TubeGroups (lengths with units, default the vehicle's length unit)."""
    if not isinstance(doc, list):
        raise cx.err("tubing", "must be an array of tables ([[tubing]])")
    out = []
    for i, d in enumerate(doc, start=1):
        key = f"tubing[{i}]"
        if not isinstance(d, dict):
            raise cx.err(key, "must be a table with taps, length and bore")
        _check_keys(cx, d, TUBING_KEYS, key)
        taps = d.get("taps")
        if isinstance(taps, str):
            taps = [taps]
        if not isinstance(taps, list) or not taps or not all(isinstance(t, str) and t for t in taps):
            raise cx.err(f"{key}.taps", "must be a list of tap names or patterns like \"CT*\"")
        for k in ("length", "bore"):
            if k not in d:
                raise cx.err(f"{key}.{k}", "is missing (a length, e.g. \"2.5 m\" or \"1.6 mm\")")
        length = _length_m(cx, d["length"], length_unit, f"{key}.length")
        bore = _length_m(cx, d["bore"], length_unit, f"{key}.bore")
        if bore >= length:
            raise cx.err(f"{key}.bore", "is not smaller than the tube's length: check the units")
        vol = _number(cx, d, "sensor_volume_mm3", key, default=0.0, nonneg=True) * 1e-9
        out.append(TubeGroup(tuple(taps), length, bore, vol, key))
    return tuple(out)
