"""The result of a loads calculation, and its JSON form."""

from __future__ import annotations

import dataclasses
import json
import math
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError

CAUTION = (
    "Estimates only: do not rely on them for safety-critical decisions; test on the road only where it is "
    "legal and safe; defer to your sanctioning body's rules and qualified engineers."
)


@dataclass
class LoadResult:
    """Integrated loads, SI units, vehicle frame (see docs/conventions.md).

    Figures that cannot be computed (no q, no axles) are None.
    """

    force_N: list | None
    moment_Nm: list | None
    force_per_q_m2: list
    moment_per_q_m3: list
    moment_ref_m: list
    q_Pa: float | None
    ref_area_m2: float
    ref_area_source: str
    wheelbase_m: float | None
    method: str
    p_ref: float
    value_kind: str
    warnings: list = field(default_factory=list)
    taps: list = field(default_factory=list)
    mesh: dict = field(default_factory=dict)
    inputs: dict = field(default_factory=dict)
    quadrature: str = "every face"
    #: (m,) face values (Pa or Cp) when the loads were summed face by face, else None.
    face_values: np.ndarray | None = field(default=None, repr=False)
    #: The fitted field method (for views that need face values after clustered quadrature).
    field: object = field(default=None, repr=False)
    #: Loads of each part of a body of several parts: :class:`PartLoads`, in the body's part order.
    parts: list = dataclasses.field(default_factory=list)  # (the name 'field' is taken just above)

    # Figures derived from the vectors above -------------------------------------------------
    def _f(self, k):
        return None if self.force_N is None else float(self.force_N[k])

    @property
    def lift_N(self):
        return self._f(2)

    @property
    def drag_N(self):
        return self._f(0)

    @property
    def side_N(self):
        return self._f(1)

    @property
    def pitch_moment_Nm(self):
        return None if self.moment_Nm is None else float(self.moment_Nm[1])

    def _axle(self, which):
        from .coefficients import axle_split

        if self.wheelbase_m is None or self.force_N is None:
            return None
        return axle_split(self.lift_N, self.pitch_moment_Nm, self.wheelbase_m)[which]

    @property
    def front_lift_N(self):
        return self._axle(0)

    @property
    def rear_lift_N(self):
        return self._axle(1)

    @property
    def front_share(self):
        from .coefficients import front_share

        if self.wheelbase_m is None:
            return None
        # From the coefficients, so it exists even when q is unknown.
        return front_share(self.CLF, self.CL)

    def _c(self, k):
        return float(self.force_per_q_m2[k]) / self.ref_area_m2

    @property
    def CL(self):
        return self._c(2)

    @property
    def CD(self):
        return self._c(0)

    @property
    def CS(self):
        return self._c(1)

    @property
    def CPM(self):
        if self.wheelbase_m is None:
            return None
        return float(self.moment_per_q_m3[1]) / (self.ref_area_m2 * self.wheelbase_m)

    @property
    def CLF(self):
        return None if self.CPM is None else self.CL / 2 + self.CPM

    @property
    def CLR(self):
        return None if self.CPM is None else self.CL / 2 - self.CPM

    FIGURES = ("lift_N", "drag_N", "side_N", "pitch_moment_Nm", "front_lift_N", "rear_lift_N", "front_share",
               "CL", "CD", "CS", "CPM", "CLF", "CLR")

    def to_dict(self) -> dict:
        """The JSON form: figures at the top level, then inputs and diagnostics."""
        d = {k: _clean(getattr(self, k)) for k in self.FIGURES}
        d.update(
            downforce_N=None if self.lift_N is None else -self.lift_N,
            q_Pa=self.q_Pa,
            ref_area_m2=self.ref_area_m2,
            ref_area_source=self.ref_area_source,
            quadrature=self.quadrature,
            wheelbase_m=self.wheelbase_m,
            method=self.method,
            p_ref=self.p_ref,
            value_kind=self.value_kind,
            force_N=self.force_N,
            moment_Nm=self.moment_Nm,
            moment_ref_m=self.moment_ref_m,
            warnings=list(self.warnings),
            caution=CAUTION,
            taps=self.taps,
            mesh=self.mesh,
            inputs=self.inputs,
        )
        if self.parts:
            d["parts"] = [p.to_dict() for p in self.parts]
        return _clean(d)

    def figures_dict(self) -> dict:
        """The figures only (N, N m, coefficients; None where they cannot be computed), with the vectors."""
        d = {k: _clean(getattr(self, k)) for k in self.FIGURES}
        d.update(downforce_N=None if self.lift_N is None else -self.lift_N, force_N=self.force_N,
                 moment_Nm=self.moment_Nm)
        return _clean(d)


@dataclass
class PartLoads:
    """One part's share of the loads: the same figures as the whole, on the same q, reference area and point.

    Attributes
    ----------
    name : str
    faces : int
    area_m2 : float
    loads : LoadResult
        The figures of this part's faces alone (so the parts' forces and
        moments sum to the whole's).
    taps : int
        Taps on the part.
    bands : dict, optional
        The part's bands, from the same model as the whole's.
    """

    name: str
    faces: int
    area_m2: float
    loads: LoadResult
    taps: int = 0
    #: The part's bands (``CL``, ``CL_u``, ``CL_lo95``, ``CL_hi95``, ...) when the loads have bands.
    bands: dict | None = None

    def to_dict(self) -> dict:
        d = {"name": self.name, "faces": self.faces, "area_m2": self.area_m2, "taps": self.taps,
             **self.loads.figures_dict()}
        if self.bands:
            d["uncertainty"] = self.bands
        return _clean(d)


def _clean(x):
    """numpy scalars/arrays -> plain JSON types; NaN/inf -> None."""
    if isinstance(x, dict):
        return {k: _clean(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_clean(v) for v in x]
    if isinstance(x, np.ndarray):
        return _clean(x.tolist())
    if isinstance(x, (np.floating, float)):
        x = float(x)
        return x if math.isfinite(x) else None
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, np.bool_):
        return bool(x)
    return x


def check_not_input(path, protect=()) -> None:
    """Raise InputError when ``path`` is one of the input files ``protect``."""
    path = Path(path)
    for p in protect:
        if p and Path(p).exists() and path.exists() and path.resolve() == Path(p).resolve():
            raise InputError(f"refusing to write {str(path)!r}: it is one of the input files")


def replace_into(path, write, *, protect=()) -> Path:
    """Call ``write(tmp_path)`` on a temporary file beside ``path``, then move it onto ``path``.

    The file appears completely or not at all, never over an input (``protect``), and with the
    mode the user's umask gives a new file (temporary files start private).
    """
    path = Path(path)
    check_not_input(path, protect)
    path.parent.mkdir(parents=True, exist_ok=True)
    # Keep the real suffix last: some writers (pyvista, PIL) choose the format from it.
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix="." + path.stem + ".tmp-", suffix=path.suffix)
    os.close(fd)
    try:
        write(tmp)
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def write_atomic(path, text: str, *, protect=()) -> Path:
    """Write ``text`` to ``path`` completely or not at all, never over an input (see replace_into)."""
    return replace_into(path, lambda tmp: Path(tmp).write_text(text, encoding="utf-8"), protect=protect)


def write_json(result: LoadResult | dict, path, *, protect=()) -> Path:
    """Write a result (or any dict) as JSON, atomically."""
    d = result.to_dict() if isinstance(result, LoadResult) else _clean(result)
    return write_atomic(path, json.dumps(d, indent=2) + "\n", protect=protect)
