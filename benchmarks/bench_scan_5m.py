"""Benchmark: `meshpress loads` on a 5,000,000-face scan-like STL in mm, beside a 1M-face one made the same way.

Issue 17's targets for a big, messy scan: `loads` completes with peak memory under 8 GB, in no more than 5x the
time of the 1M-face case measured in the same run, and with lift within 1 % of the exact integral.

The case (all of it **invented**): the car-like body of ``meshpress.bodies.samples.car_body`` (``even=True``:
near-equilateral triangles, as a scan's are) at 1,667 x 1,500 sections (5,001,000 faces) and 745 x 671
(999,790 faces), in mm, made scan-like:

- triangle soup, as STL is: every face written with its own three vertices (float32), in a random face order;
- 0.5 mm vertex noise: every vertex of the indexed mesh moved by N(0, 0.5 mm) in each coordinate before the soup
  is written, so neighbouring faces still share the (noisy) corner as in a scanner's mesh;
- about 3 % of the faces flipped (winding and stored normal reversed);
- four holes: the faces whose centroid lies within 10 mm of four fixed points of the body are removed;
- three interior shells standing in for seats and an engine block: two closed spheres (r = 180 mm, 5,120 faces
  each) and one closed box (500 x 600 x 300 mm, 3,072 faces), wholly inside the body, with the same noise and
  flips.

From 1,500 stations up ``car_body(even=True)`` closes its last ring onto the tail point (x = LENGTH exactly), so
the 5M body has 3,000 zero-area faces; they stay in the STL, as a scan's degenerate faces would, and carry no
force in the exact integral.

Taps, the same for both sizes (drawn on the 1M clean body, so the two lifts differ by the mesh only): 200
area-random points (uniform in area) on faces more than 20 mm from the hole centres, with the **invented** Cp
field ``samples.car_cp`` (at the point, with that clean face's normal) times q = 551.25 Pa (30 m/s,
1.225 kg/m3), written in the STL's mm frame (tap, x, y, z in mm, p in Pa).

The exact lift is the integral of the invented field over the clean body of each size (noise-free, without holes
or interior shells), by the midpoint rule on its faces: -q * sum_f car_cp(c_f, n_f) (n_f A_f)_z, where c_f is
the clean face's centroid and n_f A_f its area vector.  The 1M and 5M sums agree within 0.0002 %.  The same sum
over the faces the holes keep is printed beside it, to separate what the holes cost from what the field costs;
and ``--clean`` (default: the 1M size) also runs both commands on the clean body with the same taps, which
separates the field's own error (200 taps) from the scan's.

In ONE run the script times (wall clock) and measures the peak resident memory (``os.wait4``'s ``ru_maxrss`` of
that child alone; the cases are built in child interpreters, since on Linux a child's ``ru_maxrss`` starts at its
parent's high-water mark) of ``meshpress loads`` on both files, each in its own interpreter, start-up included: the
default command (posterior field with its bands) and ``--method rbf --no-bands``.  Every run has
``MESHPRESS_TIMINGS=1``, so the step times of that same run are kept (printing them costs nothing measurable).
The machine is shared, so the whole round of runs is repeated (``--repeat``, default 3) and each time is the best
of its rounds; the peak memory is the largest.
It also reports whether the interior shells were found and left out (JSON ``mesh.inner_shells``, the "inside the
body" warning), and records the summary with ``results.record("bench_scan_5m", "default", summary)``.

Files go to ``--workdir`` (default /tmp/meshpress-scan; a case already there is reused).  Set
``OPENBLAS_NUM_THREADS=1`` on the 2-core machine.

Usage: python benchmarks/bench_scan_5m.py [--workdir DIR] [--repeat 3] [--timeout SECONDS] [--only rbf|default]
[--sizes 1m,5m] [--clean 1m] [--no-record]
"""

from __future__ import annotations

import argparse
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

