"""``meshpress compare MESH TAPS``: several field methods on the same taps, side by side."""

from __future__ import annotations

from .options import add_body_options, add_field_options, add_flow_options, method_settings, speed_mps, load_inputs


def add_parser(sub):
    p = sub.add_parser("compare", help="run several field methods on the same taps and compare them",
                       description="Fit every chosen field method to the same taps; print each one's "
                                   "leave-one-out error at the taps (plain, and nested: its settings "
                                   "re-chosen without each tap), its loads, the spread between methods "
                                   "and the method with the lowest nested cross-validation error.")
    p.add_argument("mesh", help="surface mesh (STL, OBJ, PLY, ...)")
    p.add_argument("taps", help="tap table, CSV or .xlsx")
    p.add_argument("--methods", default=None, metavar="LIST",
                   help="comma-separated methods (default all: rbf,geodesic,biharmonic,harmonic,nearest,strip,kriging)")
    add_body_options(p)
    add_flow_options(p)
    add_field_options(p, method_help="one method only: the same as --methods NAME")
    p.add_argument("--json", metavar="OUT", help="write the comparison as JSON to OUT")
    p.add_argument("--picture", metavar="PNG", help="write the methods' fields side by side to PNG")
    p.add_argument("--camera", default="three-quarter",
                   help="view for --picture: side, top, bottom, front, rear, three-quarter (default)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from ..loads.analysis import resolve_q
    from ..loads.compare import compare_methods, format_comparison
    from ..errors import InputError
    from ..fields import METHODS
    from ..progress import Progress
    from ..loads.results import write_json
    from ..loads.results import check_not_input

    progress = Progress(enabled=False if args.quiet else None)
    methods = _methods(args, METHODS)
    q = resolve_q(args.q, speed_mps(args.speed), args.air_density)
    for out in (args.json, args.picture):
        if out:
            check_not_input(out, (args.mesh, args.taps))
    if args.picture:
        from ..outputs.view3d import VIEWS

        if not args.picture.lower().endswith(".png"):
            raise InputError(f"--picture {args.picture!r}: the picture must be a .png file")
        if args.camera not in VIEWS:
            raise InputError(f"--camera {args.camera!r} is not one of: {', '.join(VIEWS)}")
    body, taps = load_inputs(args, progress)
    fields = {} if args.picture else None
    c = compare_methods(body, taps, methods, settings=lambda name: method_settings(args, name), q=q,
                        ref_area=args.ref_area, p_ref=args.p_ref, progress=progress, face_values=fields)
    c["inputs"]["taps"] = str(args.taps)
    print(format_comparison(c))
    if args.picture:
        _picture(args.picture, body, taps, fields, c, q, args, progress)
        print(f"\n  wrote {args.picture}")
    if args.json:
        write_json(c, args.json, protect=(args.mesh, args.taps))
        print(f"\n  wrote {args.json}")
    return 0


def _methods(args, known):
    """The methods to run, from ``--methods LIST`` or ``--method NAME`` (one of them; default all)."""
    from ..errors import InputError

    if args.method is not None and args.methods is not None:
        raise InputError(f"give either --methods LIST or --method NAME, not both (got --methods {args.methods!r} "
                         f"and --method {args.method!r})")
    if args.method is not None:
        opt, methods = "--method", [args.method.strip()]
    elif args.methods is not None:
        opt, methods = "--methods", [m.strip() for m in args.methods.split(",") if m.strip()]
        if not methods:
            raise InputError("--methods: the list is empty")
    else:
        return list(known)
    for m in methods:
        if m not in known:
            raise InputError(f"{opt}: {m!r} is not one of: {', '.join(known)}")
    return methods


def _picture(path, body, taps, fields, c, q, args, progress):
    """The methods' fields from one view, one colour scale, CL and LOO error in each title."""
    from ..outputs.plots import image_grid, png_bytes
    from ..loads.results import replace_into
    from ..outputs.view3d import render_fields

    fields = {k: v for k, v in fields.items() if v is not None}
    images = render_fields(body, fields, taps, view=args.camera, kind=taps.kind, q=q, p_ref=args.p_ref,
                           progress=progress)
    rows = {r["method"]: r for r in c["methods"]}

    def title(n):
        r = rows[n]
        cl = "n/a" if r["CL"] is None else f"{r['CL']:+.3f}"
        loo = "n/a" if r["loo_nested_rms"] is None else f"{r['loo_nested_rms']:.3f}"
        star = "  (recommended)" if n == c["recommended"] else ""
        return f"{n}: CL {cl}, nested LOO rms {loo} {r['loo_unit']}{star}"

    fig = image_grid(images, {n: title(n) for n in images},
                     suptitle="meshpress compare: the same taps, six ways of filling the surface (one colour scale)")
    data = png_bytes(fig)
    replace_into(path, lambda tmp: open(tmp, "wb").write(data), protect=(args.mesh, args.taps))
