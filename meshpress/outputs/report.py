"""The shareable report: one self-contained HTML file, plus the JSON, the VTK body and the tap CSV.

:func:`write_report` takes what :func:`meshpress.loads.analysis.run_loads_parts` made (body, projected
taps, fitted field, result) and writes into a folder:

- ``report.html``: figures, warnings, mesh diagnostics, plots and 3D views (images embedded as
  base64 PNG; no script, no network; opens in any browser)
- ``loads.json``: the result (as ``meshpress loads --json``)
- ``body_field.vtp``: the body with the field (see :mod:`meshpress.outputs.export`)
- ``taps.csv``: the tap table with projected positions and leave-one-out residuals
- ``images/*.png``: every picture of the report, for slides

Every string that comes from the user's files (tap names, file names, warnings quoting them) is
escaped with :func:`html.escape` before it goes into the page.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import io
import json
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .. import __version__
from ..loads.distribution import lift_distribution, section_at_y
from ..loads.results import CAUTION, write_atomic, write_json

VIEW_ORDER = ("three-quarter", "side", "top", "bottom", "front", "rear")


@dataclass
class ReportFiles:
    """What :func:`write_report` wrote, and how long the rendering took (s)."""

    html: Path
    json: Path
    body: Path | None
    taps: Path | None
    images: list = field(default_factory=list)
    render_seconds: float = 0.0
    decimated: bool = False
    notes: list = field(default_factory=list)


def _esc(x) -> str:
    return html.escape(str(x), quote=True)


def _num(v, spec, unit=""):
    if v is None or (isinstance(v, float) and not np.isfinite(v)):
        return "n/a"
    return format(v, spec) + (f"&nbsp;{unit}" if unit else "")


def _png(img: np.ndarray) -> bytes:
    from PIL import Image

    buf = io.BytesIO()
    # zlib level 1: the renders have large flat areas, so the file is barely larger and it writes ~5x faster.
    Image.fromarray(np.asarray(img, dtype=np.uint8)).save(buf, format="PNG", compress_level=1)
    return buf.getvalue()


def _img_tag(png: bytes, alt: str, cls="") -> str:
    b64 = base64.b64encode(png).decode("ascii")
    return f'<img class="{cls}" alt="{_esc(alt)}" src="data:image/png;base64,{b64}">'


def report_pictures(run, *, progress=None, views=VIEW_ORDER, view_size=(1200, 720), tap_names=False,
                    arrows=False, quantity="cp", views_job=None):
    """Compute the report's derived data and draw its pictures.

    ``views_job``: the 3D views already started by :func:`start_views` (with the same view settings).

    Returns
    -------
    dict
        ``plots``: name -> PNG bytes; ``views``: name -> PNG bytes; ``residuals``: (n,) or None;
        ``field_at_taps``: (n,) or None; ``unit``; ``render_seconds``; ``decimated``; ``notes``.
    """
    from ..aside import start_aside
    from . import plots

    body, taps, fld, result = run.body, run.taps, run.field, run.result
    q, kind, p_ref = result.q_Pa, result.value_kind, result.p_ref
    values = np.asarray(result.face_values, float)
    notes = []
    # Display unit: Cp when it can be had, else Pa.
    if kind == "cp":
        to_unit, unit = 1.0, "Cp"
    elif q:
        to_unit, unit = 1.0 / q, "Cp"
    else:
        to_unit, unit = 1.0, "p - p_inf [Pa]"
    residuals = field_at_taps = None
    step = progress.step if progress else _null_step
    with step("leave-one-out residuals"):
        try:
            residuals = np.asarray(fld.loo_residuals(), float)
        except NotImplementedError as exc:
            notes.append(f"leave-one-out residuals not available for this field method ({exc})")
    try:
        field_at_taps = np.asarray(fld.at_points(taps.points), float)
    except NotImplementedError:
        pass
    out = {"plots": {}, "views": {}}
    vertex_vals = np.asarray(body.vertex_faces_matrix @ ((values - p_ref) * to_unit))
    sec = section_at_y(body.vertices, body.faces, body.face_normals, vertex_vals, 0.0)
    tap_d = {"x_m": taps.points[:, 0], "y_m": taps.points[:, 1], "values": (taps.values - p_ref) * to_unit,
             "upper": body.face_normals[taps.faces, 2] > 0}
    scale = q if (kind == "cp" and q) else 1.0
    per_q = kind == "cp" and not q
    dist = lift_distribution(body.triangles, body.area_vectors, values, p_ref=p_ref, scale=scale)

    def draw_plots():
        png = {"centre_line": plots.png_bytes(plots.centre_line_plot(sec, tap_d, unit=unit, axles=body.axles)),
               "lift_distribution": plots.png_bytes(plots.lift_distribution_plot(
                   dist, per_q=per_q, axles=body.axles, front_lift=result.front_lift_N,
                   rear_lift=result.rear_lift_N))}
        if len(body.part_names) > 1:
            png["parts"] = plots.png_bytes(plots.parts_plot(body.triangles, body.face_part, body.part_names,
                                                            axles=body.axles))
        if residuals is not None:
            png["residuals"] = plots.png_bytes(plots.residual_plot(list(taps.names), residuals * to_unit,
                                                                   unit=unit))
        return png

    # The plots are drawn in a second process (matplotlib, one core) while this one renders the views.
    plot_job = start_aside(draw_plots)
    if views_job is None:
        drawn = _draw_views(body, values, taps, views, kind, q, p_ref, view_size, tap_names, arrows, quantity,
                            progress)
    else:
        with step("rendering 3D views"):
            drawn = views_job.result()
    out["views"].update(drawn["views"])
    if drawn["decimated"]:
        notes.append(f"the 3D views show a decimated copy of the {body.n_faces:,}-face mesh (for speed); "
                     "the loads use every face")
    with step("drawing plots"):
        out["plots"].update(plot_job.result())
    out.update(residuals=residuals, field_at_taps=field_at_taps, unit=unit, to_unit=to_unit,
               render_seconds=drawn["seconds"], decimated=drawn["decimated"], notes=notes, lift_dist=dist)
    return out


def _draw_views(body, values, taps, views, kind, q, p_ref, view_size, tap_names, arrows, quantity, progress=None):
    """The report's 3D views: ``{"views": name -> PNG bytes, "seconds": float, "decimated": bool}``."""
    from .view3d import render_views

    imgs = render_views(body, values, taps, views=views, progress=progress, kind=kind, q=q, p_ref=p_ref,
                        size=view_size, tap_names=tap_names, arrows=arrows, quantity=quantity)
    return {"views": {name: _png(imgs[name]) for name in views}, "seconds": imgs["_seconds"],
            "decimated": imgs["_decimated"]}


