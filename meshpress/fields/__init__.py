"""Pressure-field methods, registered by name.

Every method follows :class:`~meshpress.fields.base.Field`: ``fit(body, taps)``
then ``face_values()``.
"""

from __future__ import annotations

from ..errors import InputError
from .base import Field, NotFittedError
from .rbf import RBFField

#: name -> factory taking keyword settings.  Later methods register here.
METHODS: dict[str, type] = {"rbf": RBFField}


def make_field(method: str = "rbf", **settings) -> Field:
    """Create an unfitted field method by name.

    Parameters
    ----------
    method : str
        One of :data:`METHODS`.
    **settings
        Passed to the method's constructor (e.g. ``kernel=``, ``smoothing=``).
    """
    if method not in METHODS:
        raise InputError(f"--method {method!r} is not one of: {', '.join(METHODS)}")
    return METHODS[method](**settings)


__all__ = ["Field", "NotFittedError", "RBFField", "METHODS", "make_field"]
