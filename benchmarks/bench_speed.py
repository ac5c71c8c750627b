"""Speed on a 1-million-face body with 200 taps: bands and planning 20 taps.

The car-like sample body at 1000 stations x 500 around (1,000,000 faces), 200 taps at
random with the invented Cp.  Times (wall clock, this machine) for: building
the body's cached arrays, compute_uncertainty (carrier of 2500 patches, surface
distances, kriging fit, bands: what ``meshpress uncertainty`` adds to
``loads``), and plan_taps for 20 taps (building its own carrier, as the
``plan`` command does).  Mesh file reading is not included.

Run: ``python benchmarks/bench_speed.py [form...]`` (the bands' orientation forms to time in turn on the same body
and taps, or ``stagnation=on|off|auto`` for the stagnation prior, or ``anisotropy=on|off`` for the fitted
streamwise weight; default the settings ``compute_uncertainty``
uses).
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
import truth_cases as tc  # noqa: E402

from meshpress.bands.gptrend import STAGNATION_SETTINGS  # noqa: E402
from meshpress.bands.planning import plan_taps  # noqa: E402
from meshpress.bands.uncertainty import compute_uncertainty  # noqa: E402


def main():
    t = time.perf_counter()
    body, cp, _ = tc.car(1000, 500)
    _ = body.area_vectors, body.centroids, body.face_normals, body.centroid_tree
    t_body = time.perf_counter() - t
    rng = np.random.default_rng(4)
    taps = tc.make_taps(body, cp, tc.random_surface_points(body, 200, rng))
    area = 2.0
    t_unc = {}
    for form in sys.argv[1:] or [None]:
        t = time.perf_counter()
        if form is None:
            kw = {}
        elif form.startswith("stagnation="):
            kw = {"stagnation_prior": STAGNATION_SETTINGS[form.split("=", 1)[1]]}
        elif form.startswith("anisotropy="):
            kw = {"anisotropy": form.split("=", 1)[1] == "on"}
        else:
            kw = {"orientation_kernel": form}
        r = compute_uncertainty(body, taps, ref_area=area, **kw)
        t_unc[form or "default"] = time.perf_counter() - t
    t = time.perf_counter()
    plan = plan_taps(body, taps, figures=("CL", "CLF", "CLR"), n_add=20, ref_area=area, min_spacing=0.1)
    t_plan = time.perf_counter() - t
    print(f"faces {body.n_faces:,}, taps {len(taps)}, cores {os.cpu_count()}, load {os.getloadavg()[0]:.1f}")
    print(f"body arrays {t_body:.1f} s; uncertainty " + ", ".join(f"{k} {v:.1f} s" for k, v in t_unc.items())
          + f"; planning 20 taps {t_plan:.1f} s")
    print("CL", r.band("CL"), "\nplanned CL u", plan.u_before[0], "->", plan.u_after[0])


if __name__ == "__main__":
    main()
