"""``meshpress uncertainty MESH TAPS [--baseline BASE_TAPS]``: every figure with its band.

A separate command (the ``loads`` command is left as it is): it runs the same
body, taps and field as ``loads``, then a kriging model along the surface for
the bands (meshpress.bands.uncertainty, meshpress.bands.kriging).  With ``--baseline`` it
also gives every figure's change (TAPS minus BASE_TAPS) with the band of the
change, in which the errors the two runs share cancel (meshpress.bands.change).
"""

from __future__ import annotations

from .options import (add_body_options, add_field_options, add_flow_options, add_gp_kernel_option,
                      add_gp_orientation_option, add_gp_trend_option, gp_trend, load_inputs, method_settings,
                      speed_mps, stagnation_prior)

U_COLUMNS = ("u", "p_u", "cp_u", "sem", "p_sem", "cp_sem")
#: Field methods whose spread ``--spread`` shows by default (harmonic is a cross-check only, strip a baseline).
SPREAD_METHODS = ("rbf", "geodesic", "biharmonic", "nearest", "kriging")


def add_parser(sub):
    p = sub.add_parser("uncertainty", help="loads with standard uncertainties and 95 %% intervals",
                       description="Integrate the taps as 'loads' does, then give every figure a band: "
                                   "measurement (per-tap spread, sensor accuracy, q, reference pressure) and "
                                   "sampling (a kriging model of the field along the surface). With --regions "
                                   "the model, like the field, treats the regions as independent.")
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
    add_gp_kernel_option(g, "auto", "the best marginal likelihood among exponential and the Laplace-Beltrami "
                                    "Matérn 1/2, 3/2, 5/2 and heat kernels")
    add_gp_orientation_option(g, True, form="matern52")
    add_gp_trend_option(g)
    c = p.add_argument_group("change from a baseline (docs/uncertainty.md)")
    c.add_argument("--baseline", metavar="BASE_TAPS",
                   help="tap table of the baseline configuration on the same taps: every figure's change "
                        "(TAPS minus BASE_TAPS) with its band is given too")
    c.add_argument("--error-correlation", type=float, default=1.0, metavar="R",
                   help="correlation between the two runs' systematic errors (sensor accuracy, --u-p-ref, q): "
                        "1 (default) for the same sensors, reference and q measurement, 0 for unrelated ones; "
                        "the u column is always independent between the runs")
    c.add_argument("--common-taps", action="store_true",
                   help="use only the taps both files have (default: a tap in one file only is an error)")
    p.add_argument("--json", metavar="OUT", help="write the result (loads + 'uncertainty' object, and 'change' "
                                                 "with --baseline) as JSON")
    r = p.add_argument_group("pictures and report")
    r.add_argument("--spread", nargs="?", const=",".join(SPREAD_METHODS), default=None, metavar="LIST",
                   help="also run these field methods on the same taps (as 'meshpress compare'; default "
                        + ",".join(SPREAD_METHODS) + ") and show each figure's spread between them beside its band")
    r.add_argument("--map", metavar="PNG", help="write a picture of where unknown pressure matters most for "
                                                "--map-figure (four views)")
    r.add_argument("--map-figure", default="CL", metavar="NAME",
                   help="figure of the map and of the report's map: CL, CD, CS, CPM, CLF, CLR or a force name "
                        "(default CL)")
    r.add_argument("--report", metavar="DIR", help="write the loads report (as 'loads --report') with the bands, "
                                                   "the method spread and the map to DIR")
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
    from ..taps.tables import read_table
    from ..units import pressure_factor

    df = read_table(path, "tap table")
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
    from ..bands.uncertainty import sensor_u
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


def _u_speed(args, speed):
    if speed is not None and args.u_speed:
        from ..units import parse_quantity, SPEED_UNITS, speed_factor

        _, unit = parse_quantity(args.speed, "m/s", SPEED_UNITS, "speed", "--speed: ")
        return args.u_speed * speed_factor(unit)
    return 0.0


def _subset(taps, idx):
    """The taps ``idx`` of a ProjectedTaps, in that order."""
    from dataclasses import replace

    return replace(taps, names=[taps.names[i] for i in idx], raw_points=taps.raw_points[idx],
                   points=taps.points[idx], faces=taps.faces[idx], barycentric=taps.barycentric[idx],
                   distance=taps.distance[idx], values=taps.values[idx])


