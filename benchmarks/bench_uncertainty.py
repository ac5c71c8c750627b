"""Coverage benchmark of the uncertainty bands on known-truth cases.

For each case (hemisphere, elliptic wing, car-like body, and the panel-method truths panel_car and
panel_car_yaw5, which also score CS; see truth_cases.py)
and each of N random and N practical tap layouts, the taps read the exact Cp
plus Gaussian noise of standard deviation U_TAP (stated to the model as the
per-tap uncertainty), the kriging estimate and its band are computed, and the
truth (exact Cp integrated over the same faces) is compared with the 95 %
interval.  Reported per case and figure: coverage (fraction of layouts whose
interval holds the truth), the RMS actual error, the RMS standard uncertainty,
and the ratio of the mean 95 % half-width to the RMS error (target: coverage
0.90-0.98, ratio <= 3).  The RBF field's figures are scored against the same
band for information.

Run: ``python benchmarks/bench_uncertainty.py [N] [n_patches] [cases] [kernels] [trend] [regions]`` (default 50,
2500, hemisphere,wing,car, auto, newtonian, none; trend: the model's mean beyond a constant, "newtonian" (the
default of ``meshpress uncertainty``), "normal" (linear in the surface normal) or "none"; regions
is a ``--regions`` specification, e.g. "normal", applied to both the model and the RBF field; a seventh
argument "on" adds the orientation factor to the model's correlation, and an eighth names its form: se,
exponential, matern32, matern52 (default, as in ``meshpress uncertainty``) or auto; the output file's name ends in
``_orientation`` for se and ``_orientation-FORM`` for the others; a ninth, "on" (default, as ``compute_uncertainty``) or "off", centres the
Newtonian impact term on full stagnation pressure (``stagnation_prior``), adding ``_stagnation`` to the name;
"auto" keeps it or not by marginal likelihood, adding ``_stagnation-auto``); a tenth, "varied" (default) or
"jittered", the family of practical layouts (truth_cases.practical_points; "jittered" is the one design per body
that earlier runs used), adding ``_practical-varied``); an eleventh, "on", fits the streamwise weight of the normals' factor
(``anisotropy``), adding ``_anisotropy``.  Each summary gives the coverage's exact 95 % interval
(Clopper-Pearson): with 50 layouts a coverage of 0.96 is known only to within about 0.86-1.00.
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
import truth_cases as tc  # noqa: E402

from meshpress.fields import make_field  # noqa: E402
from meshpress.bands.gptrend import STAGNATION_SETTINGS  # noqa: E402
from meshpress.bands.patches import Carrier  # noqa: E402
from meshpress.bands.uncertainty import K95, Measurement, compute_uncertainty, figure_face_weights  # noqa: E402

U_TAP = 0.005  # Cp: about 2.4 Pa at 100 km/h
FIGS = ("CL", "CD", "CLF", "CLR")
N_TAPS = {"hemisphere": 36, "wing": 48, "wing_high": 48, "car": 57, "panel_car": 57, "panel_car_yaw5": 57}
CAR_LIKE = {"car", "panel_car", "panel_car_yaw5"}  # practical layouts: the sample's one design, jittered


def case_figures(case):
    """Figures scored: the panel truths add the side force coefficient (zero by symmetry, or at yaw not)."""
    return FIGS + ("CS",) if case.startswith("panel_") else FIGS


def run_case(case, n_layouts, n_patches, rng, kernel="auto", trend=None, regions=None, orientation=False,
             orientation_kernel="se", stagnation=True, practical="varied", anisotropy=False):
    body, cp, area = getattr(tc, case)()
    area = area or body.frontal_area()
    t0 = time.perf_counter()
    car = Carrier(body, n_patches)
    t_carrier = time.perf_counter() - t0
    names, G = figure_face_weights(body, kind="cp", ref_area=area, wheelbase=body.axles.wheelbase)
    truth = dict(zip(names, tc.truth_face_values(body, cp) @ G))
    rows = []
    times = []
    chosen = {}
    kappas = []
    for kind in ("random", "practical"):
        for i in range(n_layouts):
            if kind == "random":
                pts = tc.random_surface_points(body, N_TAPS[case], rng)
            else:
                pts = tc.practical_points(case, body, rng, family=practical)
            taps = tc.make_taps(body, cp, pts)
            taps = taps.with_values(taps.values + rng.normal(0, U_TAP, len(taps)))
            meas = Measurement.build(len(taps), tap_u=np.full(len(taps), U_TAP))
            rbf = make_field("rbf", **({} if regions is None else {"regions": regions})).fit(body, taps)
            t = time.perf_counter()
            r = compute_uncertainty(body, taps, ref_area=area, meas=meas, carrier=car, field=rbf, kernel=kernel,
                                    trend=trend, regions=regions, orientation=orientation,
                                    orientation_kernel=orientation_kernel, stagnation_prior=stagnation,
                                    anisotropy=anisotropy)
            if anisotropy:
                kappas.append(r.gp.normal_anisotropy_)
            chosen[r.gp.kernel_] = chosen.get(r.gp.kernel_, 0) + 1
            if stagnation == "auto":
                k = "stagnation prior kept" if r.gp.trend_mean_used_ else "stagnation prior dropped"
                chosen[k] = chosen.get(k, 0) + 1
            times.append(time.perf_counter() - t)
            for f in case_figures(case):
                b = r.band(f)
                rows.append(dict(layout=kind, figure=f, err=b.value - truth[f], u=b.u,
                                 rbf_err=b.field_value - truth[f]))
    if kappas:
        chosen["streamwise weight kappa 10/50/90 %"] = [round(float(k), 2) for k in np.percentile(kappas, [10, 50, 90])]
    return rows, t_carrier, float(np.median(times)), truth, chosen


def clopper_pearson(k, n, level=0.95):
    """Exact (Clopper-Pearson 1934) interval of a binomial proportion: how sure a coverage of k in n is."""
    from scipy.stats import beta

    lo = 0.0 if k == 0 else float(beta.ppf((1 - level) / 2, k, n - k + 1))
    hi = 1.0 if k == n else float(beta.ppf(1 - (1 - level) / 2, k + 1, n - k))
    return [lo, hi]


def summarise(rows, key="err", figs=FIGS):
    out = {}
    for layout in ("random", "practical", "all"):
        for f in tuple(figs) + ("all",):
            sel = [r for r in rows if (layout == "all" or r["layout"] == layout) and (f == "all" or r["figure"] == f)]
            e = np.array([r[key] for r in sel])
            u = np.array([r["u"] for r in sel])
            hits = int(np.sum(np.abs(e) <= K95 * u))
            out[f"{layout}/{f}"] = dict(
                coverage=hits / len(sel),
                coverage_ci95=clopper_pearson(hits, len(sel)),
                rms_err=float(np.sqrt(np.mean(e**2))),
                rms_u=float(np.sqrt(np.mean(u**2))),
                halfwidth_over_rms_err=float(K95 * np.mean(u) / np.sqrt(np.mean(e**2))),
                n=len(sel),
            )
    return out


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 50
    n_patches = int(sys.argv[2]) if len(sys.argv) > 2 else 2500
    cases = sys.argv[3].split(",") if len(sys.argv) > 3 else ["hemisphere", "wing", "car"]
    kernel = sys.argv[4] if len(sys.argv) > 4 else "auto"
    trend = (sys.argv[5] if len(sys.argv) > 5 else "newtonian")
    trend = None if trend == "none" else trend
    regions = sys.argv[6] if len(sys.argv) > 6 else "none"
    regions = None if regions == "none" else regions
    orientation = (sys.argv[7] if len(sys.argv) > 7 else "off") == "on"
    okernel = sys.argv[8] if len(sys.argv) > 8 else "matern52"
    stagnation = STAGNATION_SETTINGS[sys.argv[9] if len(sys.argv) > 9 else "on"]
    practical = sys.argv[10] if len(sys.argv) > 10 else "varied"
    anisotropy = (sys.argv[11] if len(sys.argv) > 11 else "off") == "on"
    rng = np.random.default_rng(2026)
    report = {}
    for case in cases:
        rows, tc_s, t_med, truth, chosen = run_case(case, n, n_patches, rng, kernel, trend, regions, orientation, okernel,
                                                   stagnation, practical, anisotropy)
        figs = case_figures(case)
        report[case] = dict(kriging=summarise(rows, figs=figs), rbf_with_kriging_band=summarise(rows, "rbf_err", figs),
                            carrier_s=tc_s, median_band_s=t_med, truth={k: float(v) for k, v in truth.items()},
                            kernels_chosen=chosen)
        print(f"\n== {case}: carrier {tc_s:.1f} s, median band {t_med:.2f} s, kernels {chosen}, truth "
              + ", ".join(f"{k} {truth[k]:+.4f}" for k in figs))
        for est in ("kriging", "rbf_with_kriging_band"):
            print(f"  estimator {est}")
            for k, v in report[case][est].items():
                print(f"    {k:<16} coverage {v['coverage']:.2f} [{v['coverage_ci95'][0]:.2f}, {v['coverage_ci95'][1]:.2f}]"
                      f"  rms err {v['rms_err']:.4f}  rms u {v['rms_u']:.4f}"
                      f"  1.96u/rms err {v['halfwidth_over_rms_err']:.2f}  (n={v['n']})")
    tag = (("" if regions is None else "_regions-" + regions.replace(";", "+")) + ("_orientation" if orientation else "")
           + ("" if okernel == "se" or not orientation else "-" + okernel)
           + ("" if not stagnation or trend != "newtonian" else "_stagnation" + ("-auto" if stagnation == "auto" else ""))
           + ("" if practical == "jittered" or set(cases) <= CAR_LIKE else "_practical-" + practical)
           + ("_anisotropy" if anisotropy else ""))
    from results import record

    variant = f"{n}_{n_patches}_{'-'.join(cases)}_{kernel.replace(',', '+')}_{trend}{tag}"
    print(f"\nwrote {variant} in {record('bench_uncertainty', variant, report)}")


if __name__ == "__main__":
    main()
