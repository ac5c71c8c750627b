"""The readable table printed by ``meshpress loads`` and ``meshpress demo``."""

from __future__ import annotations

from ..loads.results import CAUTION, LoadResult


def _fmt(v, spec):
    return "n/a" if v is None else format(v, spec)


#: What a band covers, in one line (printed under every table with bands).
BAND_SCOPE = ("the band covers the measurement errors and what the field does between the taps, under the "
              "model's assumptions; it cannot see a feature no tap comes near")


def _band_text(bands, name):
    """``+/- u  [lo, hi]`` of coefficient ``name`` from an UncertaintyResult, or "" when it has none."""
    try:
        b = bands.band(name)
    except KeyError:
        return ""
    return f" +/- {b.u:.3f}   [{b.lo95:+.3f}, {b.hi95:+.3f}]"


def format_result(r: LoadResult, bands=None) -> str:
    """Plain-text summary of a result: figures, inputs, mesh and warnings.

    Parameters
    ----------
    r : LoadResult
    bands : UncertaintyResult, optional
        Bands of the same model as ``r`` (the default method): each
        coefficient gets its standard uncertainty and 95 % interval on its row.
    """
    m = r.mesh or {}
    lines = ["meshpress loads", ""]
    if bands is not None:
        lines.append(f"  {'':<29}{'':>12} {'':<4}   {'':<4}{'value':>8}{'u':>10}   95 % interval")
    rows = [
        ("lift (+ up)", _fmt(r.lift_N, ",.1f"), "N", "CL", _fmt(r.CL, "+.3f")),
        ("drag (+ rearward)", _fmt(r.drag_N, ",.1f"), "N", "CD", _fmt(r.CD, "+.3f")),
        ("side force (+ right)", _fmt(r.side_N, ",.1f"), "N", "CS", _fmt(r.CS, "+.3f")),
        ("pitching moment (+ nose up)", _fmt(r.pitch_moment_Nm, ",.1f"), "N m", "CPM", _fmt(r.CPM, "+.3f")),
        ("front axle lift", _fmt(r.front_lift_N, ",.1f"), "N", "CLF", _fmt(r.CLF, "+.3f")),
        ("rear axle lift", _fmt(r.rear_lift_N, ",.1f"), "N", "CLR", _fmt(r.CLR, "+.3f")),
    ]
    for name, val, unit, cname, cval in rows:
        lines.append(f"  {name:<29}{val:>12} {unit:<4}   {cname:<4}{cval:>8}"
                     + ("" if bands is None or cval == "n/a" else _band_text(bands, cname)))
    share = r.front_share
    unresolved = False
    if bands is not None and share is not None:
        try:
            unresolved = abs(r.CL) < 1.96 * bands.band("CL").u
        except KeyError:
            pass
    if unresolved:
        lines.append(f"  {'front share of lift':<29}{'n/a':>12}   (the lift is not resolved from zero: see CLF, CLR)")
    elif share is not None and r.CLF is not None and abs(r.CL) < 0.05 * (abs(r.CLF) + abs(r.CLR)):
        lines.append(f"  {'front share of lift':<29}{'n/a':>12}   (the total lift is near zero: see CLF and CLR)")
    else:
        lines.append(f"  {'front share of lift':<29}{_fmt(None if share is None else 100 * share, '.1f'):>12} %")
    if r.parts:
        lines += [""] + format_parts(r, bands)
    lines.append("")
    lines.append(f"  q {_fmt(r.q_Pa, ',.1f')} Pa   reference area {r.ref_area_m2:.3f} m2 ({r.ref_area_source})")
    lines.append(f"  wheelbase {_fmt(r.wheelbase_m, '.3f')} m   field: {r.method}   taps: {len(r.taps)}")
    lines.append(f"  integrated over: {r.quadrature}")
    if r.taps:
        far = max(r.taps, key=lambda t: t["distance_m"])
        lines.append(f"  largest tap projection: {far['distance_m'] * 1000:.1f} mm ({far['name']})")
    if m:
        lines.append(
            f"  mesh: {m['faces']:,} faces, {m['area_m2']:.2f} m2, "
            f"{'watertight' if m['watertight'] else 'open'}, {m['holes']} holes, closure {m['closure']:.2e}"
        )
        nm = m.get("nonmanifold") or {}
        if nm.get("count"):
            lines.append(f"  non-manifold edges: {nm['count']:,} (shells overlapping or joined at an edge), around "
                         f"x {nm['bbox_min_m'][0]:+.2f}..{nm['bbox_max_m'][0]:+.2f} m, "
                         f"z {nm['bbox_min_m'][2]:+.2f}..{nm['bbox_max_m'][2]:+.2f} m")
        if m.get("source_frame"):
            lines.append(f"  file frame: {m['source_frame']} (into x rearward, y right, z up, m)")
    if bands is not None:
        lines.append(f"  u: standard uncertainty; 95 % interval = value +/- 1.96 u: {BAND_SCOPE}")
    if r.warnings:
        lines.append("")
        lines += [f"  warning: {w}" for w in r.warnings]
    lines += ["", f"  Caution: {CAUTION}"]
    return "\n".join(lines)


def format_parts(r: LoadResult, bands=None) -> list:
    """Lines: one row per part (faces, taps, lift, drag, CL, CD, CLF, CLR; with bands u of CL), then the sum."""
    head = (f"  {'part':<22}{'faces':>9}{'taps':>6}{'lift N':>10}{'drag N':>9}{'CL':>8}{'CD':>8}{'CLF':>8}"
            f"{'CLR':>8}" + (f"{'u(CL)':>8}" if bands is not None else ""))
    out = [head]
    for p in r.parts:
        L = p.loads
        u = ""
        if bands is not None:
            try:
                u = f"{bands.band(f'CL[{p.name}]').u:>8.3f}"
            except KeyError:
                u = f"{'n/a':>8}"
        out.append(f"  {p.name[:21]:<22}{p.faces:>9,}{p.taps:>6}{_fmt(L.lift_N, ',.1f'):>10}{_fmt(L.drag_N, ',.1f'):>9}"
                   f"{_fmt(L.CL, '+.3f'):>8}{_fmt(L.CD, '+.3f'):>8}{_fmt(L.CLF, '+.3f'):>8}{_fmt(L.CLR, '+.3f'):>8}" + u)
    out.append(f"  {'(sum of the parts = the whole; no field crosses from one part to another)':<22}")
    return out
