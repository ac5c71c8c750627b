"""The command line, through a subprocess, as a user runs it."""

import json
import sys

import numpy as np
import pytest

from conftest import ROOT, run_cli, write_taps

SAMPLE = ["--length-unit", "mm", "--up", "+y", "--forward=-z", "--front-axle", "-250", "--rear-axle", "2350"]


@pytest.fixture(scope="module")
def sample(samples_dir):
    return samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv"


def test_loads_json_keys(tmp_path, sample):
    out = tmp_path / "r.json"
    r = run_cli("loads", *sample, *SAMPLE, "--speed", "100 km/h", "--json", out, "--quiet")
    assert r.returncode == 0, r.stderr
    assert "Caution" in r.stdout and "lift (+ up)" in r.stdout
    d = json.loads(out.read_text())
    for k in ("lift_N", "drag_N", "side_N", "pitch_moment_Nm", "front_lift_N", "rear_lift_N", "front_share", "CL",
              "CD", "CPM", "CLF", "CLR", "q_Pa", "ref_area_m2", "wheelbase_m", "method", "warnings", "taps"):
        assert k in d
    # q = 1/2 rho V^2 with the ISA density 1.225 kg/m3 (CONVENTIONS.md).
    assert d["q_Pa"] == pytest.approx(0.5 * 1.225 * (100 / 3.6) ** 2)
    assert d["wheelbase_m"] == pytest.approx(2.6)
    assert len(d["taps"]) == 57 and all(t["distance_m"] < 0.025 for t in d["taps"])


def test_without_axles_and_q_figures_are_null(tmp_path, sample):
    out = tmp_path / "r.json"
    r = run_cli("loads", *sample, "--length-unit", "mm", "--up", "+y", "--forward=-z", "--json", out, "--quiet")
    assert r.returncode == 0, r.stderr
    d = json.loads(out.read_text())
    assert d["front_lift_N"] is None and d["CPM"] is None and d["CL"] is None and d["wheelbase_m"] is None
    assert d["lift_N"] is not None  # readings in Pa give forces without q


def test_axis_conventions_give_identical_loads(tmp_path, small_car):
    # The same body and taps in m / z up / forward -x and in mm / y up / forward -z (to 1e-9).
    import meshio

    path, v, f = small_car
    rng = np.random.default_rng(5)
    pts = v[rng.choice(len(v), 50, replace=False)]
    vals = rng.normal(0, 1, 50)
    to_mm = lambda p: np.column_stack([p[:, 1], p[:, 2], p[:, 0]]) * 1000.0 + [5.0, -40.0, 300.0]
    meshio.write(tmp_path / "mm.vtu", meshio.Mesh(to_mm(v), [("triangle", f)]))
    names = [f"t{i}" for i in range(50)]
    write_taps(tmp_path / "m.csv", names, pts, vals)
    write_taps(tmp_path / "mm.csv", names, to_mm(pts), vals)
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    r1 = run_cli("loads", path, tmp_path / "m.csv", "--front-axle", "0.85", "--rear-axle", "3.45", "--q", "400",
                 "--json", a, "--quiet")
    r2 = run_cli("loads", tmp_path / "mm.vtu", tmp_path / "mm.csv", "--length-unit", "mm", "--up", "+y",
                 "--forward=-z", "--front-axle", "1150", "--rear-axle", "3750", "--q", "400", "--json", b, "--quiet")
    assert r1.returncode == 0 and r2.returncode == 0, r1.stderr + r2.stderr
    da, db = json.loads(a.read_text()), json.loads(b.read_text())
    for k in ("lift_N", "drag_N", "side_N", "pitch_moment_Nm", "front_lift_N", "rear_lift_N", "CL", "CD", "CLF"):
        assert da[k] == pytest.approx(db[k], rel=1e-9, abs=1e-9), k


def _bad(tmp_path, sample):
    mesh, taps = sample
    far = tmp_path / "far.csv"
    far.write_text("tap,x,y,z,p\nT1,0,5000,0,10\n")
    missing = tmp_path / "missing.csv"
    missing.write_text("tap,x,y,p\nT1,0,0,1\n")
    nan = tmp_path / "nan.csv"
    nan.write_text("tap,x,y,z,p\nT1,0,0,0,nan\n")
    dup = tmp_path / "dup.csv"
    dup.write_text("tap,x,y,z,p\nT1,0,0,0,1\nT1,0,0,0,1\n")
    empty = tmp_path / "empty.csv"
    empty.write_text("tap,x,y,z,p\n")
    notmesh = tmp_path / "notmesh.stl"
    notmesh.write_text("hello\n")
    return [
        (["loads", tmp_path / "nope.stl", taps, *SAMPLE], "does not exist"),
        (["loads", notmesh, taps, *SAMPLE], "notmesh.stl"),
        (["loads", mesh, far, *SAMPLE], "tap 'T1' is"),
        (["loads", mesh, missing, *SAMPLE], "missing column(s) z"),
        (["loads", mesh, nan, *SAMPLE], "column p"),
        (["loads", mesh, dup, *SAMPLE], "duplicate tap name"),
        (["loads", mesh, empty, *SAMPLE], "no rows"),
        (["loads", mesh, taps, *SAMPLE, "--pressure-unit", "furlongs"], "unknown pressure unit"),
        (["loads", mesh, taps, *SAMPLE, "--length-unit", "parsec"], "unknown length unit"),
        (["loads", mesh, taps, *SAMPLE, "--up", "+w"], "not a signed axis"),
        # the mm sample read in m (the default): the tap error also names the likely unit
        (["loads", mesh, taps, "--up", "+y", "--forward=-z"], "; note: the body is 4,200 m long with --length-unit m"),
        (["loads", mesh, taps, *SAMPLE, "--speed", "-3"], "--speed must be positive"),
        (["loads", mesh, taps, *SAMPLE, "--speed", "fast"], "is not a number"),
        (["loads", mesh, taps, *SAMPLE, "--speed", "30 knots"], "unknown speed unit"),
        (["loads", mesh, taps, *SAMPLE, "--q", "100", "--speed", "30"], "not both"),
        (["loads", mesh, taps, "--front-axle", "1"], "give both"),
        (["loads", mesh, taps, *SAMPLE, "--kernel", "wobbly"], "--kernel"),
        (["loads", mesh, taps, *SAMPLE, "--method", "magic"], "--method"),
        (["loads", mesh, taps, *SAMPLE, "--q", "abc"], "invalid float value"),
        (["loads", mesh, taps, *SAMPLE, "--json", taps], "refusing to write"),
        (["frobnicate"], "invalid choice"),
    ]


