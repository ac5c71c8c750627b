"""Benchmark of the bands on a change between two configurations (known truth; INVENTED fields).

Coverage: the car-like body of truth_cases.py with its invented Cp field as the
baseline, and two invented changes:

- ``smooth``: a small change spread over the whole body (a stand-in for a ride
  height or rake change), ``dCp = -0.06 sin(pi x/L) (1 - n_z)/2 + 0.03 x/L``;
- ``wing``: the localised change of scripts/make_example.py (higher pressure on
  the rear deck, a lower base pressure).

For N random (57 taps, area-uniform) and N practical (the 57-tap layout,
jittered) layouts, both runs read the exact Cp plus a per-tap sensor error
(rectangular, standard uncertainty U_SENSOR, the same draw in both runs:
correlation 1) and independent noise of standard deviation U_RANDOM (the
standard error of each run's mean); the change's band
(:func:`meshpress.bands.change.compute_change`) is scored against the exact change
integrated over the same faces.  Reported per change and figure: coverage,
RMS error, RMS u, mean 95 % half-width over the RMS error, the median ratio
of the change's u to the smaller of the two runs' own u, and how often the
warning "the field method's change differs from the estimate by more than u"
is given when the interval misses the truth and when it holds it.

Timing: ``python benchmarks/bench_change.py timing`` runs the invented example
sheet without and with bands (3 times each, medians).

Run: ``python benchmarks/bench_change.py [N] [n_patches]`` (default 25, 2500).
"""

from __future__ import annotations

import inspect
import json
import os
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
import bench_uncertainty as bu  # noqa: E402
import truth_cases as tc  # noqa: E402
from make_example import wing_delta_cp  # noqa: E402

from meshpress.bodies import samples  # noqa: E402
from meshpress.bands.change import ErrorSources, compute_change  # noqa: E402
from meshpress.fields import make_field  # noqa: E402
from meshpress.bands.patches import Carrier  # noqa: E402
from meshpress.bands.uncertainty import K95, figure_face_weights  # noqa: E402

U_SENSOR = 0.005  # Cp, systematic per tap, same in both runs
U_RANDOM = 0.003  # Cp, independent between runs
FIGS = ("CL", "CD", "CLF", "CLR")
N_TAPS = 57


def changes(x0):
    L = samples.LENGTH

    def smooth(p, n):
        xn = np.asarray(p)[:, 0] + x0
        return -0.06 * np.sin(np.pi * xn / L) * (1 - n[:, 2]) / 2 + 0.03 * xn / L

    def wing(p, n):
        return wing_delta_cp(np.asarray(p) + [x0, 0, 0], n)

    return {"smooth": smooth, "wing": wing}


def coverage(n_layouts, n_patches, rng):
    body, cp, _ = tc.car()
    area = body.frontal_area()
    x0 = 0.5 * (samples.WHEELBASE_X[0] + samples.WHEELBASE_X[1])
    t0 = time.perf_counter()
    car = Carrier(body, n_patches)
    t_carrier = time.perf_counter() - t0
    names, G = figure_face_weights(body, kind="cp", ref_area=area, wheelbase=body.axles.wheelbase)
    report = {"carrier_s": t_carrier, "patches": car.n}
    for cname, dcp in changes(x0).items():
        def other(p, n, dcp=dcp):
            return cp(p, n) + dcp(p, n)

        truth = dict(zip(names, dcp(body.centroids, body.face_normals) @ G))
        rows, times = [], []
        for kind in ("random", "practical"):
            for _ in range(n_layouts):
                pts = (tc.random_surface_points(body, N_TAPS, rng) if kind == "random"
                       else tc.practical_points("car", body, rng))
                tb, to = tc.make_taps(body, cp, pts), tc.make_taps(body, other, pts)
                n = len(tb)
                sensor = rng.uniform(-1, 1, n) * np.sqrt(3) * U_SENSOR  # rectangular, shared by both runs
                yb = tb.values + sensor + rng.normal(0, U_RANDOM, n)
                yo = to.values + sensor + rng.normal(0, U_RANDOM, n)
                err = ErrorSources.build(n, random_u=np.full(n, U_RANDOM), systematic_u=U_SENSOR)
                fb = make_field("rbf").fit(body, tb.with_values(yb)).face_values()
                fo = make_field("rbf").fit(body, to.with_values(yo)).face_values()
                t = time.perf_counter()
                ch = compute_change(body, tb, yb, yo, err_base=err, err_other=err, correlation=1.0, ref_area=area,
                                    carrier=car, field_change=fo - fb)
                times.append(time.perf_counter() - t)
                for f in FIGS:
                    b = ch.band(f)
                    own = min(ch.base.band(f).u, ch.other.band(f).u)
                    rows.append(dict(layout=kind, figure=f, err=b.value - truth[f], u=b.u, ratio=b.u / own,
                                     rbf_err=b.field_value - truth[f],
                                     gap=abs(b.field_value - b.value) / b.u, flag=ch.to_dict()["figures"][f]["flagged"]))
        report[cname] = dict(kriging=summarise(rows), rbf_with_kriging_band=summarise(rows, "rbf_err"), rows=rows,
                             truth={k: float(truth[k]) for k in FIGS}, median_change_s=float(np.median(times)))
        print(f"\n== {cname}: truth " + ", ".join(f"{k} {truth[k]:+.4f}" for k in FIGS)
              + f"; median {np.median(times):.1f} s per change (3 kriging fits)")
        for est in ("kriging", "rbf_with_kriging_band"):
            print(f"  estimator {est}")
            for k, v in report[cname][est].items():
                print(f"    {k:<16} coverage {v['coverage']:.2f}  rms err {v['rms_err']:.4f}  rms u {v['rms_u']:.4f}"
                      f"  1.96u/rms err {v['halfwidth_over_rms_err']:.2f}  u/own u {v['median_u_ratio']:.2f}"
                      f"  flagged: of missed {_p(v['flagged_of_missed'])}, of covered {_p(v['flagged_of_covered'])}"
                      f"  (n={v['n']})")
    return report


