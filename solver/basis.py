"""1D solution points, Lagrange operators and correction derivatives.

Everything the tensor-product FR operators need along one reference
direction of [-1, 1] is gathered in one :class:`Basis1D`.
"""
from __future__ import annotations

import numbers
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import Legendre
from numpy.polynomial import legendre as _leg

from meshing.geometry import lagrange_derivative_matrix, lagrange_matrix

from .corrections import correction_parameter, vcjh_right
from .registry import Registry

__all__ = ["POINT_SETS", "P_MIN", "P_MAX", "solution_points", "Basis1D", "make_basis"]

P_MIN, P_MAX = 1, 8

POINT_SETS = Registry("solution point set")
POINT_SETS.register("gauss-legendre", 0, "roots of L_{p+1} (interior points)")
POINT_SETS.register("gauss-lobatto", 1, "+-1 and the roots of L_p' (end points included)")


def _check_p(p):
    if isinstance(p, bool) or not isinstance(p, numbers.Integral) or not P_MIN <= p <= P_MAX:
        raise ValueError(f"solution degree p must be an integer in {P_MIN}..{P_MAX}, got {p!r}")
    return int(p)


def _symmetrise(x, w):
    # the solver mirrors left/right operators by index reversal, so the
    # symmetry x[n-1-i] = -x[i] must hold exactly, not to round-off
    return 0.5 * (x - x[::-1]), 0.5 * (w + w[::-1])


def solution_points(p: int, kind: str = "gauss-legendre"):
    """Solution points and quadrature weights on [-1, 1].

    Parameters
    ----------
    p : int
        Solution degree, 1..8; there are n = p+1 points.
    kind : str
        Name in :data:`POINT_SETS`.

    Returns
    -------
    x : (n,) array, ascending, exactly antisymmetric (x[n-1-i] == -x[i])
    w : (n,) array, quadrature weights (sum 2)

    Notes
    -----
    Gauss-Legendre: roots of L_n, weights 2 / ((1 - x^2) L_n'(x)^2)
    (numpy.polynomial.legendre.leggauss).  Gauss-Lobatto: -1, +1 and the roots
    of L_{n-1}', weights 2 / (n (n-1) L_{n-1}(x)^2).
    """
    p = _check_p(p)
    POINT_SETS[kind]
    n = p + 1
    if kind == "gauss-legendre":
        x, w = _leg.leggauss(n)
    else:
        Lm = Legendre.basis(n - 1)
        inner = np.sort(Lm.deriv().roots().real)
        # one Newton polish on L_{n-1}' for the companion-matrix roots
        d1, d2 = Lm.deriv(), Lm.deriv(2)
        inner = inner - d1(inner) / d2(inner)
        x = np.concatenate(([-1.0], inner, [1.0]))
        w = 2.0 / (n * (n - 1) * Lm(x) ** 2)
    x, w = _symmetrise(np.asarray(x, dtype=float), np.asarray(w, dtype=float))
    return x, w


@dataclass(frozen=True, eq=False)
class Basis1D:
    """1D FR building blocks on [-1, 1] (arrays are read-only).

    Attributes
    ----------
    p : int
        Solution degree; n = p + 1.
    points : str
        Solution point set name.
    correction : str
        Correction name, or ``'value'`` when c was given as a number.
    c : float
        VCJH parameter.
    x, w : (n,) arrays
        Solution points and quadrature weights.
    D : (n, n) array
        ``D[i, k] = l_k'(x_i)``.
    Lf : (2, n) array
        ``Lf[0, k] = l_k(-1)``, ``Lf[1, k] = l_k(+1)``.
    dgR : (n,) array
        ``g_R'(x_i)`` of the right VCJH correction; the left one is
        ``g_L'(x_i) = -dgR[n-1-i]`` by the exact symmetry of the points.
    modal : (n, n) array
        ``V[i, m] = P~_m(x_i)``, orthonormal Legendre ``sqrt((2m+1)/2) P_m``.
    modal_inv : (n, n) array
        Inverse of ``modal`` (nodal -> modal coefficients).
    """

    p: int
    points: str
    correction: str
    c: float
    x: np.ndarray
    w: np.ndarray
    D: np.ndarray
    Lf: np.ndarray
    dgR: np.ndarray
    modal: np.ndarray
    modal_inv: np.ndarray

    @property
    def n(self) -> int:
        return self.p + 1

    @property
    def dgL(self) -> np.ndarray:
        """``g_L'(x_i) = -g_R'(-x_i)``, shape (n,)."""
        return -self.dgR[::-1]


def make_basis(p: int, points: str = "gauss-legendre", correction="dg", scheme="ssp-rk33") -> Basis1D:
    """Build the :class:`Basis1D` of degree ``p``.

    Parameters
    ----------
    p : int
        1..8.
    points : str
        Name in :data:`POINT_SETS`.
    correction : str or float
        Name in :data:`solver.corrections.CORRECTIONS` or a VCJH value c.
    scheme : str or ExplicitRK
        Time scheme; only ``'c+'`` depends on it.
    """
    p = _check_p(p)
    x, w = solution_points(p, points)
    c = correction_parameter(correction, p, scheme)
    name = correction if isinstance(correction, str) else "value"
    gR = vcjh_right(p, c)
    D = lagrange_derivative_matrix(x, x)
    Lf = lagrange_matrix(x, np.array([-1.0, 1.0]))
    dgR = gR.deriv()(x)
    n = p + 1
    V = np.empty((n, n))
    for m in range(n):
        V[:, m] = np.sqrt((2 * m + 1) / 2.0) * Legendre.basis(m)(x)
    Vinv = np.linalg.inv(V)
    arrays = [x, w, D, Lf, dgR, V, Vinv]
    for a in arrays:
        a.setflags(write=False)
    return Basis1D(p, points, name, float(c), *arrays)