def start_views(body, taps, result, *, views=VIEW_ORDER, view_size=(1200, 720), tap_names=False, arrows=False,
                quantity="cp"):
    """Start the report's 3D views of a fitted field in a second process, as soon as the field exists.

    The views need the field only, so they can render while this process computes the bands
    (:func:`meshpress.loads.analysis.run_loads_parts`'s ``after_fit``).  Pass the job to
    :func:`write_report` as ``views_job``, with the same view settings.  Where a child cannot be
    forked safely the views are drawn here when the report asks for them (:mod:`meshpress.aside`).
    """
    from ..aside import start_aside

    values = np.asarray(result.face_values, float)
    kind, q, p_ref = result.value_kind, result.q_Pa, result.p_ref
    return start_aside(lambda: _draw_views(body, values, taps, views, kind, q, p_ref, view_size, tap_names, arrows,
                                           quantity), opengl=True)


class _null_step:
    def __init__(self, label):
        pass

    def __enter__(self):
        return self

    def __exit__(self, *a):
        return False


def missing_libraries() -> list[str]:
    """The display libraries (pip names) that the report and views need and that are not installed."""
    import importlib.util

    mods = {"pyvista": "pyvista", "matplotlib": "matplotlib", "PIL": "pillow", "cmcrameri": "cmcrameri"}
    return [pip for mod, pip in mods.items() if importlib.util.find_spec(mod) is None]


