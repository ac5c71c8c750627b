"""Figures for the test-sheet work, on the invented example in examples/sports_car_wing/.

1. Time: the whole example with one body load and one projection shared by all runs and configurations, against
   the same work reloading the mesh and re-projecting the taps for every run (the naive way), in one process.
2. Accuracy against the invented truth: CL, CD, CLF, CLR of the invented Cp field (and the wing's change)
   integrated over every face of the body, against the example's 57-tap result after noise, zero offsets, cabin
   reference, steady window and averaging of two directions.
3. The wind bias: the same logs with q from the GPS ground speed instead of the on-board pitot q.

Run: ``python benchmarks/bench_runs.py`` (about a minute).  INVENTED DATA throughout.
"""

from __future__ import annotations

import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "scripts"))

from make_example import X_NOSE, WIND, V_KMH, wing_delta_cp  # noqa: E402

from meshpress.bodies import samples  # noqa: E402
from meshpress.loads.analysis import compute_loads  # noqa: E402
from meshpress.bodies.body import load_body  # noqa: E402
from meshpress.fields import make_field  # noqa: E402
from meshpress.loads.integrate import force_and_moment  # noqa: E402
from meshpress.taps.projection import project_taps  # noqa: E402
from meshpress.sheets.runs import _read_run, process_sheet, read_layout, reduce_run  # noqa: E402
from meshpress.sheets.sheet import read_sheet  # noqa: E402

SHEET = ROOT / "examples" / "sports_car_wing" / "test.toml"


def naive(sheet):
    """Every run on its own: load, project, reduce, compute (what a per-run loop over files would do)."""
    v = sheet.vehicle
    rho = sheet.air.density()[0]
    out = []
    for run in sheet.runs:
        body = load_body(v.mesh, length_unit=v.length_unit, up=v.up, forward=v.forward, front_axle=v.front_axle,
                         rear_axle=v.rear_axle)
        layout = read_layout(sheet.layout)
        taps = replace(project_taps(body, layout, max_distance=sheet.max_tap_distance_m), kind="cp")
        series, zero = _read_run(run, list(layout.names), sheet.exclude)
        rd = reduce_run(run, series, rho, zero)
        out.append(compute_loads(body, taps.with_values(rd.cp), make_field("rbf"), q=rd.q_Pa))
    return out


def truth(body, config):
    c = body.centroids + [X_NOSE, 0, 0]
    cp = samples.car_cp(c, body.face_normals)
    if config == "rear-wing":
        cp = cp + wing_delta_cp(c, body.face_normals)
    F, M = force_and_moment(body.area_vectors, body.centroids, cp, np.zeros(3), 0.0)
    A = body.frontal_area()
    wb = body.axles.wheelbase
    CL, CD, CPM = F[2] / A, F[0] / A, M[1] / (A * wb)
    return {"CL": CL, "CD": CD, "CLF": CL / 2 + CPM, "CLR": CL / 2 - CPM}


def main():
    sheet = read_sheet(SHEET)
    t0 = time.perf_counter()
    res = process_sheet(sheet)
    t1 = time.perf_counter()
    naive(sheet)
    t2 = time.perf_counter()
    n_runs = len(sheet.runs)
    print(f"1. time: shared body {t1 - t0:.1f} s for {n_runs} runs + {len(res.configurations)} configurations; "
          f"reloading per run {t2 - t1:.1f} s for the {n_runs} runs alone; ratio {(t2 - t1) / (t1 - t0):.2f}")

    print("\n2. accuracy against the invented truth (all faces of the invented field):")
    print(f"   {'':<12}{'':<5}{'truth':>9}{'57 taps':>9}{'error':>9}")
    tr = {c: truth(res.body, c) for c in res.configurations}
    for c, conf in res.configurations.items():
        for k in ("CL", "CD", "CLF", "CLR"):
            got = getattr(conf.load, k)
            print(f"   {c:<12}{k:<5}{tr[c][k]:>+9.3f}{got:>+9.3f}{got - tr[c][k]:>+9.3f}")
    d = res.comparisons[0]["delta"]
    for k in ("CL", "CD", "CLF", "CLR"):
        t = tr["rear-wing"][k] - tr["baseline"][k]
        print(f"   {'change':<12}{k:<5}{t:>+9.3f}{d[k]:>+9.3f}{d[k] - t:>+9.3f}")
    for c, conf in res.configurations.items():
        s = conf.spread["CL"]["range"]
        print(f"   {c}: CL spread between the two directions {s:.4f}; largest tap standard error (Cp) "
              f"{max(float(np.nanmax(r.reading.cp_stats.se)) for r in conf.runs):.5f}; windows "
              + ", ".join(f"{r.reading.window_s[0]:.1f}-{r.reading.window_s[1]:.1f} s" for r in conf.runs))

    print("\n3. the same logs with q from the GPS ground speed (no pitot):")
    text = SHEET.read_text().replace('q_column = "q_pitot"', 'speed_column = "gps_kmh"\nspeed_unit = "km/h"')
    text = text.replace('ignore_columns = ["gps_kmh"]', 'ignore_columns = ["q_pitot"]')
    text = text.replace('mesh = "../../sample_meshes/coupe.stl"', f'mesh = "{ROOT / "sample_meshes" / "coupe.stl"}"')
    with tempfile.TemporaryDirectory() as tmp:
        p = Path(tmp) / "gps.toml"
        p.write_text(text.replace('layout = "taps.csv"', f'layout = "{SHEET.parent / "taps.csv"}"')
                     .replace('"logs/', f'"{SHEET.parent / "logs"}/'))
        gps = process_sheet(read_sheet(p))
    V = V_KMH / 3.6
    for c in res.configurations:
        a, b = res.configurations[c].load.CL, gps.configurations[c].load.CL
        print(f"   {c}: CL pitot {a:+.4f}, GPS {b:+.4f}, ratio {b / a:.4f} (expected 1 + (w/V)^2 = "
              f"{1 + (WIND / V) ** 2:.4f})")
        for w in gps.configurations[c].warnings[1:]:
            print(f"     {w}")


if __name__ == "__main__":
    main()
