"""Several field methods on the same taps: cross-validation error, loads and their spread.

The recommendation is the method with the lowest *nested* leave-one-out RMS
error at the taps among the methods meant for loads (``harmonic`` is shown as a
cross-check only).  Plain leave-one-out predicts each reading from all the
others (closed forms where they exist: Rippa 1999 for the kernel methods); a
method that chose its length scale, ridge or trend by that same error scores
itself optimistically (Cawley & Talbot, JMLR 11 (2010) 2079-2107), so the
ranking uses the nested form, in which the choice is re-made without the
left-out tap (:meth:`~meshpress.fields.base.Field.loo_residuals_nested`; equal
to the plain one for methods with no such choice).  Both are reported.  Low
cross-validation error at the taps is evidence, not proof, of accuracy between
them: the spread of the loads between methods is the honest measure of how
much the answer depends on the choice.
"""

from __future__ import annotations

import time

import numpy as np

from .. import __version__
from .analysis import compute_loads
from ..errors import InputError
from ..fields import DEFAULT_METHOD, METHODS, make_field
from ..progress import Progress
from .results import CAUTION

#: Methods shown for comparison but never recommended for loads: the harmonic field from point values has
#: no continuum limit (a point has zero capacity in 2-D), so its loads drift with the mesh (docs/methods.md).
CROSS_CHECK_ONLY = ("harmonic",)

#: Figures compared between methods (LoadResult properties).
LOAD_FIGURES = ("CL", "CD", "CS", "CPM", "CLF", "CLR", "front_share", "lift_N", "drag_N", "side_N",
                "pitch_moment_Nm", "front_lift_N", "rear_lift_N")


def _num(v):
    return None if v is None or not np.isfinite(v) else float(v)


def compare_methods(body, taps, methods=None, *, settings=None, q=None, ref_area=None, p_ref=0.0,
                    progress=None, face_values=None) -> dict:
    """Run ``methods`` on the same body and taps.

    Parameters
    ----------
    body : Body
    taps : ProjectedTaps
    methods : list of str, optional
        Method names (default every registered method).
    settings : callable, optional
        ``settings(name) -> dict`` of constructor settings per method.
    q, ref_area, p_ref
        As for :func:`~meshpress.loads.analysis.compute_loads`.
    face_values : dict, optional
        Filled with method name -> (m,) face values, for pictures.

    Returns
    -------
    dict
        ``methods``: one entry per method (``loo_rms``, ``loo_max`` and the
        nested ``loo_nested_rms``, ``loo_nested_max`` in Cp when ``q`` is known
        or the taps are Cp, else Pa; the load figures;
        ``extrapolated_share``; ``seconds``; ``warnings``), ``spread`` (max - min
        of each figure over the methods), ``recommended`` and ``summary``.
    """
    progress = progress or Progress(enabled=False)
    methods = list(methods or METHODS)
    settings = settings or (lambda name: {})
    if ref_area is None:
        ref_area = body.frontal_area()
    to_cp = 1.0
    loo_unit = "Cp"
    if taps.kind == "p":
        if q:
            to_cp = 1.0 / q
        else:
            loo_unit = "Pa"
    rows = []
    for name in methods:
        t0 = time.perf_counter()
        field = make_field(name, **settings(name))
        try:
            res = compute_loads(body, taps, field, q=q, ref_area=ref_area, p_ref=p_ref, progress=progress)
        except InputError as exc:  # a method that cannot run on these taps is reported, not fatal
            rows.append({"method": name, "description": None, "loo_rms": None, "loo_max": None,
                         "loo_nested_rms": None, "loo_nested_max": None, "loo_worst_tap": None, "loo_unit": loo_unit, "extrapolated_share": None,
                         "seconds": time.perf_counter() - t0, "warnings": [f"not run: {exc}"],
                         **{k: None for k in LOAD_FIGURES}})
            continue
        if face_values is not None:
            face_values[name] = res.face_values if res.face_values is not None else field.face_values()
        loo = np.asarray(field.loo_residuals(), float) * to_cp
        ok = np.isfinite(loo)
        worst = int(np.argmax(np.where(ok, np.abs(loo), -1))) if ok.any() else None
        nested = np.asarray(field.loo_residuals_nested(), float) * to_cp
        nok = np.isfinite(nested)
        row = {
            "method": name,
            "description": res.method,
            "loo_rms": _num(np.sqrt(np.mean(loo[ok] ** 2))) if ok.any() else None,
            "loo_max": _num(abs(loo[worst])) if worst is not None else None,
            "loo_nested_rms": _num(np.sqrt(np.mean(nested[nok] ** 2))) if nok.any() else None,
            "loo_nested_max": _num(np.abs(nested[nok]).max()) if nok.any() else None,
            "loo_worst_tap": taps.names[worst] if worst is not None else None,
            "loo_unit": loo_unit,
            "extrapolated_share": _num(getattr(field, "extrapolated_share_", None)),
            "seconds": time.perf_counter() - t0,
            "warnings": list(field.warnings_),
        }
        for k in LOAD_FIGURES:
            row[k] = _num(getattr(res, k))
        rows.append(row)
    spread = {}
    for k in LOAD_FIGURES + ("loo_rms", "loo_nested_rms"):
        vals = [r[k] for r in rows if r[k] is not None]
        spread[k] = (max(vals) - min(vals)) if len(vals) > 1 else (0.0 if vals else None)
    best = recommend(rows)
    return {
        "methods": rows,
        "spread": spread,
        "recommended": best,
        "summary": summary(rows, spread, best),
        "q_Pa": q,
        "ref_area_m2": float(ref_area),
        "value_kind": taps.kind,
        "n_taps": len(taps),
        "caution": CAUTION,
        "inputs": {"mesh": body.source, "meshpress": __version__},
    }


