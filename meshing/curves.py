"""Arc length of parametric plane curves and its inverse.

Wall curves are given by a regular parameter ``t`` (analytic for NACA
sections, a periodic cubic spline for point lists); nodes are placed at
prescribed arc lengths, so the parameter need only be regular, not uniform.
"""
from __future__ import annotations

from typing import Callable

import numpy as np
from numpy.polynomial.legendre import leggauss

__all__ = ["ArcLength", "outward_normal"]


class ArcLength:
    """Arc length ``s(t) = int_{t0}^{t} |X'(u)| du`` on ``[t0, t1]`` and its inverse.

    Parameters
    ----------
    deriv : callable
        ``deriv(t)`` with ``t`` of shape (m,) returns ``X'(t)``, shape (m, 2).
    t0, t1 : float
    n_intervals : int
        Sub-intervals of the composite Gauss rule.
    breaks : (k,) array, optional
        Parameter values where ``X'`` may be non-smooth (spline knots); they are
        made sub-interval ends so each Gauss rule sees a smooth integrand.

    Notes
    -----
    A 12-point Gauss-Legendre rule per sub-interval gives the cumulative table
    ``S_k``; ``s(t) = S_k + int_{t_k}^{t}`` with the same rule on the partial
    interval.  The inverse is Newton's method ``t <- t - (s(t) - s*) / |X'(t)|``
    started from linear interpolation of the table.
    """

    def __init__(self, deriv: Callable[[np.ndarray], np.ndarray], t0: float, t1: float,
                 n_intervals: int = 512, breaks: np.ndarray | None = None):
        self.deriv = deriv
        knots = np.linspace(t0, t1, n_intervals + 1)
        if breaks is not None:
            knots = np.union1d(knots, np.asarray(breaks, dtype=float))
            knots = knots[(knots >= t0) & (knots <= t1)]
        self.knots = knots
        self._gx, self._gw = leggauss(12)
        seg = self._integral(knots[:-1], knots[1:])
        self.table = np.concatenate([[0.0], np.cumsum(seg)])

    @property
    def length(self) -> float:
        return float(self.table[-1])

    def speed(self, t: np.ndarray) -> np.ndarray:
        return np.linalg.norm(self.deriv(np.asarray(t, dtype=float)), axis=-1)

    def _integral(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        half = 0.5 * (b - a)
        tt = (0.5 * (a + b))[:, None] + half[:, None] * self._gx[None, :]
        sp = self.speed(tt.ravel()).reshape(tt.shape)
        return half * (sp @ self._gw)

    def __call__(self, t: np.ndarray) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        k = np.clip(np.searchsorted(self.knots, t, side="right") - 1, 0, self.knots.size - 2)
        return self.table[k] + self._integral(self.knots[k], t)

    def inverse(self, s: np.ndarray) -> np.ndarray:
        """Parameter ``t`` with ``s(t) = s``, shape of ``s``."""
        s = np.atleast_1d(np.asarray(s, dtype=float))
        t = np.interp(s, self.table, self.knots)
        lo, hi = self.knots[0], self.knots[-1]
        for _ in range(50):
            f = self(t) - s
            if np.max(np.abs(f)) <= 1e-14 * max(self.length, 1.0):
                break
            sp = self.speed(t)
            step = np.where(sp > 0, f / np.where(sp > 0, sp, 1.0), 0.0)
            t = np.clip(t - step, lo, hi)
        return t


def outward_normal(tangent: np.ndarray) -> np.ndarray:
    """Unit normal to the right of a counter-clockwise tangent, (m, 2) -> (m, 2).

    For a counter-clockwise closed curve the right-hand side is the outside.
    """
    n = np.stack([tangent[:, 1], -tangent[:, 0]], axis=1)
    return n / np.linalg.norm(n, axis=1, keepdims=True)