def write_report(run, out_dir, *, protect=(), progress=None, title=None, demo_note=None, images=True,
                 sections=(), extra_images=None, json_extra=None, **picture_kw) -> ReportFiles:
    """Write the report folder (see the module docstring).

    Parameters
    ----------
    run : LoadRun
        From :func:`meshpress.loads.analysis.run_loads_parts`.
    out_dir : str or Path
        Created if missing.
    protect : iterable of paths
        Input files that must not be overwritten.
    progress : Progress, optional
    title : str, optional
        Page title; default from the mesh file's name.
    demo_note : str, optional
        A banner line (e.g. that the data are invented).
    images : bool
        Also write every picture as a PNG under ``images/``.
    sections : sequence of (str, str), or a callable returning one
        Further sections, (heading, trusted HTML), placed after the figures
        (e.g. :func:`meshpress.outputs.bandreport.bands_section_html`).  A
        callable is called once the report's own pictures are drawn (and may
        add to ``extra_images``).
    extra_images : dict, optional
        name -> PNG bytes written under ``images/`` too.
    json_extra : dict, optional
        Further top-level keys of ``loads.json`` (e.g. ``{"uncertainty": ...}``).
    **picture_kw
        Passed to :func:`report_pictures` (``views``, ``view_size``, ``tap_names``, ``arrows``, ``quantity``,
        ``views_job``).
    """
    from ..errors import InputError
    from .export import check_not_input, tap_rows, write_body, write_tap_csv

    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputError(f"--report {str(out_dir)!r} is a file, not a folder")

    missing = missing_libraries()
    if missing:
        raise InputError(f"the report needs {', '.join(missing)}: pip install {' '.join(missing)}")
    for name in ("report.html", "loads.json", "body_field.vtp", "taps.csv"):  # before anything is written
        check_not_input(out / name, protect)
    out.mkdir(parents=True, exist_ok=True)
    pics = report_pictures(run, progress=progress, **picture_kw)
    if callable(sections):  # e.g. collecting a picture drawn in another process meanwhile
        sections = sections()
    result, body, taps = run.result, run.body, run.taps
    rows = tap_rows(body, taps, q=result.q_Pa, p_ref=result.p_ref, field_at_taps=pics["field_at_taps"],
                    residuals=pics["residuals"])
    files = ReportFiles(html=out / "report.html", json=out / "loads.json", body=out / "body_field.vtp",
                        taps=out / "taps.csv", render_seconds=pics["render_seconds"], decimated=pics["decimated"],
                        notes=pics["notes"])
    step = progress.step if progress else _null_step
    with step("writing report files"):
        write_json({**result.to_dict(), **json_extra} if json_extra else result, files.json, protect=protect)
        write_body(files.body, body, result.face_values, taps, result.value_kind, q=result.q_Pa,
                   p_ref=result.p_ref, protect=protect)
        write_tap_csv(files.taps, rows, protect=protect)
        if images:
            from ..loads.results import replace_into

            (out / "images").mkdir(exist_ok=True)
            named = [(f"{group[:-1]}_{name}", png) for group in ("plots", "views") for name, png in pics[group].items()]
            for name, png in named + list((extra_images or {}).items()):
                p = out / "images" / f"{name}.png"
                replace_into(p, lambda tmp, png=png: Path(tmp).write_bytes(png))
                files.images.append(p)
        page = render_html(result, pics, rows, title=title, demo_note=demo_note, sections=sections,
                           written=[files.json.name, files.body.name, files.taps.name]
                           + (["images/"] if images else []))
        write_atomic(files.html, page, protect=protect)
    return files


# HTML ------------------------------------------------------------------------------------------

