"""Time the report's pictures on the bundled 40k-face sample and on a big (about 1M-face) car body.

Usage: python benchmarks/bench_view.py [--faces-big N]

Prints the time to render the six standard 3D views (off screen) and to draw the
plots, with and without the decimated copy used above ``MAX_RENDER_FACES``.
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def _run_for(body, values, taps, label, **kw):
    from meshpress.outputs.view3d import render_views

    t = time.perf_counter()
    imgs = render_views(body, values, taps, kind="cp", q=472.6, **kw)
    total = time.perf_counter() - t
    print(f"{label:<44} {body.n_faces:>9,} faces  6 views {imgs['_seconds']:6.2f} s  "
          f"(with scene set-up {total:6.2f} s, decimated: {imgs['_decimated']})")
    return imgs["_seconds"]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--faces-big", type=int, default=1_000_000)
    a = ap.parse_args()
    from meshpress.bodies.body import Body
    from meshpress.taps.projection import ProjectedTaps
    from meshpress.bodies.samples import car_body, car_cp

    rng = np.random.default_rng(1)
    for n_st, n_ar, label in ((200, 100, "sample-size body (40k faces)"),
                              (int((a.faces_big / 2) ** 0.5 * 1.6), int((a.faces_big / 2) ** 0.5 / 1.6), "big body")):
        v, f = car_body(n_stations=n_st, n_around=n_ar)
        body = Body(v, f)
        cp = car_cp(body.centroids, body.face_normals)
        pick = rng.choice(body.n_faces, 60, replace=False)
        taps = ProjectedTaps([f"T{i}" for i in range(60)], body.centroids[pick], body.centroids[pick], pick,
                             np.full((60, 3), 1 / 3), np.zeros(60), cp[pick], "cp")
        t_full = _run_for(body, cp, taps, label + ", full mesh", max_faces=10**9)
        if body.n_faces > 400_000:
            t_dec = _run_for(body, cp, taps, label + ", decimated copy (default)")
            print(f"  decimated / full time: {t_dec / t_full:.2f}")


if __name__ == "__main__":
    main()
