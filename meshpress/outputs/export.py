"""Files for other programs: the body with its field (VTP/VTU) and the tap table (CSV).

The VTK file carries, as cell data (per face) and point data (per vertex, the
area-weighted mean of the faces around it):

- ``Cp``: ``(p - p_ref) / q`` (when q or Cp is known)
- ``p_Pa``: gauge pressure minus p_ref, Pa (when q or Pa is known)
- ``force_per_area``: ``-(p - p_ref) n``, N/m2 (vector; per unit q when only Cp is known)
- ``normal_force_per_area``: its outward normal component
- ``tap_distance_m``: straight-line distance to the nearest tap, m (how far the field had to reach)

Coordinates are in the vehicle frame (SAE J1594: x rearward, y right, z up, m).
Both writers go through a temporary file, so a file is written completely or not at all.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from ..loads.distribution import surface_quantities
from ..errors import InputError
from ..loads.results import check_not_input, replace_into, write_atomic  # noqa: F401 (re-exported)
from .csvsafe import SafeWriter

VTK_SUFFIXES = (".vtp", ".vtu")


def field_arrays(body, face_values, taps, kind, *, q=None, p_ref=0.0) -> dict:
    """Per-face arrays for export: name -> (m,) or (m, 3) float (see the module docstring)."""
    sq = surface_quantities(body.face_normals, face_values, kind, q, p_ref)
    out = {}
    if sq.cp is not None:
        out["Cp"] = sq.cp
    if sq.p_Pa is not None:
        out["p_Pa"] = sq.p_Pa
    out["force_per_area"] = sq.force_per_area
    out["normal_force_per_area"] = sq.normal_force_per_area
    if taps is not None and len(taps):
        from scipy.spatial import cKDTree

        out["tap_distance_m"] = cKDTree(np.asarray(taps.points)).query(body.centroids)[0]
    return out


def body_dataset(body, face_values, taps=None, kind="p", *, q=None, p_ref=0.0):
    """pyvista PolyData of the body with the field as cell and point data."""
    import pyvista as pv

    faces = np.hstack([np.full((body.n_faces, 1), 3, dtype=np.int64), body.faces]).ravel()
    mesh = pv.PolyData(np.asarray(body.vertices), faces)
    arrays = field_arrays(body, face_values, taps, kind, q=q, p_ref=p_ref)
    A = body.vertex_faces_matrix
    for name, a in arrays.items():
        mesh.cell_data[name] = a
        mesh.point_data[name] = np.asarray(A @ a)
    if "tap_distance_m" in arrays:
        from scipy.spatial import cKDTree

        mesh.point_data["tap_distance_m"] = cKDTree(np.asarray(taps.points)).query(body.vertices)[0]
    # No string field data: meshio (and tools built on it) cannot read string arrays in VTU files.
    return mesh


def write_body(path, body, face_values, taps=None, kind="p", *, q=None, p_ref=0.0, protect=()) -> Path:
    """Write the body and its field to a ``.vtp`` (PolyData) or ``.vtu`` (unstructured grid) file."""
    path = Path(path)
    if path.suffix.lower() not in VTK_SUFFIXES:
        raise InputError(f"{str(path)!r}: the body file must end in .vtp or .vtu")
    check_not_input(path, protect)
    mesh = body_dataset(body, face_values, taps, kind, q=q, p_ref=p_ref)
    if path.suffix.lower() == ".vtu":
        mesh = mesh.cast_to_unstructured_grid()
    return replace_into(path, lambda tmp: mesh.save(tmp, binary=True))


TAP_COLUMNS = ("tap", "reading", "reading_unit", "Cp", "p_Pa", "x_given_m", "y_given_m", "z_given_m",
               "x_m", "y_m", "z_m", "x_mesh", "y_mesh", "z_mesh", "projection_mm", "face", "side_of_body",
               "field_at_tap", "loo_residual", "loo_residual_Cp")


def tap_rows(body, taps, *, q=None, p_ref=0.0, field_at_taps=None, residuals=None) -> list[dict]:
    """One row per tap: reading, given and projected position, residual.

    Parameters
    ----------
    body : Body
    taps : ProjectedTaps
    q : float, optional
        Dynamic pressure, Pa.
    p_ref : float
        Subtracted from the readings for ``Cp``/``p_Pa`` (as in the integration).
    field_at_taps : (n,) float, optional
        The fitted field at each tap, in the readings' unit.
    residuals : (n,) float, optional
        Leave-one-out residuals (reading minus the field fitted without the tap), readings' unit.
    """
    sq = surface_quantities(body.face_normals[taps.faces], taps.values, taps.kind, q, p_ref)
    mesh_pts = body.frame.to_mesh(taps.points) if body.frame is not None else np.asarray(taps.points)
    nz = body.face_normals[taps.faces, 2]
    to_cp = (1.0 / q if q else None) if taps.kind == "p" else 1.0
    rows = []
    for i, name in enumerate(taps.names):
        r = {
            "tap": name,
            "reading": float(taps.values[i]),
            "reading_unit": "Pa" if taps.kind == "p" else "Cp",
            "Cp": None if sq.cp is None else float(sq.cp[i]),
            "p_Pa": None if sq.p_Pa is None else float(sq.p_Pa[i]),
            "x_given_m": float(taps.raw_points[i, 0]), "y_given_m": float(taps.raw_points[i, 1]),
            "z_given_m": float(taps.raw_points[i, 2]),
            "x_m": float(taps.points[i, 0]), "y_m": float(taps.points[i, 1]), "z_m": float(taps.points[i, 2]),
            "x_mesh": float(mesh_pts[i, 0]), "y_mesh": float(mesh_pts[i, 1]), "z_mesh": float(mesh_pts[i, 2]),
            "projection_mm": 1000.0 * float(taps.distance[i]),
            "face": int(taps.faces[i]),
            "side_of_body": "upper" if nz[i] > 0 else "lower",
            "field_at_tap": None if field_at_taps is None else float(field_at_taps[i]),
            "loo_residual": None if residuals is None else float(residuals[i]),
            "loo_residual_Cp": None if residuals is None or to_cp is None else float(residuals[i] * to_cp),
        }
        rows.append(r)
    return rows


def tap_csv_text(rows) -> str:
    """CSV text of :func:`tap_rows` (empty cells where a value is unknown, text safe from formulas)."""
    buf = io.StringIO()
    w = SafeWriter(buf)
    w.writerow(TAP_COLUMNS)
    for r in rows:
        w.writerow(["" if r[k] is None else (f"{r[k]:.6g}" if isinstance(r[k], float) else r[k])
                    for k in TAP_COLUMNS])
    return buf.getvalue()


def write_tap_csv(path, rows, *, protect=()) -> Path:
    """Write the tap table atomically, never over an input."""
    return write_atomic(path, tap_csv_text(rows), protect=protect)
