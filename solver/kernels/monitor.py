"""Kernels of the run monitors: state scan (bounds and blow-up guard) and running moments."""
from __future__ import annotations

import numpy as np
from numba import njit, prange

#: codes of the first bad value found by :func:`scan_state`
OK = 0
NOT_FINITE = 1
NONPOSITIVE_DENSITY = 2
NONPOSITIVE_PRESSURE = 3


@njit(cache=True)
def _scan_state(U, gamma, out, where):
    # serial on purpose: the first bad point in storage order is reported, the same every time
    ne, n = U.shape[0], U.shape[1]
    rmin = np.inf
    rmax = -np.inf
    pmin = np.inf
    pmax = -np.inf
    code = OK
    for e in range(ne):
        for i in range(n):
            for j in range(n):
                r = U[e, i, j, 0]
                ru = U[e, i, j, 1]
                rv = U[e, i, j, 2]
                rE = U[e, i, j, 3]
                bad = 0
                var = -1
                for v in range(4):
                    x = U[e, i, j, v]
                    if not (x - x == 0.0):  # NaN or +-Inf
                        bad = NOT_FINITE
                        var = v
                        break
                p = 0.0
                if bad == 0:
                    p = (gamma - 1.0) * (rE - 0.5 * (ru * ru + rv * rv) / r) if r != 0.0 else -1.0
                    if not (r > 0.0):
                        bad = NONPOSITIVE_DENSITY
                        var = 0
                    elif not (p > 0.0):
                        bad = NONPOSITIVE_PRESSURE
                        var = 3
                if bad != 0:
                    if code == OK:
                        code = bad
                        where[0] = e
                        where[1] = i
                        where[2] = j
                        where[3] = var
                    continue
                if r < rmin:
                    rmin = r
                if r > rmax:
                    rmax = r
                if p < pmin:
                    pmin = p
                if p > pmax:
                    pmax = p
    out[0] = rmin
    out[1] = rmax
    out[2] = pmin
    out[3] = pmax
    return code


def scan_state(U: np.ndarray, gamma: float, out: np.ndarray, where: np.ndarray) -> int:
    """Bounds of density and pressure and the first non-physical value.

    Parameters
    ----------
    U : (ne, n, n, 4) float64 array
    gamma : float
    out : (4,) float64 array
        Filled with ``rho_min, rho_max, p_min, p_max`` over the good points.
    where : (4,) int64 array
        Filled with ``e, i, j, v`` of the first bad point (``v`` the conserved
        variable that is not finite, 0 for a non-positive density, 3 for a
        non-positive pressure); untouched when all points are good.

    Returns
    -------
    int
        :data:`OK`, :data:`NOT_FINITE`, :data:`NONPOSITIVE_DENSITY` or
        :data:`NONPOSITIVE_PRESSURE`.
    """
    if U.ndim != 4 or U.shape[-1] != 4 or U.dtype != np.float64:
        raise ValueError(f"scan_state needs a float64 (ne, n, n, 4) array, got {U.dtype} {U.shape}")
    if out.shape != (4,) or where.shape != (4,):
        raise ValueError("scan_state: out and where must have shape (4,)")
    return int(_scan_state(U, float(gamma), out, where))


@njit(cache=True, parallel=True)
def _accumulate_moments(U, gamma, h, S1, S2):
    ne, n = U.shape[0], U.shape[1]
    for e in prange(ne):
        for i in range(n):
            for j in range(n):
                r = U[e, i, j, 0]
                u = U[e, i, j, 1] / r
                v = U[e, i, j, 2] / r
                p = (gamma - 1.0) * (U[e, i, j, 3] - 0.5 * r * (u * u + v * v))
                S1[e, i, j, 0] += h * r
                S1[e, i, j, 1] += h * u
                S1[e, i, j, 2] += h * v
                S1[e, i, j, 3] += h * p
                S2[e, i, j, 0] += h * r * r
                S2[e, i, j, 1] += h * u * u
                S2[e, i, j, 2] += h * v * v
                S2[e, i, j, 3] += h * p * p


def accumulate_moments(U: np.ndarray, gamma: float, h: float, S1: np.ndarray, S2: np.ndarray) -> None:
    """``S1 += h q``, ``S2 += h q^2`` for the primitive variables ``q = (rho, u, v, p)``.

    Parameters
    ----------
    U : (ne, n, n, 4) float64 array
    gamma : float
    h : float
        Weight (the time step the state stands for).
    S1, S2 : (ne, n, n, 4) float64 arrays, updated in place
    """
    if S1.shape != U.shape or S2.shape != U.shape:
        raise ValueError(f"accumulate_moments: sums must have the solution's shape {U.shape}")
    _accumulate_moments(U, float(gamma), float(h), S1, S2)