#: Sections (stations, points around) of each size: n_around about 0.9 n_stations gives near-equilateral faces.
SIZES = {"1m": (745, 671), "5m": (1667, 1500), "20k": (100, 90)}  # 20k: a quick check of the script
Q_PA = 0.5 * 1.225 * 30.0**2  # 551.25 Pa, stated
NOISE_MM = 0.5
FLIP_SHARE = 0.03
HOLES, HOLE_RADIUS_MM = 4, 10.0
N_TAPS = 200
SEED = 17
#: The two meshpress runs: the default (posterior field with its bands) and the fast path.
VARIANTS = {"default": [], "rbf": ["--method", "rbf", "--no-bands"]}


# ---------------------------------------------------------------------------------------------------- the case
def _area_vectors(tri):
    return 0.5 * np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])


def _inside_body(points_m) -> np.ndarray:
    """(p,) bool: strictly inside the clean body, from its closed-form sections (superellipse, exponent 3.2)."""
    from meshpress.bodies import samples

    x, y, z = np.asarray(points_m, float).T
    zc, a, b = samples._sections(x)
    ok = (x > 0) & (x < samples.LENGTH)
    return ok & (np.abs(y / a) ** 3.2 + np.abs((z - zc) / b) ** 3.2 < 1.0)


def interior_shells():
    """Three closed shells inside the body, m: two seats (spheres) and an engine block (a box)."""
    import trimesh

    shells = []
    for y in (-0.38, 0.38):
        s = trimesh.creation.icosphere(subdivisions=4, radius=0.18)
        shells.append((s.vertices + [2.1, y, 0.50], s.faces))
    box = trimesh.creation.box(extents=(0.5, 0.6, 0.3))
    for _ in range(4):
        box = box.subdivide()
    shells.append((box.vertices + [0.9, 0.0, 0.45], box.faces))
    for v, _ in shells:
        assert _inside_body(v).all(), "an interior shell pokes out of the body"
    return shells


def write_stl_soup(path: Path, tri_mm) -> None:
    """Binary STL of (m, 3, 3) triangles (mm), each with its own vertices and its winding's normal."""
    tri = np.asarray(tri_mm, np.float32)
    n = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    n /= np.maximum(np.linalg.norm(n, axis=1, keepdims=True), 1e-30)
    rec = np.zeros(len(tri), dtype=[("n", "<f4", 3), ("v", "<f4", (3, 3)), ("attr", "<u2")])
    rec["n"], rec["v"] = n, tri
    with open(path, "wb") as fh:
        fh.write(b"meshpress bench_scan_5m: invented scan-like car body, mm".ljust(80, b" "))
        fh.write(np.uint32(len(tri)).tobytes())
        rec.tofile(fh)


def _clean_faces(ns, na):
    """The clean body of one size: vertices (m), faces, area vectors, unit normals (zero on degenerate faces),
    centroids."""
    from meshpress.bodies import samples

    v, f = samples.car_body(ns, na, even=True)  # m, vehicle frame (x rearward from the nose, z up from the ground)
    tri = v[f]
    av = _area_vectors(tri)
    area = np.linalg.norm(av, axis=1)
    # From 1,500 stations up car_body(even=True) puts its last ring at x = LENGTH exactly, where the section has
    # closed to a point: 2 * n_around zero-area faces (kept in the STL, as a scan's degenerate faces; no force).
    nrm = np.divide(av, area[:, None], out=np.zeros_like(av), where=area[:, None] > 0)
    return v, f, av, nrm, tri.mean(axis=1)


