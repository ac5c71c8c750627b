"""Options shared by commands that read a body and taps, and their parsing."""

from __future__ import annotations

from ..errors import InputError
from ..tolerances import TOL
from ..units import LENGTH_UNITS, PRESSURE_UNITS, SPEED_UNITS, length_factor, parse_quantity, speed_factor


def add_body_options(p):
    g = p.add_argument_group("body")
    g.add_argument("--length-unit", default="m", help="unit of the mesh and tap coordinates: "
                   + ", ".join(LENGTH_UNITS) + " (default m)")
    g.add_argument("--up", default="+z", help="mesh axis that points up, signed (default +z)")
    g.add_argument("--forward", default="-x",
                   help="mesh axis that points forward, signed (default -x); write --forward=-z")
    g.add_argument("--front-axle", type=float, metavar="X",
                   help="front axle coordinate on the mesh's forward axis, mesh unit")
    g.add_argument("--rear-axle", type=float, metavar="X",
                   help="rear axle coordinate on the mesh's forward axis, mesh unit")
    g.add_argument("--ground", type=float, metavar="H",
                   help="ground height on the mesh's up axis, mesh unit (default: lowest point)")
    g.add_argument("--part", action="append", default=[], metavar="NAME=FILE",
                   help="add a part from another mesh file in the same unit and axes (repeatable), e.g. "
                        "--part wing=wing.stl; its loads are given on their own row")
    g.add_argument("--mirror", nargs="?", const=True, default=None, type=_mirror_value, metavar="Y",
                   help="the mesh is half a car: build the other half across the centre plane, found from the "
                        "open edges, or at Y on the mesh's lateral axis (mesh unit)")
    g.add_argument("--mirror-taps", action="store_true",
                   help="taps are on one side only: mirror them to the other side (side force and yaw are "
                        "then zero by assumption)")
    g.add_argument("--keep-inner", action="store_true",
                   help="keep shells that lie wholly inside the body (seats, engine bay, scan debris); by default "
                        "they are found, reported and left out")
    g.add_argument("--merge-parts", action="store_true",
                   help="fit one field across all parts (by default no field crosses from one part to another)")


def _mirror_value(text):
    try:
        return float(text)
    except ValueError:
        raise InputError(f"--mirror {text!r}: give the centre plane's coordinate as a number, or no value to "
                         "find it") from None


def parse_parts(values) -> list:
    """``--part NAME=FILE`` values -> [(name, path)], with one-line errors."""
    out = []
    for v in values or ():
        name, sep, path = v.partition("=")
        if not sep or not name.strip() or not path.strip():
            raise InputError(f"--part {v!r}: write NAME=FILE, e.g. --part wing=wing.stl")
        out.append((name.strip(), path.strip()))
    names = [n for n, _ in out]
    if len(set(names)) != len(names):
        raise InputError(f"--part: each part needs its own name (got {', '.join(names)})")
    return out


def add_flow_options(p):
    g = p.add_argument_group("flow")
    g.add_argument("--speed", metavar="V", help="air speed, e.g. 33.3 or '120 km/h' (units: "
                   + ", ".join(SPEED_UNITS) + "; default m/s)")
    g.add_argument("--q", type=float, metavar="Q", help="dynamic pressure, Pa")
    g.add_argument("--air-density", type=float, metavar="RHO",
                   help="air density for --speed, kg/m3 (default 1.225, ISA sea level)")
    g.add_argument("--pressure-unit", default="Pa", help="unit of the taps' p column: "
                   + ", ".join(PRESSURE_UNITS) + " (default Pa)")
    g.add_argument("--p-ref", type=float, default=0.0,
                   help="reference pressure subtracted from every face, in the taps' unit (default 0)")
    g.add_argument("--ref-area", type=float, metavar="A", help="reference area, m2 (default: frontal area)")


# Literal copy of meshpress.bands.gpkernels.KERNELS (importing it would load numpy just to print --help; a test
# keeps the two equal).
KRIGING_KERNELS = ("exponential", "matern32", "lb-matern12", "lb-matern32", "lb-matern52", "lb-heat")


def add_gp_kernel_option(g, default: str, about: str):
    """``--kernel-gp``: the kriging correlation of the bands (uncertainty) or of the planner (plan)."""
    g.add_argument("--kernel-gp", default=default, choices=("auto",) + KRIGING_KERNELS,
                   help=f"kriging correlation along the surface (default {default}: {about})")


def add_gp_orientation_option(g, default: bool, form: str):
    """``--orientation-gp on|off`` and ``--orientation-kernel``: the normals' factor in the kriging correlation
    and its form."""
    from ..bands.gpkernels import ORIENTATION_KERNELS

    g.add_argument("--orientation-gp", default="on" if default else "off", choices=("on", "off"),
                   help="kriging correlation also falls with the angle between the surface normals, at a scale "
                        f"fitted to the taps (default {'on' if default else 'off'}; docs/uncertainty.md)")
    g.add_argument("--orientation-kernel", default=form, choices=("auto",) + ORIENTATION_KERNELS,
                   help=f"form of that fall with the angle (default {form}; auto: the one of se, matern52 and "
                        "matern32 the taps' marginal likelihood prefers; docs/uncertainty.md)")
    g.add_argument("--anisotropy-gp", default="off", choices=("on", "off"),
                   help="in that angle, let the normals' component along the flow count more than the others, by a "
                        "weight fitted to the taps (default off; docs/uncertainty.md measures both)")