_CSS = """
:root { --ink:#2b2a27; --paper:#fbf8f1; --rule:#d9d3c7; --soft:#f1ece1; --red:#b2182b; --blue:#2c5aa0;
        --amber:#7a5c00; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
       font: 15px/1.5 "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; }
main { max-width: 1180px; margin: 0 auto; padding: 28px 28px 60px; }
h1 { font: 700 26px/1.2 "DejaVu Sans Mono", Menlo, Consolas, monospace; margin: 0 0 4px; letter-spacing:-0.5px; }
h2 { font: 700 17px/1.3 "DejaVu Sans Mono", Menlo, Consolas, monospace; margin: 36px 0 10px;
     padding-top: 10px; border-top: 2px solid var(--ink); }
.sub { color:#5d5a53; margin:0 0 18px; font-size: 13.5px; }
.banner { background: #fff3c4; border: 1px solid #d8b900; padding: 8px 12px; margin: 12px 0; font-weight: 600; }
.caution { border-left: 5px solid var(--red); background: #fbeaea; padding: 10px 14px; margin: 14px 0; }
.glance { display:grid; grid-template-columns: repeat(auto-fit, minmax(200px, 1fr)); gap: 10px; margin: 12px 0; }
.card { background: var(--soft); border: 1px solid var(--rule); padding: 10px 12px; }
.card .k { font-size: 12.5px; color:#5d5a53; } .card .v { font: 700 22px/1.2 "DejaVu Sans Mono", monospace; }
.card .c { font-size: 12.5px; }
table { border-collapse: collapse; margin: 8px 0 6px; font-size: 13.5px; }
th, td { text-align: left; padding: 4px 12px 4px 0; border-bottom: 1px solid var(--rule); vertical-align: top; }
td.n { text-align: right; font-family: "DejaVu Sans Mono", monospace; white-space: nowrap; }
th { font-weight: 700; border-bottom: 2px solid var(--ink); }
ul.warn li { margin: 3px 0; } ul.warn { padding-left: 20px; }
figure { margin: 14px 0 22px; } figcaption { font-size: 13.5px; color: #45423c; max-width: 900px; }
img { max-width: 100%; height: auto; border: 1px solid var(--rule); background: white; }
.views { display:grid; grid-template-columns: 1fr 1fr; gap: 14px; }
.views figure { margin: 0; }
details { margin: 8px 0; } summary { cursor: pointer; font-weight: 600; }
pre { background: var(--soft); border: 1px solid var(--rule); padding: 10px; overflow-x: auto; font-size: 12px; }
.muted { color:#6b675e; font-size: 13px; }
@media (max-width: 800px) { .views { grid-template-columns: 1fr; } }
"""

_VIEW_CAPTIONS = {
    "three-quarter": "From the front left, above.",
    "side": "Left side, nose to the left. The black marks on the ground are the axles.",
    "top": "From above, nose to the left.",
    "bottom": "From below, nose to the left: the underbody.",
    "front": "From the front.",
    "rear": "From behind.",
}


def _parts_table(r) -> str:
    """One row per part: faces, area, taps, lift, drag and the coefficients (with u of CL when banded)."""
    banded = any(p.bands for p in r.parts)
    head = ("<tr><th>part</th><th>faces</th><th>area m²</th><th>taps</th><th>lift N</th><th>drag N</th>"
            "<th>CL</th><th>CD</th><th>CLF</th><th>CLR</th>" + ("<th>u(CL)</th>" if banded else "") + "</tr>")
    rows = []
    for p in r.parts:
        L = p.loads
        u = f"<td>{_num((p.bands or {}).get('CL_u'), '.3f')}</td>" if banded else ""
        rows.append(f"<tr><td>{_esc(p.name)}</td><td>{p.faces:,}</td><td>{p.area_m2:.3f}</td><td>{p.taps}</td>"
                    f"<td>{_num(L.lift_N, ',.1f')}</td><td>{_num(L.drag_N, ',.1f')}</td><td>{_num(L.CL, '+.3f')}</td>"
                    f"<td>{_num(L.CD, '+.3f')}</td><td>{_num(L.CLF, '+.3f')}</td><td>{_num(L.CLR, '+.3f')}</td>{u}</tr>")
    return "<table>" + head + "".join(rows) + "</table>"


