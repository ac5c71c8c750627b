"""``meshpress plan MESH``: where the next taps cut the chosen figures' uncertainty most."""

from __future__ import annotations

from .options import (add_body_options, add_flow_options, add_gp_kernel_option, add_gp_orientation_option,
                      add_gp_trend_option, gp_trend, load_inputs, speed_mps, stagnation_prior)

PLAN_FIGURES = ("CL", "CD", "CS", "CLF", "CLR", "CPM")


def add_parser(sub):
    p = sub.add_parser("plan", help="propose new tap positions that cut the uncertainty most",
                       description="Greedy variance reduction with a kriging model along the surface: adds one "
                                   "tap at a time where the chosen figures' summed relative posterior variance "
                                   "falls most.")
    p.add_argument("mesh", help="surface mesh")
    p.add_argument("--taps", help="existing tap table: with readings (p or cp) the model is fitted to them; a layout "
                                        "without readings only marks the places taken; leave out for a new car")
    add_body_options(p)
    add_flow_options(p)
    p.add_argument("--max-tap-distance", default=None, metavar="D", help="largest tap-to-surface distance")
    p.add_argument("--figures", default="CL,CLF,CLR", help="figures to plan for, comma separated, among "
                   + ", ".join(PLAN_FIGURES) + " (default CL,CLF,CLR)")
    p.add_argument("--add", type=int, default=10, metavar="N", help="taps to add (default 10)")
    p.add_argument("--exclude-box", action="append", default=[], metavar="X0,Y0,Z0,X1,Y1,Z1",
                   help="no taps inside this box (mesh coordinates and unit); repeat for more boxes")
    p.add_argument("--exclude-faces", metavar="FILE",
                   help="text file of face indices (0-based, of the loaded mesh) where no tap may go")
    p.add_argument("--min-spacing", default="50 mm", metavar="D",
                   help="smallest distance along the surface between taps (default '50 mm')")
    p.add_argument("--length-scale", default=None, metavar="L",
                   help="kriging length scale when it cannot be fitted (fewer than 3 taps), e.g. '0.8 m'")
    p.add_argument("--patches", type=int, default=2500, metavar="N", help="carrier patches (default 2500)")
    p.add_argument("--regions", default=None, metavar="SPEC",
                   help="model these regions as independent fields (as 'loads --regions': 'normal', "
                        "'edges[:ANGLE]', planes, boxes or a face label file)")
    add_gp_kernel_option(p, "exponential", "see meshpress uncertainty --help and docs/uncertainty.md")
    add_gp_orientation_option(p, True, form="matern52")
    add_gp_trend_option(p)
    p.add_argument("--out", default="planned_taps.csv", help="CSV of the new taps, mesh coordinates and unit "
                                                             "(default planned_taps.csv)")
    p.add_argument("--picture", metavar="PNG", help="write a picture of the plan")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def _boxes(texts, body):
    import numpy as np

    from ..errors import InputError

    out = []
    for t in texts:
        try:
            v = [float(s) for s in t.split(",")]
        except ValueError:
            v = []
        if len(v) != 6:
            raise InputError(f"--exclude-box {t!r}: give six numbers x0,y0,z0,x1,y1,z1")
        c = np.array(v).reshape(2, 3)
        corners = np.array([[c[i, 0], c[j, 1], c[k, 2]] for i in (0, 1) for j in (0, 1) for k in (0, 1)])
        p = body.frame.to_vehicle(corners) if body.frame else corners
        out.append(np.concatenate([p.min(axis=0), p.max(axis=0)]))
    return out


def _faces(path, body):
    import numpy as np

    from ..errors import InputError

    if not path:
        return None
    try:
        idx = np.loadtxt(path, dtype=np.int64, comments="#", ndmin=1)
    except (OSError, ValueError) as exc:
        raise InputError(f"--exclude-faces {path!r}: could not be read as face indices ({exc})") from None
    if len(idx) and (idx.min() < 0 or idx.max() >= body.n_faces):
        raise InputError(f"--exclude-faces {path!r}: indices must be between 0 and {body.n_faces - 1}")
    return idx


