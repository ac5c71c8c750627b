"""Shared fixtures: exact shapes, the sample data and a CLI runner."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_meshes"


def run_cli(*args, cwd=None, timeout=300):
    """Run ``python -m meshpress ARGS`` in a subprocess (this checkout's package)."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return subprocess.run([sys.executable, "-m", "meshpress", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd, env=env, timeout=timeout)


def icosphere(subdivisions=5, radius=1.0, center=(0.0, 0.0, 0.0)):
    """(vertices, faces) of trimesh's icosphere, a closed sphere."""
    import trimesh

    m = trimesh.creation.icosphere(subdivisions=subdivisions, radius=radius)
    return np.asarray(m.vertices) + center, np.asarray(m.faces)


@pytest.fixture
def cli():
    return run_cli


@pytest.fixture(scope="session")
def samples_dir():
    return SAMPLES
