"""Fields: the pressure over every face, from the taps.

In: a :class:`~meshpress.bodies.body.Body` and :class:`~meshpress.taps.projection.ProjectedTaps` with values.
Out: one value per face (Pa or Cp) from a fitted field method, one method per module, registered by name.
Every method follows :class:`~meshpress.fields.base.Field`: ``fit(body, taps)``
then ``face_values()``.  docs/methods.md describes each one and its source.
"""

from __future__ import annotations

from ..errors import InputError
from .base import Field, NotFittedError
from .biharmonic import BiharmonicField, HarmonicField
from .geodesic_rbf import GeodesicRBFField
from .kriging_field import KrigingField
from .nearest import NearestTapField
from .posterior import PosteriorField
from .rbf import RBFField
from .regional import RegionalField
from .strip import CentreLineStripField

#: name -> factory taking keyword settings; the first is the default (:data:`DEFAULT_METHOD`).
METHODS: dict[str, type] = {
    "posterior": PosteriorField,
    "rbf": RBFField,
    "geodesic": GeodesicRBFField,
    "biharmonic": BiharmonicField,
    "harmonic": HarmonicField,
    "nearest": NearestTapField,
    "strip": CentreLineStripField,
    "kriging": KrigingField,
}

DEFAULT_METHOD = "posterior"


def make_field(method: str = DEFAULT_METHOD, *, regions=None, empty_value=None, **settings) -> Field:
    """Create an unfitted field method by name.

    Parameters
    ----------
    method : str
        One of :data:`METHODS`.
    regions : str or (m,) array, optional
        Fit the method on each region separately (:mod:`meshpress.bodies.regions`).
    empty_value : float, optional
        Value of a region without taps (with ``regions``).
    **settings
        Passed to the method's constructor (e.g. ``kernel=``, ``smoothing=``).
    """
    if method not in METHODS:
        raise InputError(f"--method {method!r} is not one of: {', '.join(METHODS)}")
    if regions is not None and METHODS[method] is PosteriorField:
        settings = {**settings, "regions": regions}  # one model with independent regions, as the bands
    elif regions is not None:
        return RegionalField(method, regions, empty_value, settings)
    try:
        return METHODS[method](**settings)
    except TypeError as exc:
        raise InputError(f"--method {method}: {exc}") from None


__all__ = ["Field", "NotFittedError", "METHODS", "make_field", "RBFField", "GeodesicRBFField",
           "BiharmonicField", "HarmonicField", "NearestTapField", "CentreLineStripField", "RegionalField",
           "KrigingField", "PosteriorField", "DEFAULT_METHOD"]
