"""``meshpress diff A B``: what changed between two configurations or two result files."""

from __future__ import annotations

import json
from pathlib import Path

from ..errors import InputError


def add_parser(sub):
    p = sub.add_parser("diff", help="compare two result files, or two configurations of a test sheet",
                       description="Change from A (base) to B in CL, CD, CLF, CLR, front share, per tap and per "
                                   "face.  A and B are result JSON files (from 'meshpress run' or 'meshpress "
                                   "loads --json'), or configuration names with --sheet.")
    p.add_argument("base", help="base: result JSON file, or configuration name with --sheet")
    p.add_argument("other", help="other: result JSON file, or configuration name with --sheet")
    p.add_argument("--sheet", metavar="SHEET", help="test sheet whose configurations BASE and OTHER are compared")
    p.add_argument("--bands", action="store_true",
                   help="with --sheet: the change's standard uncertainty and 95 %% interval (kriging of the "
                        "tap-by-tap difference; as [uncertainty] bands = true)")
    p.add_argument("--json", metavar="OUT", help="write the comparison as JSON (per-face change beside it as .npy)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(run=run)
    return p


def _load_json(path):
    p = Path(path)
    if not p.is_file():
        raise InputError(f"result file {path!r} does not exist")
    try:
        d = json.loads(p.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: not a meshpress result JSON ({exc})") from None
    if not isinstance(d, dict) or "CL" not in d or "taps" not in d:
        raise InputError(f"{path}: not a meshpress result JSON (no CL or taps)")
    return d


def compare_files(a_path, b_path) -> dict:
    """Compare two result JSON files: figures, taps by name, faces when both have a .faces.npy beside them."""
    import numpy as np

    from ..sheets.runs import DIFF_FIGURES

    a, b = _load_json(a_path), _load_json(b_path)
    d = {"base": str(a_path), "other": str(b_path), "delta": {}, "base_figures": {}, "other_figures": {}}
    for k in DIFF_FIGURES:
        x, y = a.get(k), b.get(k)
        d["base_figures"][k], d["other_figures"][k] = x, y
        d["delta"][k] = None if x is None or y is None else y - x

    def cp(res):
        q = res.get("q_Pa")
        out = {}
        for t in res["taps"]:
            v = t.get("value")
            if v is None:
                continue
            if res.get("value_kind") == "p":
                if not q:
                    raise InputError("a result in Pa without q: per-tap Cp cannot be compared")
                v = v / q
            out[t["name"]] = v
        return out

    pa = {p["name"]: p for p in a.get("parts") or []}
    pb = {p["name"]: p for p in b.get("parts") or []}
    if pa and pb:
        # What the change did to each part (the wing itself, and the body around it); a part in one file only
        # has no change to give.
        d["parts"] = {n: {k: None if pa[n].get(k) is None or pb[n].get(k) is None else pb[n][k] - pa[n][k]
                          for k in DIFF_FIGURES} for n in pa if n in pb}
    ca, cb = cp(a), cp(b)
    common = [n for n in ca if n in cb]
    d["taps"] = [{"name": n, "cp_base": ca[n], "cp_other": cb[n], "delta_cp": cb[n] - ca[n]} for n in common]
    d["taps_only_in_base"] = [n for n in ca if n not in cb]
    d["taps_only_in_other"] = [n for n in cb if n not in ca]
    fa, fb = Path(a_path).with_suffix(".faces.npy"), Path(b_path).with_suffix(".faces.npy")
    if fa.is_file() and fb.is_file():
        va, vb = np.load(fa), np.load(fb)
        if len(va) != len(vb):
            raise InputError(f"{fa.name} and {fb.name} have different face counts: not the same body")
        dc = vb - va
        d["face_delta_cp"] = dc
        d["faces"] = {"count": len(dc), "min_delta_cp": float(dc.min()), "max_delta_cp": float(dc.max()),
                      "mean_abs_delta_cp": float(np.abs(dc).mean())}
    return d


def format_diff(d) -> str:
    lines = [f"meshpress diff: {d['other']} vs {d['base']}", ""]
    lines.append(f"  {'':<13}{'base':>10}{'other':>10}{'change':>10}")
    for k, v in d["delta"].items():
        x, y = d["base_figures"][k], d["other_figures"][k]
        f = (lambda z: "n/a" if z is None else f"{z:+.3f}")
        lines.append(f"  {k:<13}{f(x):>10}{f(y):>10}{f(v):>10}")
    if d.get("parts"):
        lines += ["", f"  by part: {'':<10}{'dCL':>8}{'dCD':>8}{'dCLF':>8}{'dCLR':>8}"]
        f = (lambda z: "n/a" if z is None else f"{z:+.3f}")
        for n, v in d["parts"].items():
            lines.append(f"    {n[:17]:<17}{f(v['CL']):>8}{f(v['CD']):>8}{f(v['CLF']):>8}{f(v['CLR']):>8}")
    if d["taps"]:
        big = sorted(d["taps"], key=lambda t: -abs(t["delta_cp"]))[:8]
        lines += ["", "  largest per-tap changes in Cp:"]
        lines += [f"    {t['name']:<10}{t['cp_base']:+.3f} -> {t['cp_other']:+.3f}  ({t['delta_cp']:+.3f})" for t in big]
    if "faces" in d:
        f = d["faces"]
        lines.append(f"\n  per face ({f['count']:,}): change in Cp from {f['min_delta_cp']:+.3f} to "
                     f"{f['max_delta_cp']:+.3f}, mean |change| {f['mean_abs_delta_cp']:.3f}")
    ch = d.get("change")
    if ch:
        lines += ["", "  change with its band (kriging of the tap-by-tap difference; 95 % = change +/- 1.96 u):"]
        for k in ("CL", "CD", "CLF", "CLR"):
            b = ch["figures"].get(k)
            if b is None:
                continue
            lines.append(f"    {k:<5}{b['value']:+.3f} +/- {b['u']:.3f}   [{b['lo95']:+.3f}, {b['hi95']:+.3f}]"
                         f"   ({'resolved' if b['resolved'] else 'not resolved'} from zero; u of {d['other']} "
                         f"alone {b['other_u']:.3f})")
        lines += [f"    note: {n}" for n in ch.get("notes", []) if not n.startswith("covariance on")]
    return "\n".join(lines)


def run(args) -> int:
    from ..loads.results import _clean, write_atomic

    if args.sheet:
        from ..progress import Progress
        from ..sheets.runs import process_sheet
        from ..sheets.sheet import read_sheet

        sheet = read_sheet(args.sheet)
        for k, n in (("base", args.base), ("other", args.other)):
            if n not in sheet.configurations:
                raise InputError(f"{k} {n!r} is not a configuration of {sheet.path.name} "
                                 f"({', '.join(sheet.configurations)})")
        sheet.compare = [(args.base, args.other)]
        result = process_sheet(sheet, Progress(enabled=False if args.quiet else None),
                               bands=True if args.bands else None)
        d = result.comparisons[0]
        inputs = sheet.input_files()
    else:
        if args.bands:
            raise InputError("--bands needs --sheet (the band of a change is computed from the runs' taps)")
        d = compare_files(args.base, args.other)
        inputs = [args.base, args.other]
    print(format_diff(d))
    if args.json:
        import numpy as np

        from ..loads.results import replace_into

        faces = d.pop("face_delta_cp", None)
        out = Path(args.json)
        if faces is not None:
            npy = out.with_suffix(".faces.npy")
            replace_into(npy, lambda tmp: np.save(tmp, faces), protect=inputs)
            d["face_delta_cp_file"] = npy.name
        write_atomic(out, json.dumps(_clean(d), indent=2) + "\n", protect=inputs)
        print(f"\n  wrote {out}")
    return 0