def make_layout(workdir: Path):
    """Hole centres (m) and the tap table, the same for every size: drawn on the 1M clean body.

    Hole centres: HOLES area-random face centroids away from the two end fans.  Taps: N_TAPS area-random points
    (uniform inside their face) on faces more than HOLE_RADIUS_MM + 10 mm from every hole centre, with the
    **invented** readings car_cp(point, that face's normal) * Q_PA, written in mm and Pa.  Using one layout
    for both sizes makes the 1M and 5M lifts differ by the mesh only.
    """
    from meshpress.bodies import samples

    taps_path, holes_path = workdir / "scan_taps.csv", workdir / "scan_holes.json"
    if taps_path.exists() and holes_path.exists():
        return taps_path, np.array(json.loads(holes_path.read_text()))
    rng = np.random.default_rng(SEED)
    _, _, av, nrm, cen = _clean_faces(*SIZES["1m"])
    area = np.linalg.norm(av, axis=1)
    mid = (cen[:, 0] > 0.1) & (cen[:, 0] < samples.LENGTH - 0.1)
    centres = cen[rng.choice(np.flatnonzero(mid), HOLES, replace=False, p=area[mid] / area[mid].sum())]
    far = np.ones(len(cen), dtype=bool)
    for c in centres:
        far &= np.linalg.norm(cen - c, axis=1) > (HOLE_RADIUS_MM + 10.0) / 1000
    ok = np.flatnonzero(far & (area > 0))
    fid = rng.choice(ok, N_TAPS, replace=False, p=area[ok] / area[ok].sum())
    v, f = samples.car_body(*SIZES["1m"], even=True)
    s, r2 = np.sqrt(rng.random(N_TAPS)), rng.random(N_TAPS)
    w = np.stack([1 - s, s * (1 - r2), s * r2], axis=1)
    pts = np.einsum("ij,ijk->ik", w, v[f[fid]])
    p_tap = samples.car_cp(pts, nrm[fid]) * Q_PA
    lines = ["tap,x,y,z,p"] + [f"T{i:03d},{1000 * a:.4f},{1000 * b:.4f},{1000 * c:.4f},{p:.4f}"
                               for i, ((a, b, c), p) in enumerate(zip(pts, p_tap))]
    taps_path.write_text("\n".join(lines) + "\n")  # invented readings (car_cp at Q_PA); x, y, z in mm, p in Pa
    holes_path.write_text(json.dumps(centres.tolist()) + "\n")
    return taps_path, centres


def make_case(workdir: Path, size: str, centres, clean: bool = False):
    """Write the scan-like STL of one size (or, ``clean``, the clean body as a soup); return its path and facts."""
    ns, na = SIZES[size]
    stem = f"clean_{size}" if clean else f"scan_{size}"
    mesh_path, info_path = workdir / f"{stem}.stl", workdir / f"{stem}.json"
    if mesh_path.exists() and info_path.exists():
        return mesh_path, json.loads(info_path.read_text())
    from meshpress.bodies import samples

    rng = np.random.default_rng([SEED, ns, na])
    v, f, av, nrm, cen = _clean_faces(ns, na)
    cp_f = samples.car_cp(cen, nrm)
    exact = float(-(Q_PA * cp_f * av[:, 2]).sum())
    exact_drag = float(-(Q_PA * cp_f * av[:, 0]).sum())
    keep = np.ones(len(f), dtype=bool)
    if not clean:  # holes: faces whose centroid lies within HOLE_RADIUS_MM of a hole centre
        for c in centres:
            keep &= np.linalg.norm(cen - c, axis=1) > HOLE_RADIUS_MM / 1000
    exact_kept = float(-(Q_PA * cp_f[keep] * av[keep, 2]).sum())
    n_zero = int((np.linalg.norm(av, axis=1) == 0).sum())
    del av, nrm, cen, cp_f
    info = {"stations": ns, "around": na, "clean": clean, "zero_area_faces": n_zero, "q_Pa": Q_PA, "taps": N_TAPS,
            "exact_lift_N": exact, "exact_drag_N": exact_drag, "exact_lift_kept_faces_N": exact_kept}
    if clean:
        write_stl_soup(mesh_path, (v * 1000.0)[f])
        info.update(faces=int(len(f)), body_faces=int(len(f)), interior_shells=0, interior_faces=0)
    else:
        # Scan: noise on the indexed vertices (shared corners stay shared), holes, interior shells, flips, soup.
        verts = [v * 1000.0 + rng.normal(0.0, NOISE_MM, v.shape)]
        faces = [f[keep]]
        offset = len(v)
        shells = interior_shells()
        for sv, sf in shells:
            verts.append(sv * 1000.0 + rng.normal(0.0, NOISE_MM, sv.shape))
            faces.append(sf + offset)
            offset += len(sv)
        V, F = np.vstack(verts), np.vstack(faces)
        del verts, faces, v, f
        flip = rng.random(len(F)) < FLIP_SHARE
        F[flip] = F[flip][:, ::-1]
        F = F[rng.permutation(len(F))]
        write_stl_soup(mesh_path, V[F])
        info.update(faces=int(len(F)), body_faces=int(keep.sum()), hole_faces=int((~keep).sum()),
                    interior_shells=len(shells), interior_faces=int(sum(len(sf) for _, sf in shells)),
                    flipped_faces=int(flip.sum()), noise_mm=NOISE_MM)
    info["file_MB"] = mesh_path.stat().st_size / 1e6
    info_path.write_text(json.dumps(info, indent=1) + "\n")
    return mesh_path, info


