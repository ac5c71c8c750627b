"""All numeric tolerances in one place, so none hide in the code as magic numbers."""

from dataclasses import dataclass


@dataclass(frozen=True)
class Tolerances:
    """Geometric and numeric tolerances, in SI units.

    Attributes
    ----------
    merge_digits : int
        Vertices closer than ``10**-merge_digits`` of the mesh unit are merged.
    degenerate_area_rel : float
        A face whose area is below this fraction of the median face area is
        dropped as degenerate.
    max_tap_distance_m : float
        Default largest allowed distance (m) from a tap to the surface.
    frontal_resolution_m : float
        Default pixel size (m) of the raster used for the frontal area.
    coplanar_rel : float
        Taps whose spread normal to their best-fit plane is below this fraction
        of their in-plane spread are treated as coplanar.
    closure_warn : float
        Warn when |sum n dA| / total area exceeds this (open surface).
    """

    merge_digits: int = 8
    degenerate_area_rel: float = 1e-10
    max_tap_distance_m: float = 0.025
    frontal_resolution_m: float = 0.002
    coplanar_rel: float = 1e-6
    closure_warn: float = 1e-3


TOL = Tolerances()
