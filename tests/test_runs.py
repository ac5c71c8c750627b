"""Whole tests from a sheet: directions and wind, configurations, comparisons, outputs, sheet mistakes."""

import csv
import json
from pathlib import Path

import numpy as np
import pytest

from meshpress.sheets.air import air_density
from meshpress.sheets.runs import WIND_BIAS_WARNING, process_sheet
from meshpress.sheets.sheet import read_sheet

from conftest import icosphere, run_cli

V = 30.0  # ground speed, m/s
W = 4.0  # steady wind along the road, m/s
# The sheet's air (20 degC, 1013.25 hPa, 50 %) by our CIPM-2007 function, checked in test_air.py.
RHO_Q = air_density(20.0, 101_325.0, 50.0)[0]


def true_cp(p):
    """Sphere in potential flow, Cp = 1 - 9/4 sin^2(theta) from the flow axis x [text], plus an invented
    top-bottom term so there is lift to compare."""
    c = p - [0.0, 0.0, 1.0]
    r = np.linalg.norm(c, axis=1)
    sin2 = 1 - (c[:, 0] / r) ** 2
    return 1 - 2.25 * sin2 - 0.3 * c[:, 2] / r


def fib_sphere(n):
    i = np.arange(n) + 0.5
    phi = np.arccos(1 - 2 * i / n)
    th = np.pi * (1 + 5**0.5) * i
    return np.column_stack([np.cos(th) * np.sin(phi), np.sin(th) * np.sin(phi), np.cos(phi)])


def write_csv(path, cols: dict):
    keys = list(cols)
    n = len(cols[keys[0]])
    lines = [",".join(keys)] + [",".join(f"{cols[k][i]:.10g}" for k in keys) for i in range(n)]
    path.write_text("\n".join(lines) + "\n")


def make_test(tmp: Path, extra_runs="", sheet_extra=""):
    """A sphere 'car' (r = 1 m, on the ground), 40 taps, runs both ways under a steady wind."""
    import trimesh

    v, f = icosphere(3, 1.0, (0.0, 0.0, 1.0))
    trimesh.Trimesh(v, f, process=False).export(tmp / "ball.stl")
    pts = fib_sphere(40) * 1.0 + [0, 0, 1.0]
    names = [f"T{i:02d}" for i in range(40)]
    (tmp / "layout.csv").write_text("tap,x,y,z\n" + "\n".join(f"{n},{x},{y},{z}" for n, (x, y, z) in
                                                               zip(names, pts)) + "\n")
    # Vehicle frame: forward -x, so x is rearward as in the mesh; cp from the true field at the tap positions.
    cp = true_cp(pts)
    t = np.arange(0, 30, 0.1)
    for d, sign in (("north", 1), ("south", -1)):
        q = np.full(len(t), 0.5 * RHO_Q * (V + sign * W) ** 2)
        cols = {"time": t, "q": q, **{n: c * q for n, c in zip(names, cp)}}
        write_csv(tmp / f"{d}.csv", cols)
    sheet = f"""
title = "sphere"
{sheet_extra}
[vehicle]
mesh = "ball.stl"
front_axle = -0.6
rear_axle = 0.6
[vehicle.static_load]
unit = "N"
front_axle = 3000
rear_axle = 3000
[taps]
layout = "layout.csv"
max_distance = "30 mm"
[air]
temperature_C = 20
pressure = "1013.25 hPa"
humidity_percent = 50
[speeds]
from = "50 km/h"
to = "150 km/h"
step = "50 km/h"
[[runs]]
name = "onboard-n"
configuration = "onboard"
readings = "north.csv"
q_column = "q"
[[runs]]
name = "onboard-s"
configuration = "onboard"
readings = "south.csv"
q_column = "q"
[[runs]]
name = "ground-n"
configuration = "ground"
readings = "north.csv"
speed = {V}
ignore_columns = ["q"]
[[runs]]
name = "ground-s"
configuration = "ground"
readings = "south.csv"
speed = "{V * 3.6} km/h"
ignore_columns = ["q"]
[[runs]]
name = "cabin-n"
configuration = "cabin"
readings = "north.csv"
q_column = "q"
reference = {{ port = "cabin", cp = -0.3 }}
{extra_runs}
"""
    (tmp / "sheet.toml").write_text(sheet)
    return tmp / "sheet.toml", names, cp


