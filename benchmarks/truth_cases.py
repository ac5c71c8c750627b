"""Known-truth cases for the uncertainty and planning benchmarks.

- ``hemisphere``: a unit hemisphere dome on the ground in potential flow along
  x, Cp = 1 - 9/4 sin^2(theta), theta from the flow axis [text: Batchelor,
  An Introduction to Fluid Dynamics, 1967, sec. 6.8].  Open surface (no base).
- ``wing``: a straight wing of elliptic section (chord 1 m, t/c 0.12, span 2 m,
  4 deg incidence) in potential flow with the circulation that puts the rear
  stagnation point at the trailing edge.  The ellipse is the image of a circle
  under the Joukowski map z = zeta + k^2/zeta, so the surface speed is exact in
  closed form [text: Milne-Thomson, Theoretical Hydrodynamics, ch. 6]; the
  section lift is rho U Gamma (Kutta-Joukowski), which the benchmark checks.
  Open at the tips (Cp is two-dimensional).  Its section's centre is 0.5 m above
  the ground, between axles at -0.25 and +0.25 m (the quarter and three-quarter
  chord).
- ``wing_high``: the same wing 1 m above the ground (a diagnostic: the
  moments' arms change, the field and the lift do not).
- ``car``: meshpress.bodies.samples.car_body with the invented car_cp field (INVENTED
  known truth), practical layout from scripts/make_samples.py tap_layout.
- ``panel_car``: the same car-like shape at 4,224 faces (``car_body(48, 44, even=True)``) in the potential flow
  of a constant-source panel solution (Hess & Smith 1967; panel_flow.py) with the ground by images and a
  separated base (Cp = -0.25 on rear-facing skin behind the widest section: a common-practice value, not a
  derived one).  A truth the bands' model was not built from (its trend is the Newtonian shape of ``car``'s
  field).  Each face carries its panel's Cp; a tap reads the Cp of the face it lies on.  Same practical layout.
- ``panel_car_yaw5``: the same at 5 degrees of yaw (stream towards +y), so the side force is not zero (it comes
  from the base: attached potential flow has none, d'Alembert).  Solutions are cached under /tmp.

Truth figures are the integral of the exact Cp over the same mesh faces, so
the error measured is the interpolation's alone.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "scripts"))  # make_samples (the car's tap layout)

from meshpress.bodies.body import Axles, Body  # noqa: E402
from meshpress.taps.projection import ProjectedTaps  # noqa: E402


def hemisphere(sub: int = 5):
    import trimesh

    m = trimesh.creation.icosphere(subdivisions=sub)
    v, f = np.asarray(m.vertices), np.asarray(m.faces)
    c = v[f].mean(axis=1)
    keep = c[:, 2] > 0
    f = f[keep]
    used = np.unique(f)
    remap = -np.ones(len(v), int)
    remap[used] = np.arange(len(used))
    v, f = v[used], remap[f]
    v[:, 2] = np.maximum(v[:, 2], 0.0)
    body = Body(v, f, axles=Axles(-0.5, 0.5))

    def cp(points, normals=None):
        p = np.asarray(points, float)
        r2 = (p**2).sum(axis=1)
        s2 = (p[:, 1] ** 2 + p[:, 2] ** 2) / np.maximum(r2, 1e-12)
        return 1.0 - 2.25 * s2

    return body, cp, np.pi  # base area


WING = dict(chord=1.0, tc=0.12, span=2.0, alpha_deg=4.0)
WING_HEIGHT = {"wing": 0.5, "wing_high": 1.0}  # the section's centre above the ground, m, of each wing case


def _wing_params():
    a = WING["chord"] / 2
    b = a * WING["tc"]
    R = (a + b) / 2
    k2 = R * (a - b) / 2  # a = R + k2/R, b = R - k2/R
    return a, b, R, k2


def wing(n_chord: int = 160, n_span: int = 40, height: float = WING_HEIGHT["wing"]):
    a, b, R, k2 = _wing_params()
    eta = np.linspace(0, 2 * np.pi, n_chord, endpoint=False)
    # cluster points at the leading and trailing edges (eta = pi, 0)
    eta = eta - 0.35 * np.sin(2 * eta) / 2
    xs, zs = a * np.cos(eta), b * np.sin(eta)  # x rearward: trailing edge at +a
    ys = np.linspace(-WING["span"] / 2, WING["span"] / 2, n_span + 1)
    X = np.tile(xs, len(ys))
    Z = np.tile(zs, len(ys)) + height
    Y = np.repeat(ys, n_chord)
    v = np.column_stack([X, Y, Z])
    idx = np.arange(len(v)).reshape(len(ys), n_chord)
    a0, a1 = idx[:-1], np.roll(idx[:-1], -1, axis=1)
    b0, b1 = idx[1:], np.roll(idx[1:], -1, axis=1)
    f = np.concatenate([np.stack([a0, a1, b1], -1).reshape(-1, 3), np.stack([a0, b1, b0], -1).reshape(-1, 3)])
    body = Body(v, f, axles=Axles(-0.25, 0.25))
    if np.einsum("ij,ij->", body.area_vectors, body.centroids - [0, 0, height]) < 0:
        body = Body(v, f[:, ::-1], axles=Axles(-0.25, 0.25))

    def cp(points, normals=None):
        return wing_cp(points, height)

    return body, cp, WING["chord"] * WING["span"]


def wing_high():
    """The wing with its section's centre 1 m above the ground (same field, other moment arms)."""
    return wing(height=WING_HEIGHT["wing_high"])


