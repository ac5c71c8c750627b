"""Line plots of a result (matplotlib, Agg backend, no display needed).

Each function takes what the analysis produced (a :class:`~meshpress.loads.distribution.Section`,
a :class:`~meshpress.loads.distribution.LiftDistribution`, tap residuals) and returns a
matplotlib Figure; :func:`png_bytes` turns one into PNG bytes.  matplotlib is
imported only here, so the loads command does not pay for it.
"""

from __future__ import annotations

import io

import numpy as np

#: The plots' palette: ink, paper, and the two ends of the 3D view's colour map.
INK = "#2b2a27"
PAPER = "#fbf8f1"
GRID = "#d9d3c7"
UPPER = "#b2182b"
LOWER = "#2c5aa0"
ACCENT = "#7a5c00"


def _plt():
    import sys

    import matplotlib

    if "matplotlib.pyplot" not in sys.modules:
        matplotlib.use("Agg")  # files only; nothing here opens a window
    import matplotlib.pyplot as plt

    plt.rcParams.update({
        "font.family": "DejaVu Sans Mono", "font.size": 9.5, "axes.edgecolor": INK, "axes.labelcolor": INK,
        "xtick.color": INK, "ytick.color": INK, "axes.facecolor": PAPER, "figure.facecolor": PAPER,
        "axes.grid": True, "grid.color": GRID, "grid.linewidth": 0.6, "axes.spines.top": False,
        "axes.spines.right": False, "legend.frameon": False, "axes.titleweight": "bold", "axes.titlesize": 10.5,
    })
    return plt


def _axles(ax, axles, label=True):
    if axles is None:
        return
    for name, x in (("front axle", axles.front_x), ("rear axle", axles.rear_x)):
        ax.axvline(x, color=INK, lw=1.0, ls=(0, (5, 3)), zorder=1)
        if label:
            ax.annotate(name, (x, 1.0), xycoords=("data", "axes fraction"), xytext=(3, -3),
                        textcoords="offset points", va="top", fontsize=8.5, color=INK)


def centre_line_plot(section, taps=None, *, unit="Cp", axles=None, tap_band_m=0.05, size=(8.0, 4.2)):
    """Field along the centre line, upper and lower surface against x.

    Parameters
    ----------
    section : Section
        The body cut at y = 0 (:func:`meshpress.loads.distribution.section_at_y`), values in ``unit``.
    taps : dict, optional
        ``x_m, y_m`` (n,) float, ``values`` (n,) float in ``unit``, ``upper`` (n,) bool.  Taps
        within ``tap_band_m`` of the centre line are drawn.
    unit : str
        Axis label of the values (``"Cp"`` or ``"p - p_inf [Pa]"``).
    axles : Axles, optional
    """
    plt = _plt()
    fig, ax = plt.subplots(figsize=size, dpi=110, layout="constrained")
    up = section.upper
    for m, colour, name in ((up, UPPER, "upper surface (field)"), (~up, LOWER, "lower surface (field)")):
        if np.any(m):
            ax.plot(section.x_m[m], section.values[m], color=colour, lw=1.8, label=name, zorder=3)
    n_shown = 0
    if taps is not None and len(taps["values"]):
        near = np.abs(np.asarray(taps["y_m"])) <= tap_band_m
        tu = np.asarray(taps["upper"], bool)
        for m, colour, name in ((near & tu, UPPER, "upper taps"), (near & ~tu, LOWER, "lower taps")):
            if np.any(m):
                ax.scatter(np.asarray(taps["x_m"])[m], np.asarray(taps["values"])[m], s=34, facecolor=PAPER,
                           edgecolor=colour, lw=1.6, zorder=4, label=name)
        n_shown = int(near.sum())
    ax.axhline(0.0, color=INK, lw=0.8, zorder=2)
    if unit.lower().startswith("cp"):
        ax.invert_yaxis()  # suction up, as aerodynamicists draw Cp
    _axles(ax, axles)
    ax.set_xlabel("x, rearward from the axle midpoint [m]")
    ax.set_ylabel(unit + ("   (suction up)" if unit.lower().startswith("cp") else ""))
    note = (f"{n_shown} taps within {tap_band_m * 1000:.0f} mm of the centre line"
            if taps is not None else "no taps")
    ax.set_title("Along the centre line (y = 0): field as lines, taps as circles", loc="left")
    ax.annotate(note, (0, 0), xycoords="axes fraction", xytext=(4, 4), textcoords="offset points",
                fontsize=8.5, color=INK)
    ax.legend(loc="lower right", ncols=2, fontsize=8.5)
    return fig


