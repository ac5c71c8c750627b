"""``meshpress loads MESH TAPS``: the main job on one set of readings."""

from __future__ import annotations

from pathlib import Path

from .options import add_body_options, add_field_options, add_flow_options, max_distance_m, method_settings, speed_mps


def add_parser(sub):
    p = sub.add_parser("loads", help="integrate tap pressures over a body into loads",
                       description="Put the taps on the body, build the pressure field and integrate it into "
                                   "lift, drag, side force, pitching moment and the axle split.")
    p.add_argument("mesh", help="surface mesh (STL, OBJ, PLY, OFF, GLB/GLTF, VTK/VTU/VTP, ...)")
    p.add_argument("taps", help="tap table, CSV or .xlsx: tap, x, y, z and p or cp [, side]")
    add_body_options(p)
    add_flow_options(p)
    add_field_options(p)
    p.add_argument("--json", metavar="OUT", help="write the result as JSON to OUT")
    p.add_argument("--report", metavar="DIR", help="write a shareable report to DIR: report.html (self-contained), "
                   "loads.json, body_field.vtp, taps.csv and the pictures")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from ..analysis import resolve_q, run_loads_parts
    from ..progress import Progress
    from ..results import check_not_input, write_json
    from ..textreport import format_result

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
        p_ref=args.p_ref, progress=progress,
    )
    result = run.result
    print(format_result(result))
    if args.json:
        write_json(result, args.json, protect=(args.mesh, args.taps))
        print(f"\n  wrote {args.json}")
    if args.report:
        from ..report import write_report  # pyvista and matplotlib load only here

        files = write_report(run, args.report, protect=(args.mesh, args.taps), progress=progress)
        print(f"\n  wrote {files.html} (open it in a browser) and the files beside it")
    return 0

