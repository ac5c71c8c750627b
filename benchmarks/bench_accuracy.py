"""Accuracy of every field method against known truth (docs/accuracy.md).

Cases (meshpress.bodies.exact, meshpress.bodies.samples):
- hemisphere on the ground in potential flow (CL = 11/16 on the base area);
- half ellipsoid 3 : 1.2 : 1 on the ground, flow along its long axis (Lamb's closed form);
- thin Joukowski wing (chord 0.3 m, 11.8 % thick, 4 deg), extruded 0.8 m and closed by flat caps;
- the car-like body with its invented Cp field (samples.car_cp) and the practical 57-tap layout.

Layouts: random (area-uniform), rows (plane sections y = const), centre line only (y = 0 section).
Figures: CL error in % of the exact CL; front/rear split error = CLF error (coefficient units), with the
truth CLF from the exact Cp integrated on the same mesh.

Run: ``python benchmarks/bench_accuracy.py [--quick] [--out docs/accuracy_table.md]``.
"""

from __future__ import annotations

import argparse
import importlib.util
import sys
import time
from pathlib import Path

import numpy as np
import trimesh
from trimesh.triangles import points_to_barycentric

from meshpress.bodies import exact, samples
from meshpress.loads.analysis import compute_loads
from meshpress.bodies.body import Axles, Body
from meshpress.loads.compare import compare_methods
from meshpress.fields import Field, make_field
from meshpress.taps.projection import ProjectedTaps, nearest_on_faces

ROOT = Path(__file__).resolve().parent.parent
METHODS = ["rbf", "geodesic", "biharmonic", "harmonic", "nearest", "strip", "kriging"]


def taps_at(body, pts, truth_fn):
    p, f, d = nearest_on_faces(body, np.asarray(pts, float))
    b = points_to_barycentric(body.triangles[f], p)
    vals = truth_fn(p, body.face_normals[f])
    return ProjectedTaps([f"T{i}" for i in range(len(p))], p, p, f, b, d, vals, "cp")


def random_points(body, n, rng):
    w = body.face_areas / body.area
    fi = rng.choice(body.n_faces, n, p=w)
    r = rng.random((n, 2))
    flip = r.sum(1) > 1
    r[flip] = 1 - r[flip]
    b = np.column_stack([1 - r.sum(1), r])
    return np.einsum("kj,kjd->kd", b, body.triangles[fi])


def section_points(body, y, n, axis=1):
    """n points evenly spaced along the body's section by the plane (axis) = y (open-edge safe)."""
    m = trimesh.Trimesh(body.vertices, body.faces, process=False)
    normal = np.eye(3)[axis]
    seg = trimesh.intersections.mesh_plane(m, normal, normal * y)
    if len(seg) == 0:
        return np.zeros((0, 3))
    L = np.linalg.norm(seg[:, 1] - seg[:, 0], axis=1)
    s = np.cumsum(L)
    t = (np.arange(n) + 0.5) / n * s[-1]
    i = np.searchsorted(s, t)
    u = (t - (s[i] - L[i])) / np.maximum(L[i], 1e-15)
    return seg[i, 0] + u[:, None] * (seg[i, 1] - seg[i, 0])


def spread_points(body, n, rng):
    """n well-spread points: greedy farthest-point sampling of a dense random sample."""
    cand = random_points(body, 30 * n, rng)
    pick = [0]
    d = np.linalg.norm(cand - cand[0], axis=1)
    for _ in range(n - 1):
        j = int(np.argmax(d))
        pick.append(j)
        d = np.minimum(d, np.linalg.norm(cand - cand[j], axis=1))
    return cand[pick]


