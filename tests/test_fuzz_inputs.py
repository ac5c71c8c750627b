"""Fuzzed user files: tap tables, readings and zeros, test sheets (property-based, Hypothesis).

Every generated file either reads into a valid result or raises :class:`~meshpress.errors.InputError` with one
line that names the file (and the line, row, column or key where there is one); any other exception, or a case
over its time limit, is a bug.  The files follow, or break on purpose, RFC 4180 (CSV), the TOML v1.0.0
specification and Office Open XML spreadsheets (written with openpyxl).  Where a generated table is well formed,
the values read must be the ones written, as Python's ``float`` (IEEE 754, correctly rounded) parses their text.
Every name and number in these files is invented.

The strategies and the ``check_*`` functions are shared with ``benchmarks/fuzz_inputs.py``, which runs more
cases of each family and counts the outcomes.
"""

from __future__ import annotations

import csv
import io
import json
import math
import re
import shutil
import signal
import tempfile
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from meshpress.errors import InputError

CASE_SECONDS = 10.0  # a case over this is a hang (every case here takes milliseconds)
FUZZ = settings(max_examples=100, deadline=None, derandomize=True, database=None, print_blob=True,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                       HealthCheck.filter_too_much])
LAYOUT = ["A", "B", "C"]  # the invented layout the readings belong to


def chance(p: float):
    """True with about probability ``p``; False is the simple case Hypothesis tries first and shrinks to."""
    return st.integers(0, 999).map(lambda k: k >= 1000 * (1 - p))


class CaseTimeout(Exception):
    """A case ran over :data:`CASE_SECONDS`."""


