"""Settings and steps shared by the methods that solve on the surface itself."""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..bodies.workmesh import TARGET_FACES, work_mesh
from .bounds import check_extrapolation


def check_common(field):
    check_extrapolation(field.extrapolation, field.far_value)
    if not (isinstance(field.work_faces, (int, np.integer)) and field.work_faces >= 500):
        raise InputError(f"--work-faces must be an integer >= 500, got {field.work_faces!r}")
    if len(field.taps_) < 1:
        raise InputError("no taps to interpolate")


def vertex_normals(body):
    """(n, 3) float: area-weighted unit vertex normals of ``body`` (zero where no face has area)."""
    vn = np.zeros_like(body.vertices)
    np.add.at(vn, body.faces.ravel(), np.repeat(body.area_vectors, 3, axis=0))
    size = np.linalg.norm(vn, axis=1, keepdims=True)
    return np.divide(vn, size, out=np.zeros_like(vn), where=size > 0)


def normals_at(vnormals, faces, face_index, barycentric):
    """(k, 3) float: unit normals at surface points, the barycentric blend of their face's vertex normals."""
    n = (vnormals[faces[face_index]] * barycentric[..., None]).sum(axis=1)
    size = np.linalg.norm(n, axis=1, keepdims=True)
    return np.divide(n, size, out=np.zeros_like(n), where=size > 0)


#: Surface points evaluated at a time from the tap-to-vertex distances: interpolating them to j points makes a
#: (taps, j, 3) temporary, 0.3 GB for 200 taps at the 61,000 integration clusters of a 1M-face body.
POINT_CHUNK = 8192


def by_point_chunks(face_index, barycentric, fn, chunk=POINT_CHUNK):
    """(j,) float: ``fn(f, b)`` over chunks of surface points given by faces (j,) and barycentrics (j, 3)."""
    out = np.empty(len(face_index))
    for s in range(0, len(face_index), chunk):
        out[s:s + chunk] = fn(face_index[s:s + chunk], barycentric[s:s + chunk])
    return out


def prepare(field, body, taps, progress):
    """Working copy, tap locations on it and tap -> vertex surface distances (k, n_work)."""
    wm = work_mesh(body, field.work_faces, getattr(field, "max_edge_ratio", None))
    if wm.simplified:
        how = f", then edges over {1000 * wm.max_edge:.0f} mm split" if wm.refined else ""
        note = (f"solved on a simplified copy of the surface ({wm.body.n_faces} faces from {body.n_faces}{how}; "
                "loads integrated on the full mesh)")
        field.warnings_.append(note)
    elif wm.refined:
        note = (f"solved on a refined copy of the surface (edges over {1000 * wm.max_edge:.0f} mm split: "
                f"{wm.body.n_faces} faces from {body.n_faces}; loads integrated on the mesh as given)")
        field.warnings_.append(note)
    f, b = wm.locate(taps.points)
    return wm, f, b


__all__ = ["TARGET_FACES", "check_common", "prepare", "vertex_normals", "normals_at", "by_point_chunks"]
