"""Benchmark: `meshpress loads` on a ~1-million-face body with 200 taps, against the plain approach.

The plain approach is what one would write by hand: trimesh.load, scipy's
RBFInterpolator (thin-plate spline) evaluated at every face centre, and a numpy
sum of -p n dA.  Both run in this one run on the same files; the script prints
both times, their ratio, both lifts and meshpress's peak memory.

Usage: python benchmarks/bench_loads_1m.py [--workdir DIR] [--stations 2500 --around 200]
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


def ours(mesh_path, taps_path, out, extra=()):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    wall, cpu, _ = _timed([sys.executable, "-m", "meshpress", "loads", str(mesh_path), str(taps_path), "--q",
                           "551.25", "--front-axle", "0.85", "--rear-axle", "3.45", "--max-tap-distance", "0.05",
                           "--json", str(out), "--quiet", *extra], env)
    return wall, cpu, json.loads(Path(out).read_text())["lift_N"]


def peak_rss_mib(mesh_path, taps_path, out):
    """Peak resident memory of one meshpress run, from GNU time if present, else getrusage."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    cmd = [sys.executable, "-c", "import resource, runpy, sys; sys.argv = sys.argv[1:]; "
           "sys.argv[0] = 'meshpress'\ntry:\n    runpy.run_module('meshpress', run_name='__main__')\n"
           "except SystemExit:\n    pass\n"
           "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, file=sys.stderr)",
           "meshpress", "loads", str(mesh_path), str(taps_path), "--q", "551.25", "--max-tap-distance", "0.05",
           "--json", str(out), "--quiet"]
    r = subprocess.run(cmd, capture_output=True, text=True, env=env)
    return int(r.stderr.strip().splitlines()[-1]) / 1024


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workdir", default="/tmp/meshpress-bench")
    ap.add_argument("--stations", type=int, default=2500)
    ap.add_argument("--around", type=int, default=200)
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    wd = Path(a.workdir)
    wd.mkdir(parents=True, exist_ok=True)
    mesh_path, taps_path = make_case(wd, a.stations, a.around)
    rows = {**{k: [] for k in VARIANTS}, "plain": []}
    lifts = {}
    for _ in range(a.repeat):  # alternate, so all see the same machine load
        for k, extra in VARIANTS.items():
            w, c, lifts[k] = ours(mesh_path, taps_path, wd / "out.json", extra)
            rows[k].append((w, c))
        w, c, lift_plain, n = plain(mesh_path, taps_path)
        rows["plain"].append((w, c))
    peak = peak_rss_mib(mesh_path, taps_path, wd / "out2.json")
    best = {k: (min(x[0] for x in v), min(x[1] for x in v)) for k, v in rows.items()}
    print(f"faces: {n:,}  taps: 200  runs: {a.repeat} each, alternating; best of the runs")
    print(f"plain (trimesh.load + RBFInterpolator at face centres + sum): wall {best['plain'][0]:6.2f} s  "
          f"cpu {best['plain'][1]:6.2f} s  lift {lift_plain:10.3f} N")
    for k in VARIANTS:
        print(f"meshpress loads, {k} (file -> JSON, own interpreter): wall {best[k][0]:6.2f} s  cpu {best[k][1]:6.2f} s"
              f"  lift {lifts[k]:10.3f} N ({100 * (lifts[k] / lift_plain - 1):+.3f} % from plain)"
              f"  wall / plain {best[k][0] / best['plain'][0]:.2f}")
    print(f"peak RSS of the default run: {peak:,.0f} MiB")
    print("load average (1, 5, 15 min):", " ".join(f"{x:.2f}" for x in os.getloadavg()))


if __name__ == "__main__":
    main()
