"""Speed and memory of every field method on a 1-million-face body, and the working copy's effect on loads.

1. The car-like body of meshpress.bodies.samples at about 1,000,000 faces (1250 sections x 400 points, near-isotropic triangles), 200 taps (area-random) carrying the
   invented Cp field.  Each method runs end to end (Body from arrays, fit, face values, integration) in a
   fresh process; wall time and peak resident memory (ru_maxrss) are printed.
2. Working copy: on the same body, the *exact* field sampled at the working copy's vertices and carried
   back to the full mesh (what every surface method's output goes through) against the exact field on the
   full mesh; and one method (biharmonic) run on the full 80k-face body against its 40k and 20k copies.

Run: ``python benchmarks/bench_methods_1m.py`` (a few minutes on 2 cores); ``--methods a,b`` for the speed
table of some methods only; ``--resolution`` for the mesh dependence check (biharmonic with and without
the edge bound, and nearest, at three resolutions, full mesh vs copy).
"""

from __future__ import annotations

import json
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

from meshpress.bodies import samples

TMP = Path("/tmp/meshpress_bench_1m.npz")
METHODS = ["rbf", "geodesic", "biharmonic", "harmonic", "nearest", "strip", "kriging"]
MID = 0.5 * sum(samples.WHEELBASE_X)


def _load():
    """The machine's 1-minute load average (/proc/loadavg): other jobs inflate the wall times."""
    return open("/proc/loadavg").read().split()[0]


def make_body_arrays(n_stations, n_around):
    v, f = samples.car_body(n_stations, n_around)
    return v - [MID, 0, 0], f


def body_from(v, f):
    from meshpress.bodies.body import Axles, Body

    return Body(v, f, axles=Axles(samples.WHEELBASE_X[0] - MID, samples.WHEELBASE_X[1] - MID))


def taps_for(body, n, seed=3):
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_accuracy import random_points, taps_at

    pts = random_points(body, n, np.random.default_rng(seed))
    return taps_at(body, pts, lambda p, nn: samples.car_cp(p + [MID, 0, 0], nn))


def child(method):
    from meshpress.loads.analysis import compute_loads
    from meshpress.fields import make_field

    d = np.load(TMP)
    ru = resource.getrusage(resource.RUSAGE_SELF)
    cpu0 = ru.ru_utime + ru.ru_stime
    t0 = time.perf_counter()
    body = body_from(d["v"], d["f"])
    taps = taps_for(body, 200)
    t1 = time.perf_counter()
    res = compute_loads(body, taps, make_field(method), ref_area=float(d["ref"]))
    t2 = time.perf_counter()
    ru = resource.getrusage(resource.RUSAGE_SELF)
    peak_gb = ru.ru_maxrss / 1024**2
    print(json.dumps(dict(method=method, faces=body.n_faces, setup_s=t1 - t0, method_s=t2 - t1,
                          total_s=t2 - t0, cpu_s=ru.ru_utime + ru.ru_stime - cpu0, peak_GB=peak_gb,
                          CL=res.CL, CLF=res.CLF, CLR=res.CLR)))


def loads_of(body, values, ref):
    from meshpress.loads.integrate import force_and_moment

    F, M = force_and_moment(body.area_vectors, body.centroids, values, np.zeros(3), 0.0)
    wb = body.axles.wheelbase
    cl, cpm = F[2] / ref, M[1] / (ref * wb)
    return np.array([cl, cl / 2 + cpm, cl / 2 - cpm])