# ---------------------------------------------------------------------------------------------------- the runs
def loads_args(mesh_path, taps_path, out, extra=()):
    return ["loads", str(mesh_path), str(taps_path), "--length-unit", "mm", "--q", f"{Q_PA}",
            "--front-axle", "850", "--rear-axle", "3450", "--max-tap-distance", "5 mm", "--json", str(out),
            "--quiet", *extra]


def run_measured(cmd, log_stem: Path, timeout: float, env):
    """Wall seconds, peak RSS (bytes) of this child alone (os.wait4), exit status; stdout/stderr to files."""
    with open(f"{log_stem}.out", "w") as out, open(f"{log_stem}.err", "w") as err:
        t0 = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=out, stderr=err, env=env)
        status, usage = None, None
        while True:
            pid, st, ru = os.wait4(proc.pid, os.WNOHANG)
            if pid:
                status, usage = st, ru
                break
            if time.perf_counter() - t0 > timeout:
                os.kill(proc.pid, signal.SIGKILL)
                _, status, usage = os.wait4(proc.pid, 0)
                status = "timeout"
                break
            time.sleep(0.2)
        wall = time.perf_counter() - t0
        proc.returncode = 0  # reaped by wait4; keep Popen from waiting again
    rc = status if status == "timeout" else os.waitstatus_to_exitcode(status)
    return wall, usage.ru_maxrss * 1024, rc


def one_run(case, size, variant, mesh_path, taps_path, info, workdir: Path, timeout: float):
    """One measured `meshpress loads` on one case ("scan" or "clean") of one size."""
    out = workdir / f"out_{case}_{size}_{variant}.json"
    out.unlink(missing_ok=True)
    env = dict(os.environ, PYTHONPATH=str(ROOT), MESHPRESS_TIMINGS="1")
    env.setdefault("OPENBLAS_NUM_THREADS", "1")
    cmd = [sys.executable, "-m", "meshpress", *loads_args(mesh_path, taps_path, out, VARIANTS[variant])]
    stem = workdir / f"log_{case}_{size}_{variant}"
    wall, rss, rc = run_measured(cmd, stem, timeout, env)
    row = {"case": case, "size": size, "variant": variant, "faces": info["faces"], "seconds": round(wall, 2),
           "peak_GB": round(rss / 1e9, 3), "exit": rc}
    stderr = Path(f"{stem}.err").read_text()
    stdout = Path(f"{stem}.out").read_text()
    row["timings"] = {}
    for line in stderr.splitlines():
        if line.startswith("[timing] "):
            label, _, sec = line[len("[timing] "):].rpartition(": ")
            row["timings"][label] = row["timings"].get(label, 0.0) + float(sec.split()[0])
    if rc != 0 or not out.exists():
        tail = [x for x in stderr.splitlines() if not x.startswith("[timing]")][-3:]
        row["error"] = " | ".join(tail) if rc != "timeout" else f"killed after {timeout:.0f} s"
        return row
    d = json.loads(out.read_text())
    lift = d["lift_N"]
    row.update(lift_N=lift, lift_err_pct=100 * (lift / info["exact_lift_N"] - 1),
               lift_err_vs_kept_pct=100 * (lift / info["exact_lift_kept_faces_N"] - 1),
               drag_N=d.get("drag_N"), method=d.get("method"), quadrature=d.get("quadrature"))
    m = d.get("mesh") or {}
    row["mesh"] = {k: m.get(k) for k in ("faces", "vertices", "components", "merged_vertices", "dropped_faces",
                                          "flipped_faces", "holes", "closure", "watertight", "inner_shells",
                                          "inner_faces", "parts")}
    row["inner_warning"] = any("inside the body" in w for w in d.get("warnings", [])) or "inside the body" in stdout
    row["interior_left_out"] = bool(m.get("inner_shells") == info["interior_shells"]
                                    and m.get("inner_faces") == info["interior_faces"])
    row["warnings"] = d.get("warnings", [])
    u = d.get("uncertainty")
    if u and u.get("lift_N_u") is not None:
        row["lift_u_N"] = u["lift_N_u"]
        row["lift_lo95_N"], row["lift_hi95_N"] = u.get("lift_N_lo95"), u.get("lift_N_hi95")
    return row


