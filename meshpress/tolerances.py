"""All numeric tolerances in one place, so none hide in the code as magic numbers."""

from dataclasses import dataclass


@dataclass(frozen=True)
class Tolerances:
    """Geometric and numeric tolerances, in SI units.

    Attributes
    ----------
    merge_digits : int
        Vertices within ``10**-merge_digits`` of the body's largest extent (4 um on
        a 4 m car; STL's float32 already rounds to about 0.5 um) are merged.
        At most 6, so that quantised coordinates pack into one int64.
    degenerate_area_rel : float
        A face whose area is below this fraction of the median face area is
        dropped as degenerate.
    max_tap_distance_m : float
        Default largest allowed distance (m) from a tap to the surface.
    same_tap_m : float
        Two tap files' taps of one name are the same tap when their given
        positions agree within this (m); a change between configurations
        needs the same positions.
    frontal_resolution_m : float
        Default pixel size (m) of the raster used for the frontal area.
    coplanar_rel : float
        Taps whose spread normal to their best-fit plane is below this fraction
        of their in-plane spread are treated as coplanar.
    closure_warn : float
        Warn when |sum n dA| / total area exceeds this (open surface).
    cluster_min_faces : int
        Bodies with more faces use clustered quadrature by default.
    cluster_cell_m : float
        Cluster voxel side, m (2 cm: loads within 0.01-0.07 % of face-by-face
        on the 1M-face benchmark body; docs/performance.md).
    axis_check_ratio : float
        Warn of wrong axes when the body's extent along the forward axis is
        below this fraction of its width or height (a car's length is about
        twice its width; common practice).
    max_tap_rows : int
        A tap table of more rows is refused before it is read whole (100k taps
        is far beyond any car test; a larger file is a wrong file, e.g. a
        readings log given as the layout).
    """

    merge_digits: int = 6
    degenerate_area_rel: float = 1e-10
    max_tap_distance_m: float = 0.025
    same_tap_m: float = 0.001
    frontal_resolution_m: float = 0.005
    coplanar_rel: float = 1e-6
    closure_warn: float = 1e-3
    cluster_min_faces: int = 200_000
    cluster_cell_m: float = 0.02
    axis_check_ratio: float = 0.8
    max_tap_rows: int = 100_000


TOL = Tolerances()