def main(methods=METHODS, copies=True):
    from meshpress.bodies.workmesh import WorkMesh

    v, f = make_body_arrays(1250, 400)
    body = body_from(v, f)
    if TMP.exists() and np.load(TMP)["v"].shape == v.shape and np.array_equal(np.load(TMP)["v"], v):
        ref = float(np.load(TMP)["ref"])
        print(f"body: {body.n_faces:,} faces; frontal area {ref:.3f} m2 (from {TMP})")
    else:
        t0 = time.perf_counter()
        ref = body.frontal_area()
        print(f"body: {body.n_faces:,} faces; frontal area {ref:.3f} m2 ({time.perf_counter() - t0:.1f} s)")
        np.savez(TMP, v=v, f=f, ref=ref)
    truth = samples.car_cp(body.centroids + [MID, 0, 0], body.face_normals)
    lt = loads_of(body, truth, ref)
    print(f"truth on the full mesh: CL {lt[0]:+.4f} CLF {lt[1]:+.4f} CLR {lt[2]:+.4f}")
    print("\n| method | wall s | CPU s | of which method (wall) s | peak GB | CL | CLF | CLR | load avg (1 min) |\n"
          "|---|---|---|---|---|---|---|---|---|")
    for m in methods:
        out = subprocess.run([sys.executable, __file__, "--child", m], capture_output=True, text=True)
        if out.returncode:
            print(f"| {m} | failed: {out.stderr.strip().splitlines()[-1]} |")
            continue
        r = json.loads(out.stdout.strip().splitlines()[-1])
        print(f"| {m} | {r['total_s']:.1f} | {r['cpu_s']:.1f} | {r['method_s']:.1f} | {r['peak_GB']:.2f} | {r['CL']:+.4f} | "
              f"{r['CLF']:+.4f} | {r['CLR']:+.4f} | {_load()} |", flush=True)

    print(f"(load average {open('/proc/loadavg').read().split()[0]} on 2 cores)")
    if not copies:
        return
    print("\nworking copy, exact field through the copy (1M-face body):")
    print("| copy faces | CL | CLF | CLR | lift change % | max coefficient change |\n|---|---|---|---|---|---|")
    for target in (160_000, 80_000, 40_000, 20_000):
        t0 = time.perf_counter()
        wm = WorkMesh(body, target)
        wb = wm.body
        # Exact field at the copy's vertices, with vertex normals of the copy.
        vn = np.zeros_like(wb.vertices)
        np.add.at(vn, wb.faces.ravel(), np.repeat(wb.area_vectors, 3, axis=0))
        vn /= np.linalg.norm(vn, axis=1, keepdims=True)
        vals = samples.car_cp(wb.vertices + [MID, 0, 0], vn)
        lw = loads_of(body, wm.vertex_to_full_faces(vals), ref)
        # The same path on the full mesh itself (vertex values -> face means), to separate the copy's effect.
        vnf = np.zeros_like(body.vertices)
        np.add.at(vnf, body.faces.ravel(), np.repeat(body.area_vectors, 3, axis=0))
        vnf /= np.linalg.norm(vnf, axis=1, keepdims=True)
        lf = loads_of(body, samples.car_cp(body.vertices + [MID, 0, 0], vnf)[body.faces].mean(axis=1), ref)
        print(f"| {wb.n_faces:,} | {lw[0]:+.4f} | {lw[1]:+.4f} | {lw[2]:+.4f} | "
              f"{100 * (lw[0] - lf[0]) / abs(lf[0]):+.2f} | {np.abs(lw - lf).max():.4f} | "
              f"({time.perf_counter() - t0:.1f} s)", flush=True)

    from meshpress.loads.analysis import compute_loads
    from meshpress.fields import make_field

    v2, f2 = make_body_arrays(500, 160)
    b2 = body_from(v2, f2)
    taps = taps_for(b2, 200)
    ref2 = b2.frontal_area()
    print(f"\n(load average while measuring: {open('/proc/loadavg').read().split()[0]} on 2 cores)")
    print(f"\nbiharmonic, full {b2.n_faces:,}-face body vs its working copies (200 taps):")
    print("| solved on | seconds | CL | CLF | CLR | lift change % |\n|---|---|---|---|---|---|")
    base = None
    for target in (200_000, 80_000, 40_000):
        t0 = time.perf_counter()
        r = compute_loads(b2, taps, make_field("biharmonic", work_faces=target), ref_area=ref2)
        x = np.array([r.CL, r.CLF, r.CLR])
        base = x if base is None else base
        print(f"| {min(target, b2.n_faces):,} faces | {time.perf_counter() - t0:.1f} | {x[0]:+.4f} | {x[1]:+.4f} | "
              f"{x[2]:+.4f} | {100 * (x[0] - base[0]) / abs(base[0]):+.2f} |", flush=True)


def resolution():
    """Is a change through the working copy larger than the method's own mesh dependence?  The same 200
    tap points on the car-like body at three resolutions, each method solved on the full mesh and on an
    80,000-face copy (``--resolution``)."""
    from meshpress.loads.analysis import compute_loads
    from meshpress.fields import make_field

    bodies = {k: body_from(*make_body_arrays(*k)) for k in [(400, 100), (500, 160), (700, 230)]}
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_accuracy import random_points, taps_at

    pts = random_points(bodies[(500, 160)], 200, np.random.default_rng(3))
    print("| body faces | method | solved on | CL | CLF | CLR | wall s |\n|---|---|---|---|---|---|---|")
    for b in bodies.values():
        taps = taps_at(b, pts, lambda p, nn: samples.car_cp(p + [MID, 0, 0], nn))
        for m, st in (("biharmonic", {"max_edge_ratio": None}), ("biharmonic", {}), ("nearest", {})):
            for wf in (400_000, 80_000):
                t0 = time.perf_counter()
                field = make_field(m, work_faces=wf, **st)
                r = compute_loads(b, taps, field, ref_area=2.0)
                on = "full" if wf >= b.n_faces else f"{wf:,} copy"
                if st:
                    m = "biharmonic, as before (no edge bound)"
                on += f" ({field.work_.body.n_faces:,} faces solved)"
                print(f"| {b.n_faces:,} | {m} | {on} | {r.CL:+.4f} | {r.CLF:+.4f} | {r.CLR:+.4f} | "
                      f"{time.perf_counter() - t0:.1f} |", flush=True)


if __name__ == "__main__":
    if len(sys.argv) > 2 and sys.argv[1] == "--child":
        child(sys.argv[2])
    elif len(sys.argv) > 1 and sys.argv[1] == "--resolution":
        resolution()
    elif len(sys.argv) > 2 and sys.argv[1] == "--methods":
        main(sys.argv[2].split(","), copies=False)
    else:
        main()
