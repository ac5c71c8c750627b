"""Benchmark: `meshpress loads` on a ~1-million-face body with 200 taps, against the plain approach.

The plain approach is what one would write by hand: trimesh.load, scipy's
RBFInterpolator (thin-plate spline) evaluated at every face centre, and a numpy
sum of -p n dA.  Both run in this one run on the same files; the script prints
both times, their ratio, every lift against the exact one (the invented field of
``meshpress.bodies.samples`` integrated over the same faces by the midpoint
rule), the default's 95 % band of the lift, meshpress's peak memory, the step
times of one default run (``MESHPRESS_TIMINGS``) and the load average.
``--profile`` adds where the default's time goes, from pyinstrument, in this
interpreter.

Usage: python benchmarks/bench_loads_1m.py [--workdir DIR] [--stations 2500 --around 200] [--repeat 3]
[--profile]
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def make_case(workdir: Path, stations: int, around: int, n_taps: int = 200, seed: int = 11):
    import trimesh

    from meshpress.bodies import samples

    mesh_path, taps_path = workdir / f"car_{stations}x{around}.stl", workdir / f"taps_{n_taps}.csv"
    if mesh_path.exists() and taps_path.exists():
        return mesh_path, taps_path
    v, f = samples.car_body(stations, around)
    m = trimesh.Trimesh(v, f, process=False)
    m.export(mesh_path)
    rng = np.random.default_rng(seed)
    fid = rng.choice(len(f), n_taps, replace=False, p=m.area_faces / m.area)
    pts = m.triangles_center[fid]
    cp = samples.car_cp(pts, m.face_normals[fid])
    q = 0.5 * 1.225 * 30.0**2
    lines = ["tap,x,y,z,p"] + [f"T{i},{p[0]:.6f},{p[1]:.6f},{p[2]:.6f},{c * q:.4f}" for i, (p, c) in enumerate(zip(pts, cp))]
    taps_path.write_text("\n".join(lines) + "\n")
    return mesh_path, taps_path


PLAIN = """
import sys, time, json
import numpy as np, pandas as pd, trimesh
from scipy.interpolate import RBFInterpolator
m = trimesh.load(sys.argv[1])
taps = pd.read_csv(sys.argv[2])
rbf = RBFInterpolator(taps[["x", "y", "z"]].to_numpy(), taps["p"].to_numpy(), kernel="thin_plate_spline")
p = rbf(m.triangles_center)
F = -(p[:, None] * m.face_normals * m.area_faces[:, None]).sum(axis=0)
print(json.dumps({"lift_N": float(F[2]), "faces": len(m.faces)}))
"""


def exact_lift(stations: int, around: int, q: float = 551.25) -> float:
    """Lift (N) of the invented Cp field on the body's own faces: -q sum Cp(c) n_z A (midpoint rule).

    On 1M faces the rule has converged: the 2,500 x 200 and 1,000 x 500 bodies agree within 0.003 %.
    """
    from meshpress.bodies import samples

    v, f = samples.car_body(stations, around)
    t = v[f]
    a2 = np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0])
    area = 0.5 * np.linalg.norm(a2, axis=1)
    n = a2 / (2.0 * area[:, None])
    return float(-(q * samples.car_cp(t.mean(axis=1), n) * n[:, 2] * area).sum())


def _timed(cmd, env=None):
    """Wall and CPU seconds (user + sys of the child), peak RSS (MiB) and stdout of one subprocess."""
    before = os.times()
    t0 = time.perf_counter()
    r = subprocess.run(cmd, capture_output=True, text=True, env=env)
    wall = time.perf_counter() - t0
    after = os.times()
    if r.returncode:
        raise SystemExit(r.stderr)
    cpu = (after.children_user - before.children_user) + (after.children_system - before.children_system)
    return wall, cpu, r.stdout


def plain(mesh_path, taps_path):
    """The plain approach, in its own interpreter (start-up included, as for meshpress)."""
    wall, cpu, out = _timed([sys.executable, "-c", PLAIN, str(mesh_path), str(taps_path)])
    d = json.loads(out)
    return wall, cpu, d["lift_N"], d["faces"]


#: The two meshpress runs measured: the default (posterior field with its bands) and the fast path.
VARIANTS = {"default, with bands": [], "rbf, no bands": ["--method", "rbf", "--no-bands"]}


def _loads_args(mesh_path, taps_path, out, extra=()):
    return ["loads", str(mesh_path), str(taps_path), "--q", "551.25", "--front-axle", "0.85", "--rear-axle", "3.45",
            "--max-tap-distance", "0.05", "--json", str(out), "--quiet", *extra]


def ours(mesh_path, taps_path, out, extra=()):
    """Wall and CPU seconds of one `meshpress loads` in its own interpreter, and its JSON."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    wall, cpu, _ = _timed([sys.executable, "-m", "meshpress", *_loads_args(mesh_path, taps_path, out, extra)], env)
    return wall, cpu, json.loads(Path(out).read_text())


def peak_rss_mib(mesh_path, taps_path, out, extra=()):
    """Peak resident memory (MiB) of one meshpress run, from getrusage in the run's own interpreter."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    cmd = [sys.executable, "-c", "import resource, runpy, sys; sys.argv = sys.argv[1:]; "
           "sys.argv[0] = 'meshpress'\ntry:\n    runpy.run_module('meshpress', run_name='__main__')\n"
           "except SystemExit:\n    pass\n"
           "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, file=sys.stderr)",
           "meshpress", *_loads_args(mesh_path, taps_path, out, extra)]
    r = subprocess.run(cmd, capture_output=True, text=True, env=env)
    return int(r.stderr.strip().splitlines()[-1]) / 1024


def step_times(mesh_path, taps_path, out):
    """The `[timing]` lines of one default run (MESHPRESS_TIMINGS=1)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), MESHPRESS_TIMINGS="1")
    r = subprocess.run([sys.executable, "-m", "meshpress", *_loads_args(mesh_path, taps_path, out)],
                       capture_output=True, text=True, env=env)
    return [line for line in r.stderr.splitlines() if line.startswith("[timing]")]


