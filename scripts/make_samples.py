"""Write the bundled sample data (invented, for the demo).

Creates in sample_meshes/:

- ``coupe.stl``: the closed car-like body of meshpress.bodies.samples, in mm, y up,
  forward -z, with the origin somewhere a scanner might leave it.
- ``coupe_scan.stl``: a scan-like copy: open underbody, a few holes, 0.5 mm
  noise, 3 % of faces flipped, triangle soup.
- ``coupe_taps.csv``: 60 taps in a practical layout with readings (Pa) made
  from the invented Cp field at q = 472.6 Pa (100 km/h, ISA air), with
  sensor noise and a few mm of position error.  INVENTED DEMO DATA.

Run: ``python scripts/make_samples.py``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import trimesh

from meshpress.bodies import samples

OUT = Path(__file__).resolve().parent.parent / "sample_meshes"
OFFSET_MM = np.array([-20.0, 312.0, -1100.0])  # where the "scanner" put its origin
Q_PA = 0.5 * 1.225 * (100 / 3.6) ** 2


def to_mesh_mm(p):
    """Vehicle frame (m, x rearward from nose, z up from ground) -> file frame
    (mm; x = right, y = up, z = rearward, i.e. forward is -z)."""
    p = np.asarray(p, float)
    return np.column_stack([p[:, 1], p[:, 2], p[:, 0]]) * 1000.0 + OFFSET_MM


def tap_layout():
    """(name, x, t) stations: x from the nose (m), t angle around the section."""
    taps = []
    for i, x in enumerate(np.linspace(0.08, 4.12, 18)):
        taps.append((f"CT{i + 1:02d}", x, np.pi / 2))  # centre line over the top
    for i, x in enumerate(np.linspace(0.3, 3.9, 9)):
        taps.append((f"CU{i + 1:02d}", x, -np.pi / 2))  # centre line under the floor
    for row, x in (("B", 0.7), ("R", 2.2), ("D", 3.5)):  # bonnet, roof, deck cross rows
        for j, t in enumerate(np.linspace(0.35, np.pi - 0.35, 7)):
            if abs(t - np.pi / 2) < 1e-9:
                continue
            taps.append((f"{row}{j + 1}", x, t))
    for side, t in (("SR", 0.0), ("SL", np.pi)):
        for j, x in enumerate((0.5, 1.6, 2.7, 3.8)):
            taps.append((f"{side}{j + 1}", x, t))
    for j, (x, t) in enumerate(((1.2, -np.pi / 2 + 0.6), (1.2, -np.pi / 2 - 0.6), (2.6, -np.pi / 2 + 0.6),
                                (2.6, -np.pi / 2 - 0.6))):
        taps.append((f"U{j + 1}", x, t))
    return taps


def surface_point(body, x, t):
    """Point of the body's surface in the section plane at x, in direction t from the section centre."""
    top, bot, hw = samples.profiles(np.array([x]))
    zc = 0.5 * (top[0] + bot[0])
    d = np.array([0.0, np.cos(t), np.sin(t)])
    loc, _, _ = body.ray.intersects_location([[x, 0.0, zc]], [d])
    return loc[np.argmax(loc @ d)]


def main(seed: int = 7):
    rng = np.random.default_rng(seed)
    OUT.mkdir(exist_ok=True)
    v, f = samples.car_body(200, 100)
    body = trimesh.Trimesh(v, f, process=False)
    trimesh.Trimesh(to_mesh_mm(v), f, process=False).export(OUT / "coupe.stl")

    # Scan-like copy.
    c = body.triangles_center
    n = body.face_normals
    # The scanner missed two floor panels beside the centre tunnel (no taps there).
    keep = ~((n[:, 2] < -0.8) & (c[:, 0] > 1.4) & (c[:, 0] < 2.3) & (np.abs(c[:, 1]) > 0.12) & (np.abs(c[:, 1]) < 0.5))
    for centre in ([1.6, 0.9, 0.6], [3.0, -0.9, 0.7], [2.2, 0.4, 1.36]):
        keep &= np.linalg.norm(c - centre, axis=1) > 0.04
    fs = f[keep].copy()
    flip = rng.random(len(fs)) < 0.03
    fs[flip] = fs[flip][:, ::-1]
    vs = v + rng.normal(0, 0.0005, v.shape)
    tri = to_mesh_mm(vs)[fs]
    soup = trimesh.Trimesh(tri.reshape(-1, 3), np.arange(3 * len(fs)).reshape(-1, 3), process=False)
    soup.export(OUT / "coupe_scan.stl")

    # Taps and readings.
    rows = []
    for name, x, t in tap_layout():
        p = surface_point(body, x, t)
        _, _, fid = trimesh.proximity.closest_point(body, [p])
        cp = samples.car_cp(p[None], body.face_normals[fid])[0]
        reading = cp * Q_PA + rng.normal(0, 2.0)  # a few Pa of sensor noise
        pos = to_mesh_mm((p + rng.normal(0, 0.0015, 3))[None])[0]  # ~1.5 mm position error
        rows.append((name, *np.round(pos, 1), round(float(reading), 1)))
    lines = [
        "# INVENTED DEMO DATA (meshpress sample): a home-built coupe on an invented airfield test day,",
        "# 100 km/h in ISA air (q = 472.6 Pa). Readings are made up from an invented Cp field, not measured.",
        "# Coordinates in mm, mesh frame of coupe.stl (y up, forward -z); p is gauge pressure vs free-stream static, Pa.",
        "tap,x,y,z,p",
    ]
    lines += [f"{r[0]},{r[1]},{r[2]},{r[3]},{r[4]}" for r in rows]
    (OUT / "coupe_taps.csv").write_text("\n".join(lines) + "\n")
    print(f"wrote {OUT}/coupe.stl ({len(f)} faces), coupe_scan.stl ({len(fs)} faces), coupe_taps.csv ({len(rows)} taps)")


if __name__ == "__main__":
    main()
