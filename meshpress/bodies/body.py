"""The body: a cleaned, outward-wound surface in the vehicle frame.

:func:`load_body` reads a file, merges duplicate vertices, drops degenerate and
duplicate faces, maps the mesh into the vehicle frame (SAE J1594: x rearward,
y right, z up, m, origin on the ground midway between the axles), makes the
winding consistent and outward, and records what it found in a
:class:`~meshpress.bodies.diagnostics.MeshReport`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from . import orient
from .diagnostics import MeshReport, boundary_loops, nonmanifold_edges
from ..errors import InputError
from .frame import FrameMap, rotation
from ..progress import Progress
from .cleaning import clean as _clean
from .cleaning import name_shells
from .readers import read_parts
from ..tolerances import TOL
from ..units import LENGTH_UNITS, length_factor


def _readonly(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


@dataclass(frozen=True)
class Axles:
    """Axle positions in the vehicle frame (m): front at -wheelbase/2, rear at +wheelbase/2."""

    front_x: float
    rear_x: float

    @property
    def wheelbase(self) -> float:
        return self.rear_x - self.front_x


class Body:
    """A closed or open triangulated surface in the vehicle frame.

    Geometry never changes after construction; derived arrays are computed
    once, cached and handed out read-only.

    Parameters
    ----------
    vertices : (n, 3) float
        Vertex positions, m, vehicle frame.
    faces : (m, 3) int
        Triangles, wound so that the right-hand normal points outward.
    frame : FrameMap, optional
        Map from the source file's coordinates into this frame.
    axles : Axles, optional
        Axle positions; None when the user gave none.
    report : MeshReport, optional
        What the loader found.
    warnings : list of str, optional
        Doubts found while loading.
    source : str, optional
        The file the body came from.
    part_names : list of str, optional
        Names of the body's parts (default one part, ``"body"``).
    face_part : (m,) int, optional
        Index into ``part_names`` of every face's part.

    Attributes
    ----------
    setup_warnings : list of str
        The warnings that point at the unit or axes given (a subset of
        ``warnings``), repeated in errors they may explain (a tap far from
        the surface).
    """

    def __init__(self, vertices, faces, *, frame=None, axles=None, report=None, warnings=None, source=None,
                 part_names=None, face_part=None):
        self.vertices = _readonly(np.ascontiguousarray(vertices, dtype=float))
        self.faces = _readonly(np.ascontiguousarray(faces, dtype=np.int64))
        self.part_names = list(part_names) if part_names is not None else ["body"]
        fp = np.zeros(len(self.faces), dtype=np.int64) if face_part is None else np.asarray(face_part, np.int64)
        if fp.shape != (len(self.faces),) or (len(fp) and not 0 <= fp.min() <= fp.max() < len(self.part_names)):
            raise ValueError("face_part needs one index into part_names per face")
        self.face_part = _readonly(fp)
        self.frame = frame
        self.axles = axles
        self.report = report
        self.warnings = list(warnings or [])
        self.setup_warnings = []
        self.source = source

    def _seed(self, **arrays):
        """Fill caches with arrays the loader already computed (same geometry, so same values)."""
        for name, a in arrays.items():
            self.__dict__[name] = _readonly(np.ascontiguousarray(a, dtype=float))

    @property
    def n_faces(self) -> int:
        return len(self.faces)

    @cached_property
    def triangles(self) -> np.ndarray:
        """(m, 3, 3) float: corner positions of every face, m."""
        return _readonly(self.vertices[self.faces])

    @cached_property
    def area_vectors(self) -> np.ndarray:
        """(m, 3) float: n * dA of every face (outward normal times area), m2."""
        t = self.triangles
        return _readonly(0.5 * np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0]))

    @cached_property
    def face_areas(self) -> np.ndarray:
        """(m,) float: face areas, m2."""
        return _readonly(np.linalg.norm(self.area_vectors, axis=1))

    @cached_property
    def face_normals(self) -> np.ndarray:
        """(m, 3) float: outward unit normals."""
        a = self.face_areas
        with np.errstate(invalid="ignore", divide="ignore"):
            n = self.area_vectors / a[:, None]
        return _readonly(np.nan_to_num(n))

    @cached_property
    def centroids(self) -> np.ndarray:
        """(m, 3) float: face centroids, m."""
        return _readonly(self.triangles.mean(axis=1))

    @cached_property
    def centroid_tree(self):
        """scipy cKDTree over face centroids."""
        from scipy.spatial import cKDTree

        return cKDTree(self.centroids)

    @cached_property
    def face_radius(self) -> np.ndarray:
        """(m,) float: largest distance (m) from each face's centroid to its corners."""
        d = self.triangles - self.centroids[:, None, :]
        return _readonly(np.sqrt(np.einsum("ijk,ijk->ij", d, d).max(axis=1)))

    @property
    def max_face_radius(self) -> float:
        """Largest distance (m) from a face centroid to one of its corners."""
        return float(self.face_radius.max())

    @cached_property
    def vertex_faces_matrix(self):
        """(n_vertices, m) sparse: area-weighted face -> vertex averaging matrix.

        Row i averages the faces around vertex i with weights of their area.
        """
        from scipy import sparse

        m = self.n_faces
        rows = self.faces.ravel()
        cols = np.repeat(np.arange(m), 3)
        w = np.repeat(self.face_areas, 3)
        A = sparse.csr_matrix((w, (rows, cols)), shape=(len(self.vertices), m))
        s = np.asarray(A.sum(axis=1)).ravel()
        s[s == 0] = 1.0
        return sparse.diags(1.0 / s) @ A

    @property
    def area(self) -> float:
        """Total surface area, m2."""
        return float(self.face_areas.sum())

    @property
    def length(self) -> float:
        """Overall length along x, m."""
        return float(np.ptp(self.vertices[:, 0]))

    def frontal_area(self, resolution: float = TOL.frontal_resolution_m) -> float:
        """Projected area on the y-z plane (m2), rasterised at ``resolution`` m (cached)."""
        return self._cached(("frontal", resolution), self._frontal_area_now, resolution)

    def _frontal_area_now(self, resolution):
        from ..loads.frontal import frontal_area

        tri = self.triangles
        if self.report is not None and self.report.watertight:
            # Closed: the front-facing faces already cover the whole silhouette.
            tri = tri[self.area_vectors[:, 0] < 0]
        return frontal_area(tri, resolution)

    def clusters(self, cell: float):
        """Face clusters for :mod:`meshpress.loads.quadrature`, cells of ``cell`` m (cached)."""
        from ..loads.quadrature import cluster_faces

        return self._cached(("clusters", cell), cluster_faces, self.centroids, self.area_vectors, cell)

    def prefetch(self, *, frontal_resolution: float | None = None, cluster_cell: float | None = None) -> None:
        """Start the frontal area and the face clusters on a second thread.

        Both are pure array work in which numpy releases the GIL, so on a
        two-core machine they run beside tap projection and field fitting; the
        first call of :meth:`frontal_area` or :meth:`clusters` then waits for it.
        """
        from concurrent.futures import ThreadPoolExecutor

        jobs = []
        if frontal_resolution is not None:
            jobs.append((("frontal", frontal_resolution), self._frontal_area_now, (frontal_resolution,)))
        if cluster_cell is not None:
            from ..loads.quadrature import cluster_faces

            jobs.append((("clusters", cluster_cell), cluster_faces, (self.centroids, self.area_vectors, cluster_cell)))
        jobs = [j for j in jobs if j[0] not in self._cache]
        if not jobs:
            return
        pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="meshpress-prefetch")
        for key, fn, args in jobs:
            self._cache[key] = pool.submit(fn, *args)
        pool.shutdown(wait=False)

    @property
    def _cache(self) -> dict:
        return self.__dict__.setdefault("_derived", {})

    def _cached(self, key, fn, *args):
        from concurrent.futures import Future

        v = self._cache.get(key)
        if isinstance(v, Future):
            v = v.result()
        elif v is None:
            v = fn(*args)
        self._cache[key] = v
        return v

    def volume(self) -> float:
        """Enclosed volume (m3) by the divergence theorem, V = 1/3 sum c . n dA: meaningful when closed."""
        return float(np.einsum("ij,ij->", self.centroids, self.area_vectors) / 3.0)

    def volume_centroid(self) -> np.ndarray:
        """(3,) float: centroid of the enclosed volume, m (closed bodies)."""
        t = self.triangles
        v6 = np.einsum("ij,ij->i", t[:, 0], np.cross(t[:, 1], t[:, 2]))
        c = t.sum(axis=1) / 4.0
        return (c * v6[:, None]).sum(axis=0) / v6.sum()


