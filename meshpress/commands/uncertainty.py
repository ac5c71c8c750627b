"""``meshpress uncertainty MESH TAPS``: every figure with its band.

A separate command (the ``loads`` command is left as it is): it runs the same
body, taps and field as ``loads``, then a kriging model along the surface for
the bands (meshpress.uncertainty, meshpress.kriging).
"""

from __future__ import annotations

# Literal copy of meshpress.kriging.KERNELS (importing it would load scipy just to print --help; a test
# keeps the two equal).
KRIGING_KERNELS = ("exponential", "matern32", "lb-matern12", "lb-matern32", "lb-matern52", "lb-heat")

from .options import add_body_options, add_field_options, add_flow_options, method_settings, speed_mps, load_inputs

U_COLUMNS = ("u", "p_u", "cp_u", "sem", "p_sem", "cp_sem")


def add_parser(sub):
    p = sub.add_parser("uncertainty", help="loads with standard uncertainties and 95 %% intervals",
                       description="Integrate the taps as 'loads' does, then give every figure a band: "
                                   "measurement (per-tap spread, sensor accuracy, q, reference pressure) and "
                                   "sampling (a kriging model of the field along the surface).")
    p.add_argument("mesh", help="surface mesh")
    p.add_argument("taps", help="tap table; an optional column u (or p_u, cp_u, sem) holds each tap's standard "
                                "uncertainty in the value's unit, e.g. the standard error of its readings' mean")
    add_body_options(p)
    add_flow_options(p)
    add_field_options(p)
    g = p.add_argument_group("uncertainty")
    g.add_argument("--sensor-accuracy", metavar="A",
                   help="sensor accuracy +/- A, in the taps' unit or as '0.25 %%' of --full-scale "
                        "(read as a rectangular distribution)")
    g.add_argument("--full-scale", type=float, metavar="FS", help="sensor full scale, in the taps' unit")
    g.add_argument("--u-speed", type=float, default=0.0, metavar="U", help="standard uncertainty of the speed, "
                                                                         "same unit as --speed")
    g.add_argument("--u-air-density", type=float, default=0.0, metavar="U", help="standard uncertainty of the "
                                                                               "air density, kg/m3")
    g.add_argument("--u-q", type=float, default=0.0, metavar="U", help="standard uncertainty of --q, Pa")
    g.add_argument("--u-p-ref", type=float, default=0.0, metavar="U",
                   help="standard uncertainty of the reference pressure, taps' unit")
    g.add_argument("--patches", type=int, default=2500, metavar="N", help="carrier patches for the covariance "
                                                                        "(default 2500)")
    g.add_argument("--kernel-gp", default="auto", choices=("auto",) + KRIGING_KERNELS,
                   help="kriging correlation along the surface (default auto: the best marginal likelihood among "
                        "exponential and the Laplace-Beltrami Matérn 1/2, 3/2, 5/2 and heat kernels)")
    p.add_argument("--json", metavar="OUT", help="write the result (loads + 'uncertainty' object) as JSON")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def read_tap_u(path, names, kind, pressure_unit="Pa"):
    """Per-tap standard uncertainty from an optional column of the tap table, or None.

    Columns tried: u, p_u, cp_u, sem, p_sem, cp_sem (first found); values in
    the table's value unit (``p`` columns converted with ``pressure_unit``).
    """
    import numpy as np
    import pandas as pd

    from ..errors import InputError
    from ..taps import _read_frame
    from ..units import pressure_factor
    from pathlib import Path

    df = _read_frame(Path(path))
    df.columns = [str(c).strip().lower() for c in df.columns]
    col = next((c for c in U_COLUMNS if c in df.columns), None)
    if col is None:
        return None
    by_name = {str(n).strip(): v for n, v in zip(df["tap"], df[col])}
    out = np.empty(len(names))
    for i, n in enumerate(names):
        v = pd.to_numeric(pd.Series([by_name.get(n)]), errors="coerce").iloc[0]
        if not np.isfinite(v) or v < 0:
            raise InputError(f"{path}, tap {n!r}, column {col}: {by_name.get(n)!r} is not a number >= 0")
        out[i] = v
    if kind == "p":
        out *= pressure_factor(pressure_unit, "--pressure-unit: ")
    return out


