"""Planning benchmark on the car-like body (invented known truth).

For each case: a practical 40-tap layout (40 of the 57 taps of
scripts/make_samples.py tap_layout, positions jittered by ~5 cm), then either
20 taps planned by ``plan_taps`` (figures CL, CLF, CLR; 100 mm spacing) or 20
taps at random on the surface.  With each 60-tap set the kriging estimate of
CL, CLF, CLR is compared with the truth.  Reported: mean absolute actual error
over the cases (and the mean predicted u), for 40 taps, 40 + planned, 40 +
random.  The RBF field's errors are given for information.

Run: ``python benchmarks/bench_planning.py [n_cases] [planner_orientation] [n_random] [planner_form]`` (default 12,
on, 1, matern52; "off" plans without the orientation factor; ``n_random`` draws of the 20 random taps per case,
whose errors are averaged, so the random side of the comparison is less noisy; ``planner_form`` the form of the
planner's orientation factor, as ``plan --orientation-kernel``).  The estimate is ``compute_uncertainty``'s default (orientation
factor on).
"""

from __future__ import annotations

import inspect
import json
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
import truth_cases as tc  # noqa: E402

from meshpress.fields import make_field  # noqa: E402
from meshpress.bands.patches import Carrier  # noqa: E402
from meshpress.bands.planning import plan_taps  # noqa: E402
from meshpress.bands.uncertainty import compute_uncertainty, figure_face_weights  # noqa: E402

FIGS = ("CL", "CLF", "CLR")
#: The estimate's orientation form: compute_uncertainty's default (recorded in the output's name and content).
EST_FORM = inspect.signature(compute_uncertainty).parameters["orientation_kernel"].default
#: The estimate's trend: compute_uncertainty's default (recorded in the output's name and content).
EST_TREND = inspect.signature(compute_uncertainty).parameters["trend"].default
#: The planner's trend: plan_taps's default (recorded in the output's name and content).
PLAN_TREND = inspect.signature(plan_taps).parameters["trend"].default
#: The stagnation prior of the estimate and of the planner: their defaults (recorded likewise).
EST_STAG = inspect.signature(compute_uncertainty).parameters["stagnation_prior"].default
PLAN_STAG = inspect.signature(plan_taps).parameters["stagnation_prior"].default


def _stag_tag(trend, stag) -> str:
    return f"-stagnation-{'auto' if stag == 'auto' else 'on'}" if trend == "newtonian" and stag else ""


def main():
    n_cases = int(sys.argv[1]) if len(sys.argv) > 1 else 12
    orient = (sys.argv[2] if len(sys.argv) > 2 else "on") == "on"
    n_random = int(sys.argv[3]) if len(sys.argv) > 3 else 1
    form = sys.argv[4] if len(sys.argv) > 4 else "matern52"
    rng = np.random.default_rng(11)
    body, cp, _ = tc.car()
    area = body.frontal_area()
    car = Carrier(body, 2500)
    names, G = figure_face_weights(body, kind="cp", ref_area=area, wheelbase=body.axles.wheelbase)
    truth = dict(zip(names, tc.truth_face_values(body, cp) @ G))
    res = {k: {f: [] for f in FIGS} for k in ("base40", "planned", "random")}
    res_u = {k: {f: [] for f in FIGS} for k in res}
    res_rbf = {k: {f: [] for f in FIGS} for k in res}
    t_plan = []
    for c in range(n_cases):
        base = tc.practical_points("car", body, rng, n=40)
        t0 = tc.make_taps(body, cp, base)
        t = time.perf_counter()
        plan = plan_taps(body, t0, figures=FIGS, n_add=20, carrier=car, ref_area=area, min_spacing=0.1,
                         orientation=orient, orientation_kernel=form)
        t_plan.append(time.perf_counter() - t)
        sets = [("base40", base), ("planned", np.vstack([base, plan.points]))]
        sets += [("random", np.vstack([base, tc.random_surface_points(body, 20, rng)])) for _ in range(n_random)]
        acc = {k: {f: [] for f in FIGS} for k in res}
        for k, pts in sets:
            taps = tc.make_taps(body, cp, pts)
            rbf = make_field("rbf").fit(body, taps)
            r = compute_uncertainty(body, taps, ref_area=area, carrier=car, field=rbf)
            for f in FIGS:
                b = r.band(f)
                acc[k][f].append((abs(b.value - truth[f]), b.u, abs(b.field_value - truth[f])))
        for k in res:  # one entry per case: the mean over the random draws
            for f in FIGS:
                e, u, e_rbf = np.mean(acc[k][f], axis=0)
                res[k][f].append(e)
                res_u[k][f].append(u)
                res_rbf[k][f].append(e_rbf)
        print(f"case {c + 1}/{n_cases}: " + "  ".join(
            f"{k} " + ",".join(f"{res[k][f][-1]:.3f}" for f in FIGS) for k in res), flush=True)
    out = {"n_cases": n_cases, "planner_orientation": orient, "planner_form": form,
           "estimate_form": EST_FORM, "estimate_trend": EST_TREND, "planner_trend": PLAN_TREND,
           "estimate_stagnation_prior": EST_STAG, "planner_stagnation_prior": PLAN_STAG, "n_random": n_random, "median_plan_s": float(np.median(t_plan)), "truth": {f: truth[f] for f in FIGS}}
    for k in res:
        out[k] = {f: {"mean_abs_err": float(np.mean(res[k][f])), "mean_u": float(np.mean(res_u[k][f])),
                      "rbf_mean_abs_err": float(np.mean(res_rbf[k][f]))} for f in FIGS}
    print(json.dumps(out, indent=1))
    for f in FIGS:
        p, r = out["planned"][f]["mean_abs_err"], out["random"][f]["mean_abs_err"]
        print(f"{f}: mean |error| base {out['base40'][f]['mean_abs_err']:.4f}  +20 planned {p:.4f}  "
              f"+20 random {r:.4f}  planned/random {p / r:.2f}")
    tag = (("_orientation" if orient else "") + (f"-{form}" if orient and form != "se" else "")
           + (f"_r{n_random}" if n_random > 1 else "") + (f"_estimate-{EST_FORM}" if EST_FORM != "se" else "")
           + (f"-{EST_TREND}" if EST_TREND else "") + _stag_tag(EST_TREND, EST_STAG)
           + (f"_planner-{PLAN_TREND}" if PLAN_TREND else "") + _stag_tag(PLAN_TREND, PLAN_STAG))
    from results import record

    record("bench_planning", f"{n_cases}{tag}", out)


if __name__ == "__main__":
    main()