def run(args) -> int:
    import json
    from pathlib import Path

    from ..loads.analysis import compute_loads, resolve_q
    from ..loads.coefficients import ISA_RHO
    from ..errors import InputError
    from ..fields import DEFAULT_METHOD, PosteriorField, make_field
    from ..progress import Progress
    from ..loads.results import _clean, check_not_input, write_atomic
    from ..outputs.textreport import format_result
    from ..bands.uncertainty import FIGURES, Measurement, compute_uncertainty, figure_face_weights, q_relative_u

    progress = Progress(enabled=False if args.quiet else None)
    speed = speed_mps(args.speed)
    q = resolve_q(args.q, speed, args.air_density)
    if args.patches < 50:
        raise InputError(f"--patches must be >= 50, got {args.patches}")
    if not 0.0 <= args.error_correlation <= 1.0:
        raise InputError(f"--error-correlation must be between 0 and 1, got {args.error_correlation:g}")
    inputs = (args.mesh, args.taps) + ((args.baseline,) if args.baseline else ())
    for out in (args.json, args.map):
        if out:
            check_not_input(out, inputs)
    if args.report and Path(args.report).exists() and not Path(args.report).is_dir():
        raise InputError(f"--report {args.report!r} is a file; give a folder to write the report into")
    spread_methods = _spread_methods(args.spread)
    if (args.map or args.report) and args.map_figure not in FIGURES:
        raise InputError(f"--map-figure {args.map_figure!r} is not one of: {', '.join(FIGURES)}")
    body, taps = load_inputs(args, progress)
    if args.map or args.report:  # checked before the bands are computed: which figures these inputs give
        wb = body.axles.wheelbase if body.axles is not None else None
        names, _ = figure_face_weights(body, kind=taps.kind, q=q, ref_area=1.0, wheelbase=wb)
        if args.map_figure not in names:
            raise InputError(f"--map-figure {args.map_figure!r} is not one of the figures these inputs give: "
                             f"{', '.join(names)}")
    base_taps, dropped = None, []
    if args.baseline:
        base_taps, taps, dropped = _baseline_taps(args, body, taps, progress)
    from ..bands.patches import Carrier

    # One carrier (covariance patches) for every kriging model here: the bands, the baseline's, the change's, and
    # the kriging field when it is the method or one of --spread.
    with progress.step("carrier patches"):
        carrier = Carrier(body, args.patches, progress=progress)

    def settings(name=None):
        s = method_settings(args, name)
        return {**s, "carrier": carrier} if (name or args.method) in ("kriging", "posterior") else s

    tap_u = read_tap_u(args.taps, taps.names, taps.kind, args.pressure_unit)
    u_q_rel = (q_relative_u(q=q, u_q=args.u_q) if args.q is not None else
               q_relative_u(speed=speed, u_speed=_u_speed(args, speed), rho=args.air_density or ISA_RHO,
                            u_rho=args.u_air_density))
    sensor = _sensor(args, taps.kind)
    meas = Measurement.build(len(taps), tap_u=tap_u, sensor=sensor, u_p_ref=args.u_p_ref, u_q_rel=u_q_rel)
    if args.method == DEFAULT_METHOD:
        # The default field is the bands' model itself, with this command's model options: one fit, one answer.
        field = PosteriorField(kernel=args.kernel_gp, trend=gp_trend(args), orientation=args.orientation_gp == "on",
                               orientation_kernel=args.orientation_kernel, anisotropy=args.anisotropy_gp == "on",
                               stagnation=stagnation_prior(args), q=q, tap_var=meas.tap_u**2, regions=args.regions,
                               carrier=carrier)
    else:
        field = make_field(args.method, **settings())
    loads = compute_loads(body, taps, field, q=q, ref_area=args.ref_area, p_ref=args.p_ref, progress=progress)
    loads.inputs["taps"] = str(args.taps)
    gp_kw = dict(q=q, ref_area=loads.ref_area_m2, carrier=carrier, kernel=args.kernel_gp, regions=args.regions,
                 orientation=args.orientation_gp == "on", orientation_kernel=args.orientation_kernel,
                 anisotropy=args.anisotropy_gp == "on", trend=gp_trend(args),
                 stagnation_prior=stagnation_prior(args), progress=progress)
    with progress.step("kriging bands"):
        unc = compute_uncertainty(body, taps, meas=meas, field=field, **gp_kw)
    change = None
    if args.baseline:
        from ..bands.change import ErrorSources, compute_change

        base_field = make_field(args.method, **settings())
        base_loads = compute_loads(body, base_taps, base_field, q=q, ref_area=loads.ref_area_m2, p_ref=args.p_ref,
                                   progress=progress)
        base_u = read_tap_u(args.baseline, base_taps.names, base_taps.kind, args.pressure_unit)
        e_other = ErrorSources.build(len(taps), random_u=tap_u, systematic_u=sensor, u_p_ref=args.u_p_ref,
                                     u_q_rel=u_q_rel)
        e_base = ErrorSources.build(len(taps), random_u=base_u, systematic_u=sensor, u_p_ref=args.u_p_ref,
                                    u_q_rel=u_q_rel)
        with progress.step("kriging bands of the baseline and of the change"):
            base_unc = compute_uncertainty(body, base_taps, meas=e_base.measurement(), field=base_field, **gp_kw)
            change = compute_change(body, taps, base_taps.values, taps.values, err_base=e_base, err_other=e_other,
                                    correlation=args.error_correlation, base_result=base_unc, other_result=unc,
                                    field_change=(_face_values(loads) - _face_values(base_loads)), **gp_kw,
                                    base_label=str(args.baseline), other_label=str(args.taps))
        if dropped:
            change.notes.insert(0, f"{len(dropped)} taps in one file only were left out of every figure "
                                   f"(--common-taps): {', '.join(dropped)}")
        if (tap_u is None) != (base_u is None):
            change.notes.append("only one of the two tap files has a u column: the other's readings are taken "
                                "as exact")
    spread = None
    if spread_methods:
        from ..loads.compare import compare_methods

        with progress.step("field methods for the spread"):
            c = compare_methods(body, taps, spread_methods, settings=settings, q=q,
                                ref_area=loads.ref_area_m2, p_ref=args.p_ref, progress=progress)
        spread = {k: v for k, v in c["spread"].items() if k in unc.names}
        spread["_methods"] = list(spread_methods)
    print(format_result(loads))
    print()
    print(format_bands(unc, field.describe()))
    if spread:
        print("  method spread (max - min over " + ", ".join(spread_methods) + "): "
              + ", ".join(f"{k} {spread[k]:.3g}" for k in unc.names if spread.get(k) is not None))
    if change is not None:
        print()
        print(format_change(change))
    # The bands' JSON object, as --json and the report's loads.json both carry it.
    unc_doc = {**unc.to_dict(), **({"method_spread": spread} if spread else {})}
    if args.json:
        d = loads.to_dict()
        d["uncertainty"] = unc_doc
        if change is not None:
            d["baseline_uncertainty"] = change.base.to_dict()
            d["change"] = change.to_dict()
        write_atomic(args.json, json.dumps(_clean(d), indent=2) + "\n", protect=inputs)
        print(f"\n  wrote {args.json}")
    if args.map or args.report:
        from ..outputs.bandreport import bands_section_html, importance_png

        with progress.step("rendering the map"):
            png = importance_png(unc, body, taps, args.map_figure)
        if args.map:
            from ..loads.results import replace_into

            replace_into(args.map, lambda tmp: Path(tmp).write_bytes(png), protect=inputs)
            print(f"  wrote {args.map}")
        if args.report:
            from ..loads.analysis import LoadRun
            from ..outputs.report import write_report

            html = bands_section_html(unc, field_name=field.describe(), spread=spread, map_png=png,
                                      map_figure=args.map_figure)
            files = write_report(LoadRun(body, taps, field, loads), args.report, protect=inputs, progress=progress,
                                 sections=[("How sure is the number", html)],
                                 extra_images={f"map_{args.map_figure}": png},
                                 json_extra={"uncertainty": unc_doc})
            print(f"  wrote {files.html}")
    return 0


