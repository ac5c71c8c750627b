"""Text cells that a spreadsheet cannot run as formulas (CSV injection).

A spreadsheet program that opens a CSV file reads a cell that starts with
``=``, ``+``, ``-`` or ``@`` (and, in some programs, a tab or a carriage
return) as a formula, so a tap or run named ``=HYPERLINK(...)`` could run when
the file is opened.  The OWASP guidance "CSV Injection" tells to prepend a
single quote to such a cell, which the spreadsheet reads as "this is text".
A number such as ``-0.25`` or ``+3`` is left alone, so it stays a number.

:class:`SafeWriter` is the ``csv.writer`` every CSV file of meshpress goes
through: it neutralises each text cell, and it quotes a row that holds a
carriage return, which Python's writer leaves bare when lines end in ``\n``
(a bare CR in a cell splits the row in a spreadsheet; RFC 4180 section 2.6
asks for such a field to be quoted).
"""

from __future__ import annotations

import csv
import re

#: First characters that make a spreadsheet read a cell as a formula (OWASP "CSV Injection").
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_NUMBER = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")


def safe_cell(value):
    """``value`` with a ``'`` in front when it is text a spreadsheet would read as a formula.

    Parameters
    ----------
    value : object
        A cell about to be written; anything but a ``str`` is returned as it is.

    Returns
    -------
    object
        ``"'" + value`` for a string that starts with one of
        :data:`FORMULA_STARTS` and is not a plain decimal number; ``value``
        otherwise.
    """
    if isinstance(value, str) and value.startswith(FORMULA_STARTS) and not _NUMBER.fullmatch(value):
        return "'" + value
    return value


class SafeWriter:
    """A ``csv.writer`` (lines end in ``\n``) whose text cells are passed through :func:`safe_cell`.

    Parameters
    ----------
    fh : file-like
        Where the rows go (a text file or ``io.StringIO``).
    """

    def __init__(self, fh):
        self._plain = csv.writer(fh, lineterminator="\n")
        self._quoted = csv.writer(fh, lineterminator="\n", quoting=csv.QUOTE_ALL)

    def writerow(self, cells) -> None:
        """Write one row of cells (None and numbers are written as the csv module writes them)."""
        cells = [safe_cell(c) for c in cells]
        cr = any(isinstance(c, str) and "\r" in c for c in cells)
        (self._quoted if cr else self._plain).writerow(cells)
