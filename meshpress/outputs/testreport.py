"""The test day on one page: every configuration side by side, the changes with their bands, the Cp change on
the body and the axle loads over the speed range.

In: a processed sheet (:class:`~meshpress.sheets.runs.TestResult`). Out: one self-contained HTML file (text,
inline style and embedded PNG images; no script, nothing fetched), written completely or not at all.
"""

from __future__ import annotations

import datetime as _dt
import tempfile
from pathlib import Path

import numpy as np

from .report import _CSS, _esc, _img_tag, _num, _png

FIGS = ("CL", "CD", "CLF", "CLR")


def _pm(value, band, spec="+.3f"):
    if value is None:
        return "n/a"
    if band is None:
        return format(value, spec)
    return f"{value:{spec}} &plusmn; {band.u:.3f}"


def _band(res, name):
    if res is None:
        return None
    try:
        return res.band(name)
    except KeyError:
        return None


def change_maps(result, *, view="three-quarter", size=(900, 540)) -> dict:
    """``"other vs base"`` -> PNG of the change of Cp on the body, all on one colour scale.

    The scale is symmetric about zero and the same for every comparison, so equal colours mean equal changes.
    """
    from .view3d import BodyView, ColourField

    body = result.body
    deltas = {}
    changes = {(ch.base_label, ch.other_label): ch for ch in result.changes}
    for d in result.comparisons:
        ch = changes.get((d["base"], d["other"]))
        dres = getattr(ch, "difference", None)
        if dres is not None and getattr(dres, "gp", None) is not None:
            # With bands: the posterior mean of the tap-by-tap difference, the model whose band the change has
            # (what both configurations miss cancels in it, so it is quiet where nothing changed).
            B = dres.carrier.regions(None)[1]
            deltas[f"{d['other']} vs {d['base']}"] = np.asarray(B @ dres.gp.node_mean(), float)
            continue
        a, b = result.configurations[d["base"]], result.configurations[d["other"]]
        fa, fb = a.load.face_values, b.load.face_values
        if fa is None or fb is None:
            continue
        deltas[f"{d['other']} vs {d['base']}"] = np.asarray(fb, float) - np.asarray(fa, float)
    if not deltas:
        return {}
    limit = max(float(np.percentile(np.abs(v), 99.5)) for v in deltas.values()) or 1.0
    out = {}
    for name, dcp in deltas.items():
        colour = ColourField("dcp", dcp, None, limit, "change of Cp")
        v = BodyView(body, dcp, None, kind="cp", size=size, colour=colour, off_screen=True)
        try:
            out[name] = _png(v.screenshot(view))
        finally:
            v.close()
    return out


def speed_png(result) -> bytes | None:
    """The aero and axle loads of every configuration over the sheet's speed range, or None without speeds."""
    from ..sheets.speed import plot_speed_tables

    tables = {n: c.speeds for n, c in result.configurations.items() if c.speeds}
    if not tables:
        return None
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "speeds.png"
        plot_speed_tables(tables, path, unit=result.sheet.speed_unit, title=result.sheet.title,
                          static=result.sheet.vehicle.static_load)
        return path.read_bytes()