def layout(body, kind, n, rng, ys):
    if kind == "random":
        return random_points(body, n, rng)
    if kind == "spread":
        return spread_points(body, n, rng)
    if kind == "centre":
        return section_points(body, 0.0, n)
    rows = [section_points(body, y, n // len(ys)) for y in ys]
    return np.vstack(rows)


def truth_loads(body, cp_fn, ref_area):
    cp = cp_fn(body.centroids, body.face_normals)
    field = _Given(cp)
    return compute_loads(body, _dummy_taps(body), field, ref_area=ref_area)


class _Given:
    """A 'field' that hands back given face values (the truth integrated on the mesh)."""

    name = "truth"
    at_points = Field.at_points  # face values only: compute_loads integrates face by face

    def __init__(self, v):
        self.v = v
        self.warnings_ = []

    def fit(self, body, taps, progress=None):
        return self

    def face_values(self, progress=None):
        return self.v

    def describe(self):
        return "exact Cp on the mesh"


def _dummy_taps(body):
    c = body.centroids[:1]
    return ProjectedTaps(["x"], c, c, np.zeros(1, int), np.full((1, 3), 1 / 3), np.zeros(1), np.zeros(1), "cp")


def cases(quick=False):
    out = []
    v, f = exact.uv_hemisphere(1.0, 40, 80)
    out.append(dict(name="hemisphere", body=Body(v, f, axles=Axles(-0.5, 0.5)), ref=np.pi,
                    cl=exact.HEMISPHERE_CL, cp=lambda p, n: exact.sphere_cp(p), ys=(-0.6, -0.3, 0.0, 0.3, 0.6)))
    a, b, c = 1.5, 0.6, 0.5
    v, f = exact.half_ellipsoid(a, b, c, 40, 80)
    body = Body(v, f, axles=Axles(-0.8, 0.8))
    cpf = lambda p, n: exact.ellipsoid_cp(p, a, b, c)
    cl = truth_loads(body, cpf, np.pi * a * b).CL
    out.append(dict(name="half ellipsoid", body=body, ref=np.pi * a * b, cl=None, cl_mesh=cl, cp=cpf,
                    ys=(-0.36, -0.18, 0.0, 0.18, 0.36)))
    J = exact.Joukowski(eps=0.1, mu=0.04, alpha_deg=4.0, chord=0.3)
    span = 0.8
    V, F = J.body(span=span, n_around=200, n_span=60)
    V = V - [J.chord / 2, 0, 0]
    body = Body(V, F, axles=Axles(-J.chord / 2, J.chord / 2))
    cpj = lambda p, n: np.where(np.abs(n[:, 1]) > 0.9, 0.0, J.cp_at(p + [J.chord / 2, 0, 0]))
    out.append(dict(name="Joukowski wing", body=body, ref=J.chord * span, cl=J.cz, cp=cpj,
                    ys=(-0.25, 0.0, 0.25), wing=True))
    vv, ff = samples.car_body(200, 100)
    mid = 0.5 * sum(samples.WHEELBASE_X)
    vv = vv - [mid, 0, 0]
    body = Body(vv, ff, axles=Axles(samples.WHEELBASE_X[0] - mid, samples.WHEELBASE_X[1] - mid))
    cpc = lambda p, n: samples.car_cp(p + [mid, 0, 0], n)
    out.append(dict(name="car-like", body=body, ref=None, cl=None, cp=cpc, ys=(-0.6, 0.0, 0.6), car=True))
    return out


def practical_car_taps(case):
    """The ~57-tap practical layout of scripts/make_samples.py (tap_layout), placed on the section at x in
    the direction t from the section centre (without trimesh's ray tracer, which needs rtree)."""
    spec = importlib.util.spec_from_file_location("make_samples", ROOT / "scripts" / "make_samples.py")
    ms = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(ms)
    body = case["body"]
    mid = 0.5 * sum(samples.WHEELBASE_X)
    pts = []
    for _, x, t in ms.tap_layout():
        top, bot, _ = samples.profiles(np.array([x]))
        zc = 0.5 * (top[0] + bot[0])
        sec = section_points(body, x - mid, 2000, axis=0)
        ang = np.arctan2(sec[:, 2] - zc, sec[:, 1])
        pts.append(sec[np.argmin(np.abs(np.angle(np.exp(1j * (ang - t)))))])
    return taps_at(body, np.array(pts), case["cp"])


def run(quick=False):
    rng = np.random.default_rng(1)
    counts = (20, 50, 100, 200, 400) if not quick else (25, 100)
    rows = []
    for case in cases(quick):
        body = case["body"]
        ref = case["ref"] or body.frontal_area()
        truth = truth_loads(body, case["cp"], ref)
        cl_exact = case["cl"] if case["cl"] is not None else truth.CL
        print(f"\n## {case['name']}: {body.n_faces} faces; exact CL {cl_exact:.4f} "
              f"(exact Cp integrated on the mesh: CL {truth.CL:.4f}, CLF {truth.CLF:.4f}, CLR {truth.CLR:.4f})",
              flush=True)
        plans = ([("random", n) for n in counts] + [("spread", n) for n in counts[2:]]
                 + [("rows", n) for n in counts[1:4]] + [("centre", 25)])
        if case.get("wing"):
            plans = [("rows", 75), ("rows", 150), ("random", 75), ("random", 200), ("centre", 25)]
        if case.get("car"):
            plans = [("practical", 57)] + [("random", n) for n in counts[1:]]
        if quick:
            plans = plans[:2]
        for kind, n in plans:
            if kind == "practical":
                taps = practical_car_taps(case)
            else:
                pts = layout(body, kind, n, rng, case["ys"])
                taps = taps_at(body, pts, case["cp"])
            variants = [(m, {}) for m in METHODS] + [("geodesic", {"trend": "auto"})]
            if case.get("wing") or case.get("car"):
                variants += [(m, {"regions": "normal"}) for m in ("rbf", "geodesic", "biharmonic", "nearest")]
            cmp = compare_methods(body, taps, [m for m, _ in variants[:len(METHODS)]], ref_area=ref)
            by = {r["method"]: r for r in cmp["methods"]}
            for m, st in variants:
                if st:
                    t0 = time.perf_counter()
                    field = make_field(m, **st)
                    res = compute_loads(body, taps, field, ref_area=ref)
                    loo, nested = field.loo_residuals(), field.loo_residuals_nested()
                    label = m + ("+regions" if "regions" in st else "-auto")
                    r = dict(method=label, CL=res.CL, CLF=res.CLF, CLR=res.CLR,
                             loo_rms=float(np.sqrt(np.nanmean(loo**2))),
                             loo_nested_rms=float(np.sqrt(np.nanmean(nested**2))), seconds=time.perf_counter() - t0)
                else:
                    r = by[m]
                row = dict(case=case["name"], layout=kind, taps=len(taps), method=r["method"],
                           cl_err_pct=100 * (r["CL"] - cl_exact) / abs(cl_exact),
                           clf_err=r["CLF"] - truth.CLF, clr_err=r["CLR"] - truth.CLR, loo=r["loo_rms"],
                           loo_nested=r["loo_nested_rms"],
                           seconds=r["seconds"], recommended=(r["method"] == cmp["recommended"]),
                           CL=r["CL"], CLF=r["CLF"], CLR=r["CLR"])
                rows.append(row)
                print(f"  {kind:<9} {len(taps):>4} {row['method']:<20} CL err {row['cl_err_pct']:+7.2f} %  "
                      f"CLF err {row['clf_err']:+.4f}  CLR err {row['clr_err']:+.4f}  LOO {row['loo']:.4f}  "
                      f"nested {row['loo_nested']:.4f}  "
                      f"{row['seconds']:5.1f} s{'  <- recommended' if row['recommended'] else ''}", flush=True)
    return rows


def breakdown():
    """Where the CL error comes from: the wing (rows, 75 taps) by chord and span zone, the car (practical
    layout, geodesic) by x band on upward faces.  Printed; quoted in docs/accuracy.md."""
    rng = np.random.default_rng(1)
    allc = {c["name"]: c for c in cases()}
    case = allc["Joukowski wing"]
    body = case["body"]
    taps = taps_at(body, layout(body, "rows", 75, rng, case["ys"]), case["cp"])
    truth = case["cp"](body.centroids, body.face_normals)
    x = body.centroids[:, 0] + 0.15
    y = body.centroids[:, 1]
    le, inner = x < 0.03, np.abs(y) <= 0.25
    print("\nwing, rows, 75 taps: CL error | LE 10 % between rows | LE outboard | rest between | rest outboard")
    for m, st in (("biharmonic", {}), ("biharmonic", {"regions": "normal"}), ("nearest", {"regions": "normal"}),
                  ("rbf", {})):
        v = make_field(m, **st).fit(body, taps).face_values()
        dl = -((v - truth) * body.area_vectors[:, 2]) / case["ref"]
        print(f"  {m + ('+regions' if st else ''):<20} {dl.sum():+.3f} | {dl[le & inner].sum():+.3f} | "
              f"{dl[le & ~inner].sum():+.3f} | {dl[~le & inner].sum():+.3f} | {dl[~le & ~inner].sum():+.3f}")
    case = allc["car-like"]
    body = case["body"]
    taps = practical_car_taps(case)
    truth = case["cp"](body.centroids, body.face_normals)
    ref = body.frontal_area()
    xn = body.centroids[:, 0] + 0.5 * sum(samples.WHEELBASE_X)
    up = body.face_normals[:, 2] > 0.3
    edges = np.arange(0.0, 4.21, 0.6)
    for st in ({}, {"trend": "auto"}):
        field = make_field("geodesic", **st).fit(body, taps)
        dl = -((field.face_values() - truth) * body.area_vectors[:, 2]) / ref
        print(f"car, practical layout, {field.describe()}: CL error {dl.sum():+.3f}; on upward faces per 0.6 m "
              "band from the nose:")
        print("  " + "  ".join(f"{a:.1f}-{b:.1f} m {dl[up & (xn >= a) & (xn < b)].sum():+.3f}"
                               for a, b in zip(edges[:-1], edges[1:])))


#: The rule before nested leave-one-out: the lowest plain LOO among the methods compare may recommend.
BEFORE = ("rbf", "geodesic", "biharmonic", "nearest", "strip", "kriging")


def before_choice(rs):
    """The row the earlier rule would have recommended (lowest plain LOO among BEFORE)."""
    cand = [rs[m] for m in BEFORE if m in rs and rs[m]["loo"] is not None and np.isfinite(rs[m]["loo"])]
    return min(cand, key=lambda r: r["loo"]) if cand else None


def markdown(rows) -> str:
    """The table of docs/accuracy.md: one line per case, layout and tap count; CL error (%) per method,
    then the recommended method (nested LOO) with its CLF and CLR errors, and the earlier rule's choice."""
    methods = []
    for r in rows:
        if r["method"] not in methods:
            methods.append(r["method"])
    head = ("| case | layout | taps | " + " | ".join(methods)
            + " | recommended: nested LOO (CLF err, CLR err) | plain LOO, as before (CL err, CLF err, CLR err) |")
    out = [head, "|" + "---|" * (len(methods) + 5)]
    keys = []
    for r in rows:
        k = (r["case"], r["layout"], r["taps"])
        if k not in keys:
            keys.append(k)
    for k in keys:
        rs = {r["method"]: r for r in rows if (r["case"], r["layout"], r["taps"]) == k}
        rec = next((r for r in rs.values() if r["recommended"]), None)
        cells = [f"{rs[m]['cl_err_pct']:+.1f}" if m in rs else "" for m in methods]
        recs = f"{rec['method']} ({rec['clf_err']:+.3f}, {rec['clr_err']:+.3f})" if rec else ""
        old = before_choice(rs)
        olds = (f"{old['method']} ({old['cl_err_pct']:+.1f} %, {old['clf_err']:+.3f}, {old['clr_err']:+.3f})"
                if old else "")
        out.append(f"| {k[0]} | {k[1]} | {k[2]} | " + " | ".join(cells) + f" | {recs} | {olds} |")
    return "\n".join(out)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--out", help="write the markdown table and the rows (JSON) next to it")
    ap.add_argument("--record", metavar="VARIANT",
                    help="store the rows as VARIANT in benchmarks/results/bench_accuracy.json (the docs cite it)")
    args = ap.parse_args()
    t0 = time.perf_counter()
    rows = run(args.quick)
    breakdown()
    table = markdown(rows)
    print("\n" + table)
    print(f"\ntotal {time.perf_counter() - t0:.0f} s")
    if args.out:
        import json

        Path(args.out).write_text(table + "\n")
        Path(args.out).with_suffix(".json").write_text(json.dumps(rows, indent=1, default=float))
    if args.record:
        from results import record

        record("bench_accuracy", args.record, rows)


if __name__ == "__main__":
    sys.exit(main())