def add_gp_trend_option(g):
    """``--trend-gp``: the mean of the kriging model behind the bands."""
    g.add_argument("--trend-gp", default="newtonian", choices=("newtonian", "normal", "constant"),
                   help="mean of the kriging model beyond a constant (default newtonian: impact pressure on skin "
                        "facing the flow, a level on rear-facing skin; normal: linear in the surface normal; "
                        "docs/uncertainty.md)")
    add_stagnation_option(g)


def add_stagnation_option(g):
    """``--stagnation-prior``: centre the Newtonian impact term on full stagnation pressure."""
    g.add_argument("--stagnation-prior", default=None, choices=("auto", "on", "off"),
                   help="with the newtonian trend, expect skin facing the flow to sit near stagnation (Cp = 1) "
                        "unless the taps say otherwise: on (default of the bands), off (no expected level), or auto "
                        "(whichever the taps' marginal likelihood prefers; default of the kriging field method); "
                        "needs Cp readings or q; docs/uncertainty.md")


def stagnation_prior(args, default=True):
    """``--stagnation-prior`` as the models take it: "auto", True or False (``default`` when not given)."""
    from ..bands.gptrend import STAGNATION_SETTINGS

    v = getattr(args, "stagnation_prior", None)
    return default if v is None else STAGNATION_SETTINGS[v]


def gp_trend(args):
    """The ``trend`` argument of the kriging model from ``--trend-gp`` (``constant``: None)."""
    return None if args.trend_gp == "constant" else args.trend_gp


def add_field_options(p, method_help=None):
    """Field options; ``method_help`` replaces the help of ``--method`` and makes its default None (so a
    command can tell whether it was given)."""
    from ..fields import DEFAULT_METHOD, METHODS
    from ..fields.bounds import EXTRAPOLATION
    from ..fields.kernels import GEODESIC_KERNELS
    from ..fields.rbf import KERNELS

    g = p.add_argument_group("pressure field (docs/methods.md)")
    if method_help is None:
        g.add_argument("--method", default=DEFAULT_METHOD, help="field method: " + ", ".join(METHODS)
                       + f" (default {DEFAULT_METHOD}: the posterior mean of the model that gives the bands, so "
                       "the figures are the centres of their bands; docs/accuracy.md)")
    else:
        g.add_argument("--method", default=None, metavar="NAME", help=method_help)
    g.add_argument("--kernel", default=None, help="RBF kernel: " + ", ".join(KERNELS)
                   + " (default thin_plate_spline); geodesic: " + ", ".join(GEODESIC_KERNELS) + " (default matern52); "
                   "kriging: as --kernel-gp of 'meshpress uncertainty', or loo (default: the one of lowest "
                   "leave-one-out error)")
    g.add_argument("--smoothing", type=float, default=0.0, help="RBF smoothing (default 0: exact at taps)")
    g.add_argument("--length", type=float, metavar="L",
                   help="geodesic kernel length scale, m (default: chosen by leave-one-out error)")
    g.add_argument("--nugget", type=float, default=1e-6, help="geodesic kernel ridge, relative (default 1e-6)")
    g.add_argument("--trend", default=None, choices=("constant", "normal", "newtonian", "auto"),
                   help="mean of the geodesic and kriging fields: constant (geodesic default), linear in the surface "
                        "normal, (kriging, its default) newtonian: impact pressure on skin facing the flow and a base "
                        "level on rear-facing skin, or (geodesic) chosen by leave-one-out; docs/accuracy.md measures them")
    g.add_argument("--orientation", default=None, choices=("on", "off"),
                   help="geodesic and kriging fields: the kernel also falls with the angle between the surface normals, "
                        "at a scale chosen with the length (geodesic: by leave-one-out, default off, on for wings and "
                        "thin parts; kriging: by maximum likelihood, default on; docs/accuracy.md)")
    g.add_argument("--work-faces", type=int, default=None, metavar="N",
                   help="surface methods solve on a copy simplified to N faces (default 80000)")
    g.add_argument("--band", type=float, default=0.05, metavar="W",
                   help="strip method: half-width of the centre-line band, m (default 0.05)")
    g.add_argument("--extrapolation", default="clamp", choices=EXTRAPOLATION,
                   help="beyond the outermost taps: clamp to the readings' range (default), decay to "
                        "--far-value, or none")
    g.add_argument("--far-value", type=float, default=None, metavar="V",
                   help="value far from every tap for --extrapolation decay (taps' unit, e.g. 0)")
    g.add_argument("--regions", default=None, metavar="SPEC",
                   help="fit separately on regions: 'normal', 'edges[:ANGLE]', 'x=V', 'z=V', "
                        "'box=X0,X1,Y0,Y1,Z0,Z1' or a face label file; join parts with ';'")
    g.add_argument("--empty-value", type=float, default=None, metavar="V",
                   help="value of a region without taps (default: the nearest tap's reading)")
    g.add_argument("--max-tap-distance", default=None, metavar="D",
                   help="largest tap-to-surface distance, mesh unit or with a unit like '25 mm' (default 25 mm)")