def render_test_html(result, *, maps=None, speeds=None) -> str:
    """The page as one string; ``maps`` and ``speeds`` are PNG bytes (see :func:`change_maps`, :func:`speed_png`)."""
    from .. import __version__
    from ..loads.results import CAUTION
    from ..sheets.speed import SPEED_CAUTION

    s = result.sheet
    now = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    banded = any(c.bands is not None for c in result.configurations.values())
    out = ["<!DOCTYPE html>\n<html lang=en><head><meta charset=utf-8>",
           "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; img-src data:; "
           "style-src 'unsafe-inline'\">",
           '<meta name=viewport content="width=device-width, initial-scale=1">', '<link rel="icon" href="data:,">',
           f"<title>{_esc(s.title)}</title><style>{_CSS}</style></head><body><main>",
           f"<h1>{_esc(s.title)}</h1>",
           f"<p class=sub>Test sheet <b>{_esc(Path(str(s.path)).name)}</b> &middot; {len(result.runs)} runs, "
           f"{len(result.configurations)} configurations &middot; {_esc(s.air.describe())} &middot; meshpress "
           f"{_esc(__version__)} &middot; {now}</p>",
           f'<div class=caution><b>Caution.</b> {_esc(CAUTION)}</div>']
    if s.notes:
        out.append(f"<p>{_esc(s.notes)}</p>")
    out.append("<h2>Configurations</h2>")
    head = "".join(f"<th>{k}</th>" for k in FIGS)
    out.append(f"<table><tr><th>configuration</th><th>runs</th>{head}<th>front share</th><th>CL spread between "
               "runs</th></tr>")
    for name, c in result.configurations.items():
        L = c.load
        cells = "".join(f"<td>{_pm(getattr(L, k), _band(c.bands, k))}</td>" for k in FIGS)
        fs = None if L.front_share is None else 100 * L.front_share
        spread = c.spread.get("CL", {}).get("range")
        out.append(f"<tr><td>{_esc(name)}</td><td>{len(c.runs)}</td>{cells}<td>{_num(fs, '.1f', '%')}</td>"
                   f"<td>{_num(spread, '.3f')}</td></tr>")
    out.append("</table>")
    if banded:
        out.append("<p class=muted>Each figure &plusmn; its standard uncertainty u (95 % interval = &plusmn; 1.96 u), "
                   "from the same model that gives the figure: the measurement errors and what the field does "
                   "between the taps; it cannot see a feature no tap comes near.</p>")
    if result.comparisons:
        out.append("<h2>Changes</h2>")
        out.append(f"<table><tr><th>change</th>{head}<th>resolved from zero at 95 %</th></tr>")
        changes = {(ch.base_label, ch.other_label): ch for ch in result.changes}
        for d in result.comparisons:
            ch = changes.get((d["base"], d["other"]))
            cells, resolved = "", []
            for k in FIGS:
                b = _band(ch, k)
                v = b.value if b is not None else d["delta"].get(k)
                cells += f"<td>{_pm(v, b)}</td>"
                if b is not None and abs(b.value) > 1.96 * b.u:
                    resolved.append(k)
            res = ", ".join(resolved) if ch is not None else "no bands"
            out.append(f"<tr><td>{_esc(d['other'])} &minus; {_esc(d['base'])}</td>{cells}<td>{_esc(res or 'none')}"
                       "</td></tr>")
        out.append("</table>")
        by_part = [d for d in result.comparisons if d.get("parts")]
        for d in by_part:
            out.append(f"<p><b>{_esc(d['other'])} &minus; {_esc(d['base'])}, by part</b></p><table><tr><th>part</th>"
                       + "".join(f"<th>d{k}</th>" for k in FIGS) + "</tr>")
            for part, v in d["parts"].items():
                out.append(f"<tr><td>{_esc(part)}</td>" + "".join(f"<td>{_num(v.get(k), '+.3f')}</td>" for k in FIGS)
                           + "</tr>")
            out.append("</table>")
    if maps:
        out.append("<h2>Where the pressure changed</h2>")
        out.append("<p>The change of Cp on every face from the base configuration to the other, on one colour scale "
                   "for all the changes: <b style='color:var(--blue)'>blue</b> is more suction, "
                   "<b style='color:var(--red)'>red</b> more pressure. With bands it is the model of the tap-by-tap "
                   "difference (the one that gives the change its band), so it stays quiet where the taps saw no "
                   "change.</p><div class=views>")
        for name, png in maps.items():
            out.append(f"<figure>{_img_tag(png, f'change of Cp: {name}')}<figcaption>{_esc(name)}</figcaption></figure>")
        out.append("</div>")
    if speeds:
        out.append("<h2>Over the speed range</h2>")
        out.append(f"<figure>{_img_tag(speeds, 'loads and axle loads over speed')}<figcaption>"
                   f"{_esc(SPEED_CAUTION)}</figcaption></figure>")
    warns = list(result.warnings)
    for c in result.configurations.values():
        warns += [w for w in c.warnings if w not in warns]
    if warns:
        out.append("<h2>Warnings</h2><ul class=warn>" + "".join(f"<li>{_esc(w)}</li>" for w in warns) + "</ul>")
    out.append(f'<p class=muted>Made with meshpress {_esc(__version__)}. {_esc(CAUTION)}</p></main></body></html>\n')
    return "\n".join(out)


def write_test_report(result, out_dir, *, protect=(), images=True) -> Path:
    """Write ``out_dir/report.html`` (completely or not at all, never over an input); returns its path."""
    from ..loads.results import write_atomic

    maps = change_maps(result) if images else None
    speeds = speed_png(result) if images else None
    path = Path(out_dir) / "report.html"
    write_atomic(path, render_test_html(result, maps=maps, speeds=speeds), protect=protect)
    return path
