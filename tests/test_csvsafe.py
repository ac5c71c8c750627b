"""CSV files meshpress writes cannot run formulas in a spreadsheet (OWASP "CSV Injection" guidance).

The guidance: a cell that starts with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return is read as a
formula by spreadsheet programs; prefix it with a single quote so it is read as text.  Numbers stay numbers.
All names and readings below are invented.
"""

from __future__ import annotations

import csv
import io
from types import SimpleNamespace

import numpy as np
import pytest

from meshpress.bodies.body import Body
from meshpress.outputs.csvsafe import safe_cell
from meshpress.taps.projection import ProjectedTaps

from conftest import icosphere, run_cli

LINK = '=HYPERLINK("http://example.invalid","x")'
# One of each first character OWASP names, and ordinary names that must come back as written (invented).
HOSTILE = [LINK, "+cmd|' /C calc'!A0", "-2+3", "@SUM(A1:A2)", "\tT9", "\rT8"]
PLAIN = ["T1", "front-left", "'quoted"]


def _csv(text):
    """Rows of CSV text as Python's csv module (RFC 4180 reader) reads them."""
    return list(csv.DictReader(io.StringIO(text)))


@pytest.mark.parametrize("cell", HOSTILE)
def test_formula_cells_get_a_leading_quote(cell):
    # OWASP "CSV Injection": prepend a single quote to a cell that starts with = + - @ tab or CR.
    assert safe_cell(cell) == "'" + cell


@pytest.mark.parametrize("cell", ["-0.25", "+3", "-1e-05", "+2.5E+10", "-.5", "7", "T1", "", "a=b", "'x"])
def test_numbers_and_harmless_text_are_unchanged(cell):
    # OWASP "CSV Injection" neutralises text, not numbers: -0.25 and +3 must still read as numbers.
    assert safe_cell(cell) == cell
    assert safe_cell(-0.25) == -0.25 and safe_cell(3) == 3


def test_a_carriage_return_in_a_cell_keeps_the_row_whole():
    # RFC 4180 section 2.6: a field holding a line break must be quoted; read back, the row has its cells.
    from meshpress.outputs.csvsafe import SafeWriter

    buf = io.StringIO()
    w = SafeWriter(buf)
    w.writerow(["a", "b"])
    w.writerow(["x\ry", -0.25])
    assert list(csv.reader(io.StringIO(buf.getvalue(), newline=""))) == [["a", "b"], ["x\ry", "-0.25"]]


def test_tap_table_csv_neutralises_a_hyperlink_tap_and_keeps_negative_numbers():
    # Round trip through Python's csv module: the hostile names come back with one quote in front, the plain
    # ones and the (negative) numbers as written (OWASP "CSV Injection").
    from meshpress.outputs.export import tap_csv_text, tap_rows

    v, f = icosphere(2)
    body = Body(v, f)
    names = HOSTILE + PLAIN
    idx = np.arange(len(names))
    c = body.centroids[idx]
    values = -20.0 * (1 + idx)  # Pa, invented; q = 100 Pa gives Cp = -0.2, -0.4, ...
    taps = ProjectedTaps(names, c, c, idx, np.full((len(idx), 3), 1 / 3), np.zeros(len(idx)), values, "p")
    rows = _csv(tap_csv_text(tap_rows(body, taps, q=100.0)))
    assert [r["tap"] for r in rows] == ["'" + n for n in HOSTILE] + PLAIN
    assert rows[0]["tap"].startswith("'=HYPERLINK(")
    assert [r["Cp"] for r in rows] == [f"{x:.6g}" for x in values / 100.0]
    assert rows[0]["reading"] == "-20" and rows[0]["p_Pa"] == "-20"


def _band(name, value):
    return SimpleNamespace(name=name, value=value, u=0.01, lo95=value - 0.02, hi95=value + 0.02,
                           u_measurement=0.005, u_sampling=0.008, field_value=value)


def test_bands_csv_neutralises_configuration_names():
    # A configuration named like a formula is written as text; its negative figures stay numbers
    # (OWASP "CSV Injection").  The result object holds only what bands_csv reads; its figures are invented.
    from meshpress.outputs.runfiles import bands_csv

    res = SimpleNamespace(configurations={LINK: SimpleNamespace(bands=SimpleNamespace(bands=[_band("CL", -0.25)]))},
                          changes=[SimpleNamespace(base_label=LINK, other_label="@wing", bands=[_band("CL", -0.05)])])
    rows = _csv(bands_csv(res))
    assert rows[0]["other"] == "'" + LINK and rows[0]["value"] == "-0.25"
    assert rows[1]["base"] == "'" + LINK and rows[1]["other"] == "'@wing" and rows[1]["value"] == "-0.05"


def test_run_summary_csv_neutralises_run_and_configuration_names(tmp_path):
    # Through `meshpress run`: a run and a configuration named like formulas (invented test day on a sphere).
    import trimesh

    v, f = icosphere(2, 1.0, (0.0, 0.0, 1.0))
    trimesh.Trimesh(v, f, process=False).export(tmp_path / "ball.stl")
    c = trimesh.Trimesh(v, f, process=False).triangles_center[::16]
    names = [f"T{i:02d}" for i in range(len(c))]
    (tmp_path / "layout.csv").write_text("tap,x,y,z\n" + "".join(f"{n},{x},{y},{z}\n" for n, (x, y, z)
                                                                   in zip(names, c)))
    cp = 1 - 2.25 * (1 - ((c[:, 0]) / np.linalg.norm(c - [0, 0, 1], axis=1)) ** 2)  # sphere, Cp(theta) [text]
    q = 500.0
    rows = ["time," + ",".join(names)] + [f"{t}," + ",".join(f"{x * q:.6g}" for x in cp) for t in range(5)]
    (tmp_path / "run.csv").write_text("\n".join(rows) + "\n")
    (tmp_path / "sheet.toml").write_text(f"""
[vehicle]
mesh = "ball.stl"
[taps]
layout = "layout.csv"
max_distance = "0.1 m"
[air]
temperature_C = 20.0
pressure = "1013.25 hPa"
[field]
method = "rbf"
[uncertainty]
bands = false
[[runs]]
name = '{LINK}'
configuration = "-base"
readings = "run.csv"
q = {q}
window = "all"
""")
    out = tmp_path / "out"
    r = run_cli("run", tmp_path / "sheet.toml", "--out", out, "--no-plot", "--quiet")
    assert r.returncode == 0, r.stderr
    summary = _csv((out / "summary.csv").read_text())
    assert summary[0]["run"] == "'" + LINK and summary[0]["configuration"] == "'-base"
    assert float(summary[0]["q_Pa"]) == pytest.approx(q)
    float(summary[0]["CL"])  # a figure stays a plain number, whatever its sign