def speed_mps(text) -> float | None:
    if text is None:
        return None
    value, unit = parse_quantity(text, "m/s", SPEED_UNITS, "speed", "--speed: ")
    return value * speed_factor(unit)


def max_distance_m(text, length_unit) -> float:
    if text is None:
        return TOL.max_tap_distance_m
    value, unit = parse_quantity(text, length_unit, LENGTH_UNITS, "length", "--max-tap-distance: ")
    if value <= 0:
        raise InputError(f"--max-tap-distance must be positive, got {text}")
    return value * length_factor(unit)


def _flow_q(args) -> float | None:
    """The run's dynamic pressure (Pa) from --q or --speed, or None (the stagnation level of readings in Pa)."""
    from ..loads.analysis import resolve_q

    return resolve_q(getattr(args, "q", None), speed_mps(getattr(args, "speed", None)),
                     getattr(args, "air_density", None))


def method_settings(args, method=None) -> dict:
    """Constructor settings of ``method`` (default ``args.method``) from the parsed options."""
    method = method or args.method
    common = {"extrapolation": args.extrapolation, "far_value": args.far_value}
    work = {} if args.work_faces is None else {"work_faces": args.work_faces}
    if method == "rbf":
        s = {"kernel": args.kernel or "thin_plate_spline", "smoothing": args.smoothing, **common}
    elif method == "geodesic":
        s = {"kernel": args.kernel or "matern52", "length": args.length, "nugget": args.nugget,
             "trend": args.trend or "constant", "orientation": args.orientation == "on", **work, **common}
    elif method in ("biharmonic", "harmonic", "nearest"):
        s = {**work, **common}
    elif method == "strip":
        s = {"band": args.band, **common}
    elif method == "kriging":
        if args.trend == "auto":
            raise InputError("--trend auto is for the geodesic method; kriging takes constant, normal or newtonian")
        trend = {None: "newtonian", "constant": None}.get(args.trend, args.trend)
        s = {"kernel": args.kernel or "loo", "trend": trend, "stagnation": stagnation_prior(args, "auto"),
             "orientation": args.orientation != "off", "q": _flow_q(args), **common}
    elif method == "posterior":
        if args.trend == "auto":
            raise InputError("--trend auto is for the geodesic method; posterior takes constant, normal or newtonian")
        trend = {None: "newtonian", "constant": None}.get(args.trend, args.trend)
        bad = [k for k in (args.kernel or "auto").split(",") if k not in ("auto",) + KRIGING_KERNELS]
        if bad:
            raise InputError(f"--kernel {bad[0]!r} is not one of the posterior method's: "
                             + ", ".join(("auto",) + KRIGING_KERNELS))
        s = {"kernel": args.kernel or "auto", "trend": trend, "stagnation": stagnation_prior(args, True),
             "orientation": args.orientation != "off", "q": _flow_q(args)}
    else:
        s = {}
    if args.regions is not None:
        s.update(regions=args.regions, empty_value=args.empty_value)
    return s


def load_inputs(args, progress, *, values: bool = True):
    """The body and, when ``args.taps`` is given, its taps placed on it, from the shared options.

    ``values=False`` reads the taps as a layout (positions only; :func:`meshpress.taps.layout.read_taps`).

    Returns
    -------
    body : Body
    taps : ProjectedTaps or None
    """
    from ..bodies.body import load_body
    from ..taps.projection import project_taps
    from ..taps.layout import read_taps

    body = load_body(args.mesh, length_unit=args.length_unit, up=args.up, forward=args.forward,
                     front_axle=args.front_axle, rear_axle=args.rear_axle, ground=args.ground,
                     parts=parse_parts(getattr(args, "part", ())), mirror=getattr(args, "mirror", None),
                     keep_inner=getattr(args, "keep_inner", False), progress=progress)
    if not args.taps:
        return body, None
    table = read_taps(args.taps, pressure_unit=args.pressure_unit, values=values)
    if getattr(args, "mirror_taps", False):
        from ..bodies.mirror import MIRROR_TAPS_CAUTION, mirror_taps

        table = mirror_taps(table, body)
        body.warnings.append(MIRROR_TAPS_CAUTION)
    with progress.step("projecting taps"):
        taps = project_taps(body, table, max_distance=max_distance_m(args.max_tap_distance, args.length_unit))
    return body, taps
