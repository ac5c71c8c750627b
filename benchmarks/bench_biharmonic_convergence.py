"""What the biharmonic (and harmonic) field's mesh dependence is made of, and what bounded edges do to it.

1. sphere: the unit sphere, where the continuum biharmonic minimiser through point values is known in
   closed form (Wahba's spline, meshpress.bodies.exact.sphere_spline).  The same 100 taps (Fibonacci points) on
   icosphere levels 3-6 (uniform), on lofted spheres (stations along x, poles with fans, aspect up to 4)
   and on quadric-decimated copies of level 7, each solved as given: RMS error of the vertex values against the spline and the
   error of the integral -int u n_z dA against the spline's own (Funk-Hecke: -sum c_i y_iz / 4).  The
   harmonic field on the same taps and meshes, against the exact integral of the sampled field.
2. car: the sample car body (meshpress.bodies.samples.car_body, default spacing: strips of long thin triangles
   on the centre lines, sliver fans at the ends), the same 200 tap points with the same values on every
   mesh; biharmonic solved on the mesh as given ("before", max_edge_ratio=None) and on the copy with
   edges at most 2 mean edges ("after", the default): CL, CLF, CLR (on 2 m2) for several n_around at 400
   stations and for a refinement series.
3. copy: the 1,000,000-face car body, the same taps: the 80,000-face working copy before and after,
   against the converged value of the after series of part 2.

Run: ``python benchmarks/bench_biharmonic_convergence.py [sphere] [car] [copy]`` (all three by default; a
few minutes on 2 cores).  CPU seconds of the process beside each line.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
from trimesh.triangles import points_to_barycentric

from meshpress.bodies import samples
from meshpress.loads.analysis import compute_loads
from meshpress.bodies.body import Axles, Body
from meshpress.bodies.exact import sphere_cp, sphere_spline, sphere_spline_kernel
from meshpress.fields import make_field
from meshpress.taps.projection import ProjectedTaps, nearest_on_faces
from meshpress.bodies.workmesh import simplify

MID = 0.5 * sum(samples.WHEELBASE_X)


def taps_on(body, pts, values):
    p, f, d = nearest_on_faces(body, np.asarray(pts, float))
    b = points_to_barycentric(body.triangles[f], p)
    return ProjectedTaps([f"T{i}" for i in range(len(p))], p, p, f, b, d, np.asarray(values, float), "cp")


def fibonacci_sphere(n):
    i = np.arange(n) + 0.5
    phi = np.arccos(1 - 2 * i / n)
    th = np.pi * (1 + 5**0.5) * i
    return np.column_stack([np.cos(th) * np.sin(phi), np.sin(th) * np.sin(phi), np.cos(phi)])


def icosphere(level):
    import trimesh

    m = trimesh.creation.icosphere(subdivisions=level)
    return np.asarray(m.vertices), np.asarray(m.faces)


def loft_sphere(n_st, n_ar):
    """Unit sphere as a loft along x (stations cosine-spaced, a fan at each pole)."""
    s = np.linspace(0, 1, n_st + 2)[1:-1]
    x = -np.cos(np.pi * s)
    r = np.sqrt(1 - x**2)
    t = np.linspace(0, 2 * np.pi, n_ar, endpoint=False)
    ring = np.stack([np.repeat(x[:, None], n_ar, 1), r[:, None] * np.cos(t), r[:, None] * np.sin(t)], -1)
    v = np.vstack([ring.reshape(-1, 3), [-1, 0, 0], [1, 0, 0]])
    idx = np.arange(n_st * n_ar).reshape(n_st, n_ar)
    a0, a1, b0, b1 = idx[:-1], np.roll(idx[:-1], -1, 1), idx[1:], np.roll(idx[1:], -1, 1)
    q = np.concatenate([np.stack([a0, b0, b1], -1).reshape(-1, 3), np.stack([a0, b1, a1], -1).reshape(-1, 3)])
    fn = np.stack([np.full(n_ar, n_st * n_ar), idx[0], np.roll(idx[0], -1)], -1)
    ft = np.stack([np.full(n_ar, n_st * n_ar + 1), np.roll(idx[-1], -1), idx[-1]], -1)
    f = np.vstack([q, fn, ft])
    tri = v[f]
    if np.einsum("ij,ij->", tri[:, 0], np.cross(tri[:, 1], tri[:, 2])) < 0:
        f = f[:, ::-1]
    return v, f


def sphere():
    y = fibonacci_sphere(100)
    d = sphere_cp(y) + 0.5 * y[:, 2] + 0.8 * y[:, 0] * y[:, 1] * y[:, 2] + 0.3 * np.sin(3 * y[:, 1])
    u = sphere_spline(y, d)
    k = len(y)
    A = np.zeros((k + 1, k + 1))
    A[:k, :k] = sphere_spline_kernel(y @ y.T)
    A[:k, k] = A[k, :k] = 1
    c = np.linalg.solve(A, np.r_[d, 0])[:k]
    fz_spline = -(c @ y[:, 2]) / 4  # Funk-Hecke on the degree-1 part
    fz_exact = -0.5 * 4 * np.pi / 3  # -int d n_z dA of the sampled field: only 0.5 z contributes
    meshes = [(f"icosphere {s}", *icosphere(s)) for s in (3, 4, 5, 6)]
    meshes += [(f"loft {a}x{b}", *loft_sphere(a, b)) for a, b in ((100, 50), (200, 100))]
    v7, f7 = icosphere(7)
    for target in (20_000, 80_000):
        v, f = simplify(v7, f7, target)
        meshes.append((f"icosphere 7 decimated to {target // 1000}k", v / np.linalg.norm(v, axis=1)[:, None], f))
    print("\n## sphere: 100 taps, biharmonic against Wahba's spline, harmonic against the sampled field\n")
    print(f"spline: -int u n_z dA = {fz_spline:+.5f}; sampled field: {fz_exact:+.5f}\n")
    print("| mesh | faces | biharmonic RMS error at vertices | biharmonic Fz error % (vs spline) | "
          "harmonic Fz error % (vs field) | CPU s |\n|---|---|---|---|---|---|")
    for name, v, f in meshes:
        c0 = time.process_time()
        body = Body(v, f)
        taps = taps_on(body, y, d)
        out = {}
        for m in ("biharmonic", "harmonic"):
            fld = make_field(m, extrapolation="none", work_faces=10**8, max_edge_ratio=None).fit(body, taps)
            fv = fld.face_values()
            out[m] = (fld, -(fv * body.area_vectors[:, 2]).sum())
        fld = out["biharmonic"][0]
        uv = fld.work_.at_points(fld.vertex_values_, v)
        rms = np.sqrt(np.mean((uv - u(v)) ** 2))
        print(f"| {name} | {len(f):,} | {rms:.2e} | {100 * (out['biharmonic'][1] / fz_spline - 1):+.3f} | "
              f"{100 * (out['harmonic'][1] / fz_exact - 1):+.1f} | {time.process_time() - c0:.1f} |", flush=True)


def car_arrays(n_st, n_ar):
    v, f = samples.car_body(n_st, n_ar)
    return v - [MID, 0, 0], f


def car(v, f):
    return Body(v, f, axles=Axles(samples.WHEELBASE_X[0] - MID, samples.WHEELBASE_X[1] - MID))


def car_taps():
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_accuracy import random_points

    mid = car(*car_arrays(500, 160))
    pts = random_points(mid, 200, np.random.default_rng(3))
    p, f, _ = nearest_on_faces(mid, pts)
    vals = samples.car_cp(p + [MID, 0, 0], mid.face_normals[f])
    return pts, vals


def car_loads(body, pts, vals, ratio, work_faces=10**8):
    c0 = time.process_time()
    field = make_field("biharmonic", extrapolation="none", work_faces=work_faces, max_edge_ratio=ratio)
    r = compute_loads(body, taps_on(body, pts, vals), field, ref_area=2.0)
    return np.array([r.CL, r.CLF, r.CLR]), field.work_.body.n_faces, time.process_time() - c0


def car_part():
    pts, vals = car_taps()
    print("\n## car: the same 200 tap points and values on every mesh (CL, CLF, CLR on 2 m2)\n")
    print("| mesh (stations x around) | faces | solved on, before | CL before | CLF | CLR | CPU s | "
          "solved on, after | CL after | CLF | CLR | CPU s |\n|---|---|---|---|---|---|---|---|---|---|---|---|")
    for k in [(400, 99), (400, 100), (400, 101), (400, 102), (200, 50), (283, 71), (566, 141)]:
        body = car(*car_arrays(*k))
        row = f"| {k[0]} x {k[1]} | {body.n_faces:,} |"
        for ratio in (None, 2.0):
            x, n, cpu = car_loads(body, pts, vals, ratio)
            row += f" {n:,} | {x[0]:+.4f} | {x[1]:+.4f} | {x[2]:+.4f} | {cpu:.1f} |"
        print(row, flush=True)


def copy_part():
    pts, vals = car_taps()
    body = car(*car_arrays(1250, 400))
    print(f"\n## copy: the {body.n_faces:,}-face body, the same taps, 80,000-face working copy\n")
    print("| copy | copy faces | CL | CLF | CLR | CPU s |\n|---|---|---|---|---|---|")
    for label, ratio in (("before (decimated only)", None), ("after (decimated, edges <= 2 mean edges)", 2.0)):
        x, n, cpu = car_loads(body, pts, vals, ratio, work_faces=80_000)
        print(f"| {label} | {n:,} | {x[0]:+.4f} | {x[1]:+.4f} | {x[2]:+.4f} | {cpu:.1f} |", flush=True)


if __name__ == "__main__":
    parts = sys.argv[1:] or ["sphere", "car", "copy"]
    t0 = time.perf_counter()
    for p in parts:
        {"sphere": sphere, "car": car_part, "copy": copy_part}[p]()
    print(f"\n(load average {open('/proc/loadavg').read().split()[0]} on 2 cores; total {time.perf_counter() - t0:.0f} s "
          f"wall, {time.process_time():.0f} s CPU)")