def wing_cp(points, height: float = WING_HEIGHT["wing"]):
    """Exact potential-flow Cp on the elliptic wing (x rearward, flow along +x, incidence alpha), its section's
    centre ``height`` m above the ground."""
    a, b, R, k2 = _wing_params()
    al = np.radians(WING["alpha_deg"])
    p = np.asarray(points, float)
    # Flow comes from -x going +x; with z up, positive incidence tilts the flow upward relative to the chord,
    # i.e. the free stream is U e^{i al} in the (x, z) plane; lift is then +z.
    eta = np.arctan2((p[:, 2] - height) / b, p[:, 0] / a)
    zeta = R * np.exp(1j * eta)
    gamma = 4 * np.pi * R * np.sin(al)  # Kutta: rear stagnation at eta = 0 (the trailing edge, x = +a)
    # w = U (zeta e^{-i al} + R^2 e^{i al} / zeta) + i Gamma/(2 pi) log zeta; stagnation at zeta = R needs
    # Gamma = 4 pi R U sin(al).  Velocity (u - i v) = (dw/dzeta) / (dz/dzeta), U = 1.
    dw = np.exp(-1j * al) - R**2 * np.exp(1j * al) / zeta**2 + 1j * gamma / (2 * np.pi * zeta)
    dz = 1 - k2 / zeta**2
    speed = np.abs(dw / dz)
    return 1.0 - speed**2


def car(n_stations=200, n_around=100):
    from meshpress.bodies import samples

    v, f = samples.car_body(n_stations, n_around)
    x0 = 0.5 * (samples.WHEELBASE_X[0] + samples.WHEELBASE_X[1])
    v = v - [x0, 0, 0]
    body = Body(v, f, axles=Axles(samples.WHEELBASE_X[0] - x0, samples.WHEELBASE_X[1] - x0))

    def cp(points, normals):
        return samples.car_cp(np.asarray(points) + [x0, 0, 0], normals)

    return body, cp, None


# base_cp and min_facing are chosen (common practice for a bluff base), not derived: the base of this truth
# is invented; the rest is the panel solution.
PANEL_CAR = dict(n_stations=48, n_around=44, base_cp=-0.25, min_facing=0.5)
PANEL_CACHE = Path("/tmp/meshpress_panel_cache")