#: Stages of the default run reported by --profile: (label, function name, end of its file path).
STAGES = [("reading, cleaning, orienting", "load_body", "bodies/body.py"),
          ("tap projection", "project_taps", "taps/projection.py"),
          ("carrier: simplification", "coarsen", "bands/coarsen.py"),
          ("carrier: heat-method factorisation", "__init__", "bodies/geodesic.py"),
          ("carrier: distances (one solve per vertex)", "from_vertex", "bodies/geodesic.py"),
          ("carrier: face matrix", "points_matrix_idw", "bands/patches.py"),
          ("Laplace-Beltrami spectrum", "spectrum", "bands/patches.py"),
          ("Gaussian-process fit", "fit", "bands/kriging.py"),
          ("field on the faces", "face_values", "fields/base.py"),
          ("bands", "compute_uncertainty", "bands/uncertainty.py")]


def profile(mesh_path, taps_path, out):
    """Seconds per stage of one default run in this interpreter, from pyinstrument (outermost calls summed)."""
    from pyinstrument import Profiler

    from meshpress.cli import main as cli_main

    import contextlib
    import io

    prof = Profiler(interval=0.002)
    t0 = time.perf_counter()
    prof.start()
    with contextlib.redirect_stdout(io.StringIO()):  # the table; --quiet only silences progress
        cli_main(_loads_args(mesh_path, taps_path, out))
    prof.stop()
    total = time.perf_counter() - t0
    found = dict.fromkeys((s[0] for s in STAGES), 0.0)

    def walk(frame):
        for label, fn, path in STAGES:
            if frame.function == fn and (frame.file_path or "").replace(os.sep, "/").endswith(path):
                found[label] += frame.time
                return  # outermost only: a stage's own inner calls are not counted twice
        for child in frame.children:
            walk(child)

    walk(prof.last_session.root_frame())
    return total, found


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workdir", default="/tmp/meshpress-bench")
    ap.add_argument("--stations", type=int, default=2500)
    ap.add_argument("--around", type=int, default=200)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--profile", action="store_true", help="also time the default's stages with pyinstrument")
    a = ap.parse_args()
    wd = Path(a.workdir)
    wd.mkdir(parents=True, exist_ok=True)
    mesh_path, taps_path = make_case(wd, a.stations, a.around)
    load = lambda: " ".join(f"{x:.2f}" for x in os.getloadavg())  # noqa: E731
    print("load average (1, 5, 15 min) at the start:", load())
    exact = exact_lift(a.stations, a.around)
    rows = {**{k: [] for k in VARIANTS}, "plain": []}
    res = {}
    for _ in range(a.repeat):  # alternate, so all see the same machine load
        for k, extra in VARIANTS.items():
            w, c, res[k] = ours(mesh_path, taps_path, wd / "out.json", extra)
            rows[k].append((w, c))
        w, c, lift_plain, n = plain(mesh_path, taps_path)
        rows["plain"].append((w, c))
    peaks = {k: peak_rss_mib(mesh_path, taps_path, wd / "out2.json", extra) for k, extra in VARIANTS.items()}
    best = {k: (min(x[0] for x in v), min(x[1] for x in v)) for k, v in rows.items()}
    pct = lambda x: f"{100 * (x / exact - 1):+.2f} % from exact"  # noqa: E731
    print(f"faces: {n:,}  taps: 200  runs: {a.repeat} each, alternating; best of the runs")
    print(f"exact lift (invented field, midpoint rule on the faces): {exact:10.3f} N")
    print(f"plain (trimesh.load + RBFInterpolator at face centres + sum): wall {best['plain'][0]:6.2f} s  "
          f"cpu {best['plain'][1]:6.2f} s  lift {lift_plain:10.3f} N ({pct(lift_plain)})")
    for k in VARIANTS:
        lift = res[k]["lift_N"]
        print(f"meshpress loads, {k} (file -> JSON, own interpreter): wall {best[k][0]:6.2f} s  cpu {best[k][1]:6.2f} s"
              f"  lift {lift:10.3f} N ({pct(lift)}; {100 * (lift / lift_plain - 1):+.3f} % from plain)"
              f"  wall / plain {best[k][0] / best['plain'][0]:.2f}  peak RSS {peaks[k]:,.0f} MiB")
        u = res[k].get("uncertainty")
        if u:
            inside = "inside" if u["lift_N_lo95"] <= exact <= u["lift_N_hi95"] else "OUTSIDE"
            print(f"    lift u {u['lift_N_u']:.1f} N, 95 % band [{u['lift_N_lo95']:.1f}, {u['lift_N_hi95']:.1f}] N: "
                  f"exact {inside}, {(u['lift_N'] - exact) / u['lift_N_u']:+.2f} u off; method: {res[k]['method']}")
    print("step times of one default run:", "; ".join(x[len("[timing] "):] for x in step_times(
        mesh_path, taps_path, wd / "out3.json")))
    if a.profile:
        total, stages = profile(mesh_path, taps_path, wd / "out4.json")
        print(f"default run in this interpreter under pyinstrument: {total:.2f} s, of which")
        for label, sec in stages.items():
            print(f"    {label:44s} {sec:6.2f} s")
    print("load average (1, 5, 15 min) at the end:", load())


if __name__ == "__main__":
    main()