def _p(x):
    return "-" if x is None else f"{x:.2f}"


def summarise(rows, key="err"):
    """bench_uncertainty's coverage summary, plus how often the warning flags a missed or a covered interval and
    the median ratio of the change's u to a run's own."""
    out = bu.summarise(rows, key)
    for layout in ("random", "practical", "all"):
        for f in FIGS + ("all",):
            sel = [r for r in rows if (layout == "all" or r["layout"] == layout) and (f == "all" or r["figure"] == f)]
            e = np.array([r[key] for r in sel])
            miss = np.abs(e) > K95 * np.array([r["u"] for r in sel])
            flag = np.array([r["flag"] for r in sel])
            out[f"{layout}/{f}"].update(
                flagged_of_missed=float(flag[miss].mean()) if miss.any() else None,
                flagged_of_covered=float(flag[~miss].mean()) if (~miss).any() else None,
                median_u_ratio=float(np.median([r["ratio"] for r in sel])))
    return out


def timing(repeats=3):
    from meshpress.sheets.runs import process_sheet
    from meshpress.sheets.sheet import read_sheet

    sheet = read_sheet(HERE.parent / "examples" / "sports_car_wing" / "test.toml")
    out = {}
    for bands in (False, True):
        ts, tb = [], []
        for _ in range(repeats):
            t = time.perf_counter()
            res = process_sheet(sheet, bands=bands)
            ts.append(time.perf_counter() - t)
            tb.append(res.bands_seconds or 0.0)
        out["with_bands" if bands else "without_bands"] = dict(total_s=float(np.median(ts)),
                                                               bands_s=float(np.median(tb)))
        if bands:
            ch = res.changes[0]
            out["example_change"] = {k: [ch.band(k).value, ch.band(k).u] for k in FIGS}
            out["example_own_u"] = {c: {k: res.configurations[c].bands.band(k).u for k in FIGS}
                                    for c in res.configurations}
    out["load_average"] = os.getloadavg()[0]
    out["OPENBLAS_NUM_THREADS"] = os.environ.get("OPENBLAS_NUM_THREADS")
    print(json.dumps(out, indent=1))
    return out


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "timing":
        timing()
        return
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 25
    n_patches = int(sys.argv[2]) if len(sys.argv) > 2 else 2500
    t0 = time.perf_counter()
    rep = coverage(n, n_patches, np.random.default_rng(2027))
    rep["load_average_end"] = os.getloadavg()[0]
    rep["wall_s"] = time.perf_counter() - t0
    trend = inspect.signature(compute_change).parameters["trend"].default  # the model's default mean, in the name
    rep["trend"] = trend
    from results import record

    variant = f"{n}_{n_patches}{'_trend-' + trend if trend else ''}"
    print(f"\nwrote {variant} in {record('bench_change', variant, rep)} ({rep['wall_s']:.0f} s)")


if __name__ == "__main__":
    main()