def lift_distribution_plot(dist, *, per_q=False, axles=None, front_lift=None, rear_lift=None, size=(8.0, 4.6)):
    """Lift per metre along the car and its running sum from the nose.

    Parameters
    ----------
    dist : LiftDistribution
    per_q : bool
        True when forces are per unit q (m, m2), no q being known.
    axles : Axles, optional
    front_lift, rear_lift : float, optional
        The axle split from the moment balance (N), written on the plot.
    """
    plt = _plt()
    fig, (ax, ax2) = plt.subplots(2, 1, figsize=size, dpi=110, sharex=True, layout="constrained",
                                  gridspec_kw={"height_ratios": [1.2, 1.0]})
    u1, u2 = ("m", "m\u00b2") if per_q else ("N/m", "N")
    x, w = dist.x_m, np.diff(dist.edges_m)
    colours = np.where(dist.dL_dx >= 0, UPPER, LOWER)
    ax.bar(x, dist.dL_dx, width=w, color=colours, alpha=0.85, lw=0, zorder=3)
    ax.axhline(0.0, color=INK, lw=0.8)
    ax.set_ylabel(f"dL/dx [{u1}]" + ("  (per q)" if per_q else ""))
    ax.set_title("Where the lift comes from: red lifts the car, blue pushes it down", loc="left")
    _axles(ax, axles)
    ax2.plot(dist.edges_m, dist.cumulative, color=INK, lw=1.8, zorder=3)
    ax2.fill_between(dist.edges_m, 0, dist.cumulative, color=ACCENT, alpha=0.12, lw=0)
    ax2.axhline(0.0, color=INK, lw=0.8)
    _axles(ax2, axles, label=False)
    total = dist.cumulative[-1]
    ax2.annotate(f"total {total:+,.1f} {u2}", (dist.edges_m[-1], total), xytext=(-2, -6) if total >= 0 else (-2, 6),
                 textcoords="offset points", ha="right", va="top" if total >= 0 else "bottom", fontsize=9,
                 color=INK)
    if axles is not None:
        ahead, behind = dist.at(axles.front_x), total - dist.at(axles.rear_x)
        ax2.plot([axles.front_x, axles.rear_x], [ahead, dist.at(axles.rear_x)], "o", color=INK, ms=4, zorder=4)
        ax2.annotate(f"ahead of the front axle: {ahead:+,.1f} {u2}", (axles.front_x, ahead), xytext=(6, -14),
                     textcoords="offset points", fontsize=8.5, color=INK)
        ax2.annotate(f"behind the rear axle: {behind:+,.1f} {u2}", (axles.rear_x, dist.at(axles.rear_x)),
                     xytext=(-6, -16), textcoords="offset points", ha="right", fontsize=8.5, color=INK)
    if front_lift is not None and rear_lift is not None:
        ax2.set_title(f"Running total from the nose.  Axle split (moment balance): front {front_lift:+,.1f} N, "
                      f"rear {rear_lift:+,.1f} N", loc="left", fontsize=9, fontweight="normal")
    else:
        ax2.set_title("Running total from the nose", loc="left", fontsize=9, fontweight="normal")
    ax2.set_ylabel(f"lift from the nose [{u2}]")
    ax2.set_xlabel("x, rearward from the axle midpoint [m]")
    return fig


def residual_plot(names, residuals, *, unit="Cp", size=(8.0, 3.8), label_every=None):
    """Leave-one-out residual of every tap (its reading minus the field fitted without it).

    Parameters
    ----------
    names : list of str
    residuals : (n,) float
    unit : str
    """
    plt = _plt()
    r = np.asarray(residuals, float)
    names = [_plain(n) for n in names]
    fig, ax = plt.subplots(figsize=size, dpi=110, layout="constrained")
    i = np.arange(len(r))
    ax.bar(i, r, color=np.where(r >= 0, UPPER, LOWER), alpha=0.85, width=0.75, zorder=3)
    ax.axhline(0.0, color=INK, lw=0.8)
    if len(r):
        rms = float(np.sqrt(np.mean(r**2)))
        ax.axhline(rms, color=ACCENT, lw=0.9, ls=":")
        ax.axhline(-rms, color=ACCENT, lw=0.9, ls=":")
        worst = int(np.argmax(np.abs(r)))
        ax.set_title("Leave-one-out check: each tap against the field fitted without it", loc="left")
        ax.annotate(f"rms {rms:.3g}; largest {names[worst]} {r[worst]:+.3g}", (1, 1), xycoords="axes fraction",
                    xytext=(-4, -4), textcoords="offset points", ha="right", va="top", fontsize=8.5, color=INK)
    step = label_every or max(1, int(np.ceil(len(r) / 60)))
    ax.set_xticks(i[::step])
    ax.set_xticklabels([names[k] for k in i[::step]], rotation=90, fontsize=7)
    ax.set_xlim(-0.8, len(r) - 0.2)
    ax.set_ylabel(f"reading \u2212 prediction [{unit}]")
    return fig


