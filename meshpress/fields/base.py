"""The one interface every pressure-field method follows.

A method stores its settings in ``__init__``, learns from the taps in
:meth:`Field.fit`, and gives values on the surface with
:meth:`Field.face_values` (what the integrator uses) or :meth:`Field.at_points`.
Methods are registered by name in :mod:`meshpress.fields` so the CLI and API can
pick them with ``method="..."``.
"""

from __future__ import annotations

from abc import ABC, abstractmethod

import numpy as np


class NotFittedError(RuntimeError):
    """A field was asked for values before :meth:`Field.fit`."""


class Field(ABC):
    """A pressure (or Cp) field over a body, interpolated from taps.

    Attributes (after fit)
    ----------------------
    body_ : Body
    taps_ : ProjectedTaps
    warnings_ : list of str
        Doubts met while fitting (e.g. a polynomial degree lowered).
    """

    #: Short name used on the command line (``--method NAME``).
    name: str = ""

    def fit(self, body, taps, *, progress=None) -> "Field":
        """Learn the field from taps placed on ``body``.

        Parameters
        ----------
        body : Body
        taps : ProjectedTaps
            Tap positions on the surface (m) and values (Pa or Cp).
        progress : Progress, optional

        Returns
        -------
        self
        """
        self.body_ = body
        self.taps_ = taps
        self.warnings_ = []
        self._fit(body, taps, progress)
        return self

    @abstractmethod
    def _fit(self, body, taps, progress) -> None: ...

    def _check(self):
        if not hasattr(self, "taps_"):
            raise NotFittedError(f"{type(self).__name__} is not fitted; call fit(body, taps) first")

    def face_values(self, *, progress=None) -> np.ndarray:
        """(m,) float: the field's mean value on every face of the fitted body."""
        self._check()
        return self._face_values(progress)

    @abstractmethod
    def _face_values(self, progress) -> np.ndarray: ...

    def at_points(self, points: np.ndarray) -> np.ndarray:
        """(k,) float: the field at surface points (k, 3) m, where the method allows it."""
        raise NotImplementedError(f"{self.name} gives values on the body's faces only")

    def loo_residuals(self) -> np.ndarray:
        """(n,) float: leave-one-out residuals at the taps, value minus prediction.

        Generic version: refit without each tap in turn and predict at it (n
        refits).  Methods with a closed form (RBF: Rippa 1999) override this.
        """
        self._check()
        taps = self.taps_
        out = np.empty(len(taps))
        keep = np.ones(len(taps), dtype=bool)
        for i in range(len(taps)):
            keep[:] = True
            keep[i] = False
            sub = _subset(taps, keep)
            other = type(self)(**self.get_params()).fit(self.body_, sub)
            out[i] = taps.values[i] - other.at_points(taps.points[i : i + 1])[0]
        return out

    def loo_residuals_nested(self) -> np.ndarray:
        """(n,) float: leave-one-out residuals of the whole fitting procedure, hyperparameter choice included.

        A method that chooses a setting by the lowest leave-one-out error
        overrides this with the residuals of the choice re-made without each tap
        (nested cross-validation; Cawley & Talbot, JMLR 11 (2010) 2079-2107).
        Here, for methods with no setting chosen from the readings' cross-
        validation, it is the plain leave-one-out.
        """
        return self.loo_residuals()

    def get_params(self) -> dict:
        """The constructor settings (scikit-learn style): attributes named like __init__'s arguments."""
        import inspect

        names = [p for p in inspect.signature(type(self).__init__).parameters if p != "self"]
        return {n: getattr(self, n) for n in names}

    def describe(self) -> str:
        """One line naming the method and its settings, for reports."""
        return self.name


def _subset(taps, keep):
    """ProjectedTaps restricted to the rows where ``keep`` is True."""
    from dataclasses import replace

    return replace(
        taps,
        names=[n for n, k in zip(taps.names, keep) if k],
        raw_points=taps.raw_points[keep],
        points=taps.points[keep],
        faces=taps.faces[keep],
        barycentric=taps.barycentric[keep],
        distance=taps.distance[keep],
        values=taps.values[keep],
    )
