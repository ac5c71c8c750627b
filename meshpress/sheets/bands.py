"""The bands of a test day: each configuration's measurement errors, its figures' bands and each change's.

In: a :class:`~meshpress.sheets.runs.TestResult` without bands.  Out: the same, with each configuration's
:class:`~meshpress.bands.uncertainty.UncertaintyResult` (reusing the fit of its loads when the field is the
default model) and a :class:`~meshpress.bands.change.ChangeResult` per comparison.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..fields.posterior import PosteriorField
from ..progress import Progress

if TYPE_CHECKING:
    from .runs import TestResult


def configuration_errors(members, sensor_u_Pa: float = 0.0):
    """The measurement errors of a configuration's mean Cp per tap.

    Parameters
    ----------
    members : list of RunResult
        The configuration's runs (averaged with equal weights).
    sensor_u_Pa : float
        Standard uncertainty of each sensor, Pa.

    Returns
    -------
    ErrorSources
        Random part ``sqrt(sum_r u_r^2) / R`` (the runs' standard errors are
        independent: variance of a mean of independent means); systematic part
        ``u_sensor x mean_r(1/q_r)``: the same sensor served every run, so its
        error is common to them and averaging does not reduce it.
    """
    from ..bands.change import ErrorSources

    u = np.array([m.reading.tap_u() for m in members])
    rand = np.sqrt((u**2).sum(axis=0)) / len(members)
    sys_u = sensor_u_Pa * float(np.mean([1.0 / m.reading.q_Pa for m in members]))
    return ErrorSources.build(u.shape[1], random_u=rand, systematic_u=sys_u)


def add_bands(result: TestResult, progress: Progress | None = None) -> TestResult:
    """Bands of every configuration's figures and of every comparison's change (in place).

    One carrier (covariance patches) serves every fit.  Sets
    :attr:`ConfigurationResult.bands` and ``errors``, ``result.changes`` and a
    ``change`` object in every comparison dict, and ``result.bands_seconds``.
    """
    import time

    from ..bands.change import compute_change
    from .runs import face_values
    from ..bands.patches import Carrier
    from ..bands.uncertainty import compute_uncertainty

    progress = progress or Progress(enabled=False)
    t0 = time.perf_counter()
    st = result.sheet.bands
    body, taps = result.body, result.taps
    carrier = result.carrier
    if carrier is None:
        with progress.step("covariance patches"):
            carrier = Carrier(body, st.patches, progress=progress)
    for name, c in result.configurations.items():
        c.errors = configuration_errors(c.runs, st.sensor_u_Pa)
        fld = c.load.field
        # The default field's own taps, so that its fit is recognised and reused (one model, one answer).
        t = fld.taps_ if isinstance(fld, PosteriorField) and getattr(fld, "taps_", None) is not None \
            else taps.with_values(c.cp)
        with progress.step(f"bands of {name}"):
            c.bands = compute_uncertainty(body, t, q=c.load.q_Pa, ref_area=c.load.ref_area_m2,
                                          meas=c.errors.measurement(), carrier=carrier, field=c.load.field,
                                          kernel=st.kernel, orientation=st.orientation, progress=progress)
        if any(r.reading.samples < 2 for r in c.runs):
            c.bands.notes.append("a run has a single sample: its readings' spread is unknown and taken as zero")
    result.changes = []
    for d in result.comparisons:
        a, b = result.configurations[d["base"]], result.configurations[d["other"]]
        fa, fb = face_values(a.load), face_values(b.load)
        if isinstance(a.load.field, PosteriorField):
            fa = fb = None  # the configurations' figures are the bands' own: no second estimate to set beside
        with progress.step(f"band of {b.name} vs {a.name}"):
            # q differs between configurations, so only the coefficients' change is a linear figure (q=None).
            ch = compute_change(body, taps, a.cp, b.cp, err_base=a.errors, err_other=b.errors,
                                correlation=st.error_correlation, q=None, ref_area=a.load.ref_area_m2,
                                carrier=carrier, kernel=st.kernel, orientation=st.orientation, base_result=a.bands,
                                other_result=b.bands,
                                field_change=None if fa is None or fb is None else np.asarray(fb) - np.asarray(fa),
                                base_label=a.name, other_label=b.name, progress=progress)
        result.changes.append(ch)
        d["change"] = ch.to_dict()
    result.bands_seconds = time.perf_counter() - t0
    return result