def _plain(text) -> str:
    """A user's string shown as typed: '$' would start matplotlib's maths mode."""
    return str(text).replace("$", r"\$")


def png_bytes(fig) -> bytes:
    """The figure as PNG bytes; closes it."""
    import matplotlib.pyplot as plt

    buf = io.BytesIO()
    fig.savefig(buf, format="png", facecolor=fig.get_facecolor())
    plt.close(fig)
    return buf.getvalue()


def image_grid(images: dict, titles: dict | None = None, *, columns=3, suptitle=None, width_in=13.0):
    """Tile images (name -> (h, w, 3) uint8) in a grid with a title above each; returns the figure."""
    plt = _plt()
    names = list(images)
    cols = min(columns, len(names))
    rows = -(-len(names) // cols)
    h, w = next(iter(images.values())).shape[:2]
    fig, axes = plt.subplots(rows, cols, figsize=(width_in, width_in / cols * h / w * rows + 0.6), squeeze=False)
    for ax in axes.ravel():
        ax.axis("off")
    for ax, n in zip(axes.ravel(), names):
        ax.imshow(images[n])
        ax.set_title(_plain((titles or {}).get(n, n)), fontsize=10, loc="left", family="monospace")
    if suptitle:
        fig.suptitle(_plain(suptitle), fontsize=11, family="monospace", x=0.01, ha="left")
    fig.tight_layout()
    return fig


def parts_plot(triangles, face_part, names, *, axles=None, max_faces=60_000, size=(10.0, 5.6), seed=0):
    """Side and top views of the body with every part in its own colour, outlined and named.

    Parameters
    ----------
    triangles : (m, 3, 3) float
        Face corners, vehicle frame, m.
    face_part : (m,) int
        Part of every face (index into ``names``).
    names : list of str
    axles : Axles, optional
        Drawn as dashed lines.
    max_faces : int
        Faces drawn at most (a random subset of a bigger body: the outline stays).

    Returns
    -------
    matplotlib.figure.Figure
    """
    plt = _plt()
    from matplotlib.collections import PolyCollection

    tri = np.asarray(triangles, float)
    part = np.asarray(face_part)
    if len(tri) > max_faces:
        keep = np.sort(np.random.default_rng(seed).choice(len(tri), max_faces, replace=False))
        tri, part = tri[keep], part[keep]
    cmap = plt.get_cmap("tab10" if len(names) <= 10 else "tab20")
    colours = [cmap(i % cmap.N) for i in range(len(names))]
    fig, axes = plt.subplots(2, 1, figsize=size, sharex=True)
    # Side view from the left (x along, z up: the nearest faces, smallest y, drawn last); top view (x along,
    # y across, drawn with y downward so the right side is at the bottom as seen from above with the nose left).
    for ax, (a, b, depth, title) in zip(axes, [(0, 2, 1, "side (from the left)"), (0, 1, 2, "top")]):
        order = np.argsort(-tri[:, :, depth].mean(axis=1) if depth == 1 else tri[:, :, depth].mean(axis=1))
        polys = tri[order][:, :, [a, b]]
        fc = np.array([colours[k] for k in part[order]])
        ax.add_collection(PolyCollection(polys, facecolors=fc, edgecolors=fc, linewidths=0.2))
        lo, hi = tri[:, :, [a, b]].reshape(-1, 2).min(axis=0), tri[:, :, [a, b]].reshape(-1, 2).max(axis=0)
        pad = 0.05 * (hi - lo).max()
        ax.set_xlim(lo[0] - pad, hi[0] + pad)
        ax.set_ylim(lo[1] - pad, hi[1] + pad)
        ax.set_aspect("equal")
        ax.set_title(title, loc="left")
        ax.set_ylabel("z, m" if b == 2 else "y, m")
        if b == 1:
            ax.invert_yaxis()
        _axles(ax, axles, label=False)
    axes[1].set_xlabel("x, m (rearward)")
    handles = [plt.Rectangle((0, 0), 1, 1, color=c) for c in colours]
    fig.legend(handles, names, loc="upper right", ncol=min(4, len(names)), fontsize=8.5)
    fig.suptitle("Parts of the body", x=0.02, ha="left", fontweight="bold")
    fig.tight_layout(rect=(0, 0, 1, 0.9))
    return fig