def _panel_cp(vertices, faces, yaw_deg):
    """Panel Cp per face (ground images, separated base), solved once and cached under /tmp."""
    import hashlib

    import panel_flow as pf

    key = hashlib.sha1(np.ascontiguousarray(vertices).tobytes() + np.ascontiguousarray(faces).tobytes()
                       + repr((yaw_deg, PANEL_CAR)).encode() + Path(pf.__file__).read_bytes()).hexdigest()[:16]
    path = PANEL_CACHE / f"panel_{key}.npz"
    if path.exists():
        return np.load(path)["cp"]
    sol = pf.solve(vertices, faces, yaw_deg=yaw_deg, ground=True)
    c, n, a = pf.face_geometry(vertices, faces)
    cp, _ = pf.separated_base(c, n, a, sol.cp, sol.stream, base_cp=PANEL_CAR["base_cp"],
                              min_facing=PANEL_CAR["min_facing"])
    PANEL_CACHE.mkdir(exist_ok=True)
    tmp = path.with_suffix(".tmp.npz")
    np.savez(tmp, cp=cp, attached_cp=sol.cp, sigma=sol.sigma)
    tmp.replace(path)
    return cp


def panel_car(yaw_deg: float = 0.0):
    """The car-like body in its panel flow (module docstring).

    Returns
    -------
    body : Body
        4,224 faces, axle frame (x from the axles' midpoint, m).
    cp : callable
        ``cp(points (n, 3), normals) -> (n,)``: the Cp of the face nearest each point.
    ref_area : float
        The frontal area at no yaw, m2 (the same for every yaw).
    """
    from meshpress.bodies import samples
    from meshpress.taps.projection import nearest_on_faces

    v, f = samples.car_body(PANEL_CAR["n_stations"], PANEL_CAR["n_around"], even=True)
    x0 = 0.5 * (samples.WHEELBASE_X[0] + samples.WHEELBASE_X[1])
    v = v - [x0, 0, 0]
    body = Body(v, f, axles=Axles(samples.WHEELBASE_X[0] - x0, samples.WHEELBASE_X[1] - x0))
    face_cp = _panel_cp(body.vertices, body.faces, yaw_deg)

    def cp(points, normals=None):
        return face_cp[nearest_on_faces(body, points)[1]]

    return body, cp, body.frontal_area()  # the frontal area at no yaw, for both cases


def panel_car_yaw5():
    """panel_car at 5 degrees of yaw."""
    return panel_car(yaw_deg=5.0)


def truth_face_values(body, cp):
    return cp(body.centroids, body.face_normals)


def make_taps(body, cp, points, names=None):
    """ProjectedTaps at the nearest surface points, exact Cp values (no noise)."""
    from meshpress.taps.projection import nearest_on_faces
    from trimesh.triangles import points_to_barycentric

    pts, fid, dist = nearest_on_faces(body, points)
    bary = points_to_barycentric(body.triangles[fid], pts)
    vals = cp(pts, body.face_normals[fid])
    names = names or [f"T{i}" for i in range(len(pts))]
    return ProjectedTaps(list(names), pts.copy(), pts, fid, bary, dist, vals, "cp")


def random_surface_points(body, n, rng, allowed=None):
    w = np.asarray(body.face_areas, float).copy()
    if allowed is not None:
        w[~allowed] = 0
    fid = rng.choice(body.n_faces, size=n, p=w / w.sum())
    r1, r2 = rng.random(n), rng.random(n)
    s = np.sqrt(r1)
    bary = np.column_stack([1 - s, s * (1 - r2), s * r2])
    return np.einsum("kj,kjd->kd", bary, body.triangles[fid])


def car_practical_points(body, jitter=0.0, rng=None):
    """The 57-tap practical layout of scripts/make_samples.py on this body (x shifted to the axle frame)."""
    from make_samples import tap_layout
    from meshpress.bodies import samples

    x0 = 0.5 * (samples.WHEELBASE_X[0] + samples.WHEELBASE_X[1])
    e = 2.0 / 3.2  # the sample body's superellipse exponent
    pts = []
    for name, x, t in tap_layout():
        if rng is not None and jitter:
            x = float(np.clip(x + rng.normal(0, jitter), 0.05, 4.15))
            t = t + rng.normal(0, jitter)
        top, bot, hw = samples.profiles(np.array([x]))
        u = abs(2 * x / samples.LENGTH - 1)
        end = (1 - u**8) ** (1 / 8)
        c, s_ = np.cos(t), np.sin(t)
        y = hw[0] * end * np.sign(c) * abs(c) ** e
        z = 0.5 * (top[0] + bot[0]) + 0.5 * (top[0] - bot[0]) * end * np.sign(s_) * abs(s_) ** e
        pts.append([x - x0, y, z])
    return np.array(pts)


