"""The body in 3D, coloured by its pressure field (pyvista).

Off-screen to PNG where there is no display (pyvista's off-screen mode over
EGL/OSMesa), an interactive window where there is one.  pyvista is imported
only inside these functions, so the loads command starts quickly.

The look: a warm paper-grey background, a ground strip with the axles drawn
across it, the field on a perceptually uniform diverging colour map centred on
zero (Crameri's "vik", from the Scientific colour maps; Crameri, Shephard &
Heron, Nature Communications 11, 5444, 2020: blue for suction, red for pressure), taps as outlined beads coloured by their own
reading, and a horizontal colour bar that names the quantity and its unit.
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass

import numpy as np

from ..loads.distribution import surface_quantities

#: Views: name -> (direction from the body's centre to the camera, view-up, parallel projection).
VIEWS = {
    "side": ((0.0, -1.0, 0.0), (0.0, 0.0, 1.0), True),  # from the left, nose to the left
    "top": ((0.0, 0.0, 1.0), (0.0, 1.0, 0.0), True),  # nose to the left
    "bottom": ((0.0, 0.0, -1.0), (0.0, -1.0, 0.0), True),  # nose to the left
    "front": ((-1.0, 0.0, 0.0), (0.0, 0.0, 1.0), True),
    "rear": ((1.0, 0.0, 0.0), (0.0, 0.0, 1.0), True),
    "three-quarter": ((-1.0, -1.15, 0.75), (0.0, 0.0, 1.0), False),  # front left, from above
}
VIEW_TITLES = {"side": "left side", "top": "top (nose left)", "bottom": "underside (nose left)",
               "front": "front", "rear": "rear", "three-quarter": "front three-quarter"}

#: Quantities the body can be coloured by: name -> (label, needs).
ZOOM = {"side": 1.75, "top": 1.45, "bottom": 1.45, "front": 1.9, "rear": 1.9, "three-quarter": 1.35}

QUANTITIES = ("cp", "p", "normal", "lift")

BACKGROUND = ("#f3efe6", "#dcd6ca")  # bottom, top
#: Colours of a quantity >= 0 (matplotlib's perceptually uniform "cividis" light to dark would hide the body's
#: shading at 0; "YlOrRd" runs from pale yellow at 0 to dark red at the top of the scale).
SEQUENTIAL_CMAP = "YlOrRd"
GROUND = "#c9c2b4"
INK = "#2b2a27"
#: Faces above which a decimated copy is drawn (the field is carried over by nearest vertex).
MAX_RENDER_FACES = 200_000


@dataclass
class ColourField:
    """A quantity ready to draw: values per face and at the taps, symmetric limits, label."""

    name: str
    faces: np.ndarray
    taps: np.ndarray | None
    limit: float
    label: str
    sequential: bool = False  # a quantity >= 0 (from 0 to limit, one-sided colours) instead of +/- limit


def colour_field(body, face_values, taps, kind, *, q=None, p_ref=0.0, quantity="cp") -> ColourField:
    """Pick the quantity to colour by and its symmetric colour limits.

    Parameters
    ----------
    body : Body
    face_values : (m,) float
        Field on every face, Pa or Cp (``kind``).
    taps : ProjectedTaps or None
    kind : {"p", "cp"}
    q : float, optional
        Dynamic pressure, Pa.
    p_ref : float
    quantity : {"cp", "p", "normal", "lift"}
        Pressure coefficient; pressure (Pa); normal force per area (outward, N/m2);
        vertical force per area (lift per area, + up, N/m2).
    """
    if quantity not in QUANTITIES:
        raise ValueError(f"quantity must be one of {QUANTITIES}, got {quantity!r}")
    sq = surface_quantities(body.face_normals, face_values, kind, q, p_ref)
    tv = None
    if taps is not None and len(taps):
        tq = surface_quantities(body.face_normals[taps.faces], taps.values, kind, q, p_ref)
    else:
        tq = None
    if quantity == "cp" and sq.cp is None:
        quantity = "p"
    if quantity == "p" and sq.p_Pa is None:
        quantity = "cp"
    funit = "N/m\u00b2" if sq.force_unit == "N/m2" else "per q"
    if quantity == "cp":
        vals, tv, label = sq.cp, (tq.cp if tq else None), "Cp   (\u2212 suction  |  + pressure)"
    elif quantity == "p":
        vals, tv, label = sq.p_Pa, (tq.p_Pa if tq else None), "p \u2212 p\u221e  [Pa]   (\u2212 suction  |  + pressure)"
    elif quantity == "normal":
        vals, tv = sq.normal_force_per_area, (tq.normal_force_per_area if tq else None)
        label = f"normal force per area, outward  [{funit}]"
    else:
        vals, tv = sq.force_per_area[:, 2], (tq.force_per_area[:, 2] if tq else None)
        label = f"vertical force per area, + up  [{funit}]"
    both = np.abs(vals) if tv is None else np.concatenate([np.abs(vals), np.abs(tv)])
    # Robust symmetric limits: a few extreme faces (a stagnation point) should not wash out the rest.
    limit = float(np.percentile(both, 99.5)) if len(both) else 1.0
    # ... but a small part's own range (a wing's suction peak, a few per cent of the faces) is not "a few
    # extreme faces": each part's 99.5th percentile is kept on the scale too.
    part = getattr(body, "face_part", None)
    if part is not None and len(getattr(body, "part_names", ())) > 1 and len(vals) == len(part):
        absv = np.abs(np.asarray(vals, float))
        for k in np.unique(part):
            own = absv[part == k]
            if len(own) >= 200:
                limit = max(limit, float(np.percentile(own, 99.5)))
    limit = limit if limit > 0 else 1.0
    return ColourField(quantity, np.asarray(vals, float), None if tv is None else np.asarray(tv, float), limit, label)


def _setup_vtk_offscreen():
    # With no display, go straight to EGL instead of trying X first (and warning).
    if not os.environ.get("DISPLAY") and "VTK_DEFAULT_OPENGL_WINDOW" not in os.environ:
        os.environ["VTK_DEFAULT_OPENGL_WINDOW"] = "vtkEGLRenderWindow"
        # pyvista otherwise probes for an X server by opening a trial OpenGL window (~0.5 s) only to
        # decide whether to warn; off screen through EGL there is nothing to warn about.
        os.environ.setdefault("ALLOW_PLOTTING", "true")


def has_display() -> bool:
    """True when an interactive window can open."""
    return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))


def body_polydata(body, point_values=None, cell_values=None, *, max_faces=MAX_RENDER_FACES):
    """pyvista PolyData of the body, decimated above ``max_faces`` faces.

    Returns
    -------
    mesh : pyvista.PolyData
    decimated : bool
    """
    import pyvista as pv

    faces = np.hstack([np.full((body.n_faces, 1), 3, dtype=np.int64), body.faces]).ravel()
    mesh = pv.PolyData(np.asarray(body.vertices), faces)
    if point_values is not None:
        for k, v in point_values.items():
            mesh.point_data[k] = v
    if cell_values is not None:
        for k, v in cell_values.items():
            mesh.cell_data[k] = v
    if body.n_faces <= max_faces:
        return mesh, False
    small = _cluster(mesh, body, max_faces)
    # Point data follow the nearest original vertex; the view draws point data only.
    from scipy.spatial import cKDTree

    _, near = cKDTree(np.asarray(body.vertices)).query(np.asarray(small.points))
    for k, v in (point_values or {}).items():
        small.point_data[k] = np.asarray(v)[near]
    return small, True


def _cluster(mesh, body, max_faces):
    """A copy with about ``max_faces`` faces by vertex clustering (vtkQuadricClustering: Lindstrom,
    "Out-of-core simplification of large polygonal models", SIGGRAPH 2000): one pass, fast on a
    million faces, where quadric edge collapse takes tens of seconds."""
    from vtkmodules.vtkFiltersCore import vtkQuadricClustering

    import pyvista as pv

    ext = np.ptp(body.vertices, axis=0)
    # A surface crossing cells of size h fills about area / h^2 of them, with about 2 faces each.
    h = (body.area / (0.5 * max_faces)) ** 0.5
    div = np.maximum(1, np.ceil(ext / h)).astype(int)
    f = vtkQuadricClustering()
    f.SetInputData(pv.PolyData(mesh.points, mesh.faces))
    f.SetNumberOfDivisions(*[int(d) for d in div])
    f.SetUseInputPoints(True)  # keep original vertices, so each carries its own field value
    f.Update()
    return pv.wrap(f.GetOutput())


def _cmap():
    try:
        from cmcrameri import cm

        return cm.vik
    except ImportError:  # pragma: no cover - cmcrameri is a dependency
        return "coolwarm"


class BodyView:
    """One scene (body, taps, ground, axles) rendered from any number of standard views.

    Parameters
    ----------
    body : Body
    face_values : (m,) float
        Field on every face (Pa or Cp, see ``kind``).
    taps : ProjectedTaps, optional
    kind : {"p", "cp"}
    q : float, optional
        Dynamic pressure, Pa.
    p_ref : float
    quantity : {"cp", "p", "normal", "lift"}
    tap_names : bool
        Write each tap's name beside it.
    arrows : bool
        Draw arrows of the local force per area on a sample of faces.
    size : (int, int)
        Image size, pixels (width, height).
    off_screen : bool, optional
        Default: off screen when there is no display.
    colour : ColourField, optional
        Draw this instead of the quantity of ``face_values`` (e.g. a one-sided
        map); ``face_values`` then only feed the arrows.
    """

    def __init__(self, body, face_values, taps=None, *, kind="p", q=None, p_ref=0.0, quantity="cp",
                 tap_names=False, arrows=False, size=(1200, 720), off_screen=None, max_faces=MAX_RENDER_FACES,
                 colour=None):
        self.body = body
        self.taps = taps
        self.size = (int(size[0]), int(size[1]))
        self.off_screen = (not has_display()) if off_screen is None else bool(off_screen)
        self.face_values = np.asarray(face_values, float)
        self.field = colour if colour is not None else colour_field(body, face_values, taps, kind, q=q, p_ref=p_ref,
                                                                     quantity=quantity)
        self.kind, self.q, self.p_ref = kind, q, p_ref
        self.tap_names = tap_names
        self.arrows = arrows
        self.max_faces = max_faces
        self.decimated = False
        self._plotter = None

    # Scene -------------------------------------------------------------------------------------
    def _build(self):
        _setup_vtk_offscreen()
        import pyvista as pv

        body = self.body
        pl = pv.Plotter(off_screen=self.off_screen, window_size=self.size, lighting="none")
        pl.set_background(BACKGROUND[0], top=BACKGROUND[1])
        point_vals = np.asarray(body.vertex_faces_matrix @ self.field.faces)
        # Vertex normals from the body's outward face normals (area-weighted), carried to a decimated
        # copy like the field: shading then follows the real surface, not the copy's coarser facets.
        nrm = np.asarray(body.vertex_faces_matrix @ body.face_normals)
        nrm /= np.maximum(np.linalg.norm(nrm, axis=1), 1e-12)[:, None]
        mesh, self.decimated = body_polydata(body, {"value": point_vals, "Normals": nrm}, max_faces=self.max_faces)
        mesh.point_data.active_normals_name = "Normals"
        lim = self.field.limit
        if self.field.sequential:
            cmap, clim, fmt = SEQUENTIAL_CMAP, (0.0, lim), "%.2g"
        else:
            cmap, clim, fmt = _cmap(), (-lim, lim), ("%+.2f" if lim < 10 else "%+.0f")
        bar = dict(title=self.field.label, vertical=False, position_x=0.22, position_y=0.035, width=0.56,
                   height=0.07, n_labels=5, fmt=fmt, color=INK,
                   title_font_size=20, label_font_size=17, font_family="courier", shadow=False)
        pl.add_mesh(mesh, scalars="value", cmap=cmap, clim=clim, smooth_shading=False, interpolation="gouraud",
                    ambient=0.28, diffuse=0.72, specular=0.12, specular_power=18, scalar_bar_args=bar,
                    show_scalar_bar=True, name="body")
        lo, hi = body.vertices.min(axis=0), body.vertices.max(axis=0)
        L = float(hi[0] - lo[0]) or 1.0
        # Ground strip a little wider than the body, just below it.
        w = float(hi[1] - lo[1])
        ground = pv.Plane(center=(0.5 * (lo[0] + hi[0]), 0.5 * (lo[1] + hi[1]), lo[2] - 0.004 * L),
                          direction=(0, 0, 1), i_size=1.25 * L, j_size=w + 0.5 * L * 0.25)
        self._ground = pl.add_mesh(ground, color=GROUND, ambient=0.6, diffuse=0.4, specular=0.0, name="ground")
        if body.axles is not None:
            # A line across the ground at each axle, with a post at each end that the side view shows.
            z0, ya, yb = lo[2] - 0.003 * L, lo[1] - 0.08 * L, hi[1] + 0.08 * L
            for x in (body.axles.front_x, body.axles.rear_x):
                pl.add_mesh(pv.Line((x, ya, z0), (x, yb, z0)), color=INK, line_width=3)
                for y in (ya, yb):
                    pl.add_mesh(pv.Cone(center=(x, y, z0 + 0.02 * L), direction=(0, 0, -1), height=0.04 * L,
                                        radius=0.012 * L, resolution=16), color=INK)
        if self.taps is not None and len(self.taps):
            r = 0.0065 * L
            pts = np.asarray(self.taps.points) + r * 0.6 * body.face_normals[self.taps.faces]
            beads = pv.PolyData(pts)
            glyph_kw = dict(geom=pv.Sphere(radius=r, theta_resolution=14, phi_resolution=10), scale=False, orient=False)
            look = dict(ambient=0.35, diffuse=0.65, silhouette=dict(color=INK, line_width=2.0), name="taps")
            if self.field.taps is None:  # a quantity the taps do not read: plain white beads mark where they are
                pl.add_mesh(beads.glyph(**glyph_kw), color="white", **look)
            else:
                beads.point_data["reading"] = self.field.taps
                pl.add_mesh(beads.glyph(**glyph_kw), scalars="reading", cmap=cmap, clim=clim, show_scalar_bar=False,
                            **look)
            if self.tap_names:
                pl.add_point_labels(pts, list(self.taps.names), font_size=11, text_color=INK,
                                    shape_color="#fbf8f1", shape_opacity=0.75, point_size=1,
                                    show_points=False, always_visible=True, font_family="courier")
        if self.arrows:
            self._add_arrows(pl, L)
        # Soft key light from the upper front left, fill from the right, and a headlight.
        pl.add_light(pv.Light(position=(-2.0, -2.0, 3.0), light_type="scene light", intensity=0.75))
        pl.add_light(pv.Light(position=(2.0, 2.5, 1.0), light_type="scene light", intensity=0.35))
        pl.add_light(pv.Light(position=(0.0, -0.5, -2.0), light_type="scene light", intensity=0.3))  # underbody
        pl.add_light(pv.Light(light_type="headlight", intensity=0.4))
        self._plotter = pl
        self._centre = 0.5 * (lo + hi)
        return pl

    def _add_arrows(self, pl, L):
        import pyvista as pv

        body = self.body
        sq = surface_quantities(body.face_normals, self.face_values, self.kind, self.q, self.p_ref)
        f = sq.force_per_area
        mag = np.linalg.norm(f, axis=1)
        # About 600 faces spread over the surface: one per cell of a voxel grid over the centroids.
        c = body.centroids
        h = (body.area / 600.0) ** 0.5
        key = np.floor(c / h).astype(np.int64)
        _, pick = np.unique(key, axis=0, return_index=True)
        top = np.percentile(mag, 99) or 1.0
        pts = pv.PolyData(c[pick])
        pts["force"] = f[pick] / top
        arrows = pts.glyph(orient="force", scale="force", factor=0.08 * L,
                           geom=pv.Arrow(tip_length=0.3, tip_radius=0.12, shaft_radius=0.04))
        pl.add_mesh(arrows, color=INK, ambient=0.4, name="arrows")

    # Views -------------------------------------------------------------------------------------
    def set_view(self, name):
        """Point the camera along one of :data:`VIEWS`."""
        if name not in VIEWS:
            raise ValueError(f"view must be one of {', '.join(VIEWS)}, got {name!r}")
        pl = self._plotter or self._build()
        d, up, parallel = VIEWS[name]
        d = np.asarray(d, float) / np.linalg.norm(d)
        c = self._centre
        pl.camera_position = [tuple(c + 10.0 * d * self.body.length), tuple(c), up]
        if parallel:
            pl.enable_parallel_projection()
        else:
            pl.disable_parallel_projection()
            pl.camera.view_angle = 24.0
        self._ground.SetVisibility(name != "bottom")  # the ground would hide the underside
        # Renders cost ~0.1 s each in software OpenGL: this view's one render is the one below.
        pl.reset_camera(render=False)
        pl.camera.zoom(ZOOM[name])
        text = f"meshpress  \u00b7  {VIEW_TITLES[name]}"
        if getattr(self, "_title", None) is None:
            self._title = pl.add_text(text, position=(12, self.size[1] - 30), font_size=13, color=INK,
                                      font="courier", name="title", render=False)
        else:
            self._title.SetInput(text)
        # pyvista's screenshot renders only on the first call and later reads the window as it is: without
        # this render a picture showed the previous view's title and zoom.
        pl.render()
        return pl

    def screenshot(self, name) -> np.ndarray:
        """(h, w, 3) uint8 image of view ``name``."""
        pl = self.set_view(name)
        return pl.screenshot(return_img=True)

    def save(self, name, path):
        """Write view ``name`` to a PNG file."""
        pl = self.set_view(name)
        pl.screenshot(str(path))
        return path

    def show(self, name="three-quarter"):
        """Open an interactive window (needs a display)."""
        pl = self.set_view(name)
        pl.show()

    def close(self):
        if self._plotter is not None:
            self._plotter.close()
            self._plotter = None
            self._title = None


def render_views(body, face_values, taps=None, *, views=tuple(VIEWS), progress=None, **kw) -> dict:
    """Render standard views off screen.

    Parameters
    ----------
    body, face_values, taps
        As for :class:`BodyView`; further keywords go to it.
    views : sequence of str
        Names from :data:`VIEWS`.
    progress : Progress, optional

    Returns
    -------
    dict
        name -> (h, w, 3) uint8 image; the key ``"_seconds"`` holds the time taken and
        ``"_decimated"`` whether a decimated copy was drawn.
    """
    kw.setdefault("off_screen", True)
    view = BodyView(body, face_values, taps, **kw)
    t0 = time.perf_counter()
    out = _screenshots(view, views, progress, "rendering 3D views")
    out["_seconds"] = time.perf_counter() - t0
    out["_decimated"] = view.decimated
    return out


def render_fields(body, fields: dict, taps=None, *, view="three-quarter", size=(900, 540), progress=None, **kw) -> dict:
    """Render several fields of one body from one view, with one shared colour scale.

    Parameters
    ----------
    body : Body
    fields : dict
        name -> (m,) face values (same ``kind`` for all).
    taps : ProjectedTaps, optional
    view : str
        One of :data:`VIEWS`.
    size : (int, int)
        Each image's size, pixels.

    Returns
    -------
    dict
        name -> (h, w, 3) uint8 image.
    """
    from dataclasses import replace

    kw.setdefault("off_screen", True)
    views = {n: BodyView(body, v, taps, size=size, **kw) for n, v in fields.items()}
    # One scale for all, so equal colours mean equal values across the methods.
    limit = max(v.field.limit for v in views.values())
    out = {}
    names = list(views)
    it = progress.track(names, len(names), "rendering fields") if progress else names
    for n in it:
        v = views[n]
        v.field = replace(v.field, limit=limit)
        try:
            out[n] = v.screenshot(view)
        finally:
            v.close()
    return out


def render_scalar(body, values, taps=None, *, label, views=("three-quarter", "top", "bottom", "side"),
                  size=(900, 540), progress=None, **kw) -> dict:
    """Render a quantity >= 0 on the body (e.g. where unknown pressure matters most) from several views.

    Parameters
    ----------
    body : Body
    values : (m,) float
        Per face, >= 0; the colour scale runs from 0 to its 99.5th percentile.
    taps : ProjectedTaps, optional
        Drawn as white beads.
    label : str
        Colour bar title.
    views : sequence of str
    size : (int, int)
        Each image's size, pixels.

    Returns
    -------
    dict
        name -> (h, w, 3) uint8 image.
    """
    kw.setdefault("off_screen", True)
    vals = np.asarray(values, float)
    lim = float(np.percentile(vals, 99.5)) if vals.size else 1.0
    colour = ColourField("scalar", vals, None, lim if lim > 0 else 1.0, label, sequential=True)
    view = BodyView(body, vals, taps, kind="cp", size=size, colour=colour, **kw)
    return _screenshots(view, views, progress, "rendering the map")


def _screenshots(view, views, progress, what) -> dict:
    """name -> image of each of ``views`` from one BodyView, which is closed afterwards."""
    out = {}
    try:
        seq = list(views)
        for name in (progress.track(seq, len(seq), what) if progress else seq):
            out[name] = view.screenshot(name)
    finally:
        view.close()
    return out