def load_body(
    path,
    *,
    length_unit: str = "m",
    up: str = "+z",
    forward: str = "-x",
    front_axle: float | None = None,
    rear_axle: float | None = None,
    ground: float | None = None,
    parts=None,
    split_shells: bool = True,
    mirror=None,
    keep_inner: bool = False,
    progress: Progress | None = None,
) -> Body:
    """Read a surface mesh and bring it into the vehicle frame.

    Parameters
    ----------
    path : str or Path
        Mesh file (STL, OBJ, PLY, OFF, GLB/GLTF, VTK/VTU/VTP, ...).
    length_unit : {"m", "cm", "mm", "in", "ft"}
        Unit of the file's coordinates.
    up, forward : str
        Signed mesh axes pointing up and forward, e.g. ``"+y"``, ``"-z"``.
    front_axle, rear_axle : float, optional
        Axle coordinates on the mesh's forward axis, in the mesh's unit, as
        read off the file.  Both or neither.
    ground : float, optional
        Ground height on the mesh's up axis, in the mesh's unit; default: the
        body's lowest point.
    parts : dict or sequence of (name, path), optional
        More parts from other files, in the same unit and axes as ``path``.
    split_shells : bool
        When the main file is one surface (an STL), make each connected shell
        a part of its own, named by where it sits (:func:`name_shells`).  A
        scene's parts are kept as the scene names them either way.
    keep_inner : bool
        Keep shells that lie wholly inside the body (by default they are
        found by the winding number, reported and left out:
        :mod:`meshpress.bodies.inner`).
    mirror : True or float, optional
        The file is half a body: build the other half across the centre
        plane, found from the open edges (True) or given as its coordinate on
        the mesh's lateral axis, mesh unit (:mod:`meshpress.bodies.mirror`).
    progress : Progress, optional
        Progress display.

    Returns
    -------
    Body
    """
    progress = progress or Progress(enabled=False)
    if (front_axle is None) != (rear_axle is None):
        raise InputError("give both --front-axle and --rear-axle, or neither")
    scale = length_factor(length_unit, "--length-unit: ")
    R = rotation(up, forward)
    with progress.step("reading mesh"):
        v, f, face_part, names = read_parts(path)
        file_parts = len(names)
        for name, extra in (parts.items() if isinstance(parts, dict) else (parts or ())):
            ve, fe, _, _ = read_parts(extra)
            f = np.vstack([f, fe + len(v)])
            v = np.vstack([v, ve])
            face_part = np.concatenate([face_part, np.full(len(fe), len(names), dtype=np.int64)])
            names = names + [str(name)]
        if len(set(names)) != len(names):
            raise InputError(f"part names must differ: {', '.join(names)}")
    with progress.step("cleaning mesh"):
        v, f, av, merged, dropped, kept = _clean(v, f)
        face_part = face_part[kept]
    mirror_note = None
    if mirror is not None and mirror is not False:
        from .mirror import mirror_half

        lateral = R[1]  # the vehicle's y (right) in the mesh's axes: a signed mesh axis
        k = int(np.argmax(np.abs(lateral)))
        sign = float(np.sign(lateral[k]))
        with progress.step("mirroring the half body"):
            v, f, face_part, plane, how = mirror_half(v, f, face_part, lateral,
                                                      None if mirror is True else sign * float(mirror))
            v, f, av, _, _, kept = _clean(v, f)
            face_part = face_part[kept]
        mirror_note = (f"mirrored: the other half was built across the centre plane {'xyz'[k]} = {sign * plane:g} "
                       f"{length_unit} ({how}); the loads are those of the whole, symmetric body")
    p = scale * v @ R.T
    # Origin: ground (lowest point or given), mid-wheelbase (or mid-length), mid-track.
    frame = FrameMap(R, scale, np.zeros(3))
    warnings = [] if mirror_note is None else [mirror_note]
    if ground is None:
        gz = p[:, 2].min()
    else:
        gz = float((frame.to_vehicle(parse_up_point(up, ground)))[0, 2])
    if front_axle is not None:
        xf = frame.forward_coordinate_to_x(front_axle, forward)
        xr = frame.forward_coordinate_to_x(rear_axle, forward)
        if not xf < xr:
            raise InputError(
                f"front axle ({front_axle:g}) must be ahead of the rear axle ({rear_axle:g}) "
                f"along the forward axis {forward}"
            )
        x0 = 0.5 * (xf + xr)
        axles = Axles(xf - x0, xr - x0)
        lo_x, hi_x = p[:, 0].min(), p[:, 0].max()
        for name, x in (("front", xf), ("rear", xr)):
            if not lo_x <= x <= hi_x:
                warnings.append(f"the {name} axle lies outside the body's length; check --{name}-axle and --forward")
    else:
        x0 = 0.5 * (p[:, 0].min() + p[:, 0].max())
        axles = None
    y0 = 0.5 * (p[:, 1].min() + p[:, 1].max())
    origin = np.array([x0, y0, gz])
    frame = FrameMap(R, scale, origin)
    p = p - origin
    with progress.step("orienting faces"):
        fa, fb, same_dir, boundary, bface = orient.edge_pairs(f)
        flip, part, orientable = orient.consistent_flip(f, fa, fb, same_dir)
        # R is a proper rotation, so the area vectors rotate with the points and scale with its square.
        av = (scale * scale) * av @ R.T
        tri = p[f]
        centroids = tri.mean(axis=1)
        av[flip] *= -1.0
        out = orient.outward_flip(centroids, av, part)
        total_flip = flip ^ out
        av[out] *= -1.0
        f = f.copy()
        f[total_flip] = f[total_flip][:, ::-1]
        tri[total_flip] = tri[total_flip][:, ::-1]
        n_flipped = int(np.count_nonzero(total_flip))
        # Edge structure after orientation, for the diagnostics: reversing a face reverses its edges.
        same_dir = same_dir ^ total_flip[fa] ^ total_flip[fb]
        rev = total_flip[bface]
        boundary = boundary.copy()
        boundary[rev] = boundary[rev][:, ::-1]
    inner_note, inner_counts = None, (0, 0)
    if not keep_inner and file_parts == 1 and part.max() > 0:
        from .inner import inner_shells

        with progress.step("looking for shells inside the body"):
            main = face_part == 0
            inside = inner_shells(np.where(main, part, -1), tri, np.linalg.norm(av, axis=1))
            inside = inside[inside >= 0]
        if len(inside):
            drop = np.isin(part, inside) & main
            inner_note = (f"left out {len(inside)} shell(s) inside the body ({int(drop.sum()):,} faces, "
                          f"{float(np.linalg.norm(av[drop], axis=1).sum()):.3f} m2: seats, an engine bay or scan "
                          "debris see no outside flow); --keep-inner keeps them")
            keep = ~drop
            f, face_part, part, tri, centroids, av = f[keep], face_part[keep], part[keep], tri[keep], centroids[keep], av[keep]
            used = np.zeros(len(p), dtype=bool)
            used[f.ravel()] = True
            remap = np.cumsum(used) - 1
            p, f = p[used], remap[f]
            fa, fb, same_dir, boundary, bface = orient.edge_pairs(f)
            boundary = boundary.copy()
            warnings.append(inner_note)
            inner_counts = (len(inside), int(drop.sum()))
    if split_shells and file_parts == 1:
        # One surface in the main file: each connected shell is a part of its own (a wing, a mirror, a wheel),
        # named by where it sits on the car; parts given with --part keep their names.
        main = face_part == 0
        shell_names, shell_of = name_shells(part[main], av[main], centroids[main], p.min(axis=0), p.max(axis=0),
                                            main_name=names[0])
        if len(shell_names) > 1:
            lab = np.empty(len(f), dtype=np.int64)
            lab[main] = shell_of
            lab[~main] = face_part[~main] - 1 + len(shell_names)
            face_part, names = lab, shell_names + names[1:]
    overlaps = []
    if len(names) > 1:
        from .inner import part_overlaps

        with progress.step("checking parts for overlaps"):
            overlaps = part_overlaps(face_part, names, tri, np.linalg.norm(av, axis=1))
        if overlaps:
            warnings.append(f"parts reaching into {overlaps[0]['into']}: "
                            + ", ".join(f"{o['part']} ({100 * o['inside_share']:.0f} % inside)" for o in overlaps)
                            + "; the surface of each inside the other sees no air but is integrated (trim them where "
                              "they meet if that matters)")
    body = Body(p, f, frame=frame, axles=axles, source=str(path), part_names=names, face_part=face_part)
    body._seed(triangles=tri, centroids=centroids, area_vectors=av)
    with progress.step("checking mesh"):
        holes = boundary_loops(boundary, p)
        n_edges_used = 3 * len(f)
        manifold = 2 * len(fa) == n_edges_used
        watertight = bool(manifold and not same_dir.any() and len(boundary) == 0)
        total = body.area
        closure = float(np.linalg.norm(body.area_vectors.sum(axis=0)) / total)
        bmin, bmax = p.min(axis=0), p.max(axis=0)
        report = MeshReport(
            faces=len(f),
            vertices=len(p),
            parts=len(names),
            components=int(part.max() + 1),
            merged_vertices=merged,
            dropped_faces=dropped,
            flipped_faces=n_flipped,
            area_m2=total,
            bbox_min_m=bmin.tolist(),
            bbox_max_m=bmax.tolist(),
            watertight=watertight,
            holes=len(holes),
            hole_areas_m2=holes[:20],
            closure=closure,
            orientable=orientable,
            volume_m3=body.volume() if watertight else None,
            overlaps=overlaps,
            inner_shells=inner_counts[0],
            inner_faces=inner_counts[1],
            nonmanifold=nonmanifold_edges(f, p),
            source_frame=f"{length_unit}, up {up}, forward {forward}"
                         + ("; scene of parts, each with its own transform applied" if file_parts > 1 else "")
                         + ("; mirrored" if mirror_note else ""),
            part_list=[{"name": n, "faces": int(c), "area_m2": float(a)} for n, c, a in
                       zip(names, np.bincount(body.face_part, minlength=len(names)),
                           np.bincount(body.face_part, body.face_areas, minlength=len(names)))],
        )
    setup = _size_warnings(bmax - bmin, length_unit, scale) + _axis_warnings(bmax - bmin, up, forward)
    warnings += setup
    if not orientable:
        warnings.append("some faces could not be wound consistently (non-orientable or non-manifold pieces)")
    if closure > TOL.closure_warn:
        warnings.append(
            f"the surface is open (|sum n dA| = {closure:.2%} of its area, {len(holes)} holes): "
            "the loads depend on the reference pressure p_ref (each 1 Pa of offset moves lift by "
            f"{-body.area_vectors[:, 2].sum():+.3f} N and drag by {-body.area_vectors[:, 0].sum():+.3f} N)"
        )
    body.report = report
    body.warnings = warnings
    body.setup_warnings = setup
    return body


