"""Benchmark: two loader steps on the 5,000,000-face scan of bench_scan_5m, old code against new, in one run.

The steps are the vertex merge and duplicate-face check of ``meshpress.bodies.cleaning.clean`` (the old code fell
back to ``np.unique(axis=0)`` for the duplicate faces above 2^21 vertices; the new one groups the rows with two
hashed int64 keys) and the search for shells inside the body, ``meshpress.bodies.inner.inner_shells`` (the old code
summed the winding number over every face of the skin at every sample point; the new one sums the faces near the
point exactly, the far ones by grid cell with a bound on the error, and the whole skin only where the bound does
not settle the answer).  The old functions are kept below, copied from the commit before the change.

The case is bench_scan_5m's scan-like STL (all of it **invented**: the car-like body of
``samples.car_body(even=True)`` at 1,667 x 1,500 sections in mm as a triangle soup, 0.5 mm noise, 3 % of the faces
flipped, four holes and three closed interior shells; 5,014,047 faces), built by that script's generator in
``--workdir`` (reused when already there) and read with meshpress's reader.  The inputs of the shell search are
made as ``load_body`` makes them (metres, orientation by ``orient``), without its rotation to the vehicle frame and
shift of the origin, which move no point across the skin.

Each step runs old and new alternately ``--repeat`` times on the same arrays (default 2); each time is the best of
its runs.  The script checks that old and new give the same results (every array of ``clean``'s output equal; the
same shells found), prints the times and ratios, and records them with
``results.record("bench_mesh_steps", SIZE, summary)``.  Set ``OPENBLAS_NUM_THREADS=1`` on the 2-core machine.

Usage: python benchmarks/bench_mesh_steps.py [--size 5m|1m|20k] [--workdir DIR] [--repeat 2] [--no-record]
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(HERE))

import bench_scan_5m as scan  # noqa: E402

from meshpress.bodies import orient  # noqa: E402
from meshpress.bodies.cleaning import clean  # noqa: E402
from meshpress.bodies.grouping import group  # noqa: E402
from meshpress.bodies.inner import inner_shells  # noqa: E402
from meshpress.bodies.readers import read_parts  # noqa: E402
from meshpress.errors import InputError  # noqa: E402
from meshpress.tolerances import TOL  # noqa: E402


# ------------------------------------------------------------------------- the old code (commit 5484765), copied
def old_clean(v: np.ndarray, f: np.ndarray):
    n0, m0 = len(v), len(f)
    if f.min() < 0 or f.max() >= n0:
        raise InputError("mesh faces refer to vertices that do not exist")
    lo = v.min(axis=0)
    span = float((v.max(axis=0) - lo).max()) or 1.0
    q = ((v - lo) * (10.0**TOL.merge_digits / span) + 0.5).astype(np.int64)
    key = (q[:, 0] << 42) | (q[:, 1] << 21) | q[:, 2]
    inv, first, _, _ = group(key)
    v = v[first]
    f = inv[f]
    merged = n0 - len(v)
    rep = (f[:, 0] == f[:, 1]) | (f[:, 1] == f[:, 2]) | (f[:, 2] == f[:, 0])
    t = v[f]
    cr = np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0])
    area = 0.5 * np.sqrt(np.einsum("ij,ij->i", cr, cr))
    med = np.median(area[~rep]) if np.any(~rep) else 0.0
    keep = ~rep & (area > TOL.degenerate_area_rel * med)
    f, cr = f[keep], cr[keep]
    sf = np.sort(f, axis=1)
    n = int(sf.max()) + 1
    if n < 2**21:
        _, uniq, _, _ = group((sf[:, 0] * n + sf[:, 1]) * n + sf[:, 2])
    else:
        _, uniq = np.unique(sf, axis=0, return_index=True)
    uniq = np.sort(uniq)
    f, cr = f[uniq], cr[uniq]
    if len(f) == 0:
        raise InputError("the mesh has no faces left after dropping degenerate ones")
    used = np.zeros(len(v), dtype=bool)
    used[f.ravel()] = True
    remap = np.cumsum(used) - 1
    v, f = v[used], remap[f]
    kept = np.flatnonzero(keep)[uniq]
    return v, f, 0.5 * cr, merged, m0 - len(f), kept


def old_winding_number(points, triangles, *, chunk: int = 200_000) -> np.ndarray:
    pts = np.asarray(points, float)
    out = np.zeros(len(pts))
    for s in range(0, len(triangles), chunk):
        t = np.asarray(triangles[s:s + chunk], float)
        for i, p in enumerate(pts):
            a, b, c = t[:, 0] - p, t[:, 1] - p, t[:, 2] - p
            la, lb, lc = (np.linalg.norm(x, axis=1) for x in (a, b, c))
            num = np.einsum("ij,ij->i", a, np.cross(b, c))
            den = (la * lb * lc + np.einsum("ij,ij->i", a, b) * lc + np.einsum("ij,ij->i", b, c) * la
                   + np.einsum("ij,ij->i", c, a) * lb)
            out[i] += 2.0 * np.arctan2(num, den).sum()
    return out / (4.0 * np.pi)


def old_inner_shells(component, triangles, areas, *, samples: int = 7, threshold: float = 0.5) -> np.ndarray:
    comps, inv = np.unique(component, return_inverse=True)
    if len(comps) < 2:
        return np.zeros(0, dtype=component.dtype)
    a = np.bincount(inv, areas, len(comps))
    main = int(np.argmax(a))
    main_tri = triangles[inv == main]
    lo, hi = main_tri.reshape(-1, 3).min(axis=0), main_tri.reshape(-1, 3).max(axis=0)
    found = []
    for k in range(len(comps)):
        if k == main:
            continue
        v = triangles[inv == k].reshape(-1, 3)
        if np.any(v.min(axis=0) < lo) or np.any(v.max(axis=0) > hi):
            continue
        pick = [int(np.argmin(v[:, j])) for j in range(3)] + [int(np.argmax(v[:, j])) for j in range(3)]
        centre = v.mean(axis=0)
        pick.append(int(np.argmin(np.linalg.norm(v - centre, axis=1))))
        pts = v[np.unique(pick)[:samples]]
        if np.all(old_winding_number(pts, main_tri) > threshold):
            found.append(comps[k])
    return np.asarray(found, dtype=component.dtype)


# ---------------------------------------------------------------------------------------------------- the run
def shell_inputs(v, f, av, scale=1e-3):
    """Shell labels, outward-wound triangles (m) and face areas, as load_body gives them to inner_shells."""
    fa, fb, same_dir, _, _ = orient.edge_pairs(f)
    flip, part, _ = orient.consistent_flip(f, fa, fb, same_dir)
    av = (scale * scale) * av
    tri = (scale * v)[f]
    av[flip] *= -1.0
    out = orient.outward_flip(tri.mean(axis=1), av, part)
    total = flip ^ out
    av[out] *= -1.0
    tri[total] = tri[total][:, ::-1]
    return part, tri, np.linalg.norm(av, axis=1)


def timed(fn, *args):
    t0 = time.perf_counter()
    out = fn(*args)
    return time.perf_counter() - t0, out


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", default="5m", choices=sorted(scan.SIZES))
    ap.add_argument("--workdir", default="/tmp/meshpress-scan")
    ap.add_argument("--repeat", type=int, default=2)
    ap.add_argument("--no-record", action="store_true")
    a = ap.parse_args()
    wd = Path(a.workdir)
    wd.mkdir(parents=True, exist_ok=True)
    load = lambda: [round(x, 2) for x in os.getloadavg()]  # noqa: E731
    mesh_path, info = scan.make_case(wd, a.size, scan.make_layout(wd)[1])
    v0, f0, _, _ = read_parts(mesh_path)
    print(f"{mesh_path}: {len(f0):,} faces, {len(v0):,} soup vertices", flush=True)
    from results import code_version

    commit = code_version()
    print("meshpress at", commit)
    group(np.arange(10))  # pandas' first import, outside the timings
    load_start = load()
    print("load average at the start:", load_start, flush=True)
    times = {"clean_old": [], "clean_new": [], "inner_old": [], "inner_new": []}
    same_clean = same_inner = True
    for rep in range(a.repeat):
        t_old, r_old = timed(old_clean, v0, f0)
        t_new, r_new = timed(clean, v0, f0)
        same_clean &= all(np.array_equal(np.asarray(x), np.asarray(y)) for x, y in zip(r_old, r_new))
        times["clean_old"].append(t_old)
        times["clean_new"].append(t_new)
        print(f"[round {rep + 1}] clean: old {t_old:.2f} s, new {t_new:.2f} s, same output {same_clean}", flush=True)
        del r_old
        if rep == 0:
            v, f, av = r_new[:3]
            part, tri, areas = shell_inputs(v, f, av)
            del v, f, av
        del r_new
        t_old, s_old = timed(old_inner_shells, part, tri, areas)
        t_new, s_new = timed(inner_shells, part, tri, areas)
        same_inner &= bool(np.array_equal(s_old, s_new))
        times["inner_old"].append(t_old)
        times["inner_new"].append(t_new)
        print(f"[round {rep + 1}] inner shells: old {t_old:.2f} s, new {t_new:.2f} s, found {s_new.tolist()} "
              f"(old {s_old.tolist()}), same {same_inner}", flush=True)
    load_end = load()
    best = {k: round(min(x), 2) for k, x in times.items()}
    ratios = {"clean": round(best["clean_old"] / best["clean_new"], 2),
              "inner": round(best["inner_old"] / best["inner_new"], 2),
              "both": round((best["clean_old"] + best["inner_old"]) / (best["clean_new"] + best["inner_new"]), 2)}
    print("load average at the end:", load_end)
    print(f"clean: old {best['clean_old']:.2f} s -> new {best['clean_new']:.2f} s, {ratios['clean']:.2f}x")
    print(f"inner shells: old {best['inner_old']:.2f} s -> new {best['inner_new']:.2f} s, {ratios['inner']:.2f}x")
    print(f"both: {ratios['both']:.2f}x")
    summary = {"date": time.strftime("%Y-%m-%d"), "commit": commit, "faces": int(len(f0)),
               "shells_in_file": int(part.max()) + 1, "shells_found": s_new.tolist(),
               "load_avg_start": load_start, "load_avg_end": load_end, "cpus": os.cpu_count(),
               "openblas_threads": os.environ.get("OPENBLAS_NUM_THREADS"), "repeat": a.repeat,
               "seconds_all": {k: [round(t, 2) for t in x] for k, x in times.items()}, "seconds_best": best,
               "ratio_old_over_new": ratios, "same_clean_output": bool(same_clean),
               "same_shells_found": bool(same_inner)}
    if not a.no_record:
        from results import record

        print("recorded in", record("bench_mesh_steps", a.size, summary))
    if not (same_clean and same_inner):
        sys.exit("old and new code disagree")


if __name__ == "__main__":
    main()