def _spread_methods(text):
    """Method names of ``--spread`` (checked before any work), or None."""
    if text is None:
        return None
    from ..errors import InputError
    from ..fields import METHODS

    names = [m.strip() for m in text.split(",") if m.strip()]
    bad = [m for m in names if m not in METHODS]
    if bad or len(names) < 2:
        raise InputError(f"--spread: give two or more of {', '.join(METHODS)} (got {text!r})")
    return names


def _face_values(loads):
    from ..sheets.runs import face_values

    return face_values(loads)


def _baseline_taps(args, body, taps, progress):
    """The baseline's taps placed on the body, matched to ``taps`` by name (same order).

    Returns
    -------
    base, taps, dropped
        The baseline taps and the config taps, both restricted to the shared ones, and the names left out.
    """
    from ..bands.change import match_taps
    from ..errors import InputError
    from ..taps.projection import project_taps
    from ..taps.layout import read_taps
    from ..tolerances import TOL
    from .options import max_distance_m

    table = read_taps(args.baseline, pressure_unit=args.pressure_unit)
    if table.kind != taps.kind:
        raise InputError(f"{args.baseline} has {table.kind} values and {args.taps} has {taps.kind}: "
                         "give both files in the same kind (p or cp)")
    with progress.step("projecting baseline taps"):
        base = project_taps(body, table, max_distance=max_distance_m(args.max_tap_distance, args.length_unit))
    oi, bi, dropped = match_taps(base.names, base.raw_points, taps.names, taps.raw_points,
                                 tolerance_m=TOL.same_tap_m, base_label=str(args.baseline),
                                 other_label=str(args.taps), common_only=args.common_taps)
    return _subset(base, bi), _subset(taps, oi), dropped


