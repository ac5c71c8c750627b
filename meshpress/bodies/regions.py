"""Face regions: parts of the body that no field may interpolate across.

A region specification is a string of parts joined by ``;``, each one of:

- ``parts``: the body's parts (a scene's parts, ``--part`` files, separate
  shells), so that no field interpolates across the gap between a wing and
  the deck below it; ``meshpress loads`` adds it whenever a body has more than
  one part, unless told ``--merge-parts``;
- ``normal``: split by the sign of the face normal's vertical component
  (upper faces vs lower faces: roof vs underbody, a wing's upper vs lower face);
- ``edges`` or ``edges:ANGLE``: split along sharp edges, where the normals of
  two neighbouring faces differ by more than ANGLE degrees (default 60), into
  connected patches;
- ``x=V``, ``y=V``, ``z=V``: a plane cutting the body at V metres in the
  vehicle frame (x rearward from the axle midpoint, y right, z up from the
  ground); faces are split by the side their centre lies on;
- ``box=X0,X1,Y0,Y1,Z0,Z1``: faces whose centre lies in the box (vehicle
  frame, m) vs the rest;
- a file name: one label per face of the body as loaded (text, one per line,
  ``#`` comments allowed), e.g. exported from a modelling program.

Every part splits the faces; the regions are all the combinations that occur.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy import sparse
from scipy.sparse.csgraph import connected_components

from ..errors import InputError


def sharp_edge_patches(faces, normals, angle_deg: float = 60.0) -> np.ndarray:
    """(m,) int: patch label of each face, patches bounded by sharp or open edges.

    Two faces sharing an edge are in one patch when the angle between their unit
    normals (m, 3) is at most ``angle_deg``.
    """
    m = len(faces)
    e = np.sort(np.concatenate([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]]), axis=1)
    owner = np.tile(np.arange(m), 3)
    _, inv, counts = np.unique(e, axis=0, return_inverse=True, return_counts=True)
    inv = inv.ravel()
    order = np.argsort(inv, kind="stable")
    si = inv[order]
    pair = np.flatnonzero((si[1:] == si[:-1]) & (counts[si[:-1]] == 2))
    a, b = owner[order][pair], owner[order][pair + 1]
    cosang = np.einsum("ij,ij->i", normals[a], normals[b])
    keep = cosang >= np.cos(np.radians(angle_deg))
    g = sparse.coo_matrix((np.ones(keep.sum()), (a[keep], b[keep])), shape=(m, m))
    return connected_components(g, directed=False)[1]


def _part_labels(body, part: str):
    part = part.strip()
    c = body.centroids
    if part == "normal":
        return np.where(body.face_normals[:, 2] >= 0, "upper", "lower").astype(object)
    if part == "parts":
        return np.asarray(body.part_names, dtype=object)[body.face_part]
    if part.startswith("edges"):
        angle = 60.0
        if ":" in part:
            try:
                angle = float(part.split(":", 1)[1])
            except ValueError:
                raise InputError(f"--regions {part!r}: the angle after 'edges:' must be a number of degrees") from None
            if not 0 < angle < 180:
                raise InputError(f"--regions {part!r}: the angle must be between 0 and 180 degrees")
        lab = sharp_edge_patches(body.faces, body.face_normals, angle)
        return np.array([f"patch{i}" for i in lab], dtype=object)
    if part.startswith("box="):
        try:
            x0, x1, y0, y1, z0, z1 = (float(t) for t in part[4:].split(","))
        except ValueError:
            raise InputError(f"--regions {part!r}: write box=X0,X1,Y0,Y1,Z0,Z1 (six numbers, m)") from None
        inside = ((c[:, 0] >= x0) & (c[:, 0] <= x1) & (c[:, 1] >= y0) & (c[:, 1] <= y1)
                  & (c[:, 2] >= z0) & (c[:, 2] <= z1))
        return np.where(inside, "in box", "out of box").astype(object)
    if len(part) > 2 and part[0] in "xyz" and part[1] == "=":
        try:
            v = float(part[2:])
        except ValueError:
            raise InputError(f"--regions {part!r}: write {part[0]}=VALUE in metres") from None
        ax = "xyz".index(part[0])
        return np.where(c[:, ax] >= v, f"{part[0]}>={v:g}", f"{part[0]}<{v:g}").astype(object)
    path = Path(part)
    if path.is_file():
        lines = [ln.split("#", 1)[0].strip() for ln in path.read_text().splitlines()]
        labels = [ln for ln in lines if ln]
        if len(labels) != body.n_faces:
            raise InputError(f"{path}: {len(labels)} labels for {body.n_faces} faces; the label file needs one "
                             "label per face of the mesh as loaded, in face order")
        return np.array(labels, dtype=object)
    raise InputError(f"--regions: {part!r} is not 'parts', 'normal', 'edges[:ANGLE]', 'x=V', 'y=V', 'z=V', "
                     "'box=X0,X1,Y0,Y1,Z0,Z1' or an existing label file")


def face_regions(body, spec) -> tuple[list, np.ndarray]:
    """Region names and the (m,) int region index of every face.

    Parameters
    ----------
    body : Body
    spec : str or (m,) array
        A specification (see module docstring) or one label per face.
    """
    if isinstance(spec, str):
        parts = [p for p in spec.split(";") if p.strip()]
        if not parts:
            raise InputError("--regions is empty")
        labels = [_part_labels(body, p) for p in parts]
        combo = labels[0] if len(labels) == 1 else np.array([" / ".join(t) for t in zip(*labels)], dtype=object)
    else:
        combo = np.asarray(spec, dtype=object)
        if combo.shape != (body.n_faces,):
            raise InputError(f"regions: {combo.shape} labels for {body.n_faces} faces")
    names, index = np.unique(combo.astype(str), return_inverse=True)
    return list(names), index.ravel()


def sub_body(body, face_mask):
    """The faces of ``body`` where ``face_mask`` is True, as a Body, and the old -> new face map."""
    from .body import Body

    f = body.faces[face_mask]
    used = np.zeros(len(body.vertices), bool)
    used[f.ravel()] = True
    remap = np.cumsum(used) - 1
    new_face = np.full(body.n_faces, -1, dtype=np.int64)
    new_face[np.flatnonzero(face_mask)] = np.arange(int(face_mask.sum()))
    return (Body(body.vertices[used], remap[f], axles=body.axles, part_names=body.part_names,
                 face_part=body.face_part[face_mask]), new_face)


def with_parts(body, spec):
    """The region specification that also keeps the body's parts apart (``spec`` unchanged for one part)."""
    if len(body.part_names) < 2:
        return spec
    if spec is None:
        return "parts"
    if isinstance(spec, str):
        return spec if "parts" in [t.strip() for t in spec.split(";")] else "parts;" + spec
    return np.array([f"{a} / {b}" for a, b in zip(np.asarray(body.part_names, dtype=object)[body.face_part], spec)],
                    dtype=object)
