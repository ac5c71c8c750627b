"""The HTML report: self-contained, escaped, and seen in a real headless browser."""

from __future__ import annotations

import base64
import io
import json
import re
import subprocess
from pathlib import Path

import numpy as np
import pytest

CHROMIUM = Path("/usr/bin/chromium")
NASTY = '<script>alert("tap")</script>'


def _write_case(tmp_path, mesh_name="car <i>v2 &.stl"):
    """A small car-like body (STL, m, z up, forward -x) and taps read off the invented field."""
    import trimesh

    from meshpress.bodies.samples import car_body, car_cp

    v, f = car_body(n_stations=60, n_around=32)
    mesh = tmp_path / mesh_name
    trimesh.Trimesh(v, f, process=False).export(mesh)
    tm = trimesh.Trimesh(v, f, process=False)
    rng = np.random.default_rng(3)
    idx = rng.choice(len(f), 30, replace=False)
    c = tm.triangles_center[idx]
    cp = car_cp(c, tm.face_normals[idx])
    names = [NASTY, "a&b"] + [f"T{i:02d}" for i in range(len(idx) - 2)]
    lines = ["tap,x,y,z,cp"] + [f'"{n.replace(chr(34), chr(34) * 2)}",{x:.5f},{y:.5f},{z:.5f},{p:.4f}'
                                for n, (x, y, z), p in zip(names, c, cp)]
    taps = tmp_path / "taps.csv"
    taps.write_text("\n".join(lines) + "\n")
    return mesh, taps


@pytest.fixture(scope="module")
def report_dir(tmp_path_factory):
    from meshpress.loads.analysis import run_loads_parts
    from meshpress.outputs.report import write_report

    tmp = tmp_path_factory.mktemp("report")
    mesh, taps = _write_case(tmp)
    run = run_loads_parts(mesh, taps, forward="-x", up="+z", front_axle=0.85, rear_axle=3.45, q=472.6)
    files = write_report(run, tmp / "out", protect=(mesh, taps), view_size=(480, 300))
    return tmp / "out", files, run


def test_report_writes_every_file(report_dir):
    out, files, run = report_dir
    for name in ("report.html", "loads.json", "body_field.vtp", "taps.csv"):
        assert (out / name).is_file() and (out / name).stat().st_size > 0
    import json

    d = json.loads((out / "loads.json").read_text())
    assert d["lift_N"] == pytest.approx(run.result.lift_N)


def test_html_escapes_strings_from_the_users_files(report_dir):
    out, _, _ = report_dir
    page = (out / "report.html").read_text()
    # The page has no script at all, so any '<script' would have come from a tap name.
    assert "<script" not in page.lower()
    assert html_escaped(NASTY) in page
    assert "a&amp;b" in page and "a&b<" not in page
    # The mesh file's name carries markup too: shown, not interpreted.
    assert "car &lt;i&gt;v2 &amp;.stl" in page and "<i>v2" not in page


def html_escaped(s):
    import html

    return html.escape(s, quote=True)


def test_html_is_self_contained(report_dir):
    out, _, _ = report_dir
    page = (out / "report.html").read_text()
    # No reference to anything outside the file: every src and href is inline data.
    refs = re.findall(r'(?:src|href)\s*=\s*"([^"]*)"', page)
    assert refs and all(r.startswith("data:") for r in refs)
    assert "http://" not in page.replace("http-equiv", "") and "https://" not in page
    assert "@import" not in page and "url(" not in page


def test_embedded_images_are_pictures_of_the_right_size(report_dir):
    from PIL import Image

    out, files, _ = report_dir
    page = (out / "report.html").read_text()
    blobs = re.findall(r'src="data:image/png;base64,([^"]+)"', page)
    assert len(blobs) == 9  # 6 views and 3 plots
    sizes = []
    for b in blobs:
        im = np.asarray(Image.open(io.BytesIO(base64.b64decode(b))).convert("RGB"))
        flat = im.reshape(-1, 3)
        assert float(flat.std()) > 10 and len(np.unique(flat[::5], axis=0)) > 100  # not blank
        sizes.append(im.shape[:2])
    assert sizes.count((300, 480)) == 6  # the 3D views at the size asked for
    assert len(files.images) == 9


def test_report_rejects_a_file_as_folder(tmp_path, cli, samples_dir):
    f = tmp_path / "taken"
    f.write_text("x")
    r = cli("loads", samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv", "--length-unit", "mm",
            "--up=+y", "--forward=-z", "--report", f, "--quiet")
    assert r.returncode == 2
    assert r.stderr.startswith("meshpress: error: --report") and "Traceback" not in r.stderr
    assert f.read_text() == "x"


def _chromium(url, shot, size, profile):
    cmd = [str(CHROMIUM), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0", f"--screenshot={shot}",
           f"--window-size={size[0]},{size[1]}", url]
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    # Chromium writes each message of the page's console to its log as "...:CONSOLE:..."
    console = [line for line in r.stderr.splitlines() if ":CONSOLE" in line]
    return r, console


@pytest.mark.skipif(not CHROMIUM.exists(), reason="needs Debian's chromium at /usr/bin/chromium "
                    "(apt-get install -y chromium, done by .ci/run)")
