"""``meshpress run SHEET.toml``: a whole test from its test sheet."""

from __future__ import annotations

import io
import json
from pathlib import Path

from ..errors import InputError


def add_parser(sub):
    p = sub.add_parser("run", help="process a whole test described by a test sheet (TOML)",
                       description="Read the test sheet, reduce every run's readings to Cp, average the runs of "
                                   "each configuration, compute the loads, compare configurations, scale to other "
                                   "speeds and write a results folder.  See docs/test-sheet.md.")
    p.add_argument("sheet", help="test sheet, TOML")
    p.add_argument("--out", metavar="DIR", help="results folder (default: SHEET-results next to the sheet)")
    p.add_argument("--no-plot", action="store_true", help="do not draw speeds.png (no matplotlib needed)")
    p.add_argument("--bands", action="store_true",
                   help="give every configuration's figures and every comparison's change with a standard "
                        "uncertainty and a 95 %% interval (kriging along the surface, per-tap standard errors; "
                        "on by default with the default field method; same as [uncertainty] bands = true)")
    p.add_argument("--no-bands", action="store_true",
                   help="skip the bands (faster; same as [uncertainty] bands = false)")
    p.add_argument("--report", metavar="DIR", help="also write one page with every configuration side by side, "
                   "the changes with their bands, the change of Cp on the body and the loads over speed "
                   "(DIR/report.html; DIR may be the results folder)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def _npy(a) -> bytes:
    import numpy as np

    buf = io.BytesIO()
    np.save(buf, np.asarray(a, dtype=float))
    return buf.getvalue()


def result_files(result, *, plot=True) -> dict:
    """Relative path -> content of every output file of a test."""
    from .. import __version__
    from ..loads.results import CAUTION, _clean
    from ..outputs.runfiles import _safe, bands_csv, configuration_to_dict, run_to_dict, speed_csv, summary_csv
    from ..sheets.speed import plot_speed_tables

    dump = (lambda d: json.dumps(_clean(d), indent=2) + "\n")
    files = {"summary.csv": summary_csv(result)}
    for r in result.runs:
        files[f"runs/{_safe(r.run.name)}.json"] = dump(run_to_dict(r))
    tables = {}
    for name, c in result.configurations.items():
        files[f"configurations/{_safe(name)}.json"] = dump(configuration_to_dict(c))
        files[f"configurations/{_safe(name)}.faces.npy"] = _npy(c.load.face_values)
        if c.speeds:
            files[f"speeds/{_safe(name)}.csv"] = speed_csv(c, result.sheet.speed_unit)
            tables[name] = c.speeds
    for d in result.comparisons:
        stem = f"comparisons/{_safe(d['base'])}__vs__{_safe(d['other'])}"
        faces = d.pop("face_delta_cp", None)
        if faces is not None:
            files[stem + ".faces.npy"] = _npy(faces)
            d["face_delta_cp_file"] = Path(stem).name + ".faces.npy"
        files[stem + ".json"] = dump(d)
    if result.changes or any(c.bands is not None for c in result.configurations.values()):
        files["bands.csv"] = bands_csv(result)
    if plot and tables:
        files["speeds.png"] = (lambda path: plot_speed_tables(tables, path, unit=result.sheet.speed_unit,
                                                              title=result.sheet.title,
                                                              static=result.sheet.vehicle.static_load))
    test = {"title": result.sheet.title, "sheet": str(result.sheet.path), "air": result.sheet.air.describe(),
            "notes": result.warnings, "configurations": list(result.configurations), "caution": CAUTION,
            "meshpress": __version__}
    if result.bands_seconds is not None:
        st = result.sheet.bands
        test["bands"] = {"patches": st.patches, "kernel": st.kernel, "sensor_u_Pa": st.sensor_u_Pa,
                         "error_correlation": st.error_correlation, "seconds": result.bands_seconds}
    files["test.json"] = dump(test)
    return files


def _c(v, width=8):
    """A coefficient, signed, 3 decimals; n/a when it could not be computed (e.g. no axles)."""
    return f"{'n/a' if v is None else format(v, '+.3f'):>{width}}"


def format_test(result) -> str:
    """The readable summary printed by ``meshpress run``."""
    from ..loads.results import CAUTION
    from ..sheets.speed import SPEED_CAUTION
    from ..units import speed_factor

    s = result.sheet
    rho = s.air.density()[0]
    out = [f"meshpress run: {s.title}", f"  air: {s.air.describe()} -> rho {rho:.4f} kg/m3 (CIPM-2007)", ""]
    out.append(f"  {'run':<22}{'config':<14}{'window s':>13}{'q Pa':>9}{'CL':>8}{'CD':>8}{'CLF':>8}{'CLR':>8}")
    for r in result.runs:
        w = r.reading.window_s
        ws = f"{w[0]:.0f}-{w[1]:.0f}" if w else "all"
        L = r.load
        out.append(f"  {r.run.name:<22}{r.run.configuration:<14}{ws:>13}{r.reading.q_Pa:>9.1f}{_c(L.CL)}"
                   f"{_c(L.CD)}{_c(L.CLF)}{_c(L.CLR)}")
    out += ["", f"  {'configuration':<18}{'runs':>5}{'CL':>8}{'+-':>7}{'CD':>8}{'CLF':>8}{'CLR':>8}{'front %':>9}"]
    for name, c in result.configurations.items():
        L = c.load
        half = c.spread.get("CL", {}).get("range", 0.0) / 2
        fs = "n/a" if L.front_share is None else f"{100 * L.front_share:.1f}"
        out.append(f"  {name:<18}{len(c.runs):>5}{_c(L.CL)}{half:>7.3f}{_c(L.CD)}{_c(L.CLF)}{_c(L.CLR)}{fs:>9}")
    out.append("  (+- is half the spread of CL between the configuration's runs)")
    for d in result.comparisons:
        dd = d["delta"]
        fs = "n/a" if dd["front_share"] is None else f"{100 * dd['front_share']:+.1f} points"
        if "change" in d:
            # One answer per figure: with bands the change is its band's centre (the model of the tap-by-tap
            # difference, in which what both configurations miss cancels), given with its u.
            ch = d["change"]["figures"]
            out.append(f"\n  {d['other']} vs {d['base']}: "
                       + "  ".join(f"d{k} {ch[k]['value']:+.3f} +/- {ch[k]['u']:.3f}" for k in ("CL", "CD", "CLF", "CLR")
                                   if k in ch))
        else:
            out.append(f"\n  {d['other']} vs {d['base']}: dCL {_c(dd['CL'], 0)}  dCD {_c(dd['CD'], 0)}  "
                       f"dCLF {_c(dd['CLF'], 0)}  dCLR {_c(dd['CLR'], 0)}  front share {fs}")
        big = sorted(d["taps"], key=lambda t: -abs(t["delta_cp"]))[:3]
        out.append("    largest tap changes: " + ", ".join(f"{t['name']} {t['delta_cp']:+.3f}" for t in big))
        if d.get("parts"):
            out.append("    by part: " + "; ".join(
                f"{name} dCL {_c(v['CL'], 0).strip()} dCD {_c(v['CD'], 0).strip()}" for name, v in d["parts"].items()))
    if result.bands_seconds is not None:
        out += [""] + format_bands_summary(result)
    unit = s.speed_unit
    f = speed_factor(unit)
    for name, c in result.configurations.items():
        if not c.speeds:
            continue
        t = c.speeds
        i = len(t["speed_mps"]) - 1
        line = (f"\n  {name} at {t['speed_mps'][i] / f:.0f} {unit}: lift {t['lift_N'][i]:+,.0f} N, "
                f"drag {t['drag_N'][i]:,.0f} N")
        if "front_axle_load_N" in t:
            line += (f", axle loads front {t['front_axle_load_N'][i]:,.0f} N / rear {t['rear_axle_load_N'][i]:,.0f} N"
                     f", aero adds {100 * t['weight_share_added'][i]:+.1f} % of the weight")
        out.append(line)
    warnings = list(result.warnings)
    for c in result.configurations.values():
        for w in c.warnings:
            if w not in warnings:
                warnings.append(w)
    for w in result.runs[0].load.warnings if result.runs else []:
        if w not in warnings and "q comes from" not in w:
            warnings.append(w)
    if warnings:
        out.append("")
        out += [f"  warning: {w}" for w in warnings]
    if any(c.speeds for c in result.configurations.values()):
        out += ["", f"  Speeds: {SPEED_CAUTION}"]
    out += ["", f"  Caution: {CAUTION}"]
    return "\n".join(out)


def _pm(b, width=18):
    return f"{'n/a' if b is None else format(b.value, '+.3f') + ' +/- ' + format(b.u, '.3f'):>{width}}"


def format_bands_summary(result) -> list:
    """Lines: each configuration's and each change's CL, CD, CLF, CLR as estimate +/- u, and the change sentences."""
    from ..fields import DEFAULT_METHOD
    from ..bands.uncertainty import field_outside

    figs = ("CL", "CD", "CLF", "CLR")

    def get(res, k):
        try:
            return res.band(k)
        except KeyError:
            return None

    out = ["  bands (kriging along the surface; estimate +/- standard uncertainty u, 95 % interval = +/- 1.96 u;",
           "  per-tap u: standard error of the mean over the steady windows"
           + (", with the sensors' accuracy" if result.sheet.bands.sensor_u_Pa else "") + ")",
           f"  {'':<26}" + "".join(f"{k:>18}" for k in figs)]
    for name, c in result.configurations.items():
        out.append(f"  {name:<26}" + "".join(_pm(get(c.bands, k)) for k in figs))
    for ch in result.changes:
        out.append(f"  {(ch.other_label + ' - ' + ch.base_label)[:26]:<26}" + "".join(_pm(get(ch, k)) for k in figs))
    for name, c in result.configurations.items():
        outside = field_outside(c.bands.bands, figs) if c.bands is not None else []
        if outside:
            out.append(f"  {name}: the {result.sheet.method} field's "
                       + ", ".join(f"{b.name} {b.field_value:+.3f}" for b in outside)
                       + " outside the band: the two estimates disagree by more than it allows")
    for ch in result.changes:
        out.append(f"\n  {ch.other_label} vs {ch.base_label}:")
        out += [f"    {ch.sentence(k)}" for k in figs if get(ch, k) is not None]
        out += [f"    note: {n}" for n in ch.notes if not n.startswith("covariance on")]
        wide = [k for k in figs if get(ch, k) is not None and get(ch.other, k) is not None
                and ch.band(k).u > 0.5 * ch.other.band(k).u]
        if wide:
            out.append(f"    (the change's band is not much narrower than the configuration's own for {', '.join(wide)})")
    st = result.sheet.bands
    if result.sheet.method == DEFAULT_METHOD:
        out += ["  (each configuration's figures are its band's centre; a change is the model of the tap-by-tap "
                "difference, so it need not equal the difference of the configurations' figures;"]
    else:
        out += [f"  (estimates are the kriging model's, the figures above the {result.sheet.method} field's: their "
                "difference is one sign of the method spread;"]
    out += [f"  systematic errors correlated {st.error_correlation:g} between configurations; {st.patches} patches, "
            f"{result.bands_seconds:.1f} s; a band covers 95 % under the model's assumptions and cannot see a "
            "feature no tap comes near)"]
    return out


def run(args) -> int:
    from ..progress import Progress
    from ..outputs.resultsdir import check_output_dir, write_folder
    from ..sheets.runs import process_sheet
    from ..sheets.sheet import read_sheet

    sheet = read_sheet(args.sheet)
    out = Path(args.out) if args.out else sheet.path.parent / f"{sheet.path.stem}-results"
    inputs = sheet.input_files()
    check_output_dir(out, inputs)  # before the work, so a bad --out fails fast
    if args.report and Path(args.report).exists() and not Path(args.report).is_dir():
        raise InputError(f"--report {args.report!r} is a file; give a folder to write the report into")
    progress = Progress(enabled=False if args.quiet else None)
    result = process_sheet(sheet, progress, bands=True if args.bands else (False if args.no_bands else None))
    print(format_test(result))
    files = result_files(result, plot=not args.no_plot)
    write_folder(out, files, inputs=inputs, manifest={"sheet": str(sheet.path)})
    if args.report:
        from ..outputs.testreport import write_test_report

        with progress.step("writing the report"):
            page = write_test_report(result, args.report, protect=inputs)
        print(f"\n  wrote {page} (open it in a browser)")
    print(f"\n  wrote {out}/ ({len(files) + 1} files: summary.csv, runs/, configurations/, comparisons/"
          + (", speeds/" if any(k.startswith("speeds/") for k in files) else "")
          + (", bands.csv" if "bands.csv" in files else "") + ")")
    return 0