def practical_points(case, body, rng, n=None, family="varied"):
    """A 'practical' layout: rows along the centre line and cross rows.

    ``family="varied"`` (default) draws each layout's design as a team might
    choose it: on the wing 2, 3 or 4 chordwise rows at random span stations,
    48 taps shared between them, packed towards the leading edge by a random
    power and split between the faces in a random proportion; on the
    hemisphere 3, 4 or 5 meridian rows at random azimuths, their end taps at
    random heights.  ``"jittered"`` is one design per body with small
    position errors (the benchmark's layouts before this family): on the wing
    and the hemisphere the field does not change along the rows' direction
    of jitter (span, azimuth about the flow axis), so those are in effect one
    layout repeated.  The car's layout is the sample layout jittered by 5 cm
    in both families.
    """
    if case in ("car", "panel_car", "panel_car_yaw5"):
        pts = car_practical_points(body, jitter=0.05, rng=rng)
        if n is not None and n < len(pts):
            pts = pts[np.sort(rng.choice(len(pts), n, replace=False))]
        return pts
    if family not in ("varied", "jittered"):
        raise ValueError(family)
    if case == "hemisphere":
        pts = []
        if family == "jittered":
            # meridian rows every 45 deg plus a ring, jittered
            for phi in np.arange(0, np.pi, np.pi / 4) + rng.normal(0, 0.05):
                for th in np.linspace(0.15, np.pi - 0.15, 9):
                    pts.append([np.cos(th), np.sin(th) * np.cos(phi), np.sin(th) * np.sin(phi)])
        else:
            rows = int(rng.integers(3, 6))
            per_row = 36 // rows
            for phi in np.sort(rng.uniform(0, np.pi, rows)):
                th0, th1 = rng.uniform(0.1, 0.35, 2)
                for th in np.linspace(th0, np.pi - th1, per_row):
                    pts.append([np.cos(th), np.sin(th) * np.cos(phi), np.sin(th) * np.sin(phi)])
        pts = np.array(pts)
        pts[:, 2] = np.abs(pts[:, 2]) + 0.02
        return pts / np.linalg.norm(pts, axis=1, keepdims=True) + rng.normal(0, 0.01, pts.shape)
    if case in WING_HEIGHT:
        a, b, R, k2 = _wing_params()
        pts = []
        if family == "jittered":
            # Three chordwise rows, taps packed towards the leading edge (eta = pi) as practice has it.
            s = np.linspace(-1, 1, 16, endpoint=False) + 1.0 / 16
            eta_row = np.pi + np.pi * np.sign(s) * np.abs(s) ** 1.7
            stations = np.array([-0.6, 0.0, 0.6]) + rng.normal(0, 0.05)
        else:
            rows = int(rng.integers(2, 5))
            per_row = 48 // rows
            n_up = int(round(rng.uniform(0.5, 0.65) * per_row))  # often more taps on the suction face
            power = rng.uniform(1.3, 2.2)  # how hard the rows are packed towards the leading edge
            s = np.concatenate([-(np.arange(n_up) + 0.5) / n_up, (np.arange(per_row - n_up) + 0.5) / (per_row - n_up)])
            eta_row = np.pi + np.pi * np.sign(s) * np.abs(s) ** power  # eta in (0, pi): upper face
            stations = np.sort(rng.uniform(-0.85, 0.85, rows))
        for y in stations:
            for e in eta_row + rng.normal(0, 0.01, len(eta_row)):
                pts.append([a * np.cos(e), y, WING_HEIGHT[case] + b * np.sin(e)])
        return np.array(pts)
    raise ValueError(case)