def parse_up_point(up: str, value: float) -> np.ndarray:
    """A mesh point whose coordinate on the (unsigned) up axis is ``value``."""
    from .frame import parse_axis

    return np.abs(parse_axis(up)) * value


def _axis_warnings(extent: np.ndarray, up: str, forward: str) -> list[str]:
    """Warn when the body is much shorter along the forward axis than across it: the usual sign of wrong axes.

    A car is longest along its length (common practice: length about twice
    the width); a lone wing or panel is not, hence a warning, not an error.
    """
    lx, ly, lz = (float(e) for e in extent)
    if lx >= TOL.axis_check_ratio * max(ly, lz):
        return []
    across = "to the side (y)" if ly >= lz else "upward (z)"

    def m(x):
        return f"{x:,.0f}" if x >= 100 else f"{x:.3g}"

    return [f"the body is {m(lx)} m long along --forward {forward} but {m(max(ly, lz))} m {across}: check --forward "
            f"and --up ({up}); ignore this for a wing or a part that is wider than it is long"]


def _size_warnings(extent: np.ndarray, unit: str, scale: float) -> list[str]:
    """Warn when the body's size is implausible for a vehicle, naming the likely unit."""
    length = float(extent.max())
    if 0.3 <= length <= 30.0:
        return []
    raw = length / scale
    likely = [u for u in LENGTH_UNITS if 1.0 <= raw * length_factor(u) <= 15.0]
    hint = f"; the file is probably in {likely[0]} (--length-unit {likely[0]})" if likely else ""
    return [f"the body is {length:,.4g} m long with --length-unit {unit}, which is not a vehicle's size{hint}"]