def test_report_in_a_headless_browser(report_dir, tmp_path):
    from PIL import Image

    out, _, _ = report_dir
    # The check can fail: a page with console errors is caught.
    bad = tmp_path / "bad.html"
    bad.write_text("<html><body><p>x</p><script>console.error('boom'); nothing.here = 1;</script></body></html>")
    _, console = _chromium(bad.as_uri(), tmp_path / "bad.png", (400, 300), tmp_path / "p1")
    assert any("boom" in c for c in console)

    shot = tmp_path / "report.png"
    r, console = _chromium((out / "report.html").as_uri(), shot, (1280, 2400), tmp_path / "p2")
    assert shot.is_file(), r.stderr[-2000:]
    assert console == []
    im = np.asarray(Image.open(shot).convert("RGB"))
    assert im.shape[:2] == (2400, 1280)
    flat = im.reshape(-1, 3)
    assert float(flat.std()) > 20 and len(np.unique(flat[::11], axis=0)) > 500  # text, views and plots drawn


@pytest.mark.slow
def test_demo_writes_the_report(tmp_path, cli):
    r = cli("demo", "--out", tmp_path / "demo", "--quiet")
    assert r.returncode == 0, r.stderr
    page = (tmp_path / "demo" / "report.html").read_text()
    assert "INVENTED DEMO DATA" in page and "Caution." in page
    for name in ("loads.json", "body_field.vtp", "taps.csv", "images/map_CL.png"):
        assert (tmp_path / "demo" / name).is_file()
    # The demo shows the bands too: in the text, the report and loads.json (which the report writes).
    assert "95 % interval" in r.stdout and "How sure is the number" in page
    d = json.loads((tmp_path / "demo" / "loads.json").read_text())
    u = d["uncertainty"]
    for f in ("CL", "CLF", "CLR", "CD"):
        # 95 % interval of a normal distribution: value +/- 1.96 u (GUM, JCGM 100:2008, G.3)
        assert u[f + "_lo95"] == pytest.approx(u[f] - 1.96 * u[f + "_u"], abs=1e-3 * u[f + "_u"])
        assert u[f + "_hi95"] == pytest.approx(u[f] + 1.96 * u[f + "_u"], abs=1e-3 * u[f + "_u"])
        # the default method is the bands' model: the estimate is the loads' own figure, with no second one
        assert u[f] == pytest.approx(d[f], rel=1e-7)
        assert u["uncertainty_budget"][f]["field_value"] is None
        assert u["uncertainty_budget"][f]["measurement_u"] > 0  # the demo states a sensor accuracy


@pytest.mark.slow
def test_loads_report_option(tmp_path, cli, samples_dir):
    r = cli("loads", samples_dir / "coupe.stl", samples_dir / "coupe_taps.csv", "--length-unit", "mm",
            "--up=+y", "--forward=-z", "--front-axle", "-250", "--rear-axle", "2350", "--speed", "100 km/h",
            "--report", tmp_path / "rep", "--quiet")
    assert r.returncode == 0, r.stderr
    assert (tmp_path / "rep" / "report.html").is_file()
    assert "report.html" in r.stdout


def test_report_without_q_or_axles_and_with_awkward_names(tmp_path):
    # Pa readings, no q, no axles: the report falls back to Pa and says what it left out.
    from meshpress.loads.analysis import run_loads_parts
    from meshpress.outputs.report import write_report

    mesh, taps = _write_case(tmp_path, "plain.stl")
    text = taps.read_text().replace("tap,x,y,z,cp", "tap,x,y,z,p").replace('"a&b"', '"$x_1$ and $"')
    taps.write_text(text)
    run = run_loads_parts(mesh, taps)
    files = write_report(run, tmp_path / "out", views=("side",), view_size=(320, 200), images=False)
    page = files.html.read_text()
    assert "no --q or --speed given" in page and "no axle positions given" in page
    assert "p - p_inf [Pa]" in page or "gauge pressure (Pa)" in page
    assert "$x_1$ and $" in page
    assert page.count("data:image/png;base64,") == 4


def test_views_started_after_the_fit_are_the_views_drawn_by_the_report(tmp_path):
    # run_loads_parts(after_fit=...) lets the report's views start before the bands (meshpress.aside);
    # the report must show the same pictures as when it draws them itself.
    from meshpress.loads.analysis import run_loads_parts
    from meshpress.outputs.report import start_views, write_report

    mesh, taps = _write_case(tmp_path, "plain.stl")
    jobs = []
    kw = dict(views=("side", "top"), view_size=(320, 200))
    run = run_loads_parts(mesh, taps, after_fit=lambda b, t, r: jobs.append(start_views(b, t, r, **kw)))
    assert len(jobs) == 1
    early = write_report(run, tmp_path / "early", views_job=jobs[0], **kw)
    late = write_report(run, tmp_path / "late", **kw)
    for name in ("view_side.png", "view_top.png"):
        a = np.asarray(_png_array((tmp_path / "early" / "images" / name).read_bytes()), int)
        b = np.asarray(_png_array((tmp_path / "late" / "images" / name).read_bytes()), int)
        assert a.shape == b.shape and np.abs(a - b).mean() < 0.5, name
    assert early.html.read_text().count("data:image/png") == late.html.read_text().count("data:image/png")


def _png_array(png: bytes):
    from PIL import Image

    return np.asarray(Image.open(io.BytesIO(png)).convert("RGB"))


def test_report_never_overwrites_an_input(tmp_path):
    from meshpress.loads.analysis import run_loads_parts
    from meshpress.errors import InputError
    from meshpress.outputs.report import write_report

    mesh, taps = _write_case(tmp_path, "m.stl")
    run = run_loads_parts(mesh, taps)
    before = taps.read_text()
    with pytest.raises(InputError, match="one of the input files"):
        write_report(run, tmp_path, protect=(mesh, taps))  # the taps file is tmp_path/taps.csv
    assert taps.read_text() == before and not (tmp_path / "report.html").exists()
