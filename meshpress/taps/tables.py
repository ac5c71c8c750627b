"""Reading the user's tables (tap layouts, readings, zeros): CSV in either common dialect, or a spreadsheet.

A CSV written by a spreadsheet in a locale whose decimal mark is the comma
(most of continental Europe) separates its fields with ``;`` and writes
``1,5`` for one and a half (common practice of spreadsheet programs; RFC 4180
itself fixes only the comma-separated form).  Such a file, and a
tab-separated one, is read as it is: the separator is taken from the header
line, and with ``;`` a number written with a decimal comma is read as a
number.  Cells stay strings here; the callers convert and check them.

A data row with more cells than the header is refused (an empty cell after
the last column, as some programs write, is allowed), and so is a header that
names a column twice.
"""

from __future__ import annotations

import csv
import re
import warnings
from pathlib import Path

import pandas as pd

from ..errors import InputError

SPREADSHEETS = (".xlsx", ".xlsm")
_RENAMED = re.compile(r"(.*)\.\d+")
_DECIMAL_COMMA = re.compile(r"^\s*[+-]?(\d+,\d*|,\d+)([eE][+-]?\d+)?\s*$")


def separator(path) -> str:
    """The field separator of a CSV file: ``,``, ``;`` or a tab, whichever its header line holds most of."""
    with open(path, encoding="utf-8-sig", errors="replace") as fh:
        for line in fh:
            if line.strip() and not line.lstrip().startswith("#"):
                counts = {s: line.count(s) for s in (",", ";", "\t")}
                return max(counts, key=lambda s: (counts[s], s == ","))
    return ","


def read_table(path, what: str = "table", max_rows: int | None = None) -> pd.DataFrame:
    """A user's table as strings (CSV) or objects (spreadsheet), columns stripped of spaces.

    Parameters
    ----------
    path : str or Path
        ``.xlsx`` / ``.xlsm`` (first sheet, read with openpyxl) or CSV (``#``
        starts a comment line; separator ``,``, ``;`` or tab, see the module
        docstring).
    what : str
        What the table is, for the messages ("tap table", "readings file").
    max_rows : int, optional
        Refuse a table of more data rows than this (only this many and one
        more are read).

    Raises
    ------
    InputError
        When the file cannot be read as a table, is empty, names a column
        twice, has a row longer than its header or more than ``max_rows`` rows.
    """
    path = Path(path)
    nrows = None if max_rows is None else max_rows + 1
    try:
        if path.suffix.lower() in SPREADSHEETS:
            try:
                import openpyxl  # noqa: F401
            except ImportError:
                raise InputError(f"{path}: reading {path.suffix} needs openpyxl (pip install openpyxl)") from None
            df = pd.read_excel(path, dtype=object, nrows=nrows, keep_default_na=False)
        else:
            sep = separator(path)
            # index_col=False: a row longer than the header must not turn the first column into an index (pandas
            # would shift every cell one column left); pandas warns instead, and _long_row says which row.
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", pd.errors.ParserWarning)
                df = pd.read_csv(path, comment="#", dtype=str, skipinitialspace=True, sep=sep, index_col=False,
                                 keep_default_na=False, encoding="utf-8-sig", encoding_errors="replace",
                                 nrows=nrows)
            if any(issubclass(w.category, pd.errors.ParserWarning) for w in caught):
                _long_row(path, sep, what)
            if sep == ";":
                df = df.apply(lambda col: col.map(_point_decimal))
    except InputError:
        raise
    except pd.errors.EmptyDataError:
        raise InputError(f"{path}: the {what} is empty") from None
    except Exception as exc:
        msg = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InputError(f"{path}: could not be read as a table: {msg}") from None
    df.columns = [str(c).strip() for c in df.columns]
    seen = set()
    for c in df.columns:
        if c in seen:
            raise InputError(f"{path}: column {c!r} appears twice in the header")
        seen.add(c)
    for c in df.columns:  # pandas renames a repeated column x to x.1, x.2, ...
        m = _RENAMED.fullmatch(c)
        if m and m[1] in df.columns:
            raise InputError(f"{path}: column {m[1]!r} appears twice in the header")
    if max_rows is not None and len(df) > max_rows:
        raise InputError(f"{path}: the {what} has more than {max_rows:,} rows (the limit)")
    return df


def _long_row(path: Path, sep: str, what: str) -> None:
    """Raise naming the first data row with a non-empty cell beyond the header's columns, if there is one."""
    with open(path, encoding="utf-8-sig", errors="replace", newline="") as fh:
        reader = csv.reader(fh, delimiter=sep)
        width = None
        for row in reader:
            if not any(c.strip() for c in row) or row[0].lstrip().startswith("#"):
                continue
            if width is None:
                width = len(row)
            elif len(row) > width and any(c.strip() for c in row[width:]):
                raise InputError(f"{path}, line {reader.line_num}: {len(row)} cells, more than the header's "
                                 f"{width} columns of the {what}")


def _point_decimal(cell):
    """``"1,5"`` -> ``"1.5"`` for a number written with a decimal comma; any other cell unchanged."""
    if isinstance(cell, str) and _DECIMAL_COMMA.match(cell):
        return cell.replace(",", ".")
    return cell
