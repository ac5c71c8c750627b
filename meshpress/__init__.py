"""meshpress: surface pressure taps on a 3D car body -> lift, drag, pitching moment and axle split.

Data flow: :func:`load_body` -> :func:`read_taps` -> :func:`project_taps` ->
a field method (:func:`make_field`) -> :func:`compute_loads` -> :class:`LoadResult`.
"""

__version__ = "0.1.0"

from .analysis import compute_loads, resolve_q, run_loads  # noqa: E402
from .body import Axles, Body, load_body  # noqa: E402
from .errors import InputError  # noqa: E402
from .fields import METHODS, make_field  # noqa: E402
from .projection import ProjectedTaps, project_taps  # noqa: E402
from .results import LoadResult, write_json  # noqa: E402
from .taps import TapTable, read_taps  # noqa: E402

__all__ = ["Axles", "Body", "InputError", "LoadResult", "METHODS", "ProjectedTaps", "TapTable", "compute_loads",
           "load_body", "make_field", "project_taps", "read_taps", "resolve_q", "run_loads", "write_json",
           "__version__"]