@pytest.fixture(scope="module")
def sphere_test(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("sphere")
    path, names, cp = make_test(tmp)
    return path, names, cp, process_sheet(read_sheet(path))


def test_two_directions_with_q_on_board_agree(sphere_test):
    # With q measured on board, the wind changes q but not Cp: both directions give the same coefficients.
    _, _, cp, res = sphere_test
    n, s = res.runs[0], res.runs[1]
    assert n.reading.q_Pa != pytest.approx(s.reading.q_Pa, rel=0.1)
    assert n.reading.cp == pytest.approx(cp, abs=1e-9)
    assert s.reading.cp == pytest.approx(cp, abs=1e-9)
    for k in ("CL", "CD", "CLF", "CLR"):
        assert getattr(n.load, k) == pytest.approx(getattr(s.load, k), abs=1e-9)
    assert res.configurations["onboard"].spread["CL"]["range"] == pytest.approx(0.0, abs=1e-9)
    assert not any("q comes from a speed" in w for w in res.configurations["onboard"].warnings)


def test_ground_speed_pair_carries_the_wind_bias(sphere_test):
    # Only the ground speed V known: the mean of (V+w)^2 and (V-w)^2 is V^2 + w^2 [derived], so the pair's
    # mean Cp is the true Cp times 1 + (w/V)^2, and q (from V) is 1/2 rho w^2 short of the pair's true mean.
    _, _, cp, res = sphere_test
    g = res.configurations["ground"]
    factor = 1 + (W / V) ** 2
    assert g.cp == pytest.approx(cp * factor, rel=1e-9)
    rho = g.rho
    assert g.load.q_Pa == pytest.approx(0.5 * rho * V**2, rel=1e-12)
    true_mean_q = 0.5 * rho * 0.5 * ((V + W) ** 2 + (V - W) ** 2)
    assert true_mean_q - g.load.q_Pa == pytest.approx(0.5 * rho * W**2, rel=1e-9)
    on = res.configurations["onboard"]
    assert g.load.CL == pytest.approx(on.load.CL * factor, rel=1e-6)
    assert WIND_BIAS_WARNING in g.warnings
    # The pair's Cp ratio gives the wind back: (V + w)/(V - w) = sqrt(ratio) (exact for noise-free data).
    assert any(f"about {W:.1f} m/s" in w for w in g.warnings)
    # rel 1e-4, not round-off: the default model is fitted per configuration by an optimiser (its tolerance).
    assert g.spread["CL"]["range"] == pytest.approx(on.load.CL * 4 * V * W / V**2, rel=1e-4)


def test_constant_reference_cp_cancels_on_a_closed_body(sphere_test):
    # Cp = Cp_read + Cp_ref: a uniform shift of Cp over a closed surface gives no force (divergence theorem),
    # so the cabin-referenced run has the same loads and every tap's Cp shifted by -0.3.
    _, _, cp, res = sphere_test
    on, cab = res.configurations["onboard"], res.configurations["cabin"]
    assert cab.cp == pytest.approx(cp - 0.3, abs=1e-9)
    assert cab.load.CL == pytest.approx(on.load.CL, abs=1e-6)
    assert cab.load.CD == pytest.approx(on.load.CD, abs=1e-6)
    assert res.runs[4].reading.cp_ref == -0.3


def test_comparison_and_speeds(sphere_test):
    _, names, _, res = sphere_test
    d = res.comparisons[0]
    assert (d["base"], d["other"]) == ("onboard", "ground")
    g, on = res.configurations["ground"].load, res.configurations["onboard"].load
    for k in ("CL", "CD", "CLF", "CLR", "front_share"):
        assert d["delta"][k] == pytest.approx(getattr(g, k) - getattr(on, k), abs=1e-12)
    assert [t["name"] for t in d["taps"]] == names
    assert len(d["face_delta_cp"]) == res.body.n_faces
    # Speeds: F = C q A with q = 1/2 rho V^2 [std]; axle load = static - axle lift.
    t = res.configurations["onboard"].speeds
    v = 150 / 3.6
    q = 0.5 * res.configurations["onboard"].rho * v**2
    assert t["speed_mps"][-1] == pytest.approx(v)
    assert t["lift_N"][-1] == pytest.approx(on.CL * q * on.ref_area_m2)
    assert t["front_axle_load_N"][-1] == pytest.approx(3000 - on.CLF * q * on.ref_area_m2)
    assert t["weight_share_added"][-1] == pytest.approx(-on.CL * q * on.ref_area_m2 / 6000)


@pytest.mark.slow
def test_cli_run_writes_results_and_diff(tmp_path):
    path, names, _ = make_test(tmp_path)
    out = tmp_path / "res"
    r = run_cli("run", path, "--out", out, "--quiet", "--no-plot")
    assert r.returncode == 0, r.stderr
    assert "q comes from a speed" in r.stdout
    rows = list(csv.DictReader(open(out / "summary.csv")))
    assert [x["run"] for x in rows] == ["onboard-n", "onboard-s", "ground-n", "ground-s", "cabin-n"]
    for f in ("runs/onboard-n.json", "configurations/ground.json", "configurations/ground.faces.npy",
              "comparisons/onboard__vs__ground.json", "speeds/onboard.csv", "manifest.json"):
        assert (out / f).is_file(), f
    run = json.loads((out / "runs/onboard-n.json").read_text())
    assert run["run"]["reference"].startswith("free-stream static")
    assert {"cp_std", "cp_se", "cp_se_ar1"} <= set(run["taps"][0])
    # Results folder again: allowed (it is ours); into the sheet's folder: refused, inputs untouched.
    assert run_cli("run", path, "--out", out, "--quiet", "--no-plot").returncode == 0
    before = path.read_text()
    r = run_cli("run", path, "--out", tmp_path, "--quiet")
    assert r.returncode == 2 and "refusing" in r.stderr and path.read_text() == before
    # A sheet mistake through the real command line: one line, exit 2, no traceback.
    path.write_text(before.replace("speed = 30.0\n", "speed = -30.0\n"))
    r = run_cli("run", path, "--quiet", "--out", tmp_path / "o")
    assert r.returncode == 2 and r.stderr == "meshpress: error: sheet.toml: runs[3].speed: must be positive\n"
    path.write_text(before)
    # diff of two result files
    a, b = out / "configurations/onboard.json", out / "configurations/ground.json"
    r = run_cli("diff", a, b, "--json", tmp_path / "d.json")
    assert r.returncode == 0, r.stderr
    d = json.loads((tmp_path / "d.json").read_text())
    ca, cb = json.loads(a.read_text()), json.loads(b.read_text())
    assert d["delta"]["CL"] == pytest.approx(cb["CL"] - ca["CL"])
    assert d["faces"]["count"] > 0 and (tmp_path / "d.faces.npy").is_file()


MISTAKES = [
    # (change to the sheet, text expected in the one-line error)
    (lambda s: s.replace('readings = "north.csv"\nq_column = "q"\n[[runs]]\nname = "onboard-s"',
                         'readings = "missing.csv"\nq_column = "q"\n[[runs]]\nname = "onboard-s"'),
     "runs[1].readings: file 'missing.csv' does not exist"),
    (lambda s: s.replace("[air]\n", "[air]\nhumidity = 3\n"), "air.humidity: unknown key"),
    (lambda s: s.replace("speed = 30.0\n", "speed = -30.0\n"), "runs[3].speed: must be positive"),
    (lambda s: s.replace('ignore_columns = ["q"]\n[[runs]]\nname = "ground-s"',
                         '[[runs]]\nname = "ground-s"'), "column 'q' is not a tap of the layout"),
    (lambda s: s.replace('mesh = "ball.stl"', 'mesh = "ball.obj"'), "vehicle.mesh: file 'ball.obj' does not exist"),
    (lambda s: s.replace('q_column = "q"\nreference', 'q_column = "q"\nspeed = 3\nreference'),
     "runs[5].q_column: give only one of"),
]


def test_sheet_mistakes_give_one_line_errors(tmp_path, capsys):
    # In-process through the CLI entry point (the subprocess path is covered in test_cli_run_writes_results_and_diff).
    from meshpress.cli import main

    path, names, _ = make_test(tmp_path)
    good = path.read_text()
    # A readings file naming a tap that is not in the layout.
    (tmp_path / "bad.csv").write_text((tmp_path / "north.csv").read_text().replace("T05", "T99", 1))
    cases = MISTAKES + [(lambda s: s.replace('readings = "north.csv"\nq_column = "q"\nreference',
                                             'readings = "bad.csv"\nq_column = "q"\nreference'),
                         "runs[5].readings: bad.csv: column 'T99' is not a tap of the layout")]
    for change, text in cases:
        bad = change(good)
        assert bad != good, text
        path.write_text(bad)
        code = main(["run", str(path), "--quiet", "--out", str(tmp_path / "o")])
        err = capsys.readouterr().err
        assert code == 2, (text, err)
        assert err.startswith("meshpress: error: sheet.toml: "), err
        assert text in err, (text, err)
        assert len(err.strip().splitlines()) == 1
    assert not (tmp_path / "o").exists()


@pytest.mark.slow
def test_invented_example_end_to_end():
    # The example's logs are made from the invented field of meshpress.bodies.samples (plus an invented wing change)
    # with noise, zero offsets, a cabin reference and an unsteady start; the known truth is that field.  The
    # change the wing makes is what a two-configuration test measures: it must come out within 0.03.
    import sys

    root = Path(__file__).resolve().parent.parent
    sys.path.insert(0, str(root / "benchmarks"))
    from bench_runs import truth

    res = process_sheet(read_sheet(root / "examples" / "sports_car_wing" / "test.toml"))
    d = res.comparisons[0]["delta"]
    tb, tw = truth(res.body, "baseline"), truth(res.body, "rear-wing")
    for k in ("CL", "CLR"):
        assert d[k] == pytest.approx(tw[k] - tb[k], abs=0.03), k
    assert d["CL"] < -0.1
    for r in res.runs:
        # The unsteady start (speed below 96 % of its final value before ~9 s by construction) is left out.
        assert r.reading.window_s[0] > 9.0
        assert r.reading.cp_ref == pytest.approx(-0.18, abs=0.005)  # the invented cabin Cp
    for c in res.configurations.values():
        assert c.spread["CL"]["range"] < 0.005


def test_excluded_tap_window_and_zero_with_speed_column(tmp_path):
    # A broken tap left out everywhere, a given window, and a zero file logged with the speed channel.
    path, names, cp = make_test(tmp_path, sheet_extra="")
    text = path.read_text().replace('max_distance = "30 mm"', 'max_distance = "30 mm"\nexclude = ["T05"]')
    t = np.arange(0, 30, 0.1)
    v = np.where(t < 10, 10.0, 25.0)
    q = 0.5 * RHO_Q * v**2
    off = np.linspace(-5, 5, len(names))
    write_csv(tmp_path / "spd.csv", {"time": t, "v": v, **{n: c * q + o for n, c, o in zip(names, cp, off)}})
    write_csv(tmp_path / "spd0.csv", {"time": t[:20], "v": 0 * t[:20], **{n: np.full(20, o) for n, o in
                                                                          zip(names, off)}})
    text += ('\n[[runs]]\nname = "logged"\nconfiguration = "logged"\nreadings = "spd.csv"\nzero = "spd0.csv"\n'
             'speed_column = "v"\nwindow = [12.0, 28.0]\n')
    path.write_text(text)
    res = process_sheet(read_sheet(path))
    r = res.runs[-1]
    keep = [i for i, n in enumerate(names) if n != "T05"]
    assert list(res.taps.names) == [names[i] for i in keep]
    assert r.reading.window_s == (12.0, 28.0) and r.reading.samples == 161
    assert r.reading.cp == pytest.approx(cp[keep], abs=1e-9)


def test_sheet_without_axles_or_static_loads(tmp_path):
    from meshpress.commands.run import format_test

    path, _, _ = make_test(tmp_path)
    text = path.read_text().replace("front_axle = -0.6\nrear_axle = 0.6\n", "")
    text = text.replace('[vehicle.static_load]\nunit = "N"\nfront_axle = 3000\nrear_axle = 3000\n', "")
    path.write_text(text)
    res = process_sheet(read_sheet(path))
    c = res.configurations["onboard"]
    assert c.load.CLF is None and c.speeds is not None and "front_axle_load_N" not in c.speeds
    assert "n/a" in format_test(res)


SIGMA = 0.02  # sd of the invented per-sample Cp noise
DZ = 0.05  # the second configuration's Cp is the first's plus DZ * z


def make_noisy_test(tmp: Path, bands_table=""):
    """Two configurations on the sphere 'car', two runs each, white noise of sd SIGMA on every sample's Cp."""
    import trimesh

    v, f = icosphere(3, 1.0, (0.0, 0.0, 1.0))
    trimesh.Trimesh(v, f, process=False).export(tmp / "ball.stl")
    pts = fib_sphere(40) + [0, 0, 1.0]
    names = [f"T{i:02d}" for i in range(40)]
    (tmp / "layout.csv").write_text("tap,x,y,z\n" + "\n".join(f"{n},{x},{y},{z}" for n, (x, y, z) in
                                                               zip(names, pts)) + "\n")
    rng = np.random.default_rng(11)
    q = 600.0
    t = np.arange(0, 30, 0.1)
    runs = ""
    for config, cp in (("plain", true_cp(pts)), ("shifted", true_cp(pts) + DZ * pts[:, 2])):
        for d in ("north", "south"):
            noisy = cp[None, :] + rng.normal(0, SIGMA, (len(t), len(cp)))
            write_csv(tmp / f"{config}_{d}.csv", {"time": t, "q": np.full(len(t), q),
                                                  **{n: noisy[:, i] * q for i, n in enumerate(names)}})
            runs += (f'[[runs]]\nname = "{config}-{d}"\nconfiguration = "{config}"\nreadings = "{config}_{d}.csv"\n'
                     'q_column = "q"\nwindow = "all"\n')
    sheet = f"""title = "noisy sphere"
[vehicle]
mesh = "ball.stl"
front_axle = -0.6
rear_axle = 0.6
[taps]
layout = "layout.csv"
max_distance = "30 mm"
[air]
temperature_C = 20
pressure = "1013.25 hPa"
{runs}
{bands_table}
"""
    (tmp / "sheet.toml").write_text(sheet)
    return tmp / "sheet.toml", len(t)


def test_sheet_bands_from_the_readings_standard_errors(tmp_path):
    import trimesh

    path, n_samples = make_noisy_test(tmp_path, "[uncertainty]\nbands = true\npatches = 400\n")
    res = process_sheet(read_sheet(path))
    c = res.configurations["plain"]
    # Standard error of the mean of n independent samples, sigma / sqrt(n), and of the mean of two independent
    # run means, sigma / sqrt(2 n) (common practice; any statistics text).  The sample sd of 300 samples is
    # within about 4 % of sigma; the lag-1 correction can only raise it.
    expect = SIGMA / np.sqrt(2 * n_samples)
    ratio = np.median(c.errors.random_u) / expect
    assert 0.95 < ratio < 1.12
    assert np.all(c.errors.systematic_u == 0)
    b = c.bands.band("CL")
    assert b.u_measurement > 0 and b.u > b.u_measurement
    # The change: Cp + DZ z on a closed body changes the lift force by -DZ x volume (divergence theorem).
    vol = trimesh.Trimesh(*icosphere(3, 1.0, (0.0, 0.0, 1.0))).volume
    ch = res.changes[0]
    assert (ch.base_label, ch.other_label) == ("plain", "shifted")
    truth = -DZ * vol / c.load.ref_area_m2
    cl = ch.band("CL")
    assert cl.lo95 <= truth <= cl.hi95
    # What the taps miss is common to both runs and cancels: the change's sampling part is a small fraction of
    # each run's, and its whole band narrower than either run's.
    runs_cl = [c.bands.band("CL"), res.configurations["shifted"].bands.band("CL")]
    assert cl.u_sampling < 0.3 * min(b.u_sampling for b in runs_cl)
    assert cl.u < 0.5 * min(b.u for b in runs_cl)
    assert res.comparisons[0]["change"]["figures"]["CL"]["value"] == cl.value
    # q differs between configurations in general: the change has coefficients only
    assert "lift_N" not in ch.names and "lift_N" in c.bands.names


def test_sheet_sensor_accuracy_is_common_to_a_configurations_runs(tmp_path):
    # +/- 3 Pa rectangular (GUM 4.3.7) on q = 600 Pa: u = 3 / sqrt(3) / 600 in Cp, not reduced by averaging runs
    path, _ = make_noisy_test(tmp_path, '[uncertainty]\nsensor_accuracy = "0.3 %"\nfull_scale = "1 kPa"\n'
                                        "error_correlation = 0.5\npatches = 300\n")
    sheet = read_sheet(path)
    assert sheet.bands.sensor_u_Pa == pytest.approx(3.0 / np.sqrt(3)) and sheet.bands.enabled is None
    res = process_sheet(sheet, bands=False)
    assert res.changes == [] and res.configurations["plain"].bands is None
    from meshpress.sheets.bands import configuration_errors

    e = configuration_errors(res.configurations["plain"].runs, sheet.bands.sensor_u_Pa)
    assert np.allclose(e.systematic_u, 3.0 / np.sqrt(3) / 600.0)


@pytest.mark.slow
def test_cli_run_bands_outputs(tmp_path):
    path, _ = make_noisy_test(tmp_path, "[uncertainty]\npatches = 300\n")
    out = tmp_path / "res"
    r = run_cli("run", path, "--out", out, "--quiet", "--no-plot", "--bands")
    assert r.returncode == 0, r.stderr
    assert "bands (kriging along the surface" in r.stdout and "more downforce coefficient" in r.stdout
    rows = list(csv.DictReader(open(out / "bands.csv")))
    assert {(x["item"], x["other"]) for x in rows} == {("configuration", "plain"), ("configuration", "shifted"),
                                                       ("change", "shifted")}
    conf = json.loads((out / "configurations/plain.json").read_text())
    assert conf["uncertainty"]["CL_lo95"] < conf["uncertainty"]["CL"] < conf["uncertainty"]["CL_hi95"]
    # the default field is the bands' own model: each configuration's figure is its band's centre, with no
    # second "field" figure and so no "outside the band" line
    for name in ("plain", "shifted"):
        doc = json.loads((out / f"configurations/{name}.json").read_text())
        u = doc["uncertainty"]
        assert u["uncertainty_budget"]["CL"]["field_value"] is None
        assert u["CL"] == pytest.approx(doc["CL"], rel=1e-7, abs=1e-9)
        assert f"  {name}: the " not in r.stdout
    assert "u_random" in conf["configuration"]["tap_cp"][0]
    comp = json.loads((out / "comparisons/plain__vs__shifted.json").read_text())
    assert comp["change"]["figures"]["CL"]["u"] > 0
    assert json.loads((out / "test.json").read_text())["bands"]["seconds"] > 0
    assert "bands.csv" in json.loads((out / "manifest.json").read_text())["files"]
    # with --no-bands the folder has no bands
    r = run_cli("run", path, "--out", out, "--quiet", "--no-plot", "--no-bands")
    assert r.returncode == 0 and not (out / "bands.csv").exists()


def test_sheet_uncertainty_mistakes(tmp_path, capsys):
    from meshpress.cli import main

    cases = [("[uncertainty]\nbands = \"yes\"\n", "uncertainty.bands: 'yes' must be true or false"),
             ("[uncertainty]\nsensor_accuracy = \"0.25 %\"\n", "uncertainty.sensor_accuracy: a percentage needs"),
             ("[uncertainty]\nerror_correlation = 1.5\n", "uncertainty.error_correlation: must be between 0 and 1"),
             ("[uncertainty]\npatch = 300\n", "uncertainty.patch: unknown key"),
             ("[uncertainty]\nkernel = \"gauss\"\n", "uncertainty.kernel: 'gauss' is not one of")]
    for table, text in cases:
        path, _ = make_noisy_test(tmp_path, table)
        assert main(["run", str(path), "--quiet", "--out", str(tmp_path / "o")]) == 2
        err = capsys.readouterr().err
        assert text in err and len(err.strip().splitlines()) == 1, err


@pytest.mark.slow
def test_invented_example_change_band_is_narrower_than_a_configurations():
    # What the same 57 taps miss of the (invented) field is common to both configurations: the change's band
    # must come out well below either configuration's own (docs/uncertainty.md measures how far, and where the
    # change's band is too narrow).  CD's own band is mostly the nose, which the stagnation prior already pins
    # down in each configuration (0.099 -> 0.061 with it), so less is left to cancel there: CD's change band is
    # half its own (0.53), the lift figures' under a third.
    root = Path(__file__).resolve().parent.parent
    res = process_sheet(read_sheet(root / "examples" / "sports_car_wing" / "test.toml"), bands=True)
    ch = res.changes[0]
    for k, most in (("CL", 0.5), ("CLF", 0.5), ("CLR", 0.5), ("CD", 0.75)):
        own = min(c.bands.band(k).u for c in res.configurations.values())
        assert ch.band(k).u < most * own, k
    # The example's logs (scripts/make_example.py) have a tap noise of 3 Pa at 10 Hz, about 600 samples per
    # window and q of 533-813 Pa: each run's standard error of the mean Cp is of order 3 / q / sqrt(600), about
    # 1.7e-4 to 2.6e-4, and the mean of two runs about 1.6e-4 before the zeros' standard errors are added.
    u = res.configurations["baseline"].errors.random_u
    assert 2e-5 < np.median(u) < 1e-3


def test_default_method_runs_average_to_their_configuration(tmp_path):
    # The posterior mean is linear in the readings once its hyperparameters are fixed (Rasmussen and Williams 2006,
    # eq. 2.25), so runs taken through their configuration's fitted model average to the configuration's figure,
    # as they do for any linear field method; and the configuration's figure is its band's centre.
    path, _ = make_noisy_test(tmp_path, "[uncertainty]\npatches = 300\n")
    res = process_sheet(read_sheet(path))
    for c in res.configurations.values():
        assert c.load.method.startswith("posterior") and c.bands is not None
        for k in ("CL", "CD", "CLF", "CLR"):
            runs_mean = np.mean([getattr(r.load, k) for r in c.runs])
            assert runs_mean == pytest.approx(getattr(c.load, k), rel=1e-9, abs=1e-12)
            assert c.bands.band(k).value == pytest.approx(getattr(c.load, k), rel=1e-7, abs=1e-9)


@pytest.mark.slow
def test_run_report_puts_every_configuration_and_change_on_one_page(tmp_path):
    # The page carries the same figures as the results folder (one model: each configuration's figure is its band's
    # centre), the change with its band, one change map per comparison and the speed plot; it is self-contained
    # (a Content-Security-Policy that allows no fetch, images as data URIs: HTML Living Standard, CSP Level 3).
    path, _ = make_noisy_test(tmp_path, "[uncertainty]\npatches = 300\n")
    out = tmp_path / "res"
    r = run_cli("run", path, "--out", out, "--report", out, "--quiet", "--no-plot")
    assert r.returncode == 0, r.stderr
    page = (out / "report.html").read_text()
    assert "default-src 'none'" in page and "http://" not in page and "https://" not in page
    for name in ("plain", "shifted"):
        conf = json.loads((out / f"configurations/{name}.json").read_text())
        u = conf["uncertainty"]
        assert f"{conf['CL']:+.3f} &plusmn; {u['CL_u']:.3f}" in page
    comp = json.loads((out / "comparisons/plain__vs__shifted.json").read_text())["change"]["figures"]["CL"]
    assert f"{comp['value']:+.3f} &plusmn; {comp['u']:.3f}" in page
    assert page.count('alt="change of Cp: shifted vs plain"') == 1
    bad = run_cli("run", path, "--out", tmp_path / "r2", "--report", path, "--quiet")
    assert bad.returncode == 2 and "is a file" in bad.stderr