def format_change(ch) -> str:
    """Plain-text table of every figure's change with its band, each run's own u beside, and sentences."""
    lines = [f"change: {ch.other_label} minus {ch.base_label} ({ch.n_taps} shared taps; kriging of the tap-by-tap "
             "difference; 95 % interval = change +/- 1.96 u)", ""]
    lines.append(f"  {'figure':<16}{'change':>11}{'u':>10}   {'95 % interval':<24}{'meas.':>9}{'sampl.':>9}"
                 f"{'q':>8}   {'field':>10}{'u taps':>10}{'u base':>10}")
    for b in ch.bands:
        newton = b.name.endswith(("_N", "_Nm"))
        spec, uspec = (",.1f", ",.1f") if newton else ("+.4f", ".4f")
        fv = "" if b.field_value is None else format(b.field_value, spec)
        uo, ub = ch.own_u("other", b.name), ch.own_u("base", b.name)
        lines.append(f"  {b.name:<16}{format(b.value, spec):>11}{format(b.u, uspec):>10}   "
                     f"{'[' + format(b.lo95, spec) + ', ' + format(b.hi95, spec) + ']':<24}"
                     f"{format(b.u_measurement, uspec):>9}{format(b.u_sampling, uspec):>9}{format(b.u_q, uspec):>8}"
                     f"   {fv:>10}{'' if uo is None else format(uo, uspec):>10}"
                     f"{'' if ub is None else format(ub, uspec):>10}")
    lines += ["", f"  model of the difference: {ch.model}",
              "  field column: the field method's change; u taps / u base: each configuration's own band"]
    said = [nm for nm in ("CL", "CLF", "CLR", "CD") if nm in ch.names]
    if said:
        lines.append("")
        lines += [f"  {ch.sentence(nm)}" for nm in said]
    lines.append("")
    lines += [f"  assumed: {a}" for a in ch.assumptions]
    lines += [f"  note: {n}" for n in ch.notes]
    return "\n".join(lines)


def format_bands(unc, field_name="field") -> str:
    """Plain-text table: estimate +/- u, 95 % interval, budget, and the field's own value beside."""
    from ..bands.uncertainty import field_outside

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
    lines += ["", f"  model: {unc.model}"]
    if any(b.field_value is not None for b in unc.bands):
        lines.append(f"  field column: {field_name} (its difference from the estimate is one sign of the method "
                     "spread)")
    else:
        lines.append("  the estimate is the loads above: the field integrated is this model's posterior mean")
    out = field_outside(unc.bands)
    if out:
        lines.append("  outside the band: the field's " + ", ".join(
            f"{b.name} {b.field_value:+.3f} (interval [{b.lo95:+.3f}, {b.hi95:+.3f}])" for b in out)
            + ": the two estimates from the same taps disagree by more than the band allows; trust neither "
              "without more taps where unknown pressure matters most (--map; meshpress plan)")
    elif any(b.field_value is not None for b in unc.bands):
        lines.append("  the field's coefficients all lie inside their 95 % intervals")
    lines += [f"  note: {n}" for n in unc.notes]
    lines.append("  The band covers measurement and sampling between taps under the model's assumptions; it cannot "
                 "see a feature no tap comes near.")
    return "\n".join(lines)
