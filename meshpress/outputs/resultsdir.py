"""Writing a results folder completely or not at all, never over an input.

Files are staged in a hidden sibling folder; only when every file is written
is the stage renamed into place.  An existing folder is replaced only when it
is empty or holds a ``manifest.json`` from an earlier meshpress run, and never
when an input file lies inside it.
"""

from __future__ import annotations

import json
import shutil
import tempfile
from pathlib import Path

from ..errors import InputError
from ..loads.results import write_atomic

MANIFEST = "manifest.json"


def _inside(p: Path, folder: Path) -> bool:
    try:
        p.resolve().relative_to(folder.resolve())
        return True
    except ValueError:
        return False


def check_output_dir(out, inputs=()) -> Path:
    """Refuse an output folder that holds an input or someone else's files."""
    out = Path(out)
    for i in inputs:
        if i and _inside(Path(i), out):
            raise InputError(f"refusing to write results to {str(out)!r}: the input {str(i)!r} is inside it")
    if out.exists():
        if not out.is_dir():
            raise InputError(f"refusing to write results to {str(out)!r}: it is a file")
        if any(out.iterdir()) and not (out / MANIFEST).is_file():
            raise InputError(f"refusing to write results to {str(out)!r}: it is not empty and not an earlier "
                             "meshpress results folder; choose another --out")
    return out


def write_folder(out, files: dict, *, inputs=(), manifest: dict | None = None) -> Path:
    """Write ``files`` (relative path -> str, bytes, or callable(path)) as the folder ``out``.

    Parameters
    ----------
    out : str or Path
    files : dict
        Text is written as UTF-8, bytes as they are; a callable is given the
        target path and writes the file itself (e.g. a plot).
    inputs : iterable of paths
        Input files that must not be inside ``out``.
    manifest : dict, optional
        Extra entries for ``manifest.json``.
    """
    out = check_output_dir(out, inputs)
    out.parent.mkdir(parents=True, exist_ok=True)
    stage = Path(tempfile.mkdtemp(prefix="." + out.name + ".", suffix=".tmp", dir=out.parent))
    try:
        for rel, content in files.items():
            target = stage / rel
            target.parent.mkdir(parents=True, exist_ok=True)
            if callable(content):
                content(target)
            elif isinstance(content, bytes):
                target.write_bytes(content)
            else:
                write_atomic(target, content)
        write_atomic(stage / MANIFEST, json.dumps({**(manifest or {}), "files": sorted(files)}, indent=2) + "\n")
        old = None
        if out.exists():
            old = out.with_name("." + out.name + ".old")
            if old.exists():
                shutil.rmtree(old)
            out.rename(old)
        stage.rename(out)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        raise
    return out
