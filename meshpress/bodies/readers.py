"""Reading surface meshes from files into plain arrays.

trimesh reads STL, OBJ, PLY, OFF, 3MF and GLB/GLTF; meshio reads VTK/VTU/VTP
and its other formats.  Only triangles and quads are kept (quads are split in
two).  A scene keeps its parts: every face carries the index of its part, and
the parts their names (the scene's node names, with each node's transform
applied; meshio's cell blocks are parts only when cell sets name them).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError

TRIMESH_SUFFIXES = {".stl", ".obj", ".ply", ".off", ".glb", ".gltf", ".3mf"}

#: Faces a body may have: a bigger mesh is refused before it is read (20 M faces is four times a phone scan of a
#: whole car; reading one takes about 2 GB per 5 M faces, so the limit keeps a 24 GB machine out of swap).
MAX_FACES = 20_000_000


def check_stl_size(path: Path, max_faces: int = MAX_FACES) -> None:
    """Refuse a binary STL that declares too many faces, or more than the file holds, before reading it.

    A binary STL is an 80-byte header, a uint32 face count and 50 bytes per face (the format's definition);
    a file whose size fits that layout for no count is left to the reader (ASCII STL).
    """
    import struct

    size = path.stat().st_size
    if size < 84:
        return
    with open(path, "rb") as fh:
        head = fh.read(84)
    (n,) = struct.unpack("<I", head[80:84])
    room = (size - 84) // 50
    ascii_like = head[:5].lower() == b"solid" and size != 84 + 50 * n
    if ascii_like:
        if size > 250 * max_faces:  # an ASCII facet takes about 250 bytes
            raise InputError(f"mesh file {str(path)!r} is {size / 1e9:.1f} GB of text STL: more than the "
                             f"{max_faces:,}-face limit; decimate it first")
        return
    if n > max_faces:
        raise InputError(f"mesh file {str(path)!r} declares {n:,} faces: more than the limit of {max_faces:,}; "
                         "decimate it first (a scan of a car needs well under 5 M)")
    if n > room:
        raise InputError(f"mesh file {str(path)!r} declares {n:,} faces but holds room for {room:,}: the file is "
                         "truncated or its header is wrong")


def read_surface(path: str | Path) -> tuple[np.ndarray, np.ndarray, int]:
    """Read a surface mesh file as one surface.

    Returns
    -------
    vertices : (n, 3) float
        Vertex coordinates in the file's own axes and unit.
    faces : (m, 3) int
        Triangles as vertex indices (not yet cleaned).
    parts : int
        Number of parts (scene geometries or cell blocks) in the file.
    """
    v, f, _, names = read_parts(path)
    return v, f, len(names)


def read_parts(path: str | Path) -> tuple[np.ndarray, np.ndarray, np.ndarray, list]:
    """Read a surface mesh file, keeping its parts.

    Parameters
    ----------
    path : str or Path
        The mesh file.

    Returns
    -------
    vertices : (n, 3) float
        Vertex coordinates in the file's own axes and unit (scene transforms applied).
    faces : (m, 3) int
        Triangles as vertex indices (not yet cleaned).
    face_part : (m,) int
        Index into ``names`` of each face's part.
    names : list of str
        Part names, unique; one name (the file's stem) for a file of one part.

    Raises
    ------
    InputError
        The file is missing, unreadable or holds no triangles.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"mesh file {str(path)!r} does not exist")
    suffix = path.suffix.lower()
    if suffix == ".stl":
        check_stl_size(path)
    if suffix in TRIMESH_SUFFIXES:
        pieces = _read_trimesh(path)
    else:
        pieces = _read_meshio(path)
    names = unique_names([n for n, _, _ in pieces])
    vs, fs, labels, off = [], [], [], 0
    for i, (_, v, f) in enumerate(pieces):
        vs.append(v)
        fs.append(f + off)
        labels.append(np.full(len(f), i, dtype=np.int64))
        off += len(v)
    v = np.vstack(vs) if vs else np.zeros((0, 3))
    f = np.vstack(fs) if fs else np.zeros((0, 3), dtype=np.int64)
    if len(f) == 0:
        raise InputError(f"mesh file {str(path)!r} holds no triangles or quads")
    if len(f) > MAX_FACES:
        raise InputError(f"mesh file {str(path)!r} has {len(f):,} faces: more than the limit of {MAX_FACES:,}; "
                         "decimate it first")
    if not np.all(np.isfinite(v)):
        raise InputError(f"mesh file {str(path)!r} has vertices that are NaN or infinite")
    return v, f, np.concatenate(labels), names


def unique_names(names) -> list:
    """The names, with `` 2``, `` 3``... appended to repeats so that every one is unique."""
    out, seen = [], {}
    for n in names:
        n = str(n).strip() or "part"
        k = seen.get(n, 0) + 1
        seen[n] = k
        out.append(n if k == 1 else f"{n} {k}")
    return out


def _read_trimesh(path: Path):
    import trimesh

    try:
        loaded = trimesh.load(str(path), process=False)
    except Exception as exc:  # trimesh raises many types for bad files
        raise InputError(f"mesh file {str(path)!r} could not be read as {path.suffix}: {_short(exc)}") from None
    if isinstance(loaded, trimesh.Scene):
        pieces = []
        # In the file's order (the order of its geometries), not the scene graph's own node order.
        rank = {name: i for i, name in enumerate(loaded.geometry)}
        nodes = sorted(loaded.graph.nodes_geometry, key=lambda n: (rank.get(loaded.graph[n][1], len(rank)), str(n)))
        for node in nodes:
            transform, geom_name = loaded.graph[node]
            g = loaded.geometry.get(geom_name)
            if not isinstance(g, trimesh.Trimesh) or len(g.faces) == 0:
                continue
            v = trimesh.transform_points(np.asarray(g.vertices, dtype=float), transform)
            pieces.append((str(node), v, np.asarray(g.faces, dtype=np.int64)))
        if not pieces:
            raise InputError(f"mesh file {str(path)!r} is a scene with no surface parts")
        return pieces
    if isinstance(loaded, trimesh.Trimesh):
        return [(path.stem, np.asarray(loaded.vertices, dtype=float), np.asarray(loaded.faces, dtype=np.int64))]
    raise InputError(f"mesh file {str(path)!r} holds no surface (found {type(loaded).__name__})")


def _read_meshio(path: Path):
    import meshio

    try:
        m = meshio.read(str(path))
    except Exception as exc:
        raise InputError(f"mesh file {str(path)!r} could not be read: {_short(exc)}") from None
    pts = np.asarray(m.points, dtype=float)[:, :3]
    block_name = {}
    for set_name, blocks in (m.cell_sets or {}).items():
        for i, ids in enumerate(blocks):
            if ids is not None and len(ids) == len(m.cells[i].data):  # a set that is the whole block names it
                block_name.setdefault(i, set_name)
    pieces, k = [], 0
    for i, block in enumerate(m.cells):
        data = np.asarray(block.data, dtype=np.int64)
        if block.type == "triangle":
            f = data
        elif block.type == "quad":
            f = np.vstack([data[:, [0, 1, 2]], data[:, [0, 2, 3]]])
        else:
            continue
        k += 1
        pieces.append((block_name.get(i), None, f))
    if not pieces:
        raise InputError(f"mesh file {str(path)!r} holds no triangles or quads")
    if len(pieces) == 1 or any(n is None for n, _, _ in pieces):
        # Unnamed blocks are element types of one surface (triangles and quads), not parts.
        return [(path.stem, pts, np.vstack([f for _, _, f in pieces]))]
    # Blocks share the one point array: give each its own copy of the points it uses, so parts stay apart.
    out = []
    for name, _, f in pieces:
        used, inv = np.unique(f, return_inverse=True)
        out.append((name, pts[used], inv.reshape(f.shape)))
    return out


def _short(exc: Exception) -> str:
    text = str(exc).strip().splitlines()
    return text[0][:160] if text else type(exc).__name__
