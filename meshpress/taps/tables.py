"""Reading the user's tables (tap layouts, readings, zeros): CSV in either common dialect, or a spreadsheet.

A CSV written by a spreadsheet in a locale whose decimal mark is the comma
(most of continental Europe) separates its fields with ``;`` and writes
``1,5`` for one and a half (common practice of spreadsheet programs; RFC 4180
itself fixes only the comma-separated form).  Such a file, and a
tab-separated one, is read as it is: the separator is taken from the header
line, and with ``;`` a number written with a decimal comma is read as a
number.  Cells stay strings here; the callers convert and check them.
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd

from ..errors import InputError

SPREADSHEETS = (".xlsx", ".xlsm")
_DECIMAL_COMMA = re.compile(r"^\s*[+-]?(\d+,\d*|,\d+)([eE][+-]?\d+)?\s*$")


def separator(path) -> str:
    """The field separator of a CSV file: ``,``, ``;`` or a tab, whichever its header line holds most of."""
    with open(path, encoding="utf-8-sig", errors="replace") as fh:
        for line in fh:
            if line.strip() and not line.lstrip().startswith("#"):
                counts = {s: line.count(s) for s in (",", ";", "\t")}
                return max(counts, key=lambda s: (counts[s], s == ","))
    return ","


def read_table(path, what: str = "table") -> pd.DataFrame:
    """A user's table as strings (CSV) or objects (spreadsheet), columns stripped of spaces.

    Parameters
    ----------
    path : str or Path
        ``.xlsx`` / ``.xlsm`` (first sheet, read with openpyxl) or CSV (``#``
        starts a comment line; separator ``,``, ``;`` or tab, see the module
        docstring).
    what : str
        What the table is, for the messages ("tap table", "readings file").

    Raises
    ------
    InputError
        When the file cannot be read as a table or is empty.
    """
    path = Path(path)
    try:
        if path.suffix.lower() in SPREADSHEETS:
            try:
                import openpyxl  # noqa: F401
            except ImportError:
                raise InputError(f"{path}: reading {path.suffix} needs openpyxl (pip install openpyxl)") from None
            df = pd.read_excel(path, dtype=object)
        else:
            sep = separator(path)
            df = pd.read_csv(path, comment="#", dtype=str, skipinitialspace=True, sep=sep,
                             encoding="utf-8-sig", encoding_errors="replace")
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
    return df


def _point_decimal(cell):
    """``"1,5"`` -> ``"1.5"`` for a number written with a decimal comma; any other cell unchanged."""
    if isinstance(cell, str) and _DECIMAL_COMMA.match(cell):
        return cell.replace(",", ".")
    return cell
