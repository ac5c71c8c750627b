"""``meshpress view MESH TAPS``: the pressure field in 3D, in a window or to PNG files."""

from __future__ import annotations

from pathlib import Path

from .options import add_body_options, add_field_options, add_flow_options, max_distance_m, method_settings, speed_mps


def add_parser(sub):
    from ..outputs.view3d import QUANTITIES, VIEWS

    p = sub.add_parser("view", help="show the body coloured by its pressure field (window, or PNG with --png)",
                       description="Build the field as 'meshpress loads' does and show it on the body: in an "
                                   "interactive window where there is a display, or written to PNG files.")
    p.add_argument("mesh", help="surface mesh (STL, OBJ, PLY, OFF, GLB/GLTF, VTK/VTU/VTP, ...)")
    p.add_argument("taps", help="tap table, CSV or .xlsx: tap, x, y, z and p or cp [, side]")
    add_body_options(p)
    add_flow_options(p)
    add_field_options(p)
    g = p.add_argument_group("picture")
    g.add_argument("--colour", "--color", dest="quantity", default="cp", choices=QUANTITIES,
                   help="colour by: cp (default), p (Pa), normal (normal force per area), lift (vertical force "
                        "per area)")
    g.add_argument("--camera", default="three-quarter", choices=tuple(VIEWS) + ("all",),
                   help="standard view (default three-quarter); 'all' with --png writes every view")
    g.add_argument("--names", action="store_true", help="write the tap names beside the taps")
    g.add_argument("--arrows", action="store_true", help="draw arrows of the local force per area")
    g.add_argument("--png", metavar="OUT", help="write a PNG instead of opening a window (with --camera all: "
                   "OUT-side.png, OUT-top.png, ...)")
    g.add_argument("--size", default="1600x960", metavar="WxH", help="image size in pixels (default 1600x960)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def _size(text):
    from ..errors import InputError

    try:
        w, h = (int(t) for t in text.lower().split("x"))
    except ValueError:
        raise InputError(f"--size must look like 1600x960, got {text!r}") from None
    if not (16 <= w <= 8000 and 16 <= h <= 8000):
        raise InputError(f"--size {text!r}: width and height must be between 16 and 8000 pixels")
    return w, h


def run(args) -> int:
    from ..loads.analysis import resolve_q, run_loads_parts
    from ..errors import InputError
    from ..progress import Progress
    from ..outputs.view3d import VIEWS, BodyView, has_display

    from ..outputs.report import missing_libraries

    if missing_libraries():
        raise InputError(f"view needs {', '.join(missing_libraries())}: pip install {' '.join(missing_libraries())}")
    size = _size(args.size)
    if not args.png and not has_display():
        raise InputError("no display to open a window on; give --png OUT to write a picture instead")
    if args.camera == "all" and not args.png:
        raise InputError("--camera all needs --png OUT")
    if args.png:
        from ..loads.results import check_not_input

        check_not_input(args.png, (args.mesh, args.taps))
    progress = Progress(enabled=False if args.quiet else None)
    q = resolve_q(args.q, speed_mps(args.speed), args.air_density)
    run = run_loads_parts(
        args.mesh, args.taps, length_unit=args.length_unit, up=args.up, forward=args.forward,
        front_axle=args.front_axle, rear_axle=args.rear_axle, ground=args.ground,
        pressure_unit=args.pressure_unit, max_tap_distance=max_distance_m(args.max_tap_distance, args.length_unit),
        method=args.method, method_settings=method_settings(args), q=q, ref_area=args.ref_area,
        p_ref=args.p_ref, progress=progress,
    )
    r = run.result
    view = BodyView(run.body, r.face_values, run.taps, kind=r.value_kind, q=r.q_Pa, p_ref=r.p_ref,
                    quantity=args.quantity, tap_names=args.names, arrows=args.arrows, size=size,
                    off_screen=bool(args.png))
    try:
        if not args.png:
            view.show(args.camera)
            return 0
        names = list(VIEWS) if args.camera == "all" else [args.camera]
        base = Path(args.png)
        for name in progress.track(names, len(names), "rendering"):
            out = base.with_name(f"{base.stem}-{name}{base.suffix or '.png'}") if len(names) > 1 else base
            _save_png(view, name, out)
            print(f"  wrote {out}")
    finally:
        view.close()
    return 0


def _save_png(view, name, out: Path):
    """Render and write completely or not at all."""
    from ..loads.results import replace_into

    img = view.screenshot(name)
    from PIL import Image

    replace_into(out, lambda tmp: Image.fromarray(img).save(tmp, format="PNG"))
