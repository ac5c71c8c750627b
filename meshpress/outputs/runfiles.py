"""The files of a processed test sheet: per-run and per-configuration JSON, and the CSV tables.

In: a :class:`~meshpress.sheets.runs.TestResult`. Out: dicts for JSON and CSV text; the results folder itself
is written by ``meshpress run`` through :mod:`meshpress.outputs.resultsdir` (complete or not at all).
"""

from __future__ import annotations

import math

import numpy as np

from ..sheets.runs import ConfigurationResult, RunResult, TestResult
from ..sheets.speed import SPEED_CAUTION
from .csvsafe import SafeWriter, safe_cell


def _cell(x):
    """A CSV cell: empty for None, 6 significant digits for a float (text is made safe by SafeWriter)."""
    return "" if x is None else (f"{x:.6g}" if isinstance(x, float) else x)


def _safe(name: str) -> str:
    import re

    return re.sub(r"[^A-Za-z0-9_.-]+", "_", name).strip("._") or "unnamed"


def run_to_dict(r: RunResult) -> dict:
    run, rd = r.run, r.reading
    taps = []
    for i, n in enumerate(r.load.taps):
        taps.append({**n, "cp_std": rd.cp_stats.std[i], "cp_se": rd.cp_stats.se[i], "cp_se_ar1": rd.cp_stats.se_ar1[i],
                     "p_mean_Pa": rd.p_stats.mean[i], "p_std_Pa": rd.p_stats.std[i],
                     "zero_Pa": None if rd.zero_Pa is None else rd.zero_Pa[i]})
    d = r.load.to_dict()
    d["taps"] = taps
    d["run"] = {
        "name": run.name, "configuration": run.configuration, "direction": run.direction,
        "readings": str(run.readings), "zero": None if run.zero is None else str(run.zero),
        "q_source": ("measured, column " + repr(run.q_column)) if run.q_column else
                    ("given q" if run.q_Pa is not None else
                     ("speed column " + repr(run.speed_column) if run.speed_column else "given speed")),
        "window_s": None if rd.window_s is None else list(rd.window_s), "samples": rd.samples,
        "samples_total": rd.samples_total, "q_mean_Pa": rd.q_Pa, "q_std_Pa": rd.q_std_Pa,
        "air_density_kg_m3": rd.rho, "air_speed_mps": math.sqrt(2 * rd.q_Pa / rd.rho),
        "reference": run.reference.describe(), "reference_cp_applied": rd.cp_ref, "notes": rd.notes,
    }
    return d


def configuration_to_dict(c: ConfigurationResult) -> dict:
    d = c.load.to_dict()
    tap_cp = [{"name": n, "cp": float(x), "spread": float(s)}
              for n, x, s in zip([t["name"] for t in c.load.taps], c.cp, c.cp_spread)]
    if c.errors is not None:
        for t, r, s in zip(tap_cp, c.errors.random_u, c.errors.systematic_u):
            t.update(u_random=float(r), u_systematic=float(s))
    d["configuration"] = {
        "name": c.name, "runs": [r.run.name for r in c.runs], "spread_between_runs": c.spread,
        "air_density_kg_m3": c.rho,
        "tap_cp": tap_cp,
        "references": sorted({r.run.reference.describe() for r in c.runs}),
        "warnings": c.warnings,
    }
    if c.speeds:
        d["speeds"] = {k: np.asarray(v).tolist() for k, v in c.speeds.items()}
        d["speeds_caution"] = SPEED_CAUTION
    if c.bands is not None:
        d["uncertainty"] = c.bands.to_dict()
    return d


BANDS_COLUMNS = ("item", "base", "other", "figure", "value", "u", "lo95", "hi95", "measurement_u", "sampling_u",
                 "field_value")


def bands_csv(result: TestResult) -> str:
    """One row per configuration figure and per change figure (kriging estimate, u, 95 % interval, budget)."""
    import io

    buf = io.StringIO()
    w = SafeWriter(buf)
    w.writerow(BANDS_COLUMNS)
    for name, c in result.configurations.items():
        for b in c.bands.bands:
            w.writerow([_cell(x) for x in ("configuration", "", name, b.name, b.value, b.u, b.lo95, b.hi95,
                                           b.u_measurement, b.u_sampling, b.field_value)])
    for ch in result.changes:
        for b in ch.bands:
            w.writerow([_cell(x) for x in ("change", ch.base_label, ch.other_label, b.name, b.value, b.u, b.lo95,
                                           b.hi95, b.u_measurement, b.u_sampling, b.field_value)])
    return buf.getvalue()


SUMMARY_COLUMNS = ("run", "configuration", "direction", "window_start_s", "window_end_s", "samples", "q_Pa",
                   "q_source", "air_speed_mps", "air_density_kg_m3", "reference", "reference_cp", "CL", "CD", "CS",
                   "CPM", "CLF", "CLR", "front_share", "lift_N", "drag_N", "front_lift_N", "rear_lift_N",
                   "max_tap_cp_se")


def summary_csv(result: TestResult) -> str:
    """One row per run."""
    import io

    buf = io.StringIO()
    w = SafeWriter(buf)
    w.writerow(SUMMARY_COLUMNS)
    for r in result.runs:
        d = run_to_dict(r)["run"]
        win = r.reading.window_s or (None, None)
        row = [r.run.name, r.run.configuration, r.run.direction, win[0], win[1], r.reading.samples,
               r.reading.q_Pa, d["q_source"], d["air_speed_mps"], r.reading.rho, d["reference"], r.reading.cp_ref]
        row += [getattr(r.load, k) for k in ("CL", "CD", "CS", "CPM", "CLF", "CLR", "front_share", "lift_N",
                                             "drag_N", "front_lift_N", "rear_lift_N")]
        row.append(float(np.nanmax(r.reading.cp_stats.se)) if r.reading.samples > 1 else None)
        w.writerow([_cell(x) for x in row])
    return buf.getvalue()


def speed_csv(c: ConfigurationResult, unit: str) -> str:
    from ..units import speed_factor

    f = speed_factor(unit)
    keys = list(c.speeds)
    head = [f"speed_{unit.replace('/', 'p')}"] + keys
    lines = ["# " + SPEED_CAUTION, ",".join(safe_cell(h) for h in head)]
    for i in range(len(c.speeds["speed_mps"])):
        vals = [c.speeds["speed_mps"][i] / f] + [c.speeds[k][i] for k in keys]
        lines.append(",".join(f"{x:.6g}" for x in vals))
    return "\n".join(lines) + "\n"
