"""Where to put the next taps: greedy reduction of the figures' posterior variance.

With the kriging model of :mod:`meshpress.bands.kriging`, the posterior variance of a
figure ``a^T f`` after reading a new tap at node ``c`` (noise variance
``s_n^2``) drops by ``(Sigma a)_c^2 / (Sigma_cc + s_n^2)``, whatever the tap
will read: the variance depends only on where the taps are.  The planner adds
one tap at a time where

    J = sum_k var_k / var0_k

(the chosen figures' posterior variances, each relative to its value before
planning so CL and CLF weigh alike) falls most, then updates the posterior
covariance by that rank-one step (greedy sequential design; for such
variance-reduction objectives greedy choice is near-optimal in practice,
Krause, Singh, Guestrin, JMLR 9, 2008).  Candidates are the carrier's nodes
that are allowed (not in an excluded box or face set) and at least
``min_spacing`` along the surface from every existing and chosen tap.

The hyperparameters are those fitted to the existing taps; with fewer than
three taps (a new car) they are defaults: a length scale of a fifth of the
largest surface distance unless given, unit variance (the plan does not depend
on the variance), nugget 1e-4 of it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError


@dataclass
class Plan:
    """Planned taps.

    Attributes
    ----------
    nodes : (k,) int
        Carrier nodes chosen, in order.
    points : (k, 3) float
        Tap positions on the body (nearest surface point), vehicle frame, m.
    faces : (k,) int
        Body face holding each point.
    names : list of str
        Figures planned for.
    u_before, u_after : (f,) float
        Posterior standard uncertainty (sampling part) of each figure before
        and after adding the taps (figure units).
    u_path : (k + 1, f) float
        The same after each tap added.
    """

    nodes: np.ndarray
    points: np.ndarray
    faces: np.ndarray
    names: list
    u_before: np.ndarray
    u_after: np.ndarray
    u_path: np.ndarray


def allowed_nodes(carrier, body, *, boxes=(), excluded_faces=None) -> np.ndarray:
    """(n_c,) bool: carrier nodes where a tap may go.

    Parameters
    ----------
    boxes : sequence of (6,) float
        Axis-aligned boxes ``(xmin, ymin, zmin, xmax, ymax, zmax)`` in the
        vehicle frame, m, where no tap may go.
    excluded_faces : (j,) int, optional
        Body faces where no tap may go (a node is excluded when its nearest
        body face is).
    """
    p = carrier.vertices
    ok = np.ones(len(p), bool)
    for b in boxes:
        b = np.asarray(b, float).reshape(6)
        lo, hi = np.minimum(b[:3], b[3:]), np.maximum(b[:3], b[3:])
        ok &= ~np.all((p >= lo) & (p <= hi), axis=1)
    if excluded_faces is not None and len(excluded_faces):
        ex = np.zeros(body.n_faces, bool)
        ex[np.asarray(excluded_faces, np.int64)] = True
        _, nearest = body.centroid_tree.query(p)
        ok &= ~ex[nearest]
    return ok


def greedy_plan(cov, a, n_add, *, candidates, blocked_from=(), distance=None, min_spacing=0.0,
                noise_var=0.0):
    """Greedy variance-reduction design on nodes.

    Parameters
    ----------
    cov : (n_c, n_c) float
        Posterior covariance of the node values given the existing taps.
    a : (n_c, f) float
        Node weights of the figures.
    n_add : int
    candidates : (n_c,) bool
        Nodes allowed.
    blocked_from : (j,) int
        Nodes of existing taps (the spacing rule applies to them).
    distance : (n_c, n_c) float, optional
        Node distances, m, for the spacing rule.
    min_spacing : float
        m.
    noise_var : float
        Noise variance of a new tap reading.

    Returns
    -------
    nodes : (k,) int
        k <= n_add (fewer when the allowed area runs out).
    var_path : (k + 1, f) float
        Figure variances before and after each added tap.
    """
    S = np.array(cov, float, copy=True)
    a = np.asarray(a, float).reshape(len(S), -1)
    free = np.asarray(candidates, bool).copy()
    if distance is not None and min_spacing > 0:
        for j in blocked_from:
            free &= distance[j] >= min_spacing
    Sa = S @ a
    var = np.einsum("ik,ik->k", a, Sa)
    var0 = np.maximum(var, 1e-300)
    path = [var.copy()]
    nodes = []
    for _ in range(int(n_add)):
        if not free.any():
            break
        denom = np.diag(S) + noise_var
        gain = ((Sa**2) / var0[None, :]).sum(axis=1) / np.maximum(denom, 1e-300)
        gain[~free] = -np.inf
        c = int(np.argmax(gain))
        s = S[:, c].copy()
        d = denom[c]
        S -= np.outer(s, s) / d
        Sa -= np.outer(s, Sa[c]) / d
        var = np.einsum("ik,ik->k", a, Sa)
        nodes.append(c)
        path.append(np.maximum(var, 0.0))
        free[c] = False
        if distance is not None and min_spacing > 0:
            free &= distance[c] >= min_spacing
    return np.array(nodes, np.int64), np.array(path)


def plan_taps(body, taps=None, *, figures=("CL", "CLF", "CLR"), n_add=20, carrier=None, n_patches=2500,
              q=None, ref_area=None, boxes=(), excluded_faces=None, min_spacing=0.05, length_scale=None,
              kernel="exponential", regions=None, orientation: bool = True, orientation_kernel: str = "matern52",
              trend: str | None = "newtonian", stagnation_prior=True, anisotropy: bool = False,
              fit: bool = True, progress=None) -> Plan:
    """Propose ``n_add`` tap positions that cut the chosen figures' uncertainty most.

    Parameters
    ----------
    body : Body
    taps : ProjectedTaps, optional
        Existing taps (with readings, to fit the model); None for a new car.
    fit : bool
        False when ``taps`` is a layout without readings: the model is then
        the new car's prior (see ``length_scale``), conditioned on the taps'
        places only.
    figures : sequence of str
        Among CL, CD, CS, CLF, CLR, CPM and the N figures.
    n_add : int
    carrier : Carrier, optional
    ref_area : float, optional
        m2; default the frontal area (coefficients only scale it).
    boxes, excluded_faces
        See :func:`allowed_nodes`.
    min_spacing : float
        Smallest distance along the surface between taps, m.
    length_scale : float, optional
        Kriging length scale, m, when it cannot be fitted (or to force one).
    kernel : str
        Kriging kernel (:class:`~meshpress.bands.kriging.SurfaceGP`).  Default
        ``exponential``: with ``auto`` the planned taps beat random ones less
        on CLF (docs/uncertainty.md).  Without three taps to fit it, the
        exponential kernel is used.
    regions : str or (m,) array, optional
        Regions modelled as independent fields (:func:`~meshpress.bands.uncertainty.compute_uncertainty`).
    orientation : bool
        The normals' factor in the model's correlation, as in the bands
        (needs three taps to fit it; docs/uncertainty.md measures both).
    orientation_kernel : str
        Its form (:func:`~meshpress.bands.gpkernels.orientation_factor`); default
        ``matern52``, as in the bands, so the plan's "u after" is the bands'
        model (docs/uncertainty.md measures ``se`` too).
    trend : {"newtonian", "normal", None}
        The model's mean beyond a constant, as in the bands
        (:func:`~meshpress.bands.uncertainty.compute_uncertainty`; needs three taps
        to fit it).
    stagnation_prior : {"auto", True, False}
        Centre the Newtonian impact term on full stagnation pressure, as in
        the bands (:func:`~meshpress.bands.uncertainty.compute_uncertainty`).
    anisotropy : bool
        Fit the streamwise weight of the normals' factor, as in the bands.

    Returns
    -------
    Plan
    """
    from .gptrend import stagnation_params
    from .kriging import SurfaceGP
    from .patches import Carrier
    from ..taps.projection import nearest_on_faces
    from .uncertainty import figure_face_weights

    if n_add < 1:
        raise InputError(f"number of taps to add must be >= 1, got {n_add}")
    if min_spacing < 0:
        raise InputError(f"minimum spacing must be >= 0, got {min_spacing:g}")
    kind = taps.kind if taps is not None else "cp"
    wb = body.axles.wheelbase if body.axles is not None else None
    ref_area = ref_area or body.frontal_area()
    # Without q, coefficients from Pa readings are planned per unit q: relative variances do not depend on it.
    q_eff = q if (q or kind == "cp") else 1.0
    names, G = figure_face_weights(body, kind=kind, q=q_eff, ref_area=ref_area, wheelbase=wb, names=tuple(figures))
    missing = [f for f in figures if f not in names]
    if missing:
        raise InputError(f"cannot plan for {', '.join(missing)}: needs axle positions (CLF, CLR, CPM) or q (N figures)")
    if carrier is None:
        carrier = Carrier(body, n_patches, progress=progress)
    groups, B = carrier.regions(regions)
    a = carrier.fine_weights(G, B)
    n_taps = 0 if taps is None else len(taps)
    if n_taps >= 3 and fit:
        gp = SurfaceGP.on_carrier(carrier, kernel=kernel, length_scale=length_scale, groups=groups, trend=trend,
                                  orientation=orientation, orientation_kernel=orientation_kernel,
                                  normal_anisotropy=None if anisotropy else 1.0,
                                  **stagnation_params(trend, kind, q, stagnation_prior))
        gp.fit(carrier.points_matrix(taps.points), taps.values)
        cov = gp.posterior_cov()
        noise = gp.nugget_
        blocked = carrier.nearest_vertex(taps.points)
    else:
        from .gpkernels import DISTANCE_KERNELS
        from .gpkernels import kernel as kfun
        from .kriging import same_region

        ell = length_scale or 0.2 * float(carrier.distance.max())
        name = kernel if kernel in DISTANCE_KERNELS else "exponential"
        cov = 1.0 + kfun(carrier.distance / ell, name)  # unit variance, constant-mean prior of 1
        if groups is not None:
            cov *= same_region(groups, groups)
        noise = 1e-4
        blocked = carrier.nearest_vertex(taps.points) if n_taps else np.zeros(0, np.int64)
        if n_taps:
            for j in blocked:  # condition on the one or two taps there are
                s = cov[:, j].copy()
                cov -= np.outer(s, s) / (cov[j, j] + noise)
    ok = allowed_nodes(carrier, body, boxes=boxes, excluded_faces=excluded_faces)
    if not ok.any():
        raise InputError("the exclusions leave no place for a tap")
    nodes, path = greedy_plan(cov, a, n_add, candidates=ok, blocked_from=blocked, distance=carrier.distance,
                              min_spacing=min_spacing, noise_var=noise)
    pts, fid, _ = nearest_on_faces(body, carrier.vertices[nodes]) if len(nodes) else (np.zeros((0, 3)),
                                                                                     np.zeros(0, int), None)
    u = np.sqrt(np.maximum(path, 0.0))
    plan = Plan(nodes, pts, fid, names, u[0], u[-1], u)
    plan.carrier = carrier
    plan.figure_weights = a
    plan.node_sd_before = np.sqrt(np.maximum(np.diag(cov), 0.0))
    plan.absolute = n_taps >= 3 and fit and (kind == "cp" or bool(q))
    return plan