def _line(row, info):
    if "error" in row:
        return (f"{row['case']} {row['size']} {row['variant']}: FAILED after {row['seconds']:.1f} s, peak "
                f"{row['peak_GB']:.2f} GB: {row['error']}")
    return (f"{row['case']} {row['size']} {row['variant']}: {row['seconds']:.1f} s, peak {row['peak_GB']:.2f} GB, "
            f"lift {row['lift_N']:.3f} N ({row['lift_err_pct']:+.3f} % from exact {info['exact_lift_N']:.3f} N; "
            f"{row['lift_err_vs_kept_pct']:+.3f} % from the kept faces' {info['exact_lift_kept_faces_N']:.3f} N), "
            f"inner shells {row['mesh']['inner_shells']} ({row['mesh']['inner_faces']} faces; warning: "
            f"{row['inner_warning']})")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workdir", default="/tmp/meshpress-scan")
    ap.add_argument("--timeout", type=float, default=3 * 3600.0, help="seconds before a run is killed")
    ap.add_argument("--sizes", default="1m,5m", help="scan sizes to run, of " + ", ".join(SIZES))
    ap.add_argument("--clean", default="1m", help="sizes whose clean body (noise-free soup, no holes or interior "
                    "shells, same taps) is also run after the scans, to separate the field's own error from the "
                    "scan's; '' for none")
    ap.add_argument("--repeat", type=int, default=3, help="rounds of all the runs (best time of each is kept)")
    ap.add_argument("--only", choices=sorted(VARIANTS), help="one variant only")
    ap.add_argument("--no-record", action="store_true", help="print, but do not write results/bench_scan_5m.json")
    ap.add_argument("--make-case", nargs=2, metavar=("CASE", "SIZE"), help=argparse.SUPPRESS)
    a = ap.parse_args()
    wd = Path(a.workdir)
    wd.mkdir(parents=True, exist_ok=True)
    sizes = a.sizes.split(",")
    clean_sizes = [x for x in a.clean.split(",") if x]
    variants = [a.only] if a.only else list(VARIANTS)
    load = lambda: [round(x, 2) for x in os.getloadavg()]  # noqa: E731
    if a.make_case:  # internal: build one case in its own interpreter (see below)
        case, size = a.make_case
        make_case(wd, size, make_layout(wd)[1], clean=case == "clean")
        return
    taps_path = wd / "scan_taps.csv"
    cases = {}
    for case, names in (("scan", sizes), ("clean", clean_sizes)):
        for size in names:
            t0 = time.perf_counter()
            # Each case is built in a child interpreter: on Linux a child's ru_maxrss starts at its parent's
            # high-water mark (inherited through fork and exec), so a parent that had held the 5M arrays would
            # raise every measured run's peak to its own.
            subprocess.run([sys.executable, __file__, "--workdir", str(wd), "--make-case", case, size], check=True)
            cases[case, size] = (wd / f"{case}_{size}.stl", json.loads((wd / f"{case}_{size}.json").read_text()))
            print(f"case {case} {size}: {cases[case, size][1]['faces']:,} faces, "
                  f"{cases[case, size][1]['file_MB']:.0f} MB ({time.perf_counter() - t0:.1f} s to make or find)",
                  flush=True)
    from results import code_version

    commit = code_version()
    print("meshpress at", commit)
    import resource

    own_peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    print(f"this script's own peak RSS {own_peak / 1e9:.3f} GB (the floor of every run's measured peak)")
    load_start = load()
    print("load average (1, 5, 15 min) at the start of the runs:", load_start, flush=True)
    # The scans first, the 1M and 5M of one command back to back so that their ratio sees the same load; then the
    # clean references; the whole round --repeat times.  Each figure is the best (shortest) of its runs, with the
    # step times of that run; the peak is the largest of its runs.
    order = [("scan", s, v) for v in variants for s in sizes] + [("clean", s, v) for v in variants for s in clean_sizes]
    best = {}
    for rep in range(a.repeat):
        for case, size, variant in order:
            mesh_path, info = cases[case, size]
            row = one_run(case, size, variant, mesh_path, taps_path, info, wd, a.timeout)
            row["load_after"] = load()
            print(f"[round {rep + 1}] " + _line(row, info), flush=True)
            top = sorted(row["timings"].items(), key=lambda kv: -kv[1])[:8]
            print("    slowest steps: " + "; ".join(f"{k} {v:.1f} s" for k, v in top), flush=True)
            key = (case, size, variant)
            prev = best.get(key)
            row["seconds_all"] = (prev["seconds_all"] if prev else []) + [row["seconds"]]
            row["peak_GB_all"] = (prev["peak_GB_all"] if prev else []) + [row["peak_GB"]]
            if prev is None or ("error" in prev) or ("error" not in row and row["seconds"] < prev["seconds"]):
                best[key] = row
            else:
                prev["seconds_all"], prev["peak_GB_all"] = row["seconds_all"], row["peak_GB_all"]
    rows = list(best.values())
    for row in rows:
        row["peak_GB"] = max(row["peak_GB_all"])
    load_end = load()
    print("best of the rounds:")
    for row in rows:
        print("    " + _line(row, cases[row["case"], row["size"]][1]))
    print("load average (1, 5, 15 min) at the end:", load_end)
    ratios = {}
    for variant in variants:
        r = {x["size"]: x for x in rows if x["variant"] == variant and x["case"] == "scan"}
        if "1m" in r and "5m" in r and "error" not in r["1m"] and "error" not in r["5m"]:
            ratios[variant] = round(r["5m"]["seconds"] / r["1m"]["seconds"], 2)
            print(f"{variant}: 5M / 1M time {ratios[variant]:.2f}x")
    targets = {}
    for x in rows:
        if x["size"] == "5m" and x["case"] == "scan":
            ok = "error" not in x
            targets[x["variant"]] = {
                "completes": ok,
                "peak_under_8GB": ok and x["peak_GB"] < 8.0,
                "time_within_5x_of_1m": x["variant"] in ratios and ratios[x["variant"]] <= 5.0,
                "lift_within_1pct": ok and abs(x["lift_err_pct"]) < 1.0,
                "interior_left_out": ok and x["interior_left_out"],
            }
    print("targets on 5M:", json.dumps(targets))
    summary = {"date": time.strftime("%Y-%m-%d"), "commit": commit, "load_avg_start": load_start,
               "load_avg_end": load_end, "cpus": os.cpu_count(),
               "openblas_threads": os.environ.get("OPENBLAS_NUM_THREADS"), "parent_peak_GB": round(own_peak / 1e9, 3),
               "hole_centres_m": json.loads((wd / "scan_holes.json").read_text()),
               "cases": {f"{c}_{s}": info for (c, s), (_, info) in cases.items()}, "runs": rows,
               "ratio_5m_over_1m": ratios, "targets_5m": targets}
    (wd / "summary.json").write_text(json.dumps(summary, indent=1) + "\n")
    if not a.no_record:
        from results import record

        print("recorded in", record("bench_scan_5m", "default", summary))


if __name__ == "__main__":
    main()
