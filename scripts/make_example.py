"""Write the invented example test in examples/sports_car_wing/ (INVENTED DATA).

Scenario (made up, not measured): a small sports car (the sample body of
sample_meshes/coupe.stl) on an invented closed airfield runway, 120 km/h GPS
speed, two directions, with a steady 3.5 m/s wind along the runway.  Two
configurations: ``baseline`` and ``rear-wing``; the wing is modelled as a
change of the invented Cp field of meshpress.bodies.samples on the rear deck (higher
pressure on the deck ahead of and under the wing, a lower base
pressure).  Each run is a 10 Hz log of 57 taps read against the cabin, an
on-board pitot-static q, the cabin pressure against the pitot static and the
GPS speed, with sensor noise, zero offsets and a short unsteady start while
the car settles to speed; a zero file (car at rest) comes with each run.

Run: ``python scripts/make_example.py``; then ``meshpress run
examples/sports_car_wing/test.toml``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from meshpress.bodies import samples
from meshpress.bodies.body import load_body
from meshpress.commands.demo import DEMO_SETTINGS
from meshpress.taps.projection import project_taps
from meshpress.taps.layout import read_taps

ROOT = Path(__file__).resolve().parent.parent
OUT = ROOT / "examples" / "sports_car_wing"
X_NOSE = 2.15  # vehicle-frame x of the sample body's nose is -2.15 m (axles 0.85 and 3.45 m from the nose)
V_KMH = 120.0
WIND = 3.5  # m/s along the runway, from the north (head wind running north)
CP_CABIN = -0.18  # invented cabin pressure coefficient
FS = 10.0  # Hz
DURATION = 70.0  # s

AIR = dict(temperature_C=19.0, pressure_hPa=1009.0, humidity_percent=62.0)


def wing_delta_cp(points, normals):
    """Invented change of Cp a rear wing makes on the body (nose-origin frame, m)."""
    x = points[:, 0]
    nx, nz = normals[:, 0], normals[:, 2]
    deck = 0.55 * np.exp(-(((x - 3.85) / 0.32) ** 2)) * np.clip(nz, 0, 1)
    base = -0.25 * np.clip(nx, 0, 1) * (x > 3.6)  # stronger wake behind the wing: more drag
    return deck + base


def series(rng, cp_true, V_ground, air_speed, rho, offsets, t):
    n = len(t)
    settle = np.clip(t / 12.0, 0, 1)
    # Short unsteady start: 80 % of speed rising to full, with a wobble.
    factor = np.where(t < 12.0, 0.8 + 0.2 * settle + 0.03 * np.sin(1.3 * t), 1.0)
    factor = factor * (1 + 0.002 * np.sin(0.21 * t) + 0.0015 * rng.standard_normal(n))
    va = air_speed * factor
    q = 0.5 * rho * va**2
    gps = (V_ground * factor) * 3.6 + 0.15 * rng.standard_normal(n)
    p_cabin = CP_CABIN * q
    p = cp_true[None, :] * q[:, None] - p_cabin[:, None] + offsets["taps"][None, :] + 3.0 * rng.standard_normal(
        (n, len(cp_true)))
    return {
        "time": t, "gps_kmh": gps,
        "q_pitot": q * (1 + 0.004 * rng.standard_normal(n)) + offsets["q"],
        "cabin": p_cabin + offsets["cabin"] + 1.5 * rng.standard_normal(n),
        "p": p,
    }


def write_csv(path, header_lines, names, data):
    cols = ["time", "gps_kmh", "q_pitot", "cabin"]
    cols = [c for c in cols if c in data]
    lines = list(header_lines) + [",".join(cols + names)]
    for i in range(len(data["time"])):
        vals = [f"{data[c][i]:.2f}" if c == "time" else f"{data[c][i]:.1f}" for c in cols]
        vals += [f"{v:.1f}" for v in data["p"][i]]
        lines.append(",".join(vals))
    path.write_text("\n".join(lines) + "\n")


def main(seed: int = 11):
    from meshpress.sheets.air import air_density

    rng = np.random.default_rng(seed)
    rho, _ = air_density(AIR["temperature_C"], AIR["pressure_hPa"] * 100, AIR["humidity_percent"])
    body = load_body(ROOT / "sample_meshes" / "coupe.stl", **DEMO_SETTINGS)
    table = read_taps(ROOT / "sample_meshes" / "coupe_taps.csv")
    taps = project_taps(body, table)
    pts = taps.points + [X_NOSE, 0, 0]
    nrm = body.face_normals[taps.faces]
    cp = {"baseline": samples.car_cp(pts, nrm)}
    cp["rear-wing"] = cp["baseline"] + wing_delta_cp(pts, nrm)
    names = list(taps.names)

    (OUT / "logs").mkdir(parents=True, exist_ok=True)
    head = ["# INVENTED EXAMPLE DATA (meshpress): made up from an invented Cp field, not measured."]
    layout = head + ["# Tap layout: mm, axes of sample_meshes/coupe.stl (y up, forward -z).", "tap,x,y,z"]
    layout += [f"{n},{x:.1f},{y:.1f},{z:.1f}" for n, (x, y, z) in zip(names, table.points)]
    (OUT / "taps.csv").write_text("\n".join(layout) + "\n")

    V = V_KMH / 3.6
    t = np.arange(0, DURATION, 1 / FS)
    tz = np.arange(0, 5.0, 1 / FS)
    for config in ("baseline", "rear-wing"):
        for direction, sign in (("north", +1), ("south", -1)):
            offsets = {"taps": rng.normal(0, 6.0, len(names)), "q": rng.normal(0, 2.0), "cabin": rng.normal(0, 2.0)}
            d = series(rng, cp[config], V, V + sign * WIND, rho, offsets, t)
            stem = f"{config}_{direction}"
            write_csv(OUT / "logs" / f"{stem}.csv",
                      head + [f"# {config}, running {direction}; time s, gps_kmh km/h, q_pitot (pitot-static q), "
                              "cabin (cabin vs pitot static) and taps (vs cabin) in Pa."], names, d)
            n = len(tz)
            zero = {"time": tz, "q_pitot": offsets["q"] + 0.5 * rng.standard_normal(n),
                    "cabin": offsets["cabin"] + 0.5 * rng.standard_normal(n),
                    "p": offsets["taps"][None, :] + 1.0 * rng.standard_normal((n, len(names)))}
            write_csv(OUT / "logs" / f"{stem}_zero.csv", head + ["# at rest before the run, engine off; Pa."],
                      names, zero)
    print(f"wrote {OUT} (rho {rho:.4f} kg/m3, true dCL from the wing made from the invented field)")


if __name__ == "__main__":
    main()
