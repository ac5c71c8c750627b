"""Pictures of a tap plan and of the uncertainty map (display only: consumes results)."""

from __future__ import annotations

import numpy as np


def plan_picture(body, plan, taps, path, *, max_points: int = 60_000):
    """Side, top and bottom views: carrier patches coloured by how much their unknown pressure weighs on the
    planned figures (prior-to-plan sd x |weight|, summed over figures relative to each figure's sd), existing
    taps black, planned taps red and numbered in greedy order."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    car = plan.carrier
    a = np.abs(plan.figure_weights) / np.maximum(plan.u_before, 1e-300)[None, :]
    imp = plan.node_sd_before * a.sum(axis=1)
    v = car.vertices
    n = car.normals
    views = [("side (from the right)", 0, 2, n[:, 1] > -0.2), ("top", 0, 1, n[:, 2] > -0.2),
             ("bottom", 0, 1, n[:, 2] < 0.2)]
    fig, axes = plt.subplots(3, 1, figsize=(10, 11), constrained_layout=True)
    vmax = np.percentile(imp, 99) or 1.0
    for ax, (title, i, j, mask) in zip(axes, views):
        sc = ax.scatter(v[mask, i], v[mask, j], c=imp[mask], s=9, cmap="magma_r", vmin=0, vmax=vmax)
        if taps is not None and len(taps):
            tp = taps.points
            sel = _facing(taps.points, body, taps.faces, title)
            ax.scatter(tp[sel, i], tp[sel, j], c="k", s=18, marker="o", label="existing taps")
        sel = _facing(plan.points, body, plan.faces, title)
        ax.scatter(plan.points[sel, i], plan.points[sel, j], c="red", s=60, marker="*", label="planned taps")
        for k in np.flatnonzero(sel):
            ax.annotate(str(k + 1), plan.points[k, [i, j]], fontsize=7, color="red", xytext=(3, 3),
                        textcoords="offset points")
        ax.set_title(title)
        ax.set_aspect("equal")
        ax.set_xlabel("x, m (rearward)")
        ax.set_ylabel({2: "z, m (up)", 1: "y, m (right)"}[j])
        if title == "bottom":
            ax.invert_yaxis()
    axes[0].legend(loc="upper right", fontsize=8)
    fig.colorbar(sc, ax=axes, shrink=0.6, label="posterior sd x |figure weight| (relative)")
    fig.suptitle("meshpress plan: " + ", ".join(plan.names), fontsize=11)
    fig.savefig(path, dpi=110)
    plt.close(fig)
    return path


def _facing(points, body, faces, title):
    nz = body.face_normals[faces]
    if title.startswith("side"):
        return nz[:, 1] > -0.2
    if title == "top":
        return nz[:, 2] > -0.2
    return nz[:, 2] < 0.2
