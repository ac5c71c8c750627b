"""Bands of a body whose regions (its parts) were fitted apart, each by the default model.

When a body has several parts, the default field fits one surface Gaussian process per part
(:class:`~meshpress.fields.regional.RegionalField` with the posterior inside): a rear wing and the body below it
have their own length scales and pressure levels.  Each part's bands come from its own fit
(:func:`~meshpress.bands.uncertainty.compute_uncertainty` on the part, reusing that fit); the parts' models are
independent, so the whole body's figure is the sum of the parts' and its variance the sum of theirs.
"""

from __future__ import annotations

import numpy as np

from .uncertainty import Band, Measurement, UncertaintyResult, figure_face_weights, q_var, with_part_figures


def regional_uncertainty(body, taps, field, *, q=None, ref_area, meas: Measurement, progress=None):
    """Bands of every figure, whole and per part, from the fitted per-region posterior fields.

    Parameters
    ----------
    body : Body
    taps : ProjectedTaps
    field : RegionalField
        Fitted, with ``method == "posterior"``.
    q, ref_area
        As :func:`~meshpress.bands.uncertainty.compute_uncertainty`.
    meas : Measurement
        For all taps; each region takes its own taps' part.

    Returns
    -------
    UncertaintyResult
        Whole figures and ``NAME[part]`` figures.  A region without taps is
        outside every band (its values are a fill, not a measurement; a note
        says so).  Common errors (``u_p_ref``) are added per region as if
        independent, which understates them a little.
    """
    from .uncertainty import compute_uncertainty

    wb = body.axles.wheelbase if body.axles is not None else None
    names, G = figure_face_weights(body, kind=taps.kind, q=q, ref_area=ref_area, wheelbase=wb)
    all_names, G_all = with_part_figures(body, names, G)
    values = np.asarray(field.face_values(), float)
    index = field.face_region_
    tap_region = index[taps.faces]
    region_names = field.region_names_
    mean = values @ G_all  # the loads' own figures: the centre of every band
    v_meas = np.zeros(len(all_names))
    v_samp = np.zeros(len(all_names))
    face_sd = np.full(body.n_faces, np.nan)
    notes, models, bare = [], [], []
    inner = dict(field.parts_)
    for r, rname in enumerate(region_names):
        fm = index == r
        tm = tap_region == r
        fit = inner.get(rname)
        if fit is None:
            bare.append(rname)
            continue
        sub = Measurement(meas.tap_u[tm], meas.u_p_ref, 0.0)
        res = compute_uncertainty(fit.body_, fit.taps_, q=q, ref_area=ref_area, meas=sub, field=fit,
                                  progress=progress)
        # A column of G_all on this region's faces is either zero (a part the region is not in) or the region's
        # share of the figure the column is named for, which is the sub-body's own figure of that name (same
        # faces in the same order, same q, reference area, wheelbase and moment point).
        Gr = G_all[fm]
        for c, nm in enumerate(all_names):
            if not np.any(Gr[:, c]):
                continue
            b = res.band(nm.split("[", 1)[0])
            v_meas[c] += b.u_measurement ** 2
            v_samp[c] += b.u_sampling ** 2
        face_sd[fm] = res.face_sd
        models.append(f"{rname}: {res.model}")
        notes += [f"{rname}: {n}" for n in res.notes if not n.startswith("covariance on")]
    v_q = q_var(mean, all_names, taps.kind, meas.u_q_rel)
    bands = [Band(nm, float(mean[k]), float(np.sqrt(v_meas[k] + v_samp[k] + v_q[k])), float(np.sqrt(v_meas[k])),
                  float(np.sqrt(v_samp[k])), float(np.sqrt(v_q[k])), None) for k, nm in enumerate(all_names)]
    if bare:
        notes.append(f"no taps on {', '.join(bare)}: their pressure is a fill, not a measurement, and is outside "
                     "every band (the whole body's band is too narrow by what they carry)")
    notes.append(f"{len(region_names)} parts fitted apart, each with its own model; their bands add as independent")
    return UncertaintyResult(bands, np.nan_to_num(face_sd), G_all, all_names, "; ".join(models) or "none",
                             taps.kind, notes)