def _figures_rows(r) -> str:
    rows = [
        ("Lift (+ up; negative = downforce)", _num(r.lift_N, ",.1f", "N"), "CL", _num(r.CL, "+.3f")),
        ("Drag (+ rearward)", _num(r.drag_N, ",.1f", "N"), "CD", _num(r.CD, "+.3f")),
        ("Side force (+ to the right)", _num(r.side_N, ",.1f", "N"), "CS", _num(r.CS, "+.3f")),
        ("Pitching moment (+ nose up)", _num(r.pitch_moment_Nm, ",.1f", "N&nbsp;m"), "CPM", _num(r.CPM, "+.3f")),
        ("Lift on the front axle", _num(r.front_lift_N, ",.1f", "N"), "CLF", _num(r.CLF, "+.3f")),
        ("Lift on the rear axle", _num(r.rear_lift_N, ",.1f", "N"), "CLR", _num(r.CLR, "+.3f")),
        ("Front axle's share of the lift", _num(None if r.front_share is None else 100 * r.front_share, ".1f", "%"),
         "", ""),
    ]
    return "".join(f"<tr><td>{a}</td><td class=n>{b}</td><td>{c}</td><td class=n>{d}</td></tr>"
                   for a, b, c, d in rows)


def _glance(r) -> str:
    def card(k, v, c=""):
        return f'<div class="card"><div class="k">{k}</div><div class="v">{v}</div><div class="c">{c}</div></div>'

    cards = []
    if r.lift_N is not None:
        word = "lift (pulls the car up)" if r.lift_N > 0 else "downforce (pushes the car down)"
        cards.append(card("Vertical force", _num(abs(r.lift_N), ",.0f", "N"), word))
    cards.append(card("Lift coefficient CL", _num(r.CL, "+.3f"), "+ lifts, &minus; presses down"))
    if r.front_lift_N is not None:
        cards.append(card("Front / rear axle lift", f"{_num(r.front_lift_N, '+,.0f')} / {_num(r.rear_lift_N, '+,.0f')}",
                          "N, from the moment balance"))
    cards.append(card("Drag", _num(r.drag_N, ",.0f", "N"), f"CD {_num(r.CD, '.3f')} (pressure drag on the taps' field)"))
    return '<div class="glance">' + "".join(cards) + "</div>"


def _mesh_rows(m: dict) -> str:
    if not m:
        return "<tr><td colspan=2>no mesh diagnostics</td></tr>"
    lo, hi = m.get("bbox_min_m", [0, 0, 0]), m.get("bbox_max_m", [0, 0, 0])
    size = [h - l for l, h in zip(lo, hi)]
    rows = [
        ("faces / vertices", f"{m['faces']:,} / {m['vertices']:,}"),
        ("size (length x width x height)", f"{size[0]:.3f} x {size[1]:.3f} x {size[2]:.3f} m"),
        ("surface area", f"{m['area_m2']:.3f} m\u00b2"),
        ("closed (watertight)", "yes" if m["watertight"] else "no: open surface"),
        ("holes (boundary loops)", f"{m['holes']}" + (
            f"; largest {', '.join(f'{a:.4f}' for a in m.get('hole_areas_m2', [])[:5])} m\u00b2" if m["holes"] else "")),
        ("closure |\u03a3 n dA| / \u03a3 dA", f"{m['closure']:.2e}  (0 for a closed surface)"),
        ("pieces in the file / connected pieces", f"{m['parts']} / {m['components']}"),
        ("cleaning: merged vertices, dropped faces, re-wound faces",
         f"{m['merged_vertices']:,}, {m['dropped_faces']:,}, {m['flipped_faces']:,}"),
        ("consistently wound", "yes" if m.get("orientable", True) else "no"),
        ("enclosed volume", "n/a (open)" if m.get("volume_m3") is None else f"{m['volume_m3']:.3f} m\u00b3"),
    ]
    return "".join(f"<tr><td>{_esc(a)}</td><td>{_esc(b)}</td></tr>" for a, b in rows)