@contextmanager
def time_limit(seconds=CASE_SECONDS):
    """Raise :class:`CaseTimeout` in the running code after ``seconds`` (SIGALRM; main thread, POSIX)."""
    def alarm(signum, frame):
        raise CaseTimeout(f"over {seconds:g} s")

    old = signal.signal(signal.SIGALRM, alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def assert_clean_error(exc: InputError, names, numbers=None):
    """The message is one line and names one of ``names``; a line/row number in it lies within ``numbers``."""
    msg = str(exc)
    assert msg and "\n" not in msg and "\r" not in msg, f"not one line: {msg!r}"
    assert any(n in msg for n in names), f"names none of {names}: {msg[:300]!r}"
    if numbers is not None:
        for n in re.findall(r"\b(?:line|row) (\d+)\b", msg):
            assert 1 <= int(n) <= numbers, f"line/row {n} is not in the file ({numbers}): {msg[:300]!r}"


# -- cells and tables --------------------------------------------------------------------------------------------

NAME_CHARS = st.characters(codec="utf-8", exclude_characters="#\x00", exclude_categories=("Cc", "Cs", "Zl", "Zp"))
# Names a person could give a tap, some of which spreadsheets and pandas like to read as "missing" or a number.
GOOD_NAMES = st.one_of(st.text(NAME_CHARS, min_size=1, max_size=12).filter(lambda s: s.strip() == s and s != ""),
                       st.sampled_from(["NA", "N/A", "nan", "None", "null", "NULL", "1", "-1.5", "TRUE", "n/a",
                                        "FL-1", "#N/A"[1:], "=A1", "+3"]))
FINITE = st.floats(allow_nan=False, allow_infinity=False)
BAD_NUMBERS = st.sampled_from(["nan", "NaN", "inf", "-inf", "Infinity", "", " ", "1e400", "-1e999", "abc", "1.2.3",
                               "1,2,3", "0x10", "1_0", "--1", "++1", "1e", "e5", "=1+1", "NULL", "None", "#N/A",
                               "\u0661\u0662", "１２"])
ODD_TEXT = st.one_of(st.text(max_size=30), st.sampled_from(["", " ", '"', '""', "'", "#", "# c", "\\", "\t", "\r",
                                                             "\n", "\r\n", ",", ";", "\ufeff", "x" * 5000,
                                                             "\u202e", "\x00", "\x1a"]))


def number_text(x: float, decimal: str = ".") -> str:
    """A float as a person or a logger writes it: repr, %g, fixed or scientific (decimal mark chosen)."""
    return repr(x).replace(".", decimal)


@st.composite
def cell(draw, kind="number", decimal="."):
    """One cell: mostly a good value of ``kind``, sometimes a bad number, a huge or tiny one, or odd text."""
    k = draw(st.integers(0, 19))
    if k < 14:
        if kind == "name":
            return draw(GOOD_NAMES)
        return number_text(draw(FINITE), decimal)
    if k < 16:
        return draw(BAD_NUMBERS)
    if k < 18:
        return number_text(draw(st.sampled_from([1.7976931348623157e308, -1e308, 5e-324, -5e-324, 1e-310, 0.0,
                                                 -0.0, 2.0 ** 63, 1e22])), decimal)
    return draw(ODD_TEXT)


@st.composite
def dialect(draw):
    """How a table is written: separator, line ends, quoting, encoding, comments, damage."""
    sep = draw(st.sampled_from([",", ",", ";", "\t"]))
    return {
        "sep": sep,
        "decimal": "," if sep == ";" and draw(chance(0.7)) else ".",
        "eol": draw(st.sampled_from(["\n", "\n", "\r\n", "\r"])),
        "quoting": draw(st.sampled_from([csv.QUOTE_MINIMAL, csv.QUOTE_MINIMAL, csv.QUOTE_ALL])),
        "encoding": draw(st.sampled_from(["utf-8", "utf-8", "utf-8-sig", "latin-1", "utf-16", "cp1252"])),
        "comments": draw(st.lists(st.sampled_from(["# invented test file", "#", "", "   ", "# a,b;c\td"]),
                                  max_size=3)),
        "trailing_sep": draw(chance(0.1)),
        "damage": draw(st.sampled_from([None] * 8 + ["truncate", "bytes", "nul"])),
        "damage_at": draw(st.floats(0, 1)),
        "damage_bytes": draw(st.binary(min_size=1, max_size=8)),
    }


def encode_table(header, rows, d) -> bytes:
    """CSV bytes of ``header`` and ``rows`` written the way ``d`` (from :func:`dialect`) says."""
    buf = io.StringIO()
    w = csv.writer(buf, delimiter=d["sep"], lineterminator=d["eol"], quoting=d["quoting"])
    for c in d["comments"]:
        buf.write(c + d["eol"])
    for r in [header] + rows:
        w.writerow(list(r) + ([""] if d["trailing_sep"] and r is not header else []))
    data = buf.getvalue().encode(d["encoding"].replace("utf-8-sig", "utf-8"), errors="replace")
    if d["encoding"] == "utf-8-sig":
        data = b"\xef\xbb\xbf" + data
    at = int(d["damage_at"] * len(data))
    if d["damage"] == "truncate":
        data = data[:at]
    elif d["damage"] == "bytes":
        data = data[:at] + d["damage_bytes"] + data[at:]
    elif d["damage"] == "nul":
        data = data[:at] + b"\x00" + data[at:]
    return data


def write_xlsx(path, header, rows, numbers: bool):
    """An .xlsx file of the table; with ``numbers``, cells of number columns that parse are numbers.

    A number column is one headed x, y, z, p, cp, time or value (any case), or any column but the first when
    the table has no ``tap`` column (a wide readings table).
    """
    import openpyxl
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    wb = openpyxl.Workbook()
    ws = wb.active
    heads = [str(h).strip().lower() for h in header]
    wide = "tap" not in heads
    numeric = {j for j, h in enumerate(heads) if h in ("x", "y", "z", "p", "cp", "time", "value") or wide}
    ws.append([ILLEGAL_CHARACTERS_RE.sub("", str(c)) for c in header])
    for r in rows:
        out = []
        for j, c in enumerate(r):
            try:
                v = float(c) if numbers and j in numeric else None
            except ValueError:
                v = None
            out.append(v if v is not None and math.isfinite(v) else ILLEGAL_CHARACTERS_RE.sub("", str(c))[:32000])
        ws.append(out)
    wb.save(path)


# -- tap tables --------------------------------------------------------------------------------------------------

@st.composite
def tap_tables(draw):
    """A tap table as a file: ``{"suffix", "data" (bytes) or "xlsx" (header, rows), "expect", "values"}``.

    ``expect`` holds the names, positions and values when the table is well formed by construction.
    """
    form = draw(st.sampled_from(["csv"] * 6 + ["xlsx", "raw", "empty"]))
    values = not draw(chance(0.25))
    if form == "raw":
        data = draw(st.one_of(st.binary(max_size=400), st.text(max_size=400).map(str.encode)))
        return {"suffix": draw(st.sampled_from([".csv", ".txt", ".xlsx"])), "data": data, "expect": None,
                "values": values}
    if form == "empty":
        data = draw(st.sampled_from([b"", b"\xef\xbb\xbf", b"\n\n", b"# only a comment\n", b"tap,x,y,z,cp\n",
                                     b"tap,x,y,z,cp\r\n\r\n", b"\xff\xfe", b" ", b","]))
        return {"suffix": ".csv", "data": data, "expect": None, "values": values}
    d = draw(dialect()) if form == "csv" else None
    dec = d["decimal"] if d else "."
    kind = draw(st.sampled_from(["p", "cp"]))
    cols = ["tap", "x", "y", "z"] + [kind] + (["side"] if draw(chance(0.5)) else [])
    well = True
    if draw(chance(0.25)):  # break the header: drop, add, duplicate or rename columns
        well = False
        ops = draw(st.lists(st.sampled_from(["drop", "extra", "dup", "case", "space", "both", "empty"]),
                            min_size=1, max_size=3))
        for op in ops:
            i = draw(st.integers(0, len(cols) - 1))
            if op == "drop" and len(cols) > 1:
                cols.pop(i)
            elif op == "extra":
                cols.insert(i, draw(st.one_of(GOOD_NAMES, ODD_TEXT)))
            elif op == "dup":
                cols.insert(i, cols[i])
            elif op == "case":
                cols[i] = cols[i].upper()
            elif op == "space":
                cols[i] = " " + cols[i] + " "
            elif op == "both":
                cols.append("cp" if kind == "p" else "p")
            elif op == "empty":
                cols[i] = ""
    elif draw(chance(0.2)):
        cols = [c.upper() if draw(chance(0.5)) else c for c in cols]
    n = draw(st.integers(1, 12))
    names = draw(st.lists(GOOD_NAMES, min_size=n, max_size=n, unique=True))
    nums = draw(st.lists(st.lists(FINITE, min_size=4, max_size=4), min_size=n, max_size=n))
    sides = draw(st.lists(st.sampled_from(["", "upper", "lower", "+y", "-z", "UPPER"]), min_size=n, max_size=n))
    rows = []
    for i in range(n):
        r = {"tap": names[i], "x": number_text(nums[i][0], dec), "y": number_text(nums[i][1], dec),
             "z": number_text(nums[i][2], dec), kind: number_text(nums[i][3], dec), "side": sides[i]}
        rows.append([r.get(c.strip().lower(), draw(cell("name"))) for c in cols])
    if draw(chance(0.3)):  # spoil some cells or row lengths
        well = False
        for _ in range(draw(st.integers(1, 4))):
            i = draw(st.integers(0, n - 1))
            op = draw(st.sampled_from(["cell", "cell", "short", "long", "dup_name", "blank_name"]))
            j = draw(st.integers(0, len(cols) - 1))
            if op == "short":
                rows[i] = rows[i][:j]
            elif op == "long":
                rows[i] = rows[i] + draw(st.lists(cell("number", dec), min_size=1, max_size=3))
            elif not rows[i] or j >= len(rows[i]):
                continue  # a row shortened before
            elif op == "cell":
                rows[i][j] = draw(cell(draw(st.sampled_from(["number", "name"])), dec))
            elif op == "dup_name" and n > 1 and rows[(i + 1) % n]:
                rows[i][0] = rows[(i + 1) % n][0]
            elif op == "blank_name":
                rows[i][0] = draw(st.sampled_from(["", " ", "\t"]))
    if d is not None and (d["damage"] or d["encoding"] in ("utf-16", "latin-1", "cp1252")):
        well = False  # damaged bytes, or names that another encoding spells differently
    numbers = form == "xlsx" and draw(chance(0.5))
    if form == "xlsx" and any(nm.startswith("=") for nm in names):
        well = False  # a spreadsheet cell that starts with = is a formula, with no value until computed
    if numbers and np.abs(nums).max() > 1.797e308:
        well = False  # openpyxl writes 16 digits: the largest doubles come back as infinity
    expect = None
    if well:
        pts = np.array([r[:3] for r in nums], float)
        vals = np.array([r[3] for r in nums], float)
        expect = {"names": names, "points": pts, "values": vals, "kind": kind,
                  "sides": [s.lower() for s in sides] if "side" in [c.lower() for c in cols] else [""] * n}
    if form == "xlsx":
        return {"suffix": ".xlsx", "xlsx": (cols, rows), "numbers": numbers, "expect": expect,
                "values": values}
    return {"suffix": draw(st.sampled_from([".csv", ".csv", ".txt", ".CSV"])), "data": encode_table(cols, rows, d),
            "expect": expect, "values": values}


def write_case_file(case, folder: Path, stem="taps") -> Path:
    path = folder / (stem + case["suffix"])
    if "xlsx" in case:
        write_xlsx(path, *case["xlsx"], case["numbers"])
    else:
        path.write_bytes(case["data"])
    return path


def _count_lines(path: Path) -> int:
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        import openpyxl

        try:
            return openpyxl.load_workbook(path, read_only=True).active.max_row or 1
        except Exception:
            return 1
    return max(1, path.read_bytes().count(b"\n") + path.read_bytes().count(b"\r") + 1)


def check_taps(case, folder: Path) -> str:
    """Read one generated tap table; ``"valid"`` or ``"input_error"``, or raise (a bug)."""
    from meshpress.taps.layout import read_taps

    path = write_case_file(case, folder)
    try:
        with time_limit():
            t = read_taps(path, values=case["values"])
    except InputError as exc:
        assert_clean_error(exc, [str(path), path.name], _count_lines(path))
        assert case["expect"] is None or len(case["expect"]["names"]) > 100_000, f"well-formed table refused: {exc}"
        return "input_error"
    n = len(t.names)
    assert n >= 1 and t.points.shape == (n, 3) and t.values.shape == (n,) and len(t.sides) == n
    assert np.isfinite(t.points).all() and np.isfinite(t.values).all()
    assert len(set(t.names)) == n and all(s.strip() == s and s for s in t.names)
    e = case["expect"]
    if e is not None:
        # Exact where the file holds the numbers' repr text; numbers stored by openpyxl keep 16 digits.
        same = (lambda a, b: np.testing.assert_allclose(a, b, rtol=1e-15, atol=0)) if case.get("numbers") else \
            np.testing.assert_array_equal
        assert t.names == e["names"]
        same(t.points, e["points"])
        if case["values"]:
            assert t.kind == e["kind"]
            same(t.values, e["values"])
        assert t.sides == e["sides"]
    return "valid"


# -- readings and zeros ------------------------------------------------------------------------------------------

@st.composite
def series_table(draw, channels=()):
    """A readings (or zero) file's header and rows: wide or long, time with gaps, repeats, disorder.

    ``channels``: the other columns the run names (q, speed, reference, ignored ones); mostly all are there.
    """
    n = draw(st.sampled_from([1, 1, 2, 3, 5, 8, 20, 40]))
    t0 = draw(st.sampled_from([0.0, 0.0, 1e9, -5.0, 1e-300]))
    dt = draw(st.sampled_from([0.1, 0.1, 1.0, 0.02, 1e-9, 1e-310, 3600.0]))
    t = [t0 + i * dt for i in range(n)]
    shape = draw(st.sampled_from(["regular"] * 4 + ["gaps", "shuffled", "repeated", "reversed", "constant"]))
    if shape == "gaps":
        t = [x + dt * 50 * (i > n // 2) for i, x in enumerate(t)]
    elif shape == "shuffled":
        t = draw(st.permutations(t))
    elif shape == "repeated" and n > 1:
        t[n // 2] = t[n // 2 - 1]
    elif shape == "reversed":
        t = t[::-1]
    elif shape == "constant":
        t = [t0] * n
    taps = list(LAYOUT)
    if draw(chance(0.15)):
        taps = draw(st.lists(st.sampled_from(LAYOUT + ["D", "time", "q", "speed", "A"]), max_size=5))
    channel = st.sampled_from(["steady", "steady", "noisy", "constant", "zero", "ramp", "huge", "tiny", "negative"])
    level = {"steady": 300.0, "noisy": 300.0, "constant": 250.0, "zero": 0.0, "ramp": 1.0, "huge": 1e305,
             "tiny": 1e-300, "negative": -300.0}
    noise = draw(st.lists(st.floats(-1, 1), min_size=n, max_size=n))

    def channel_values(kind):
        return [level[kind] * (1 + (0.005 if kind == "steady" else 0.3 if kind == "noisy" else 0) * noise[i]
                               + (i if kind == "ramp" else 0)) for i in range(n)]

    cols = {}
    for name in taps:
        cols[name] = channel_values(draw(channel))
    extras = [c for c in channels if not draw(chance(0.1))]
    if draw(chance(0.1)):
        extras += draw(st.lists(st.sampled_from(["q", "speed", "ref", "junk"]), unique=True, max_size=2))
    for e in dict.fromkeys(extras):
        cols[e] = channel_values(draw(channel)) if e != "speed" else [v / 10 for v in channel_values(draw(channel))]
    has_time = not draw(chance(0.2))
    long = draw(chance(0.25))
    txt = (lambda v: number_text(v))
    if long:
        header = (["time"] if has_time else []) + ["tap", "value"]
        rows = [([txt(t[i])] if has_time else []) + [k, txt(v[i])] for i in range(n) for k, v in cols.items()]
        if draw(st.booleans()):
            rows = draw(st.permutations(rows))
    else:
        header = (["time"] if has_time else []) + list(cols)
        rows = [([txt(t[i])] if has_time else []) + [txt(v[i]) for v in cols.values()] for i in range(n)]
    if draw(chance(0.25)) and rows:  # spoil cells
        for _ in range(draw(st.integers(1, 3))):
            i = draw(st.integers(0, len(rows) - 1))
            j = draw(st.integers(0, max(0, len(rows[i]) - 1)))
            if rows[i]:
                rows[i][j] = draw(cell("number"))
    if draw(chance(0.1)) and rows:
        rows = rows[: draw(st.integers(0, len(rows)))]
    return header, rows


@st.composite
def readings_cases(draw):
    """A run: its readings file, maybe a zero file, and the run's settings as a sheet would give them."""
    from meshpress.sheets.model import Reference

    d = draw(dialect()) if draw(chance(0.25)) else {**draw(dialect()), "sep": ",", "decimal": ".",
                                                                "encoding": "utf-8", "damage": None}
    xlsx = draw(chance(0.1))
    source = draw(st.sampled_from(["speed", "q", "q_column", "speed_column"]))
    window = draw(st.sampled_from(["auto", "auto", "all", (0.0, 1.0), (-1e300, 1e300), (1e9, 1e9 + 1)]))
    ref = draw(st.sampled_from([Reference(), Reference(), Reference("cabin", -0.2, None),
                                Reference("cabin", None, "ref")]))
    settings_ = dict(format=draw(st.sampled_from(["auto", "auto", "wide", "long"])),
                     unit=draw(st.sampled_from(["Pa", "Pa", "kPa", "psi"])),
                     speed_mps=30.0 if source == "speed" else None, q_Pa=500.0 if source == "q" else None,
                     speed_column="speed" if source == "speed_column" else None,
                     q_column="q" if source == "q_column" else None, window=window, reference=ref,
                     steady_min_s=draw(st.sampled_from([0.1, 1.0, 10.0])),
                     steady_smooth_s=draw(st.sampled_from([0.0, 1.0, 5.0])),
                     ignore_columns=tuple(draw(st.lists(st.sampled_from(["junk", "q", "speed", "ref", "D"]),
                                                        max_size=2))))
    channels = [c for c in (settings_["q_column"], settings_["speed_column"], ref.column) if c]
    channels += [c for c in settings_["ignore_columns"] if c not in channels]
    header, rows = draw(series_table(channels))
    zero_channels = [c for c in channels if c != "speed"]
    zero = draw(series_table(zero_channels)) if draw(chance(0.5)) else None
    return {"readings": (header, rows), "dialect": d, "xlsx": xlsx, "zero": zero, "settings": settings_}


def check_readings(case, folder: Path) -> str:
    """Read one generated run (readings, zero) and reduce it; ``"valid"`` or ``"input_error"``, or raise."""
    from meshpress.sheets.model import Run
    from meshpress.sheets.runs import _read_run, reduce_run

    files = {}
    for stem, table in (("readings", case["readings"]), ("zero", case["zero"])):
        if table is None:
            continue
        if case["xlsx"]:
            files[stem] = folder / f"{stem}.xlsx"
            write_xlsx(files[stem], *table, numbers=True)
        else:
            files[stem] = folder / f"{stem}.csv"
            files[stem].write_bytes(encode_table(*table, case["dialect"]))
    run = Run(1, "r1", "base", files["readings"], zero=files.get("zero"), **case["settings"])
    try:
        with time_limit():
            series, zero = _read_run(run, LAYOUT)
            reading = reduce_run(run, series, 1.2, zero)
    except InputError as exc:
        assert_clean_error(exc, [p.name for p in files.values()] + ["runs[1]"])
        return "input_error"
    k = len(series.taps)
    assert series.p.shape == (len(series), k) and np.isfinite(series.p).all()
    if series.time is not None:
        assert np.all(np.diff(series.time) > 0)
    assert reading.samples >= 1 and math.isfinite(reading.q_Pa) and reading.q_Pa > 0
    assert np.isfinite(reading.cp).all() and reading.cp.shape == (k,)
    return "valid"


# -- test sheets -------------------------------------------------------------------------------------------------

BASE_SHEET = {
    "title": "invented fuzz sheet",
    "vehicle": {"mesh": "ball.stl", "length_unit": "m", "front_axle": 0.2, "rear_axle": 1.8,
                "static_load": {"unit": "kg", "front_axle": 400, "rear_axle": 420}},
    "taps": {"layout": "layout.csv", "max_distance": "25 mm"},
    "air": {"temperature_C": 20.0, "pressure": "1013 hPa", "humidity_percent": 50},
    "field": {"method": "rbf"},
    "defaults": {"unit": "Pa", "window": "auto"},
    "speeds": {"from": "80 km/h", "to": "200 km/h", "step": "20 km/h"},
    "uncertainty": {"bands": False},
    "runs": [{"name": "n1", "configuration": "base", "readings": "logs/run1.csv", "zero": "logs/zero1.csv",
              "q_column": "q"},
             {"name": "s1", "configuration": "wing", "readings": "logs/run1.csv", "speed": "30 m/s",
              "reference": {"port": "cabin", "cp": -0.1}}],
    "compare": [{"base": "base", "other": "wing"}],
}
KEY_PATHS = [
    "title", "notes", "vehicle", "vehicle.mesh", "vehicle.length_unit", "vehicle.up", "vehicle.forward",
    "vehicle.front_axle", "vehicle.rear_axle", "vehicle.ground", "vehicle.reference_area_m2", "vehicle.static_load",
    "vehicle.static_load.unit", "vehicle.static_load.front_axle", "vehicle.static_load.front_left", "taps",
    "taps.layout", "taps.max_distance", "taps.exclude", "air", "air.temperature_C", "air.pressure",
    "air.humidity_percent", "air.co2_ppm", "field", "field.method", "field.kernel", "field.smoothing", "defaults",
    "defaults.unit", "defaults.window", "defaults.steady_band_percent", "defaults.q", "defaults.time_column",
    "runs", "runs.0", "runs.0.name", "runs.0.configuration", "runs.0.readings", "runs.0.zero", "runs.0.q_column",
    "runs.0.speed", "runs.0.q", "runs.0.window", "runs.0.format", "runs.0.reference", "runs.0.air",
    "runs.0.ignore_columns", "runs.0.direction", "runs.1.name", "runs.1.speed", "runs.1.speed_unit",
    "runs.1.reference.cp", "runs.1.reference.column", "speeds", "speeds.from", "speeds.to", "speeds.step",
    "compare", "compare.0.base", "compare.0.other", "uncertainty", "uncertainty.bands", "uncertainty.patches",
    "uncertainty.kernel", "uncertainty.sensor_accuracy", "uncertainty.full_scale", "uncertainty.error_correlation",
]
# Edits that keep the sheet valid (docs/test-sheet.md), so that part of the cases reach the end of the checks.
VALID_EDITS = [("notes", "invented"), ("runs.0.direction", "north"), ("runs.0.window", [0.0, 10.0]),
               ("runs.0.window", "all"), ("runs.1.speed", "120 km/h"), ("runs.1.speed", 33.3),
               ("field.method", "nearest"), ("vehicle.up", "+y"), ("vehicle.forward", "-z"),
               ("taps.max_distance", 0.05), ("air.co2_ppm", 420), ("uncertainty.bands", True),
               ("speeds.step", "10 km/h"), ("defaults.steady_min_s", 5), ("runs.0.format", "wide"),
               ("taps.exclude", ["T1"]), ("vehicle.reference_area_m2", 2.1), ("uncertainty.sensor_accuracy", "0.25 %"),
               ("uncertainty.full_scale", "2500 Pa"), ("runs.1.reference", "static"), ("vehicle.ground", 0.0)]
FILE_KEYS = ["vehicle.mesh", "taps.layout", "runs.0.readings", "runs.0.zero", "runs.1.readings"]
# Places a file key can point to that are not a readable file of the test, sheet included.
BAD_PATHS = ["missing.csv", "sheet.toml", "./sheet.toml", "logs", "logs/", ".", "..", "", " ", "logs/../sheet.toml",
             "~nobody_here/x.csv", "a\u0000b.csv", "logs/run1.csv/x", "/"]


class _Datetime:
    """A TOML local date-time literal (tomllib returns a datetime: the wrong type for every key)."""

    def __init__(self, text):
        self.text = text


TOML_VALUES = st.recursive(
    st.one_of(st.text(max_size=20), st.sampled_from(["30 km/h", "1013 hPa", "-5 mm", "1e400 m/s", "nan %", "inf %",
                                                     "0.25 %", "static", "auto", "all", "long", "+q", "-z", "Pa"]),
              st.integers(-2**63, 2**63 - 1), st.floats(), st.booleans(),
              st.sampled_from([_Datetime("1979-05-27T07:32:00"), _Datetime("1979-05-27")])),
    lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(st.text(max_size=8), inner, max_size=3)),
    max_leaves=6)


def toml_text(v) -> str:
    """A TOML value (inline tables and arrays; strings as JSON writes them, which TOML reads alike)."""
    if isinstance(v, _Datetime):
        return v.text
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf") if math.isinf(v) else repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + ", ".join(toml_text(x) for x in v) + "]"
    return "{" + ", ".join(f"{json.dumps(str(k), ensure_ascii=False)} = {toml_text(x)}" for k, x in v.items()) + "}"


def toml_doc(doc: dict) -> str:
    return "".join(f"{json.dumps(str(k), ensure_ascii=False)} = {toml_text(v)}\n" for k, v in doc.items())


def _set(doc, path, value, delete=False):
    keys = path.split(".")
    node = doc
    if any(isinstance(k, str) and not k for k in keys):
        return
    for k in keys[:-1]:
        if isinstance(node, list):
            if not k.isdigit() or int(k) >= len(node):
                return
            node = node[int(k)]
        elif isinstance(node, dict) and k in node:
            node = node[k]
        elif isinstance(node, dict):
            node[k] = {}
            node = node[k]
        else:
            return
    last = keys[-1]
    if isinstance(node, list):
        if last.isdigit() and int(last) < len(node):
            if delete:
                node.pop(int(last))
            else:
                node[int(last)] = value
    elif isinstance(node, dict):
        if delete:
            node.pop(last, None)
        else:
            node[last] = value


@st.composite
def sheet_cases(draw):
    """A test sheet's text: the base sheet with wrong types, unknown or missing keys, bad paths; or junk."""
    form = draw(st.sampled_from(["mutated"] * 8 + ["raw", "truncated"]))
    if form == "raw":
        return {"data": draw(st.one_of(st.binary(max_size=300), st.text(max_size=300).map(str.encode)))}
    doc = json.loads(json.dumps(BASE_SHEET))
    for _ in range(draw(st.integers(0, 4))):
        op = draw(st.sampled_from(["valid", "valid", "value", "value", "delete", "unknown", "path", "path"]))
        if op == "valid":
            _set(doc, *draw(st.sampled_from(VALID_EDITS)))
        elif op == "value":
            _set(doc, draw(st.sampled_from(KEY_PATHS)), draw(TOML_VALUES))
        elif op == "delete":
            _set(doc, draw(st.sampled_from(KEY_PATHS)), None, delete=True)
        elif op == "unknown":
            table = draw(st.sampled_from(["", "vehicle.", "taps.", "air.", "runs.0.", "uncertainty.", "defaults."]))
            _set(doc, table + draw(st.text(min_size=1, max_size=10)), draw(TOML_VALUES))
        else:
            _set(doc, draw(st.sampled_from(FILE_KEYS)), draw(st.sampled_from(BAD_PATHS)))
    text = toml_doc(doc).encode("utf-8", errors="replace")
    if form == "truncated":
        text = text[: draw(st.integers(0, len(text)))]
    return {"data": text}


def sheet_folder(folder: Path) -> Path:
    """The files the base sheet names (contents do not matter to read_sheet, which checks they exist)."""
    (folder / "logs").mkdir(parents=True, exist_ok=True)
    for name in ("ball.stl", "layout.csv", "logs/run1.csv", "logs/zero1.csv"):
        (folder / name).write_text("invented\n")
    return folder


def check_sheet(case, folder: Path) -> str:
    """Read one generated test sheet in ``folder`` (see :func:`sheet_folder`); outcome, or raise."""
    from meshpress.sheets.sheet import read_sheet

    path = folder / "sheet.toml"
    path.write_bytes(case["data"])
    try:
        with time_limit():
            s = read_sheet(path)
    except InputError as exc:
        assert_clean_error(exc, ["sheet.toml"])
        msg = str(exc)
        if not re.match(r"sheet\.toml: (not valid TOML|not a text file)", msg):
            assert re.match(r"sheet\.toml: [^:]+:", msg), f"names no key: {msg!r}"
        return "input_error"
    assert s.runs and len({r.name for r in s.runs}) == len(s.runs)
    for p in [s.vehicle.mesh, s.layout] + [r.readings for r in s.runs] + [r.zero for r in s.runs if r.zero]:
        assert Path(p).is_file() and Path(p).resolve() != path.resolve()
    for r in s.runs:
        assert sum(x is not None for x in (r.speed_mps, r.speed_column, r.q_Pa, r.q_column)) == 1
    return "valid"


# -- the tests ---------------------------------------------------------------------------------------------------
# Each @example is a case the fuzzing found to break the rule before its fix, kept as a regression case.

def _taps(data: bytes, expect=None, values=True):
    return {"suffix": ".csv", "data": data, "expect": expect, "values": values}


def _expect(names, points, values, kind="cp", sides=None):
    return {"names": names, "points": np.array(points, float), "values": np.array(values, float), "kind": kind,
            "sides": sides or [""] * len(names)}


def _run_case(header, rows, zero=None, xlsx=False, **settings_):
    from meshpress.sheets.model import Reference

    base = dict(format="auto", unit="Pa", speed_mps=None, q_Pa=500.0, speed_column=None, q_column=None,
                window="auto", reference=Reference(), steady_min_s=1.0, steady_smooth_s=1.0, ignore_columns=())
    plain = {"sep": ",", "decimal": ".", "eol": "\n", "quoting": csv.QUOTE_MINIMAL, "encoding": "utf-8",
             "comments": [], "trailing_sep": False, "damage": None, "damage_at": 0.0, "damage_bytes": b"\x00"}
    return {"readings": (header, rows), "dialect": plain, "xlsx": xlsx, "zero": zero, "settings": {**base, **settings_}}


def _sheet(**edits):
    doc = json.loads(json.dumps(BASE_SHEET))
    for k, v in edits.items():
        _set(doc, k.replace("__", "."), v)
    return {"data": toml_doc(doc).encode()}


_STEADY = [[repr(0.1 * i), "100", "-50", "20", "30.0"] for i in range(40)]


@pytest.fixture(scope="module")
def scratch():
    d = Path(tempfile.mkdtemp(prefix="meshpress-fuzz-"))
    yield d
    shutil.rmtree(d, ignore_errors=True)


@pytest.mark.slow
@settings(FUZZ, max_examples=300)
@given(case=tap_tables())
# 'X' and 'x' are one column once names ignore case: a TypeError inside pandas before the fix.
@example(case=_taps(b"tap,x,X,y,z,cp\nA,1,2,3,4,5\n"))
# A row one cell longer than the header made pandas take the first column as an index, shifting every cell.
@example(case=_taps(b"tap,x,y,z,cp,side\nA,1,2,3,4,upper,\nB,5,6,7,8,,\n",
                    _expect(["A", "B"], [[1, 2, 3], [5, 6, 7]], [4, 8], sides=["upper", ""])))
@example(case=_taps(b"tap,x,y,z,cp\nA,1,2,3,4,5\n"))
# Tap names that pandas reads as missing by default ("NA", "nan", "None") were refused as empty names.
@example(case=_taps(b"tap,x,y,z,cp\nNA,1,2,3,4\nnan,1,2,3,5\nNone,0,0,0,0\n",
                    _expect(["NA", "nan", "None"], [[1, 2, 3], [1, 2, 3], [0, 0, 0]], [4, 5, 0])))
def test_fuzzed_tap_tables_read_or_fail_cleanly(scratch, case):
    check_taps(case, scratch)


@pytest.mark.slow
@settings(FUZZ, max_examples=300)
@given(case=readings_cases())
# format = 'long' on a wide file: KeyError 'tap' before the fix.
@example(case=_run_case(["time", "A", "B", "C"], [r[:4] for r in _STEADY], format="long"))
# A long file's tap named like the time column: pandas' "cannot insert time, already exists".
@example(case=_run_case(["time", "tap", "value"], [[t, k, "1"] for t in ("0", "1") for k in ("A", "B", "C", "time")]))
# Time steps of 1e-310 s: the smoothing length in samples overflowed int (OverflowError).
@example(case=_run_case(["time", "A", "B", "C", "speed"], [[repr(1e-310 * i)] + r[1:] for i, r in enumerate(_STEADY)],
                        q_Pa=None, speed_column="speed"))
# 1e305 kPa: the mean overflowed to inf and Cp came out NaN, silently.
@example(case=_run_case(["time", "A", "B", "C"], [[r[0], "1e305", "1e305", "1"] for r in _STEADY], unit="kPa",
                        window="all"))
def test_fuzzed_readings_and_zeros_reduce_or_fail_cleanly(scratch, case):
    check_readings(case, scratch)


@pytest.fixture(scope="module")
def sheet_dir(scratch):
    return sheet_folder(scratch / "sheet")


@pytest.mark.slow
@settings(FUZZ, max_examples=300)
@given(case=sheet_cases())
# '~user' of no user: RuntimeError from pathlib before the fix.
@example(case=_sheet(taps__layout="~nobody_here/x.csv"))
# A file key naming the sheet itself, or a folder, was accepted as a file / reported as missing.
@example(case=_sheet(runs__0__readings="./sheet.toml"))
@example(case=_sheet(vehicle__mesh="logs/"))
# A step of 5e-324 km/h: (to - from) / step is inf and int() raised OverflowError.
@example(case=_sheet(speeds__step=5e-324))
# A quoted key holding a line break made a two-line message.
@example(case={"data": toml_doc({**BASE_SHEET, "a\nb": 1}).encode()})
def test_fuzzed_test_sheets_read_or_fail_cleanly(sheet_dir, case):
    check_sheet(case, sheet_dir)


# -- the size limit ----------------------------------------------------------------------------------------------

def _big_taps(path: Path, n: int) -> Path:
    """An invented layout of ``n`` taps on a line."""
    path.write_text("tap,x,y,z\n" + "".join(f"T{i},{i * 1e-3},0,0\n" for i in range(n)))
    return path


def test_tap_table_over_the_limit_is_refused_with_the_limit(tmp_path):
    # Issue 19: a table over 100k taps is refused up front, the limit in the message; 100k itself is read.
    from meshpress.taps.layout import read_taps
    from meshpress.tolerances import TOL

    assert TOL.max_tap_rows == 100_000
    with pytest.raises(InputError, match=r"big\.csv: the tap table has more than 100,000 rows"):
        read_taps(_big_taps(tmp_path / "big.csv", 100_001), values=False)
    assert len(read_taps(_big_taps(tmp_path / "ok.csv", 100_000), values=False)) == 100_000


# -- through the command line ------------------------------------------------------------------------------------

def _cli_case(kind: str, folder: Path) -> tuple[list, str]:
    """Arguments of one bad-input command and the file its message must name (invented files)."""
    import trimesh

    from conftest import icosphere

    mesh = folder / "ball.stl"
    trimesh.Trimesh(*icosphere(1), process=False).export(mesh)
    taps = folder / "taps.csv"
    if kind == "case_twice":
        taps.write_text("tap,x,X,y,z,cp\nA,1,0,0,0,0.5\n")
    elif kind == "damaged":
        taps.write_bytes(b"\xef\xbb\xbftap;x;y;z;cp\n\xff\xfeA;1,0;0\x00;0;0,5\nB;\x81\x8d;0;0;1\n")
    elif kind == "over_limit":
        _big_taps(taps, 100_001)
    if kind in ("case_twice", "damaged", "over_limit"):
        return ["loads", mesh, taps, "--q", "500", "--method", "nearest", "--no-bands", "--quiet"], taps.name
    sheet = sheet_folder(folder)
    (folder / "layout.csv").write_text("tap,x,y,z\nA,1,0,0\nB,0,1,0\nC,0,0,1\n")
    edits = {"sheet_itself": {"taps__layout": "sheet.toml"}, "tiny_step": {"speeds__step": 5e-324}}
    if kind == "long_time_tap":
        (folder / "logs" / "run1.csv").write_text("time,tap,value\n" + "".join(
            f"{t},{k},1\n" for t in (0, 1) for k in ("A", "B", "C", "time")))
        edits[kind] = {"runs__0__format": "long"}
    (folder / "sheet.toml").write_bytes(_sheet(**edits[kind])["data"])
    return ["run", sheet / "sheet.toml", "--out", folder / "out", "--no-plot", "--quiet"], \
        "run1.csv" if kind == "long_time_tap" else "sheet.toml"


@pytest.mark.slow
@pytest.mark.parametrize("kind", ["case_twice", "damaged", "over_limit", "sheet_itself", "tiny_step", "long_time_tap"])
def test_bad_inputs_through_the_cli_exit_2_with_one_line(tmp_path, kind):
    # The project's rule for a user's mistake (DEVELOPERS.md): exit status 2, one line on stderr naming the file,
    # no traceback, no output written.
    from conftest import run_cli

    args, named = _cli_case(kind, tmp_path)
    r = run_cli(*args, timeout=120)
    lines = r.stderr.strip().splitlines()
    assert r.returncode == 2, r.stderr
    assert len(lines) == 1 and "Traceback" not in r.stderr, r.stderr
    assert lines[0].startswith("meshpress: error: ") and named in lines[0], lines[0]
    assert not (tmp_path / "out").exists()
