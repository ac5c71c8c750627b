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


def write_taps(path, names, points, values, kind="cp", extra=None):
    """Write a tap CSV (columns tap, x, y, z, kind [, extra columns])."""
    import pandas as pd

    d = {"tap": list(names), "x": points[:, 0], "y": points[:, 1], "z": points[:, 2], kind: values}
    d.update(extra or {})
    pd.DataFrame(d).to_csv(path, index=False)
    return path


def fibonacci_hemisphere(n, radius=1.0):
    """(n, 3) points spread evenly over the upper unit hemisphere (golden-angle spiral)."""
    i = np.arange(n) + 0.5
    z = i / n
    phi = np.pi * (1 + 5**0.5) * i
    r = np.sqrt(1 - z**2)
    return radius * np.c_[r * np.cos(phi), r * np.sin(phi), z]


def sphere_cp(points):
    """Potential flow past a sphere, flow along x: Cp = 1 - 9/4 sin^2(theta), theta from the x axis
    (standard result, e.g. Anderson, Fundamentals of Aerodynamics, sphere in incompressible flow)."""
    r = points / np.linalg.norm(points, axis=1)[:, None]
    return 1.0 - 2.25 * (1.0 - r[:, 0] ** 2)


@pytest.fixture(scope="session")
def hemisphere_file(tmp_path_factory):
    """Open unit hemisphere resting on z = 0 (icosphere cut at its equator), as STL."""
    import trimesh

    v, f = icosphere(5)
    c = v[f].mean(axis=1)
    m = trimesh.Trimesh(v, f[c[:, 2] > 0])
    m.remove_unreferenced_vertices()
    path = tmp_path_factory.mktemp("hemi") / "hemisphere.stl"
    m.export(path)
    return path


@pytest.fixture(scope="session")
def small_car(tmp_path_factory):
    """The sample car-like body at low resolution, in the vehicle frame (m, z up, forward -x, nose at x=0)."""
    import meshio

    from meshpress.bodies import samples

    v, f = samples.car_body(60, 40)
    path = tmp_path_factory.mktemp("car") / "car.vtu"  # doubles, unlike STL
    meshio.write(path, meshio.Mesh(v, [("triangle", f)]))
    return path, v, f
