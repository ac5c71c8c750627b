"""``meshpress compare MESH TAPS``: several field methods on the same taps, side by side."""

from __future__ import annotations

from .options import add_body_options, add_field_options, add_flow_options, max_distance_m, method_settings, speed_mps


def add_parser(sub):
    p = sub.add_parser("compare", help="run several field methods on the same taps and compare them",
                       description="Fit every chosen field method to the same taps; print each one's "
                                   "leave-one-out error at the taps, its loads, the spread between methods "
                                   "and the method with the lowest cross-validation error.")
    p.add_argument("mesh", help="surface mesh (STL, OBJ, PLY, ...)")
    p.add_argument("taps", help="tap table, CSV or .xlsx")
    p.add_argument("--methods", default=None, metavar="LIST",
                   help="comma-separated methods (default all: rbf,geodesic,biharmonic,harmonic,nearest,strip)")
    add_body_options(p)
    add_flow_options(p)
    add_field_options(p)
    p.add_argument("--json", metavar="OUT", help="write the comparison as JSON to OUT")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from ..analysis import resolve_q
    from ..body import load_body
    from ..compare import compare_methods, format_comparison
    from ..errors import InputError
    from ..fields import METHODS
    from ..progress import Progress
    from ..projection import project_taps
    from ..results import write_json
    from ..taps import read_taps
    from .loads import _check_output

    progress = Progress(enabled=False if args.quiet else None)
    # --method (shared with `loads`) is not used here: --methods picks the methods.
    methods = [m.strip() for m in args.methods.split(",") if m.strip()] if args.methods else list(METHODS)
    for m in methods:
        if m not in METHODS:
            raise InputError(f"--methods: {m!r} is not one of: {', '.join(METHODS)}")
    q = resolve_q(args.q, speed_mps(args.speed), args.air_density)
    if args.json:
        _check_output(args.json, (args.mesh, args.taps))
    body = load_body(args.mesh, length_unit=args.length_unit, up=args.up, forward=args.forward,
                     front_axle=args.front_axle, rear_axle=args.rear_axle, ground=args.ground, progress=progress)
    table = read_taps(args.taps, pressure_unit=args.pressure_unit)
    with progress.step("projecting taps"):
        taps = project_taps(body, table, max_distance=max_distance_m(args.max_tap_distance, args.length_unit))
    c = compare_methods(body, taps, methods, settings=lambda name: method_settings(args, name), q=q,
                        ref_area=args.ref_area, p_ref=args.p_ref, progress=progress)
    c["inputs"]["taps"] = str(args.taps)
    print(format_comparison(c))
    print("\n  (a side-by-side picture of the fields will come with the view command)")
    if args.json:
        write_json(c, args.json, protect=(args.mesh, args.taps))
        print(f"\n  wrote {args.json}")
    return 0