def run(args) -> int:

    from ..loads.analysis import resolve_q
    from ..errors import InputError
    from ..bands.planning import plan_taps
    from ..progress import Progress
    from ..loads.results import check_not_input, write_atomic
    from ..taps.layout import has_readings
    from ..units import LENGTH_UNITS, length_factor, parse_quantity

    progress = Progress(enabled=False if args.quiet else None)
    figures = [f.strip().upper() for f in args.figures.split(",") if f.strip()]
    bad = [f for f in figures if f not in PLAN_FIGURES]
    if bad or not figures:
        raise InputError(f"--figures: {', '.join(bad) or 'none given'}; choose among {', '.join(PLAN_FIGURES)}")
    if args.add < 1:
        raise InputError(f"--add must be >= 1, got {args.add}")
    if args.patches < 50:
        raise InputError(f"--patches must be >= 50, got {args.patches}")
    sp, unit = parse_quantity(args.min_spacing, args.length_unit, LENGTH_UNITS, "length", "--min-spacing: ")
    spacing = sp * length_factor(unit)
    ell = None
    if args.length_scale:
        lv, lu = parse_quantity(args.length_scale, args.length_unit, LENGTH_UNITS, "length", "--length-scale: ")
        if lv <= 0:
            raise InputError(f"--length-scale must be positive, got {args.length_scale}")
        ell = lv * length_factor(lu)
    for o in (args.out, args.picture):
        if o:
            check_not_input(o, (args.mesh, args.taps))
    readings = not args.taps or has_readings(args.taps)
    body, taps = load_inputs(args, progress, values=readings)
    if not readings:
        print(f"  {args.taps}: a layout without readings (no p or cp column): the plan uses the prior of a new car, "
              "conditioned on these taps' places\n")
    plan = plan_taps(body, taps, figures=figures, n_add=args.add, n_patches=args.patches,
                     boxes=_boxes(args.exclude_box, body), excluded_faces=_faces(args.exclude_faces, body),
                     min_spacing=spacing, length_scale=ell, q=resolve_q(args.q, speed_mps(args.speed), args.air_density),
                     ref_area=args.ref_area, kernel=args.kernel_gp, regions=args.regions,
                     orientation=args.orientation_gp == "on", orientation_kernel=args.orientation_kernel,
                     anisotropy=args.anisotropy_gp == "on", trend=gp_trend(args),
                     stagnation_prior=stagnation_prior(args), fit=readings, progress=progress)
    pts = body.frame.to_mesh(plan.points) if body.frame else plan.points
    existing = set(taps.names) if taps is not None else set()
    names, k = [], 1
    for _ in range(len(pts)):
        while f"N{k:02d}" in existing:
            k += 1
        names.append(f"N{k:02d}")
        k += 1
    lines = [f"# planned taps (meshpress plan), coordinates in the mesh's own axes and unit ({args.length_unit});",
             "# order = greedy order: the first ones matter most", "tap,x,y,z,order"]
    lines += [f"{n},{p[0]:.6g},{p[1]:.6g},{p[2]:.6g},{i + 1}" for i, (n, p) in enumerate(zip(names, pts))]
    write_atomic(args.out, "\n".join(lines) + "\n", protect=(args.mesh, args.taps))
    print(format_plan(plan, plan.absolute))
    print(f"\n  wrote {args.out} ({len(pts)} taps)")
    if len(pts) < args.add:
        print(f"  warning: only {len(pts)} of {args.add} taps fit the exclusions and the spacing")
    if args.picture:
        from ..outputs.planview import plan_picture

        plan_picture(body, plan, taps, args.picture)
        print(f"  wrote {args.picture}")
    return 0


def format_plan(plan, fitted: bool) -> str:
    unit = "" if fitted else " (relative units: no readings to fit, or no --q/--speed for Pa readings)"
    lines = ["meshpress plan: greedy reduction of the summed relative posterior variance",
             f"u: the sampling part of each figure's standard uncertainty{unit}", "",
             f"  {'figure':<8}{'u now':>10}{'u after':>10}{'ratio':>8}"]
    for k, n in enumerate(plan.names):
        r = plan.u_after[k] / plan.u_before[k] if plan.u_before[k] > 0 else float("nan")
        lines.append(f"  {n:<8}{plan.u_before[k]:>10.4f}{plan.u_after[k]:>10.4f}{r:>8.2f}")
    return "\n".join(lines)
