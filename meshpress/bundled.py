"""Where the bundled, invented sample data is: shipped inside the package and read through importlib.resources.

The top-level ``sample_meshes/`` and ``examples/`` folders of a source checkout are mapped into the package as
``meshpress.sample_meshes`` and ``meshpress.examples`` (``package-dir`` in pyproject.toml), so an editable
install, a wheel and an sdist all find the same files.
"""

from __future__ import annotations

import atexit
from contextlib import ExitStack
from importlib import resources
from pathlib import Path

from .errors import InputError

_files = ExitStack()
atexit.register(_files.close)


def _path(package: str, name: str) -> Path:
    try:
        ref = resources.files(package) / name
    except ModuleNotFoundError:
        ref = None
    if ref is None or not ref.is_file():
        raise InputError(f"the bundled file {name!r} is missing from {package}; reinstall meshpress "
                         "(pip install --force-reinstall meshpress)")
    # A real path even if the package was installed zipped (kept until the interpreter exits).
    return Path(_files.enter_context(resources.as_file(ref)))


def sample_path(name: str) -> Path:
    """Path of a bundled sample file (``"coupe.stl"``, ``"coupe_scan.stl"``, ``"coupe_taps.csv"``).

    Parameters
    ----------
    name : str
        File name inside ``sample_meshes/``.

    Returns
    -------
    pathlib.Path
        An existing file.

    Raises
    ------
    InputError
        When the installation does not hold it.
    """
    return _path("meshpress.sample_meshes", name)


def example_path(name: str = "sports_car_wing/test.toml") -> Path:
    """Path of a file of the bundled, invented example test (its sheet by default).

    The sheet refers to the sample body by a relative path, which resolves
    inside the installed package as in a source checkout.
    """
    return _path("meshpress.examples", name)