def score(row):
    """The figure a method is ranked by: its nested leave-one-out RMS (the plain one where a row has no
    nested figure)."""
    v = row.get("loo_nested_rms")
    return row["loo_rms"] if v is None else v


def recommend(rows) -> str | None:
    """The method with the lowest nested leave-one-out RMS among those meant for loads (not
    CROSS_CHECK_ONLY)."""
    scored = [r for r in rows if score(r) is not None and r["method"] not in CROSS_CHECK_ONLY]
    return min(scored, key=score)["method"] if scored else None


def summary(rows, spread, best) -> str:
    """Two or three sentences: the recommendation, how far the loads move between methods, and a note
    on the cross-check methods shown."""
    checks = [r for r in rows if r["method"] in CROSS_CHECK_ONLY]
    note = ""
    if checks:
        names = ", ".join(r["method"] for r in checks)
        note = (f" {names}: a bounded cross-check, never recommended for loads (its field tends to a constant "
                "between taps as the mesh is refined; docs/methods.md).")
    if best is None:
        return "No method meant for loads gave a leave-one-out error; no recommendation." + note
    b = next(r for r in rows if r["method"] == best)
    lower = [r["method"] for r in checks if score(r) is not None and score(r) < score(b)]
    plain = min((r for r in rows if r["loo_rms"] is not None and r["method"] not in CROSS_CHECK_ONLY),
                key=lambda r: r["loo_rms"])["method"]
    s = (f"Recommended: {best} (lowest nested leave-one-out error at the taps among the load methods, RMS "
         f"{score(b):.3g} {b['loo_unit']}"
         + (f"; {plain} has the lowest plain leave-one-out error, which its own choice of settings flatters"
            if plain != best else "")
         + (f"; {', '.join(lower)} scored lower but is not a load method" if lower else "") + ").")
    key = [k for k in ("CL", "CLF", "CLR") if spread.get(k) is not None]
    if key:
        parts = []
        for k in key:
            vals = [(r[k], r["method"]) for r in rows if r[k] is not None]
            lo, hi = min(vals), max(vals)
            parts.append(f"{k} by {spread[k]:.3f} ({lo[0]:+.3f} {lo[1]} to {hi[0]:+.3f} {hi[1]})")
        s += " Between methods " + ", ".join(parts) + "."
    elif spread.get("lift_N") is not None:
        s += f" Between methods the lift moves by {spread['lift_N']:.1f} N."
    if best != DEFAULT_METHOD and any(r["method"] == DEFAULT_METHOD for r in rows):
        s += (f" The default ({DEFAULT_METHOD}, the one 'meshpress loads' uses and whose bands it prints) is not the "
              f"recommendation for these taps: compare its figures with {best}'s above, and use --method {best} "
              "if you trust the leave-one-out ranking more than the default's benchmark (docs/accuracy.md).")
    return s + note


def format_comparison(c: dict) -> str:
    """Plain-text table of a comparison."""
    coef = c["methods"] and c["methods"][0]["CL"] is not None
    unit = c["methods"][0]["loo_unit"] if c["methods"] else "Cp"
    figs = ("CL", "CD", "CPM", "CLF", "CLR") if coef else ("lift_N", "drag_N", "pitch_moment_Nm",
                                                          "front_lift_N", "rear_lift_N")
    head = f"  {'method':<12}{'LOO rms':>9}{'nested':>9}{'LOO max':>9}" + "".join(f"{f:>10}" for f in figs) + f"{'extrap %':>10}{'s':>7}"
    lines = ["meshpress compare", "", f"  leave-one-out error at the taps in {unit} (nested: settings re-chosen "
             "without each tap; the ranking); "
             f"{c['n_taps']} taps, reference area {c['ref_area_m2']:.3f} m2", "", head]

    def f(v, spec):
        return "n/a" if v is None else format(v, spec)

    for r in c["methods"]:
        lines.append(f"  {r['method']:<12}{f(r['loo_rms'], '.3f'):>9}{f(r['loo_nested_rms'], '.3f'):>9}"
                     f"{f(r['loo_max'], '.3f'):>9}"
                     + "".join(f"{f(r[k], '+.3f' if coef else '+.1f'):>10}" for k in figs)
                     + f"{f(None if r['extrapolated_share'] is None else 100 * r['extrapolated_share'], '.1f'):>10}"
                     + f"{r['seconds']:>7.1f}")
    sp = c["spread"]
    lines.append(f"  {'spread':<12}{f(sp['loo_rms'], '.3f'):>9}{f(sp['loo_nested_rms'], '.3f'):>9}{'':>9}"
                 + "".join(f"{f(sp[k], '.3f' if coef else '.1f'):>10}" for k in figs))
    lines += ["", "  " + c["summary"]]
    for r in c["methods"]:
        for w in r["warnings"]:
            lines.append(f"  {r['method']}: {w}")
    lines += ["", f"  Caution: {CAUTION}"]
    return "\n".join(lines)
