"""Benchmark: `meshpress loads` on a ~1-million-face body with 200 taps, against the plain approach.

The plain approach is what one would write by hand: trimesh.load, scipy's
RBFInterpolator (thin-plate spline) evaluated at every face centre, and a numpy
sum of -p n dA.  Both run in this one run on the same files; the script prints
both times, their ratio, both lifts and meshpress's peak memory.

Usage: python scripts/bench_loads_1m.py [--workdir DIR] [--stations 2500 --around 200]
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def make_case(workdir: Path, stations: int, around: int, n_taps: int = 200, seed: int = 11):
    import trimesh

    from meshpress import samples

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


def plain(mesh_path, taps_path):
    import pandas as pd
    import trimesh
    from scipy.interpolate import RBFInterpolator

    t0 = time.perf_counter()
    m = trimesh.load(mesh_path)
    taps = pd.read_csv(taps_path)
    y = taps[["x", "y", "z"]].to_numpy()
    rbf = RBFInterpolator(y, taps["p"].to_numpy(), kernel="thin_plate_spline")
    p = rbf(m.triangles_center)
    F = -(p[:, None] * m.face_normals * m.area_faces[:, None]).sum(axis=0)
    return time.perf_counter() - t0, float(F[2]), len(m.faces)


def ours(mesh_path, taps_path, out):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "meshpress", "loads", str(mesh_path), str(taps_path), "--q", "551.25",
                        "--front-axle", "0.85", "--rear-axle", "3.45", "--max-tap-distance", "0.05", "--json",
                        str(out), "--quiet"], capture_output=True, text=True, env=env)
    dt = time.perf_counter() - t0
    if r.returncode:
        raise SystemExit(r.stderr)
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024  # MiB (Linux reports KiB)
    return dt, json.loads(Path(out).read_text())["lift_N"], peak


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workdir", default="/tmp/meshpress-bench")
    ap.add_argument("--stations", type=int, default=2500)
    ap.add_argument("--around", type=int, default=200)
    a = ap.parse_args()
    wd = Path(a.workdir)
    wd.mkdir(parents=True, exist_ok=True)
    mesh_path, taps_path = make_case(wd, a.stations, a.around)
    t_ours, lift_ours, peak = ours(mesh_path, taps_path, wd / "out.json")
    t_plain, lift_plain, n = plain(mesh_path, taps_path)
    print(f"faces: {n:,}  taps: 200")
    print(f"meshpress loads (file -> JSON, subprocess incl. start-up): {t_ours:6.1f} s  lift {lift_ours:10.2f} N  "
          f"peak RSS {peak:,.0f} MiB")
    print(f"plain (trimesh.load + RBFInterpolator at face centres + sum): {t_plain:6.1f} s  lift {lift_plain:10.2f} N")
    print(f"speed-up {t_plain / t_ours:.2f}x   lift difference {100 * (lift_ours / lift_plain - 1):+.3f} %")


if __name__ == "__main__":
    main()
