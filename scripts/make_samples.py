"""Write the bundled sample data (invented, for the demo).

Creates in sample_meshes/:

- ``coupe.stl``: the closed car-like body of meshpress.bodies.samples, in mm, y up,
  forward -z, with the origin somewhere a scanner might leave it.
- ``coupe_scan.stl``: a scan-like copy: open underbody, a few holes, 0.5 mm
  noise, 3 % of faces flipped, triangle soup.
- ``coupe_taps.csv``: 57 taps in a practical layout with readings (Pa) made
  from the invented Cp field at q = 472.6 Pa (100 km/h, ISA air), with
  sensor noise and a few mm of position error.  INVENTED DEMO DATA.

With ``racer`` (``python scripts/make_samples.py racer``), the second invented sample instead
(:func:`racer`):

- ``racer.glb``: a glTF binary scene of named parts (the same body with four wheels, an
  inverted rear wing on two stands and a splitter), in m, y up, nose along +z (the glTF
  convention), origin on the ground below the middle of the front axle.
- ``racer_taps.csv``: the coupe's body layout plus wing and splitter taps, with readings (Pa)
  made from invented Cp fields at the same q.  INVENTED DEMO DATA.

Run: ``python scripts/make_samples.py [coupe] [racer]`` (default: coupe).
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


# --- The racer: the same body with wheels, an inverted rear wing on stands and a splitter (INVENTED). ---
# Design frame = the vehicle frame of meshpress.bodies.samples (m, x rearward from the nose, y right, z up from
# the ground the wheels stand on).
WHEEL_R, WHEEL_W, WHEEL_SHOULDER, TRACK_Y = 0.32, 0.24, 0.05, 0.80  # tyre radius, tread width, wheel centre |y|
WING_LE = np.array([3.72, 1.26])  # (x, z) of the wing's leading edge
WING_CHORD, WING_SPAN, WING_INCIDENCE = 0.30, 1.50, np.radians(8.0)  # trailing edge up: downforce
WING_THICK, WING_CAMBER = 0.12, 0.06  # of the chord
STAND_Y, STAND_T, STAND_S = 0.36, 0.012, (0.25, 0.65)  # stands' |y|, thickness, chord fraction they span
SPLITTER_X, SPLITTER_Z, SPLITTER_HALFW = (-0.10, 0.40), (0.150, 0.165), 0.70  # its top 1.5-8 cm under the body


def to_racer_file(p):
    """Design frame -> the racer's file frame (glTF: m, x = left, y = up, z = forward), origin on the ground
    below the middle of the front axle."""
    p = np.atleast_2d(np.asarray(p, float))
    return np.column_stack([-p[:, 1], p[:, 2], samples.WHEELBASE_X[0] - p[:, 0]])


def prism(top, bottom, y):
    """Closed surface of a section in the x-z plane swept straight along y.

    Parameters
    ----------
    top, bottom : (n, 2) float
        (x, z) of the section's upper and lower edges, from the front end to the rear end.  Where their end
        points coincide the section closes at that point (an aerofoil's nose and tail), else a straight edge
        closes it (a plate).
    y : (k,) float
        Stations along the sweep, increasing.

    Returns
    -------
    trimesh.Trimesh
        Watertight, wound outward.
    """
    n = len(top)
    shared = [np.allclose(top[0], bottom[0]), np.allclose(top[-1], bottom[-1])]
    it = np.arange(n)
    ib = np.empty(n, dtype=np.int64)
    ring = list(top)
    for i in range(n - 1, -1, -1):  # the bottom edge back to the front, skipping shared end points
        if (i == 0 and shared[0]) or (i == n - 1 and shared[1]):
            ib[i] = it[i]
        else:
            ib[i] = len(ring)
            ring.append(bottom[i])
    ring = np.asarray(ring)
    m = len(ring)
    verts = np.concatenate([np.column_stack([ring[:, 0], np.full(m, yj), ring[:, 1]]) for yj in y])
    r = np.arange(m)
    faces = []
    for j in range(len(y) - 1):
        a, b = j * m + r, j * m + np.roll(r, -1)
        faces += [np.column_stack([a, a + m, b + m]), np.column_stack([a, b + m, b])]
    cap = np.concatenate([np.column_stack([it[:-1], it[1:], ib[1:]]), np.column_stack([it[:-1], ib[1:], ib[:-1]])])
    cap = cap[(cap[:, 0] != cap[:, 1]) & (cap[:, 1] != cap[:, 2]) & (cap[:, 2] != cap[:, 0])]
    faces += [cap, cap[:, ::-1] + (len(y) - 1) * m]
    mesh = trimesh.Trimesh(verts, np.concatenate(faces), process=False)
    if mesh.volume < 0:
        mesh.invert()
    assert mesh.is_watertight and mesh.is_winding_consistent
    return mesh


def wheel(x_axle, side):
    """A closed tyre (tread with rounded shoulders, flat side walls) standing on z = 0; side -1 left, +1 right."""
    r0, w, rs = WHEEL_R, WHEEL_W, WHEEL_SHOULDER
    arc = np.linspace(0.0, np.pi / 2, 6)
    wall = np.linspace(0.0, r0 - rs, 8)
    prof = ([(r, -w / 2) for r in wall] + [(r0 - rs + rs * np.sin(t), -w / 2 + rs - rs * np.cos(t)) for t in arc[1:]]
            + [(r0, h) for h in np.linspace(-w / 2 + rs, w / 2 - rs, 6)[1:-1]]
            + [(r0 - rs + rs * np.cos(t), w / 2 - rs + rs * np.sin(t)) for t in arc[:-1]] + [(r, w / 2) for r in wall[::-1]])
    m = trimesh.creation.revolve(np.asarray(prof), sections=48)  # about z
    m.apply_transform(trimesh.transformations.rotation_matrix(np.pi / 2, [1, 0, 0]))  # axis along y
    m.apply_translation([x_axle, side * TRACK_Y, -m.bounds[0, 2]])  # the lowest point on the ground
    return m


def wing_section(s):
    """Inverted section at chord fractions s (an invented formula): (top, bottom) (n, 2) in (x, z), m, before
    the incidence.  Half thickness ``WING_THICK/2 * sqrt(s)(1 - s) / max``, largest at s = 1/3; parabolic camber
    ``4 WING_CAMBER s(1 - s)``, towards the ground."""
    half = 0.5 * WING_THICK * np.sqrt(s) * (1 - s) / (np.sqrt(1 / 3) * 2 / 3)
    camber = -4 * WING_CAMBER * s * (1 - s)
    x = WING_CHORD * s
    return np.column_stack([x, WING_CHORD * (camber + half)]), np.column_stack([x, WING_CHORD * (camber - half)])


def wing_place(p):
    """Section (x, z) -> design frame (x, z): the incidence (trailing edge up), then to the leading edge."""
    c, sn = np.cos(WING_INCIDENCE), np.sin(WING_INCIDENCE)
    return np.column_stack([c * p[:, 0] - sn * p[:, 1], sn * p[:, 0] + c * p[:, 1]]) + WING_LE


def rear_wing():
    # About 1,200 vertices: under the field's 2,500-vertex carrier, so the wing's own fit stays quick.
    s = 0.5 * (1 - np.cos(np.linspace(0, np.pi, 24)))  # points cluster at the nose and tail
    top, bottom = wing_section(s)
    return prism(wing_place(top), wing_place(bottom), np.linspace(-WING_SPAN / 2, WING_SPAN / 2, 26))


def wing_stands(body):
    """Two thin boxes from 2 cm inside the deck up to the wing's camber line (inside the wing)."""
    top, bottom = wing_section(np.linspace(*STAND_S, 7))
    line = wing_place(0.5 * (top + bottom))
    out = []
    for side in (-1, 1):
        yc = side * STAND_Y
        deck = [body.ray.intersects_location([[x, yc, 3.0]], [[0, 0, -1]])[0][:, 2].max() for x in line[:, 0]]
        low = np.column_stack([line[:, 0], np.asarray(deck) - 0.02])
        out.append(prism(line, low, np.array([yc - STAND_T / 2, yc + STAND_T / 2])))
    return trimesh.util.concatenate(out)


def splitter():
    x = np.linspace(*SPLITTER_X, 16)
    z0, z1 = SPLITTER_Z
    return prism(np.column_stack([x, np.full_like(x, z1)]), np.column_stack([x, np.full_like(x, z0)]),
                 np.linspace(-SPLITTER_HALFW, SPLITTER_HALFW, 29))


def racer_parts():
    """The racer's named parts in the design frame: dict name -> trimesh.Trimesh (each closed)."""
    v, f = samples.car_body(200, 100)
    body = trimesh.Trimesh(v, f, process=False)
    parts = {"body": body}
    for end, x in zip(("front", "rear"), samples.WHEELBASE_X):
        for side, sign in (("left", -1), ("right", 1)):
            parts[f"wheel {end} {side}"] = wheel(x, sign)
    parts["rear wing"] = rear_wing()
    parts["wing stands"] = wing_stands(body)
    parts["splitter"] = splitter()
    return parts


def wing_cp(s, lower, y):
    """Invented Cp on the inverted wing at chord fraction s: stagnation at the nose, a suction peak near the
    nose of the lower (suction) face recovering to +0.15 at the tail, mild pressure on the upper face; loading
    falling off towards the tips (y = +/- WING_SPAN/2)."""
    s = np.asarray(s, float)
    tail = 0.15
    suction = tail + 0.85 * np.exp(-s / 0.01) - 2.3 * (1 - np.exp(-s / 0.025)) * (1 - s) ** 1.3
    pressure = tail + 0.85 * np.exp(-s / 0.05) + 0.2 * (1 - s) * (1 - np.exp(-s / 0.05))
    tip = np.sqrt(np.clip(1 - (2 * np.asarray(y) / (WING_SPAN + 0.1)) ** 4, 0, 1))  # some load left at the tips
    return tail + tip * (np.where(lower, suction, pressure) - tail)


def splitter_cp(x, top, y):
    """Invented Cp on the splitter: pressure on the upper face ahead of the bumper, suction under the lip, both
    fading under the body."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    lip = 0.35 * np.exp(-((x + 0.02) / 0.15) ** 2)
    return np.where(top, 0.05 + lip, -0.1 - lip) * (1 - 0.3 * (y / SPLITTER_HALFW) ** 2)


def racer_taps(parts):
    """(name, part, design-frame point, Cp) of every tap: the coupe's body layout, three wing stations, the
    splitter."""
    body = parts["body"]
    taps = []
    for name, x, t in tap_layout():
        p = surface_point(body, x, t)
        _, _, fid = trimesh.proximity.closest_point(body, [p])
        taps.append((name, "body", p, samples.car_cp(p[None], body.face_normals[fid])[0]))
    s = np.array([0.02, 0.08, 0.2, 0.4, 0.6, 0.85])
    top, bottom = wing_section(s)
    for station, y in (("L", -0.55), ("C", 0.0), ("R", 0.55)):
        for face, pts, lower in (("T", top, False), ("B", bottom, True)):
            cp = wing_cp(s, lower, y)
            for i, (xz, c) in enumerate(zip(wing_place(pts), cp)):
                taps.append((f"W{station}{face}{i + 1}", "rear wing", np.array([xz[0], y, xz[1]]), c))
    for face, z, up in (("T", SPLITTER_Z[1], True), ("B", SPLITTER_Z[0], False)):
        for i, (x, y) in enumerate(((-0.07, 0.0), (0.05, 0.0), (0.25, 0.0), (0.05, 0.45))):
            taps.append((f"SP{face}{i + 1}", "splitter", np.array([x, y, z]), splitter_cp(x, up, y)))
    return taps


def racer(seed: int = 11):
    """Write racer.glb and racer_taps.csv (INVENTED DEMO DATA) into sample_meshes/."""
    rng = np.random.default_rng(seed)
    OUT.mkdir(exist_ok=True)
    parts = racer_parts()
    scene = trimesh.Scene()
    # glTF has no comments; the scene's "extras" carry the note.
    scene.metadata["note"] = ("INVENTED DEMO DATA (meshpress sample, scripts/make_samples.py): a made-up car-like "
                              "body with wheels, an inverted rear wing on stands and a splitter; not any real car. "
                              "m, y up, forward +z, origin on the ground below the middle of the front axle.")
    for name, mesh in parts.items():
        scene.add_geometry(trimesh.Trimesh(to_racer_file(mesh.vertices), mesh.faces, process=False),
                           node_name=name, geom_name=name)
    (OUT / "racer.glb").write_bytes(scene.export(file_type="glb"))
    rows = []
    for name, part, p, cp in racer_taps(parts):
        mesh = parts[part]
        q, _, fid = trimesh.proximity.closest_point(mesh, [p])
        n = mesh.face_normals[fid[0]]
        e = rng.normal(0, 0.0015, 3)
        # Drilled taps sit in the surface: position error along it only (a wing's tail is a few mm thick).
        pos = to_racer_file(q[0] + e - (e @ n) * n)[0]
        rows.append((name, *np.round(pos, 4), round(float(cp * Q_PA + rng.normal(0, 2.0)), 1)))
    lines = [
        "# INVENTED DEMO DATA (meshpress sample): a made-up car with wheels, an inverted rear wing and a splitter",
        "# (racer.glb), on an invented test day at 100 km/h in ISA air (q = 472.6 Pa). Readings are made up from",
        "# invented Cp fields, not measured. Coordinates in m, frame of racer.glb (y up, forward +z, x to the left);",
        "# p is gauge pressure vs free-stream static, Pa.",
        "tap,x,y,z,p",
    ]
    lines += [f"{r[0]},{r[1]},{r[2]},{r[3]},{r[4]}" for r in rows]
    (OUT / "racer_taps.csv").write_text("\n".join(lines) + "\n")
    counts = ", ".join(f"{k} {len(m.faces)}" for k, m in parts.items())
    print(f"wrote {OUT}/racer.glb ({sum(len(m.faces) for m in parts.values())} faces: {counts}), "
          f"racer_taps.csv ({len(rows)} taps)")


if __name__ == "__main__":
    import sys

    todo = sys.argv[1:] or ["coupe"]
    unknown = set(todo) - {"coupe", "racer"}
    if unknown:
        raise SystemExit(f"make_samples.py: unknown sample {', '.join(sorted(unknown))}; use coupe and/or racer")
    if "coupe" in todo:
        main()
    if "racer" in todo:
        racer()
