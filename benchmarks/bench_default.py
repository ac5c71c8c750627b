"""The default method against known truths, beside the other load methods (docs/accuracy.md, "The default").

Same bodies, truths and layouts as benchmarks/bench_accuracy.py (closed-form hemisphere and half ellipsoid,
the Joukowski wing with three chordwise rows, the car-like body with its invented field and the practical
layout); per case and method: CL error (% of the exact CL), CLF and CLR errors (coefficient units, against
the exact Cp integrated on the mesh), and for the default the 95 % band and whether it holds the truth.

Run: ``python benchmarks/bench_default.py [--out results.json]``.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_accuracy import cases, layout, practical_car_taps, taps_at, truth_loads  # noqa: E402

from meshpress.loads.analysis import compute_loads  # noqa: E402
from meshpress.fields import make_field  # noqa: E402
from meshpress.bands.uncertainty import compute_uncertainty  # noqa: E402

METHODS = ["posterior", "kriging", "rbf", "strip"]
PLANS = {"hemisphere": [("spread", 100), ("spread", 200)], "half ellipsoid": [("spread", 100), ("spread", 200)],
         "Joukowski wing": [("rows", 75), ("rows", 150)], "car-like": [("practical", 57), ("random", 100)]}


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default=None, help="also write the rows (JSON) here")
    ap.add_argument("--record", metavar="VARIANT",
                    help="store the rows as VARIANT in benchmarks/results/bench_default.json (the docs cite it)")
    args = ap.parse_args()
    rng = np.random.default_rng(1)
    rows = []
    for case in cases():
        body = case["body"]
        ref = case["ref"] or body.frontal_area()
        truth = truth_loads(body, case["cp"], ref)
        cl_exact = case["cl"] if case["cl"] is not None else truth.CL
        print(f"\n## {case['name']}: {body.n_faces} faces, exact CL {cl_exact:.4f}", flush=True)
        for kind, n in PLANS[case["name"]]:
            taps = practical_car_taps(case) if kind == "practical" else taps_at(
                body, layout(body, kind, n, rng, case["ys"]), case["cp"])
            for m in METHODS:
                t0 = time.perf_counter()
                field = make_field(m)
                res = compute_loads(body, taps, field, ref_area=ref)
                row = dict(case=case["name"], layout=kind, taps=len(taps), method=m,
                           cl_err_pct=100 * (res.CL - cl_exact) / abs(cl_exact), clf_err=res.CLF - truth.CLF,
                           clr_err=res.CLR - truth.CLR)
                if m == "posterior":
                    unc = compute_uncertainty(body, taps, ref_area=ref, field=field)
                    b = {k: unc.band(k) for k in ("CL", "CLF", "CLR")}
                    row["centre_minus_loads"] = max(abs(b["CL"].value - res.CL), abs(b["CLF"].value - res.CLF))
                    row["u"] = {k: b[k].u for k in b}
                    truth_of = {"CL": truth.CL, "CLF": truth.CLF, "CLR": truth.CLR}
                    row["covered"] = {k: bool(b[k].lo95 <= truth_of[k] <= b[k].hi95) for k in b}
                row["worst_split_err"] = max(abs(res.CL - truth.CL), abs(row["clf_err"]), abs(row["clr_err"]))
                row["seconds"] = time.perf_counter() - t0
                rows.append(row)
                extra = ""
                if m == "posterior":
                    extra = (f"  u(CL) {row['u']['CL']:.4f}  covered {row['covered']}  "
                             f"centre-loads {row['centre_minus_loads']:.1e}")
                print(f"  {kind:<9} {len(taps):>4} {m:<10} CL {row['cl_err_pct']:+6.2f} %  CLF {row['clf_err']:+.4f}  "
                      f"CLR {row['clr_err']:+.4f}  worst {row['worst_split_err']:.4f}  {row['seconds']:5.1f} s{extra}",
                      flush=True)
    if args.out:
        Path(args.out).write_text(json.dumps(rows, indent=1))
    if args.record:
        from results import record

        record("bench_default", args.record, rows)


if __name__ == "__main__":
    main()
