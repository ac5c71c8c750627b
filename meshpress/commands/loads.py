"""``meshpress loads MESH TAPS``: the main job on one set of readings."""

from __future__ import annotations

from pathlib import Path

from .options import (add_body_options, add_field_options, add_flow_options, max_distance_m, method_settings,
                      parse_parts, speed_mps)


def add_parser(sub):
    p = sub.add_parser("loads", help="integrate tap pressures over a body into loads",
                       description="Put the taps on the body, build the pressure field and integrate it into "
                                   "lift, drag, side force, pitching moment and the axle split.")
    p.add_argument("mesh", help="surface mesh (STL, OBJ, PLY, OFF, GLB/GLTF, VTK/VTU/VTP, ...)")
    p.add_argument("taps", help="tap table, CSV or .xlsx: tap, x, y, z and p or cp [, side]")
    add_body_options(p)
    add_flow_options(p)
    add_field_options(p)
    p.add_argument("--no-bands", action="store_true",
                   help="skip the bands (standard uncertainty and 95 %% interval of every figure): faster")
    p.add_argument("--sensor-accuracy", type=float, default=0.0, metavar="A",
                   help="stated accuracy of the pressure sensors, +/- A in the taps' unit (read as a rectangular "
                        "half-width; default 0: the model's fitted noise only)")
    p.add_argument("--json", metavar="OUT", help="write the result as JSON to OUT")
    p.add_argument("--report", metavar="DIR", help="write a shareable report to DIR: report.html (self-contained), "
                   "loads.json, body_field.vtp, taps.csv and the pictures")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from ..loads.analysis import resolve_q, run_loads_parts
    from ..progress import Progress
    from ..loads.results import check_not_input, write_json

    progress = Progress(enabled=False if args.quiet else None)
    q = resolve_q(args.q, speed_mps(args.speed), args.air_density)
    if args.json:
        check_not_input(args.json, (args.mesh, args.taps))
    if args.report and Path(args.report).exists() and not Path(args.report).is_dir():
        from ..errors import InputError

        raise InputError(f"--report {args.report!r} is a file; give a folder to write the report into")
    run = run_loads_parts(
        args.mesh, args.taps, length_unit=args.length_unit, up=args.up, forward=args.forward,
        front_axle=args.front_axle, rear_axle=args.rear_axle, ground=args.ground,
        pressure_unit=args.pressure_unit, max_tap_distance=max_distance_m(args.max_tap_distance, args.length_unit),
        method=args.method, method_settings=method_settings(args), q=q, ref_area=args.ref_area,
        p_ref=args.p_ref, bands=None if args.no_bands else bands_measurement(args.sensor_accuracy),
        parts=parse_parts(args.part), merge_parts=args.merge_parts, mirror=args.mirror,
        mirror_taps=args.mirror_taps, keep_inner=args.keep_inner, progress=progress,
        after_fit=(views := views_after_fit(bool(args.report))),
    )
    print(format_loads(run))
    extra = {} if run.bands is None else {"uncertainty": run.bands.to_dict()}
    if args.json:
        write_json({**run.result.to_dict(), **extra}, args.json, protect=(args.mesh, args.taps))
        print(f"\n  wrote {args.json}")
    if args.report:
        files = write_loads_report(run, args.report, protect=(args.mesh, args.taps), progress=progress,
                                   views_job=views.job)
        print(f"\n  wrote {files.html} (open it in a browser) and the files beside it")
    return 0


def bands_measurement(sensor_accuracy=0.0) -> dict:
    """``bands`` argument of :func:`meshpress.loads.analysis.run_loads_parts` for a stated sensor accuracy."""
    from ..bands.uncertainty import sensor_u

    return {"sensor": sensor_u(sensor_accuracy)}


def format_loads(run) -> str:
    """The loads table; with bands of the same model, one answer per figure with its band on its row; with
    bands of another method's field, the bands' own table below (the field column beside the estimate)."""
    from ..fields.posterior import is_posterior_model
    from ..outputs.textreport import format_result
    from .uncertainty import format_bands

    if run.bands is None:
        return format_result(run.result)
    if is_posterior_model(run.field):
        return format_result(run.result, bands=run.bands)
    return format_result(run.result) + "\n\n" + format_bands(run.bands, run.field.describe())


class views_after_fit:
    """An ``after_fit`` hook that starts the report's 3D views once the field is fitted (when ``wanted``), so
    they render in a second process while the bands are computed; ``job`` is then passed to the report."""

    def __init__(self, wanted: bool):
        self.wanted, self.job = wanted, None

    def __call__(self, body, taps, result):
        if self.wanted:
            from ..outputs.report import start_views

            self.job = start_views(body, taps, result)


def write_loads_report(run, out, *, protect, progress, **kw):
    """The HTML report of a run, with its bands' section when it has bands (pyvista and matplotlib load here)."""
    from ..fields.posterior import is_posterior_model
    from ..outputs.report import write_report

    sections, extra, json_extra = (), None, None
    if run.bands is not None:
        from ..aside import start_aside
        from ..outputs.bandreport import bands_section_html, importance_png

        own = is_posterior_model(run.field)
        # The map renders in a second process while write_report draws the views and plots.
        job = start_aside(lambda: importance_png(run.bands, run.body, run.taps, "CL"), opengl=True)
        extra, json_extra = {}, {"uncertainty": run.bands.to_dict()}

        def bands_section():
            with progress.step("rendering the map"):
                extra["map_CL"] = png = job.result()
            return [("How sure is the number", bands_section_html(
                run.bands, field_name=None if own else run.field.describe(), map_png=png, map_figure="CL"))]

        sections = bands_section
    return write_report(run, out, protect=protect, progress=progress, sections=sections, extra_images=extra,
                        json_extra=json_extra, **kw)

