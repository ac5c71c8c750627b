"""meshpress: surface pressure taps on a 3D car body -> lift, drag, pitching moment and axle split.

Data flow, one subpackage per stage: ``bodies`` (:func:`load_body`) -> ``taps``
(:func:`read_taps`, :func:`project_taps`) -> ``fields`` (:func:`make_field`) ->
``loads`` (:func:`compute_loads` -> :class:`LoadResult`) -> ``bands``
(:func:`compute_uncertainty`, :func:`plan_taps`) -> ``outputs``; ``sheets`` runs a
whole test day through the same stages and ``commands`` is the command line.
docs/api.md has a worked example of each public name.

The public names are imported on first use, so ``meshpress --help`` starts
without loading trimesh, scipy or pandas.
"""

__version__ = "0.1.0"

_PUBLIC = {
    "compute_loads": "loads.analysis", "resolve_q": "loads.analysis", "run_loads": "loads.analysis",
    "Axles": "bodies.body", "Body": "bodies.body", "load_body": "bodies.body",
    "InputError": "errors",
    "METHODS": "fields", "make_field": "fields", "DEFAULT_METHOD": "fields",
    "ProjectedTaps": "taps.projection", "project_taps": "taps.projection",
    "LoadResult": "loads.results", "write_json": "loads.results",
    "TapTable": "taps.layout", "read_taps": "taps.layout",
    "Measurement": "bands.uncertainty", "compute_uncertainty": "bands.uncertainty",
    "UncertaintyResult": "bands.uncertainty",
    "compute_change": "bands.change", "ErrorSources": "bands.change",
    "plan_taps": "bands.planning",
    "Carrier": "bands.patches",
    "read_sheet": "sheets.sheet", "process_sheet": "sheets.runs",
    "sample_path": "bundled", "example_path": "bundled",
}
#: Modules reachable as attributes (``meshpress.samples``), for scripts that predate the subpackages.
_MODULES = {"integrate": "loads.integrate", "samples": "bodies.samples", "exact": "bodies.exact"}

__all__ = sorted(_PUBLIC) + ["__version__"]


def __getattr__(name):
    import importlib

    if name in _MODULES:
        return importlib.import_module(f".{_MODULES[name]}", __name__)
    if name not in _PUBLIC:
        raise AttributeError(f"module 'meshpress' has no attribute {name!r}")
    mod = _PUBLIC[name]
    value = getattr(importlib.import_module(f".{mod}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return __all__
