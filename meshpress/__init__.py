"""meshpress: surface pressure taps on a 3D car body -> lift, drag, pitching moment and axle split.

Data flow: :func:`load_body` -> :func:`read_taps` -> :func:`project_taps` ->
a field method (:func:`make_field`) -> :func:`compute_loads` -> :class:`LoadResult`.

The public names are imported on first use, so ``meshpress --help`` starts
without loading trimesh, scipy or pandas.
"""

__version__ = "0.1.0"

_PUBLIC = {
    "compute_loads": "analysis", "resolve_q": "analysis", "run_loads": "analysis",
    "Axles": "body", "Body": "body", "load_body": "body",
    "InputError": "errors",
    "METHODS": "fields", "make_field": "fields",
    "ProjectedTaps": "projection", "project_taps": "projection",
    "LoadResult": "results", "write_json": "results",
    "TapTable": "taps", "read_taps": "taps",
    "integrate": None, "samples": None,
}

__all__ = sorted(k for k, v in _PUBLIC.items() if v) + ["__version__"]


def __getattr__(name):
    import importlib

    if name not in _PUBLIC:
        raise AttributeError(f"module 'meshpress' has no attribute {name!r}")
    mod = _PUBLIC[name]
    if mod is None:
        return importlib.import_module(f".{name}", __name__)
    value = getattr(importlib.import_module(f".{mod}", __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return __all__