def _sensor(args, kind):
    from ..errors import InputError
    from ..uncertainty import sensor_u
    from ..units import pressure_factor

    if not args.sensor_accuracy:
        return 0.0
    text = str(args.sensor_accuracy).strip()
    try:
        if text.endswith("%"):
            if args.full_scale is None:
                raise InputError("--sensor-accuracy in % needs --full-scale")
            a = sensor_u(float(text[:-1]), full_scale=args.full_scale)
        else:
            a = sensor_u(float(text))
    except ValueError:
        raise InputError(f"--sensor-accuracy: {text!r} is not a number or a percentage") from None
    return a * (pressure_factor(args.pressure_unit, "--pressure-unit: ") if kind == "p" else 1.0)


def run(args) -> int:
    import json

    from ..analysis import compute_loads, resolve_q
    from ..errors import InputError
    from ..fields import make_field
    from ..progress import Progress
    from ..results import _clean, write_atomic
    from ..textreport import format_result
    from ..uncertainty import Measurement, compute_uncertainty, q_relative_u
    from ..results import check_not_input

    progress = Progress(enabled=False if args.quiet else None)
    speed = speed_mps(args.speed)
    q = resolve_q(args.q, speed, args.air_density)
    if args.patches < 50:
        raise InputError(f"--patches must be >= 50, got {args.patches}")
    if args.json:
        check_not_input(args.json, (args.mesh, args.taps))
    body, taps = load_inputs(args, progress)
    field = make_field(args.method, **method_settings(args))
    loads = compute_loads(body, taps, field, q=q, ref_area=args.ref_area, p_ref=args.p_ref, progress=progress)
    loads.inputs["taps"] = str(args.taps)
    tap_u = read_tap_u(args.taps, taps.names, taps.kind, args.pressure_unit)
    if speed is not None and args.u_speed:
        from ..units import parse_quantity, SPEED_UNITS, speed_factor

        _, unit = parse_quantity(args.speed, "m/s", SPEED_UNITS, "speed", "--speed: ")
        u_speed = args.u_speed * speed_factor(unit)
    else:
        u_speed = 0.0
    from ..coefficients import ISA_RHO

    u_q_rel = (q_relative_u(q=q, u_q=args.u_q) if args.q is not None else
               q_relative_u(speed=speed, u_speed=u_speed, rho=args.air_density or ISA_RHO, u_rho=args.u_air_density))
    meas = Measurement.build(len(taps), tap_u=tap_u, sensor=_sensor(args, taps.kind), u_p_ref=args.u_p_ref,
                             u_q_rel=u_q_rel)
    with progress.step("kriging bands"):
        unc = compute_uncertainty(body, taps, q=q, ref_area=loads.ref_area_m2, meas=meas, field=field,
                                  n_patches=args.patches, kernel=args.kernel_gp, progress=progress)
    print(format_result(loads))
    print()
    print(format_bands(unc, field.describe()))
    if args.json:
        d = loads.to_dict()
        d["uncertainty"] = unc.to_dict()
        write_atomic(args.json, json.dumps(_clean(d), indent=2) + "\n", protect=(args.mesh, args.taps))
        print(f"\n  wrote {args.json}")
    return 0


def format_bands(unc, field_name="field") -> str:
    """Plain-text table: estimate +/- u, 95 % interval, budget, and the field's own value beside."""
    lines = ["uncertainty (kriging along the surface; 95 % interval = estimate +/- 1.96 u)", ""]
    lines.append(f"  {'figure':<16}{'estimate':>11}{'u':>10}   {'95 % interval':<24}{'meas.':>9}{'sampl.':>9}"
                 f"{'q':>8}   {'field':>10}")
    for b in unc.bands:
        spec = ",.1f" if b.name.endswith(("_N", "_Nm")) else "+.4f"
        uspec = ",.1f" if b.name.endswith(("_N", "_Nm")) else ".4f"
        fv = "" if b.field_value is None else format(b.field_value, spec)
        lines.append(f"  {b.name:<16}{format(b.value, spec):>11}{format(b.u, uspec):>10}   "
                     f"{'[' + format(b.lo95, spec) + ', ' + format(b.hi95, spec) + ']':<24}"
                     f"{format(b.u_measurement, uspec):>9}{format(b.u_sampling, uspec):>9}{format(b.u_q, uspec):>8}"
                     f"   {fv:>10}")
    lines += ["", f"  model: {unc.model}", f"  field column: {field_name} (its difference from the estimate is "
              "one sign of the method spread)"]
    lines += [f"  note: {n}" for n in unc.notes]
    lines.append("  The band covers measurement and sampling between taps under the model's assumptions; it cannot "
                 "see a feature no tap comes near.")
    return "\n".join(lines)