@pytest.mark.slow
def test_every_bad_input_is_one_line_and_status_2(tmp_path, sample):
    before = sample[1].read_bytes()
    for args, msg in _bad(tmp_path, sample):
        r = run_cli(*args, "--quiet") if args[0] == "loads" else run_cli(*args)
        err = r.stderr.strip().splitlines()
        assert r.returncode == 2, (args, r.stderr)
        assert len(err) == 1 and err[0].startswith("meshpress: error: "), (args, r.stderr)
        assert msg in err[0], (args, err[0])
        assert "Traceback" not in r.stderr
    assert sample[1].read_bytes() == before  # the input was not overwritten


def test_version_and_help():
    r = run_cli("--version")
    assert r.returncode == 0 and "meshpress" in r.stdout
    for cmd in ("loads", "demo"):
        h = run_cli(cmd, "--help")
        assert h.returncode == 0 and "usage" in h.stdout


def test_loads_does_not_import_plotting_libraries(sample):
    # Start-up: a loads run must not pull in pyvista, vtk or matplotlib.
    code = ("import sys; from meshpress.cli import main; main(%r); "
            "bad = [m for m in ('pyvista', 'vtk', 'matplotlib') if m in sys.modules]; "
            "print('IMPORTED', bad)") % ([*map(str, sample), *SAMPLE, "--q", "400", "--quiet"],)
    import subprocess

    r = subprocess.run([sys.executable, "-c", code.replace("main([", "main(['loads', ")], capture_output=True,
                       text=True, cwd=ROOT)
    assert "IMPORTED []" in r.stdout, r.stdout + r.stderr


def test_demo_runs(tmp_path):
    # the report and the bands: test_report.py
    r = run_cli("demo", "--out", tmp_path / "demo", "--quiet", "--no-report", "--no-bands")
    assert r.returncode == 0, r.stderr
    assert "INVENTED DEMO DATA" in r.stdout and "95 % interval" not in r.stdout
    d = json.loads((tmp_path / "demo" / "loads.json").read_text())
    assert d["CL"] is not None and d["front_share"] is not None and "uncertainty" not in d


@pytest.mark.slow
def test_compare_single_method_option(tmp_path, sample):
    # `compare --method NAME` runs that one method, as `--methods NAME` does, and gives the loads that
    # `loads --method NAME` gives for the same inputs (the same field on the same taps).
    common = [*sample, *SAMPLE, "--q", "400", "--quiet"]
    one, many, ref = tmp_path / "one.json", tmp_path / "many.json", tmp_path / "loads.json"
    r = run_cli("compare", *common, "--method", "nearest", "--json", one)
    assert r.returncode == 0, r.stderr
    assert run_cli("compare", *common, "--methods", "nearest", "--json", many).returncode == 0
    assert run_cli("loads", *common, "--method", "nearest", "--json", ref).returncode == 0
    a, b, c = (json.loads(p.read_text()) for p in (one, many, ref))
    assert [m["method"] for m in a["methods"]] == ["nearest"] == [m["method"] for m in b["methods"]]
    assert a["methods"][0]["CL"] == pytest.approx(b["methods"][0]["CL"], rel=1e-12)
    assert a["methods"][0]["CL"] == pytest.approx(c["CL"], rel=1e-12)
    both = run_cli("compare", *common, "--method", "nearest", "--methods", "rbf,nearest")
    assert both.returncode == 2 and "not both" in both.stderr and "Traceback" not in both.stderr
    bad = run_cli("compare", *common, "--method", "magic")
    assert bad.returncode == 2 and "--method: 'magic'" in bad.stderr


def test_geodesic_trend_option(tmp_path, sample):
    # `--trend normal` reaches the geodesic field (its description names the trend); kriging refuses `auto`.
    common = [*sample, *SAMPLE, "--q", "400", "--quiet", "--method"]
    r = run_cli("loads", *common, "geodesic", "--trend", "normal")
    assert r.returncode == 0, r.stderr
    assert "mean linear in the normal" in r.stdout
    bad = run_cli("loads", *common, "kriging", "--trend", "auto")
    assert bad.returncode == 2 and "--trend auto" in bad.stderr and "Traceback" not in bad.stderr
