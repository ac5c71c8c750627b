"""The main job, end to end: body + taps + field -> loads."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import __version__
from ..bodies.body import Body, load_body
from .coefficients import ISA_RHO, dynamic_pressure
from ..errors import InputError
from ..fields import DEFAULT_METHOD, make_field
from ..fields.base import Field
from ..fields.posterior import PosteriorField
from .integrate import force_and_moment
from .quadrature import clustered_force_and_moment
from ..progress import Progress
from ..taps.projection import ProjectedTaps, project_taps
from .results import LoadResult
from ..taps.layout import read_taps
from ..tolerances import TOL


def compute_loads(
    body: Body,
    taps: ProjectedTaps,
    field=None,
    *,
    q: float | None = None,
    ref_area: float | None = None,
    p_ref: float = 0.0,
    frontal_resolution: float = TOL.frontal_resolution_m,
    quadrature: str = "auto",
    progress: Progress | None = None,
) -> LoadResult:
    """Fit a field to the taps and integrate it over the body.

    Parameters
    ----------
    body : Body
    taps : ProjectedTaps
        Values in Pa (``kind == "p"``) or Cp.
    field : Field, optional
        Unfitted field method; default :data:`meshpress.fields.DEFAULT_METHOD`
        (the posterior mean of the bands' surface Gaussian process).
    q : float, optional
        Dynamic pressure, Pa.  Needed to turn Pa into coefficients or Cp into
        forces.
    ref_area : float, optional
        Reference area, m2; default the frontal area.
    p_ref : float
        Reference pressure subtracted everywhere, in the taps' unit (Pa or Cp).
    frontal_resolution : float
        Raster pixel size for the frontal area, m.
    quadrature : {"auto", "faces", "clusters"}
        "faces" evaluates the field on every face; "clusters" evaluates it
        once per cluster of faces (:mod:`meshpress.loads.quadrature`, cells of
        ``TOL.cluster_cell_m``); "auto" clusters bodies of more than
        ``TOL.cluster_min_faces`` faces when the method can be evaluated at
        arbitrary surface points.  ``result.face_values`` is None after
        clustering; ``result.field`` can still give them.

    Returns
    -------
    LoadResult
    """
    progress = progress or Progress(enabled=False)
    if q is not None and not (q > 0):
        raise InputError(f"dynamic pressure q must be positive, got {q:g} Pa")
    if ref_area is not None and not (ref_area > 0):
        raise InputError(f"reference area must be positive, got {ref_area:g} m2")
    field = field or make_field()
    if ref_area is None:
        # The frontal-area raster needs nothing from the field: it runs on the second core meanwhile.
        body.prefetch(frontal_resolution=frontal_resolution)
    with progress.step(f"fitting {field.name} field"):
        field.fit(body, taps, progress=progress)
    F, M, values, quad = _integrate(body, field, quadrature, p_ref, progress)
    r0 = np.zeros(3)
    warnings = list(body.warnings) + list(field.warnings_)
    if body.axles is None:
        # Ground point under the body's centre: the frame origin when no axles are given.
        warnings.append("no axle positions given: moment taken about the ground under the body's centre; "
                        "axle figures left out")
    force, moment, per_q = _in_newtons_and_per_q(F, M, taps.kind, q)
    if ref_area is None:
        with progress.step("frontal area"):
            ref_area = body.frontal_area(frontal_resolution)
        area_src = f"frontal area (y-z projection rasterised at {frontal_resolution * 1000:g} mm)"
    else:
        area_src = "given"
    if taps.kind == "p" and not q:
        warnings.append("no --q or --speed given: forces in N only, coefficients left out")
    tap_rows = [
        {"name": n, "value": float(v), "distance_m": float(d), "x_m": float(p[0]), "y_m": float(p[1]),
         "z_m": float(p[2]), "face": int(f)}
        for n, v, d, p, f in zip(taps.names, taps.values, taps.distance, taps.points, taps.faces)
    ]
    result = LoadResult(
        force_N=None if force is None else force.tolist(),
        moment_Nm=None if moment is None else moment.tolist(),
        force_per_q_m2=per_q[0].tolist(),
        moment_per_q_m3=per_q[1].tolist(),
        moment_ref_m=r0.tolist(),
        q_Pa=q,
        ref_area_m2=float(ref_area),
        ref_area_source=area_src,
        wheelbase_m=None if body.axles is None else body.axles.wheelbase,
        method=field.describe(),
        p_ref=p_ref,
        value_kind=taps.kind,
        warnings=warnings,
        taps=tap_rows,
        mesh=body.report.to_dict() if body.report else {},
        inputs={"mesh": body.source, "meshpress": __version__},
        quadrature=quad,
        face_values=values,
        field=field,
    )
    if len(body.part_names) > 1:
        with progress.step("loads per part"):
            result.parts = part_loads(body, taps, result, p_ref)
        bare = [p.name for p in result.parts if p.taps == 0]
        if bare:
            result.warnings.append(
                f"no taps on {', '.join(bare)}: the pressure there is not measured but filled in by the field method, "
                "and its figures have no band; tap it, or leave it out of the mesh")
    return result


def _in_newtons_and_per_q(F, M, kind, q):
    """Force and moment in N and N m, and per unit q (m2, m3), from integrals of Pa (``kind`` "p") or Cp.

    Either pair is unknown without q: the newtons are then None, the per-q vectors NaN.
    """
    nan = np.full(3, np.nan)
    if kind == "p":
        return F, M, ((F / q, M / q) if q else (nan, nan))
    return (F * q if q else None), (M * q if q else None), (F, M)


def part_loads(body: Body, taps: ProjectedTaps, whole: LoadResult, p_ref: float = 0.0) -> list:
    """Each part's figures: the whole's integral restricted to the part's faces.

    Parameters
    ----------
    body : Body
        With ``part_names`` and ``face_part``.
    taps : ProjectedTaps
    whole : LoadResult
        The whole body's result, with its fitted ``field`` (or ``face_values``).
    p_ref : float

    Returns
    -------
    list of PartLoads
        In the body's part order.  Force and moment are linear in the face
        values, so the parts sum to the whole (to round-off) when the whole was
        summed face by face; after clustered quadrature the whole and the sum of
        the parts differ by the quadrature error (0.01-0.07 % on the benchmark).
    """
    from dataclasses import replace

    from .results import PartLoads

    values = whole.face_values if whole.face_values is not None else whole.field.face_values()
    values = np.asarray(values, float)
    q = whole.q_Pa
    tap_part = body.face_part[taps.faces]
    out = []
    for i, name in enumerate(body.part_names):
        m = body.face_part == i
        F, M = force_and_moment(body.area_vectors[m], body.centroids[m], values[m], np.zeros(3), p_ref)
        force, moment, (fq, mq) = _in_newtons_and_per_q(F, M, whole.value_kind, q)
        r = replace(whole, force_N=None if force is None else force.tolist(),
                    moment_Nm=None if moment is None else moment.tolist(), force_per_q_m2=fq.tolist(),
                    moment_per_q_m3=mq.tolist(), warnings=[], taps=[], face_values=None, field=None, parts=[])
        out.append(PartLoads(name, int(m.sum()), float(body.face_areas[m].sum()), r, int((tap_part == i).sum())))
    return out


def _integrate(body, field, quadrature, p_ref, progress):
    """Force and moment about the origin, face by face or by clusters; see compute_loads."""
    if quadrature not in ("auto", "faces", "clusters"):
        raise InputError(f"quadrature must be auto, faces or clusters, got {quadrature!r}")
    pointwise = type(field).at_points is not Field.at_points
    if quadrature == "clusters" and not pointwise:
        raise InputError(f"the {field.name} method gives face values only; use quadrature='faces'")
    if quadrature == "clusters" or (quadrature == "auto" and pointwise and body.n_faces > TOL.cluster_min_faces):
        with progress.step("clustering faces"):
            clusters = body.clusters(TOL.cluster_cell_m)
        with progress.step("evaluating field"):
            F, M = clustered_force_and_moment(clusters, field.at_points(clusters.points), np.zeros(3), p_ref)
        return F, M, None, f"clustered midpoint rule ({len(clusters):,} clusters of {clusters.cell * 1000:g} mm)"
    with progress.step("evaluating field"):
        values = field.face_values(progress=progress)
    F, M = force_and_moment(body.area_vectors, body.centroids, values, np.zeros(3), p_ref)
    return F, M, values, "every face"


def resolve_q(q=None, speed=None, air_density=None) -> float | None:
    """Dynamic pressure (Pa) from ``q`` or from speed (m/s) and density (kg/m3, default ISA 1.225)."""
    if q is not None and speed is not None:
        raise InputError("give --q or --speed, not both")
    if speed is not None:
        if speed <= 0:
            raise InputError(f"--speed must be positive, got {speed:g} m/s")
        rho = ISA_RHO if air_density is None else air_density
        if not rho > 0:
            raise InputError(f"--air-density must be positive, got {rho:g} kg/m3")
        return dynamic_pressure(rho, speed)
    return q


def run_loads(mesh, taps_file, *, length_unit="m", up="+z", forward="-x", front_axle=None, rear_axle=None,
              ground=None, pressure_unit="Pa", max_tap_distance=TOL.max_tap_distance_m, method=DEFAULT_METHOD,
              method_settings=None, q=None, ref_area=None, p_ref=0.0, progress=None) -> LoadResult:
    """File to result: :func:`load_body`, :func:`read_taps`, :func:`project_taps`, :func:`compute_loads`.

    Parameters are those of the functions named; ``max_tap_distance`` in m.
    """
    return run_loads_parts(**{k: v for k, v in locals().items()}).result


@dataclass
class LoadRun:
    """What :func:`run_loads_parts` made on the way: for reports and views, which show more than the result."""

    body: Body
    taps: ProjectedTaps
    field: object
    result: LoadResult
    bands: object = None  # UncertaintyResult, when asked for


def run_loads_parts(mesh, taps_file, *, length_unit="m", up="+z", forward="-x", front_axle=None, rear_axle=None,
                    ground=None, pressure_unit="Pa", max_tap_distance=TOL.max_tap_distance_m, method=DEFAULT_METHOD,
                    method_settings=None, q=None, ref_area=None, p_ref=0.0, bands=None, parts=None,
                    merge_parts=False, mirror=None, mirror_taps=False, keep_inner=False, progress=None,
                    after_fit=None) -> LoadRun:
    """:func:`run_loads`, keeping the body, the projected taps and the fitted field.

    ``bands``: None for none, True for the bands with no stated measurement error (the fit's nugget still
    counts), or a dict of :meth:`meshpress.bands.uncertainty.Measurement.build` arguments (``sensor``, ``tap_u``,
    ``u_p_ref``, ``u_q_rel``).  With the default method the loads are the centre of these bands (one model).
    ``parts``: more parts from other files (:func:`~meshpress.bodies.body.load_body`); a body of several parts
    is fitted with its parts as independent regions unless ``merge_parts``.  ``mirror``: the mesh is half a
    body (:func:`~meshpress.bodies.body.load_body`); ``mirror_taps``: the taps are on one side and are mirrored
    to the other (:func:`~meshpress.bodies.mirror.mirror_taps`).  ``after_fit(body, projected, result)`` is
    called once the loads are computed, before the bands (e.g. to start the report's views meanwhile:
    :func:`meshpress.outputs.report.start_views`).
    """
    progress = progress or Progress(enabled=False)
    body = load_body(mesh, length_unit=length_unit, up=up, forward=forward, front_axle=front_axle,
                     rear_axle=rear_axle, ground=ground, parts=parts, mirror=mirror, keep_inner=keep_inner,
                     progress=progress)
    # Start the frontal area and (for big bodies) the face clusters on the second core.
    body.prefetch(frontal_resolution=None if ref_area is not None else TOL.frontal_resolution_m,
                  cluster_cell=TOL.cluster_cell_m if body.n_faces > TOL.cluster_min_faces else None)
    table = read_taps(taps_file, pressure_unit=pressure_unit)
    if mirror_taps:
        from ..bodies.mirror import MIRROR_TAPS_CAUTION
        from ..bodies.mirror import mirror_taps as mirrored

        table = mirrored(table, body)
        body.warnings.append(MIRROR_TAPS_CAUTION)
    with progress.step("projecting taps"):
        projected = project_taps(body, table, max_distance=max_tap_distance)
    settings = dict(method_settings or {})
    meas = None
    if bands is not None and bands is not False:
        from ..bands.uncertainty import Measurement

        meas = Measurement.build(len(projected), **({} if bands is True else bands))
    if len(body.part_names) > 1 and not merge_parts:
        from ..bodies.regions import with_parts
        from ..fields.regional import RegionalField

        # Parts are separate surfaces: no field may carry a wing's pressure across the gap to the deck below.
        # The default model goes further and fits each part on its own (its own length scales and levels).
        regions = with_parts(body, settings.pop("regions", None))
        if method == PosteriorField.name:
            settings.update(tap_var=None if meas is None else meas.tap_u**2, q=q)
            # A part without taps is taken at free-stream pressure (Cp 0, gauge 0 Pa): a closed part then adds no
            # force, rather than the nearest tap's reading spread over it (which made thrust on a wheel).
            empty = settings.pop("empty_value", None)
            field = RegionalField(method, regions, 0.0 if empty is None else empty, settings)
        else:
            field = make_field(method, regions=regions, **settings)
    else:
        field = make_field(method, **settings)
    if isinstance(field, PosteriorField):
        # The field is the bands' model: it takes the stated tap errors as known noise, and q for the
        # stagnation level of readings in Pa.
        field.tap_var = None if meas is None else meas.tap_u**2
        field.q = q if field.q is None else field.q
    result = compute_loads(body, projected, field, q=q, ref_area=ref_area, p_ref=p_ref, progress=progress)
    result.inputs["taps"] = str(taps_file)
    if after_fit is not None:
        after_fit(body, projected, result)
    unc = None
    if meas is not None:
        from ..bands.uncertainty import compute_uncertainty

        with progress.step("bands"):
            unc = compute_uncertainty(body, projected, q=q, ref_area=result.ref_area_m2, meas=meas, field=field,
                                      progress=progress)
        if result.parts:
            from ..bands.uncertainty import part_bands_dict

            for part in result.parts:
                part.bands = part_bands_dict(unc, part.name)
    return LoadRun(body, projected, field, result, unc)