def _tap_table(rows, unit) -> str:
    show_cp = any(r["Cp"] is not None for r in rows)
    head = ("<tr><th>tap</th><th>reading</th>" + ("<th>Cp</th>" if show_cp else "")
            + "<th>side</th><th>x, y, z on the body [m]</th><th>moved [mm]</th><th>leave-one-out residual</th></tr>")
    body = []
    for r in rows:
        res = r["loo_residual_Cp"] if unit == "Cp" else r["loo_residual"]
        body.append(
            f"<tr><td>{_esc(r['tap'])}</td><td class=n>{r['reading']:.4g} {_esc(r['reading_unit'])}</td>"
            + (f"<td class=n>{_num(r['Cp'], '+.3f')}</td>" if show_cp else "")
            + f"<td>{_esc(r['side_of_body'])}</td>"
            f"<td class=n>{r['x_m']:+.3f}, {r['y_m']:+.3f}, {r['z_m']:+.3f}</td>"
            f"<td class=n>{r['projection_mm']:.1f}</td><td class=n>{_num(res, '+.3f')}</td></tr>")
    return "<table>" + head + "".join(body) + "</table>"


def render_html(result, pics, rows, *, title=None, demo_note=None, written=(), sections=()) -> str:
    """The report page as one string (see :func:`write_report`)."""
    r = result
    mesh_name = Path(str(r.inputs.get("mesh", "mesh"))).name
    taps_name = Path(str(r.inputs.get("taps", ""))).name
    title = title or f"meshpress report: {mesh_name}"
    unit = pics["unit"]
    now = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    parts = [
        "<!DOCTYPE html>\n<html lang=en><head><meta charset=utf-8>",
        # No script, no fetches: the page is only text, inline style and embedded images.
        "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; img-src data:; "
        "style-src 'unsafe-inline'\">",
        '<meta name=viewport content="width=device-width, initial-scale=1">',
        '<link rel="icon" href="data:,">',
        f"<title>{_esc(title)}</title><style>{_CSS}</style></head><body><main>",
        f"<h1>{_esc(title)}</h1>",
        f'<p class=sub>Body <b>{_esc(mesh_name)}</b>' + (f", taps <b>{_esc(taps_name)}</b>" if taps_name else "")
        + f" &middot; {len(rows)} taps &middot; field: {_esc(r.method)} &middot; meshpress {_esc(__version__)}"
        f" &middot; {now}</p>",
    ]
    if demo_note:
        parts.append(f'<div class=banner>{_esc(demo_note)}</div>')
    parts.append(f'<div class=caution><b>Caution.</b> {_esc(CAUTION)}</div>')
    parts.append("<h2>Result at a glance</h2>")
    parts.append(_glance(r))
    parts.append(
        "<p class=muted>Forces come from the pressure the taps measured, spread over the whole body by the "
        "field method and added up face by face; they do not include friction drag, and they are only as good as "
        "the tap coverage (see the leave-one-out check below). Axes: x rearward, y to the right, z up (SAE J1594), "
        "origin on the ground midway between the axles.</p>")
    parts.append("<h2>Figures</h2><table><tr><th>quantity</th><th>value</th><th>coefficient</th><th></th></tr>"
                 + _figures_rows(r) + "</table>")
    parts.append(
        f"<p class=muted>Dynamic pressure q = {_num(r.q_Pa, ',.1f', 'Pa')}; reference area "
        f"{r.ref_area_m2:.3f}&nbsp;m\u00b2 ({_esc(r.ref_area_source)}); wheelbase {_num(r.wheelbase_m, '.3f', 'm')}; "
        f"reference pressure subtracted p_ref = {r.p_ref:g} ({'Pa' if r.value_kind == 'p' else 'Cp'}). "
        "Coefficients: CL = L/(q A), CPM = M<sub>y</sub>/(q A WB), CLF = CL/2 + CPM, CLR = CL/2 &minus; CPM.</p>")
    if r.parts:
        parts.append("<h2>Parts</h2>")
        parts.append(_parts_table(r))
        if "parts" in pics["plots"]:
            parts.append(f"<figure>{_img_tag(pics['plots']['parts'], 'the parts of the body')}<figcaption>"
                         "Each part in its own colour. No field crosses from one part to another, and each part's "
                         "figures are its own faces' share of the whole (they add up to it).</figcaption></figure>")
    for heading, body_html in sections:
        parts.append(f"<h2>{_esc(heading)}</h2>")
        parts.append(body_html)
    warns = list(r.warnings) + list(pics.get("notes", []))
    parts.append("<h2>Warnings</h2>")
    if warns:
        parts.append("<ul class=warn>" + "".join(f"<li>{_esc(w)}</li>" for w in warns) + "</ul>")
    else:
        parts.append("<p>None: the mesh is closed and every step went as expected.</p>")
    # 3D views
    parts.append("<h2>The pressure field on the body</h2>")
    parts.append(
        "<p>Colour is the pressure coefficient Cp = (p &minus; p<sub>&infin;</sub>)/q on the surface: "
        "<b style='color:var(--blue)'>blue is suction</b> (pressure below the free stream: on a top surface it "
        "lifts the car, on the underside it pulls it down), <b style='color:var(--red)'>red is pressure</b> "
        "(above the free stream), white is about free-stream pressure. The beads are the taps, coloured by their "
        "own reading on the same scale: a bead that stands out from the colour around it disagrees with the field."
        "</p>" if unit == "Cp" else
        "<p>Colour is the gauge pressure (Pa) on the surface: blue below the free stream, red above; the beads "
        "are the taps, coloured by their own reading.</p>")
    parts.append('<div class="views">')
    for name, png in pics["views"].items():
        parts.append(f"<figure>{_img_tag(png, f'3D view: {name}')}<figcaption>{_esc(_VIEW_CAPTIONS.get(name, name))}"
                     "</figcaption></figure>")
    parts.append("</div>")
    # Plots
    parts.append("<h2>Along the car</h2>")
    p = pics["plots"]
    parts.append(f"<figure>{_img_tag(p['centre_line'], 'field along the centre line')}<figcaption>"
                 "The field cut along the car's centre line (y = 0): red for the upper surface, blue for the lower, "
                 "with the taps near the centre line as circles. Cp is drawn with suction upward, as is usual. "
                 "Where a circle sits off its line, the field there is not what that tap read."
                 "</figcaption></figure>")
    parts.append(f"<figure>{_img_tag(p['lift_distribution'], 'lift distribution along the car')}<figcaption>"
                 "Top: lift per metre of car length, dL/dx, summed over slices of the body across its width. "
                 "Bottom: the running total from the nose; its last value is the total lift. The dashed lines are "
                 "the axles. Lift ahead of the front axle or behind the rear one moves load onto that axle; the "
                 "axle split itself comes from the pitching moment (it also counts the drag, acting above the "
                 "ground).</figcaption></figure>")
    if "residuals" in p:
        parts.append(f"<figure>{_img_tag(p['residuals'], 'leave-one-out residuals per tap')}<figcaption>"
                     "Leave-one-out check: each tap's reading minus what the field predicts there when that tap is "
                     "left out. Small bars mean the neighbours agree with it; a tall bar is either a feature only "
                     "that tap sees (more taps needed there) or a suspect reading (check the tube and the "
                     "transducer). The dotted lines are &plusmn; the rms.</figcaption></figure>")
    parts.append("<h2>Taps</h2>")
    parts.append(f"<details><summary>All {len(rows)} taps: reading, where they landed, residual</summary>"
                 + _tap_table(rows, unit) + "<p class=muted>'moved' is how far the tap was moved onto the surface; "
                 "residuals in " + _esc(unit) + ".</p></details>")
    parts.append("<h2>Mesh diagnostics</h2><table>" + _mesh_rows(r.mesh) + "</table>")
    parts.append("<h2>Files</h2><p>Written beside this page: "
                 + ", ".join(f"<code>{_esc(w)}</code>" for w in written)
                 + ". <code>body_field.vtp</code> opens in any VTK viewer (ParaView, pyvista) with Cp, p, "
                 "force per area and distance to the nearest tap on every face; <code>taps.csv</code> opens in a "
                 "spreadsheet.</p>")
    parts.append("<details><summary>The result as JSON</summary><pre>"
                 + _esc(json.dumps(r.to_dict(), indent=2)) + "</pre></details>")
    parts.append(f'<p class=muted>Made with meshpress {_esc(__version__)}. {_esc(CAUTION)}</p>')
    parts.append("</main></body></html>\n")
    return "\n".join(parts)
