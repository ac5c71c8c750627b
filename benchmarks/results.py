"""Where benchmark outputs go: raw files to benchmarks/out/ (ignored), figures the docs cite to results/BENCH.json.

Each ``results/BENCH.json`` maps a variant name (the settings the run used) to that run's output, so one file per
benchmark holds every figure the docs quote, and a rerun replaces its own variant only.
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
RESULTS = HERE / "results"
RAW = HERE / "out"


def raw_path(name: str) -> Path:
    """A path in the ignored folder for a raw output file (created)."""
    RAW.mkdir(exist_ok=True)
    return RAW / name


def code_version() -> str:
    """The checkout's commit, with a mark when ``meshpress/`` has changes not committed (the code a figure is of)."""
    import subprocess

    root = str(HERE.parent)
    commit = subprocess.run(["git", "-C", root, "log", "-1", "--format=%h"], capture_output=True,
                            text=True).stdout.strip()
    dirty = subprocess.run(["git", "-C", root, "status", "--short", "--", "meshpress"], capture_output=True,
                           text=True).stdout
    return commit + (" (meshpress/ with local changes)" if dirty.strip() else "")


def record(bench: str, variant: str, data) -> Path:
    """Store ``data`` as ``variant`` in ``results/<bench>.json`` (written whole or not at all)."""
    RESULTS.mkdir(exist_ok=True)
    path = RESULTS / f"{bench}.json"
    doc = json.loads(path.read_text()) if path.exists() else {}
    doc[variant] = data
    fd, tmp = tempfile.mkstemp(dir=RESULTS, suffix=".tmp")
    with os.fdopen(fd, "w") as f:
        f.write(json.dumps(doc, indent=1, default=float) + "\n")
    os.replace(tmp, path)
    return path
