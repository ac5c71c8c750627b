"""The bands in pictures and in the HTML report: the importance map and the bands section.

The importance of a face for a figure is the posterior standard deviation of
the pressure there times the face's weight in the figure
(:meth:`meshpress.bands.uncertainty.UncertaintyResult.importance`); the map shows it
per unit area, so small and large faces compare, from four views.  pyvista and
PIL are imported here only.
"""

from __future__ import annotations

import html
import io

import numpy as np

from ..bands.uncertainty import field_outside

MAP_VIEWS = ("three-quarter", "top", "bottom", "side")


def importance_per_area(unc, body, figure: str) -> np.ndarray:
    """(m,) float: importance of each face for ``figure`` divided by its area (figure unit per m2)."""
    return unc.importance(figure) / np.maximum(body.face_areas, 1e-300)


def importance_png(unc, body, taps, figure: str = "CL", *, size=(800, 480)) -> bytes:
    """A 2 x 2 picture (three-quarter, top, bottom, side) of where unknown pressure matters most for ``figure``.

    Parameters
    ----------
    unc : UncertaintyResult
    body : Body
    taps : ProjectedTaps
        Drawn as white beads.
    figure : str
        One of ``unc.names``.
    size : (int, int)
        Each view's size, pixels.

    Returns
    -------
    bytes
        PNG.
    """
    from PIL import Image, ImageDraw

    from .view3d import render_scalar

    imgs = render_scalar(body, importance_per_area(unc, body, figure), taps,
                         label=f"sd x weight in {figure}, per m2", views=MAP_VIEWS, size=size)
    # Tiled and titled with PIL rather than through a matplotlib figure: the same picture, 0.6 s sooner.
    h, w = imgs[MAP_VIEWS[0]].shape[:2]
    head = 34
    sheet = Image.new("RGB", (2 * w, 2 * h + head), "white")
    for i, name in enumerate(MAP_VIEWS):  # each view carries its own name
        sheet.paste(Image.fromarray(np.asarray(imgs[name], np.uint8)), ((i % 2) * w, head + (i // 2) * h))
    b = unc.band(figure)
    title = (f"Where unknown pressure matters most for {figure} ({figure} = {b.value:+.3g} +/- {b.u:.2g}): "
             "posterior sd of the pressure x the face's weight in the figure, per m2; white beads: taps")
    ImageDraw.Draw(sheet).text((w, head // 2), title, fill=(30, 30, 30), anchor="mm", font=_font(15))
    buf = io.BytesIO()
    sheet.save(buf, format="PNG", compress_level=1)
    return buf.getvalue()


def _font(size):
    from PIL import ImageFont

    try:
        return ImageFont.load_default(size=size)  # a scalable font, Pillow >= 10.1
    except TypeError:
        return ImageFont.load_default()


def bands_section_html(unc, *, field_name="field", spread=None, map_png=None, map_figure="CL") -> str:
    """HTML of the bands for the report: table, method spread beside it, notes and the importance map.

    Parameters
    ----------
    unc : UncertaintyResult
    field_name : str or None
        The field method's description (its figure is shown beside the
        estimate); None when the loads are this model's own estimate (the
        default method), so there is no second figure to show.
    spread : dict, optional
        Figure name -> max - min over the methods of ``meshpress compare``, and ``"_methods"`` -> names.
    map_png : bytes, optional
        :func:`importance_png` of ``map_figure``.
    """
    from base64 import b64encode

    esc = html.escape

    def num(v, spec):
        return "" if v is None else format(v, spec)

    own = field_name is None
    head = ("<tr><th>figure</th><th>estimate</th><th>u</th><th>95 % interval</th><th>measurement</th>"
            "<th>sampling</th><th>q</th>" + ("" if own else "<th>field</th>")
            + ("<th>method spread</th>" if spread else "") + "</tr>")
    rows = []
    for b in unc.bands:
        force = b.name.endswith(("_N", "_Nm"))  # forces and moments; the rest are coefficients
        spec, us = ("+,.1f", ",.1f") if force else ("+.4f", ".4f")
        cells = [esc(b.name), num(b.value, spec), num(b.u, us), f"[{num(b.lo95, spec)}, {num(b.hi95, spec)}]",
                 num(b.u_measurement, us), num(b.u_sampling, us), num(b.u_q, us)]
        if not own:
            cells.append(num(b.field_value, spec))
        if spread:
            cells.append(num(spread.get(b.name), us))
        rows.append("<tr><td>" + cells[0] + "</td>" + "".join(f"<td class=n>{c}</td>" for c in cells[1:]) + "</tr>")
    parts = [
        "<p>Every figure with its standard uncertainty <i>u</i> and 95&nbsp;% interval (estimate &plusmn; 1.96 u). "
        + ("The estimate is the loads above: the field integrated is the same model whose variance gives the band. "
           if own else "The estimate is the kriging model's; <i>field</i> is the field method's own figure "
           f"({esc(field_name)}). ")
        + "The parts of <i>u</i> add in quadrature.</p>",
        f"<table>{head}{''.join(rows)}</table>",
    ]
    out = field_outside(unc.bands)
    if out:
        parts.append("<p class=caution><b>Outside the band:</b> the field method's "
                     + ", ".join(f"{esc(b.name)} {b.field_value:+.3f} (interval [{b.lo95:+.3f}, {b.hi95:+.3f}])"
                                 for b in out)
                     + ". The two estimates from the same taps disagree by more than the band allows: trust "
                       "neither without more taps where unknown pressure matters most for that figure "
                       f"(<code>meshpress uncertainty --map-figure {esc(out[0].name)}</code>, <code>meshpress "
                       f"plan --figures {esc(','.join(b.name for b in out))}</code>).</p>")
    if spread:
        parts.append("<p class=muted>Method spread: largest minus smallest figure over the field methods "
                     f"{esc(', '.join(spread.get('_methods', [])))} on the same taps (as <code>meshpress compare"
                     "</code>): when it is wider than the band, the choice of method matters more than the model "
                     "says.</p>")
    parts.append(f"<p class=muted>Model: {esc(unc.model)}.</p>")
    if unc.notes:
        parts.append("<ul class=warn>" + "".join(f"<li>{esc(n)}</li>" for n in unc.notes) + "</ul>")
    if map_png is not None:
        src = "data:image/png;base64," + b64encode(map_png).decode("ascii")
        parts.append(f"<figure><img src=\"{src}\" alt=\"where unknown pressure matters most for {esc(map_figure)}\">"
                     f"<figcaption>Where unknown pressure matters most for {esc(map_figure)}: the model's standard "
                     "deviation of the pressure times each face's weight in the figure, per m\u00b2. A new tap "
                     "helps most in the dark areas (<code>meshpress plan</code> proposes positions).</figcaption>"
                     "</figure>")
    parts.append("<p class=muted>The band holds under the model's assumptions; it cannot see a feature no tap "
                 "comes near (docs/uncertainty.md, limits).</p>")
    return "\n".join(parts)
