"""Reading surface meshes from files into plain arrays.

trimesh reads STL, OBJ, PLY, OFF and GLB/GLTF (a scene of several parts is
concatenated into one body); meshio reads VTK/VTU/VTP and its other formats.
Only triangles and quads are kept (quads are split in two).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError

TRIMESH_SUFFIXES = {".stl", ".obj", ".ply", ".off", ".glb", ".gltf"}


def read_surface(path: str | Path) -> tuple[np.ndarray, np.ndarray, int]:
    """Read a surface mesh file.

    Parameters
    ----------
    path : str or Path
        The mesh file.

    Returns
    -------
    vertices : (n, 3) float
        Vertex coordinates in the file's own axes and unit.
    faces : (m, 3) int
        Triangles as vertex indices (not yet cleaned).
    parts : int
        Number of parts (scene geometries or cell blocks) merged into one body.

    Raises
    ------
    InputError
        The file is missing, unreadable or holds no triangles.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"mesh file {str(path)!r} does not exist")
    suffix = path.suffix.lower()
    if suffix in TRIMESH_SUFFIXES:
        v, f, parts = _read_trimesh(path)
    else:
        v, f, parts = _read_meshio(path)
    if len(f) == 0:
        raise InputError(f"mesh file {str(path)!r} holds no triangles or quads")
    if not np.all(np.isfinite(v)):
        raise InputError(f"mesh file {str(path)!r} has vertices that are NaN or infinite")
    return v, f, parts


def _read_trimesh(path: Path):
    import trimesh

    try:
        loaded = trimesh.load(str(path), process=False)
    except Exception as exc:  # trimesh raises many types for bad files
        raise InputError(f"mesh file {str(path)!r} could not be read as {path.suffix}: {_short(exc)}") from None
    if isinstance(loaded, trimesh.Scene):
        geoms = [g for g in loaded.dump() if isinstance(g, trimesh.Trimesh)]
        if not geoms:
            raise InputError(f"mesh file {str(path)!r} is a scene with no surface parts")
        parts = len(geoms)
        mesh = trimesh.util.concatenate(geoms)
    elif isinstance(loaded, trimesh.Trimesh):
        parts, mesh = 1, loaded
    else:
        raise InputError(f"mesh file {str(path)!r} holds no surface (found {type(loaded).__name__})")
    return np.asarray(mesh.vertices, dtype=float), np.asarray(mesh.faces, dtype=np.int64), parts


def _read_meshio(path: Path):
    import meshio

    try:
        m = meshio.read(str(path))
    except Exception as exc:
        raise InputError(f"mesh file {str(path)!r} could not be read: {_short(exc)}") from None
    faces, parts = [], 0
    for block in m.cells:
        data = np.asarray(block.data, dtype=np.int64)
        if block.type == "triangle":
            faces.append(data)
        elif block.type == "quad":
            faces.append(data[:, [0, 1, 2]])
            faces.append(data[:, [0, 2, 3]])
        else:
            continue
        parts += 1
    if not faces:
        raise InputError(f"mesh file {str(path)!r} holds no triangles or quads")
    return np.asarray(m.points, dtype=float)[:, :3], np.vstack(faces), parts


def _short(exc: Exception) -> str:
    text = str(exc).strip().splitlines()
    return text[0][:160] if text else type(exc).__name__
