"""Reading and validating a tap table (CSV or .xlsx).

Columns: ``tap`` (name), ``x``, ``y``, ``z`` (mesh coordinates and unit), and
one of ``p`` (gauge pressure relative to free-stream static, in a stated unit)
or ``cp``.  Optional ``side``: ``upper``, ``lower`` or a signed mesh axis such
as ``+y``, choosing which face of a thin panel the tap sits on.  Lines that
start with ``#`` are comments.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError
from ..bodies.frame import parse_axis
from .tables import SPREADSHEETS, read_table
from ..tolerances import TOL
from ..units import pressure_factor

VALUE_KINDS = ("p", "cp")


@dataclass
class TapTable:
    """Taps as read from the file, in the mesh's own coordinates.

    Attributes
    ----------
    names : list of str
        Tap names, unique.
    points : (n, 3) float
        Positions in the mesh's coordinates and unit.
    values : (n,) float
        Gauge pressure in Pa (``kind == "p"``) or Cp (``kind == "cp"``).
    kind : {"p", "cp"}
    sides : list of str or None
        Per-tap side selector ("" where not given).
    source : str
    """

    names: list
    points: np.ndarray
    values: np.ndarray
    kind: str
    sides: list
    source: str = ""

    def __len__(self) -> int:
        return len(self.names)


def read_taps(path, *, pressure_unit: str = "Pa", values: bool = True) -> TapTable:
    """Read and validate a tap table.

    Parameters
    ----------
    path : str or Path
        CSV file (comma, semicolon or tab separated; :mod:`meshpress.taps.tables`)
        or .xlsx (read with openpyxl).
    pressure_unit : str
        Unit of the ``p`` column (Pa, kPa, hPa, mbar, mmH2O, inH2O, psi).
    values : bool
        False reads a tap *layout*: names, positions and sides only (values are
        zeros of kind "cp"; a ``p`` or ``cp`` column, if any, is ignored).

    Returns
    -------
    TapTable

    Raises
    ------
    InputError
        Naming the file, the row (as numbered in a spreadsheet, header = row 1)
        and the column of the first problem found.
    """
    path = Path(path)
    where = str(path)
    if not path.is_file():
        raise InputError(f"tap file {where!r} does not exist")
    df = read_table(path, "tap table", max_rows=TOL.max_tap_rows)
    df.columns = [str(c).strip().lower() for c in df.columns]
    twice = df.columns[df.columns.duplicated()]
    if len(twice):
        raise InputError(f"{where}: column {twice[0]!r} appears twice in the header (column names ignore case)")
    if df.empty:
        raise InputError(f"{where}: the tap table has no rows")
    missing = [c for c in ("tap", "x", "y", "z") if c not in df.columns]
    if missing:
        need = "tap, x, y, z and p or cp" if values else "tap, x, y, z"
        raise InputError(f"{where}: missing column(s) {', '.join(missing)} (need {need})")
    kinds = [c for c in VALUE_KINDS if c in df.columns] if values else ["cp"]
    if not kinds:
        raise InputError(f"{where}: needs a 'p' (pressure) or a 'cp' column")
    if len(kinds) > 1:
        raise InputError(f"{where}: has both 'p' and 'cp' columns; keep one")
    kind = kinds[0]
    rows, word = _row_numbers(path, len(df))
    names = df["tap"]
    for i, name in enumerate(names):
        if pd.isna(name) or str(name).strip() == "":
            raise InputError(f"{where}, {word} {rows[i]}, column tap: empty tap name")
    names = [str(n).strip() for n in names]
    seen = {}
    for i, n in enumerate(names):
        if n in seen:
            raise InputError(f"{where}, {word} {rows[i]}, column tap: duplicate tap name {n!r} (first on {word} {seen[n]})")
        seen[n] = rows[i]
    cols = {}
    for c in ("x", "y", "z", kind) if values else ("x", "y", "z"):
        num = pd.to_numeric(df[c], errors="coerce")
        bad = np.flatnonzero(~np.isfinite(num.to_numpy(dtype=float)))
        if len(bad):
            i = bad[0]
            raise InputError(
                f"{where}, {word} {rows[i]}, column {c}: {df[c].iloc[i]!r} is not a number (tap {names[i]!r})"
            )
        cols[c] = num.to_numpy(dtype=float)
    vals = cols[kind] if values else np.zeros(len(names))
    if kind == "p":
        vals = vals * pressure_factor(pressure_unit, "--pressure-unit: ")
    sides = [""] * len(names)
    if "side" in df.columns:
        for i, s in enumerate(df["side"]):
            if pd.isna(s) or str(s).strip() == "":
                continue
            s = str(s).strip().lower()
            if s not in ("upper", "lower"):
                try:
                    parse_axis(s)
                except InputError:
                    raise InputError(
                        f"{where}, {word} {rows[i]}, column side: {s!r} is not upper, lower or a signed axis like +y"
                    ) from None
            sides[i] = s
    pts = np.column_stack([cols["x"], cols["y"], cols["z"]])
    return TapTable(names, pts, vals, kind, sides, where)


def has_readings(path) -> bool:
    """Whether a tap table holds readings (a ``p`` or ``cp`` column) or only a layout."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"tap file {str(path)!r} does not exist")
    table = read_table(path, "tap table", max_rows=TOL.max_tap_rows)
    return any(str(c).strip().lower() in VALUE_KINDS for c in table.columns)


def _row_numbers(path: Path, n: int) -> np.ndarray:
    """File line (CSV) or sheet row (xlsx) of each data row, 1-based, and the word for it."""
    if path.suffix.lower() in SPREADSHEETS:
        return np.arange(n) + 2, "row"
    with open(path, encoding="utf-8-sig", errors="replace") as fh:
        data = [i + 1 for i, line in enumerate(fh) if line.strip() and not line.lstrip().startswith("#")]
    rows = np.array(data[1 : n + 1])
    return (rows, "line") if len(rows) == n else (np.arange(n) + 2, "row")


