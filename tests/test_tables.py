"""User tables in the CSV dialects spreadsheets write (meshpress.taps.tables)."""

from __future__ import annotations

import csv

import numpy as np
import pytest

from meshpress.errors import InputError
from meshpress.taps.tables import read_table, separator
from meshpress.taps.layout import read_taps


def _rows(path):
    """Reference parse of the comma-separated sample with Python's csv module (RFC 4180 dialect)."""
    with open(path, newline="") as fh:
        lines = [ln for ln in fh if ln.strip() and not ln.startswith("#")]
    return list(csv.DictReader(lines))


def _write_dialect(src, dst, sep, decimal, bom=False):
    out = []
    for ln in src.read_text().splitlines():
        if ln.startswith("#"):
            out.append(ln)
        else:
            out.append(sep.join(c.replace(".", decimal) for c in ln.split(",")))
    dst.write_text("\n".join(out) + "\n", encoding="utf-8-sig" if bom else "utf-8")


@pytest.mark.parametrize("sep,decimal,bom", [(";", ",", True), (";", ",", False), ("\t", ".", False)])
def test_semicolon_decimal_comma_and_tab_tables_read_as_the_comma_file(samples_dir, tmp_path, sep, decimal, bom):
    # A spreadsheet in a decimal-comma locale writes ';' between fields and '1,5' for 1.5, with a byte-order mark
    # when it saves "CSV UTF-8" (common practice of spreadsheet programs); the numbers must be the ones the
    # comma-separated file holds, as Python's csv module reads them.
    src = samples_dir / "coupe_taps.csv"
    ref = _rows(src)
    other = tmp_path / "taps.csv"
    _write_dialect(src, other, sep, decimal, bom)
    assert separator(other) == sep
    t = read_taps(other)
    assert t.names == [r["tap"] for r in ref]
    np.testing.assert_array_equal(t.points, [[float(r[c]) for c in "xyz"] for r in ref])
    np.testing.assert_array_equal(t.values, [float(r["p"]) for r in ref])


def test_decimal_comma_error_names_the_file_line(samples_dir, tmp_path):
    # Line numbers count the comment lines and the header as a text editor does (byte-order mark included).
    src = samples_dir / "coupe_taps.csv"
    bad = tmp_path / "bad.csv"
    _write_dialect(src, bad, ";", ",", bom=True)
    lines = bad.read_text(encoding="utf-8-sig").splitlines()
    k = next(i for i, ln in enumerate(lines) if ln.startswith("CT02"))
    lines[k] = lines[k].replace(";", ";1,2,3", 1)  # x = "1,2,3-..." is no number
    bad.write_text("\n".join(lines) + "\n", encoding="utf-8-sig")
    with pytest.raises(InputError, match=rf"bad.csv, line {k + 1}, column x: .* is not a number \(tap 'CT02'\)"):
        read_taps(bad)


def test_text_cells_keep_their_commas_and_an_empty_file_is_named(tmp_path):
    p = tmp_path / "r.csv"
    p.write_text("time;note;A1\n0,5;run 3, wet;-12,5\n")
    df = read_table(p, "readings file")
    assert list(df.columns) == ["time", "note", "A1"]
    assert df.iloc[0].tolist() == ["0.5", "run 3, wet", "-12.5"]
    e = tmp_path / "e.csv"
    e.write_text("")
    with pytest.raises(InputError, match="e.csv: the readings file is empty"):
        read_table(e, "readings file")
