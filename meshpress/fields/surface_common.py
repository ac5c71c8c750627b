"""Settings and steps shared by the methods that solve on the surface itself."""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..workmesh import TARGET_FACES, work_mesh
from .bounds import check_extrapolation


def check_common(field):
    check_extrapolation(field.extrapolation, field.far_value)
    if not (isinstance(field.work_faces, (int, np.integer)) and field.work_faces >= 500):
        raise InputError(f"--work-faces must be an integer >= 500, got {field.work_faces!r}")
    if len(field.taps_) < 1:
        raise InputError("no taps to interpolate")


def prepare(field, body, taps, progress):
    """Working copy, tap locations on it and tap -> vertex surface distances (k, n_work)."""
    wm = work_mesh(body, field.work_faces)
    if not wm.identity:
        note = (f"solved on a simplified copy of the surface ({wm.body.n_faces} of {body.n_faces} faces; "
                "loads integrated on the full mesh)")
        field.warnings_.append(note)
    f, b = wm.locate(taps.points)
    return wm, f, b


__all__ = ["TARGET_FACES", "check_common", "prepare"]
