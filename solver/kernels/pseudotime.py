"""Numba kernels of the pseudo-time (inner) iteration of dual time stepping.

Arrays only, no orchestration: the unsteady residual with its norm, the
per-element scaled Runge-Kutta stage combination and the tensor-product modal
transfer between polynomial degrees.  Layout as everywhere in the solver:
``U[e, i, j, v]``, shape (ne, n, n, 4).

All loops are serial: these are memory-bound passes over the solution that
cost a small fraction of one residual evaluation, and a serial sum keeps the
residual norm bit-identical from run to run (resume is bit exact).
"""
from __future__ import annotations

from numba import njit


@njit(cache=True)
def unsteady_residual(R, U, a0dt, S, use_s, F, use_f, scale):
    """``R <- R - a0dt U - S + F`` in place; returns the weighted sum of squares.

    Parameters
    ----------
    R : (ne, n, n, 4) array
        On entry the spatial residual ``R(U)``; on exit the unsteady residual.
    U : (ne, n, n, 4) array
    a0dt : float
        ``a_0 / dt``, the weight of the new level in the BDF derivative.
    S : (ne, n, n, 4) array
        ``sum_{j>=1} a_j U^{n+1-j} / dt`` (history part of the BDF derivative);
        read only when ``use_s``.
    F : (ne, n, n, 4) array
        FAS forcing of a coarse level; read only when ``use_f``.
    scale : (4,) array
        Weight of each conserved variable in the norm.

    Returns
    -------
    float
        ``sum (scale[v] R*[e, i, j, v])^2`` over all entries.
    """
    ne, n = U.shape[0], U.shape[1]
    acc = 0.0
    for e in range(ne):
        for i in range(n):
            for j in range(n):
                for v in range(4):
                    r = R[e, i, j, v] - a0dt * U[e, i, j, v]
                    if use_s:
                        r -= S[e, i, j, v]
                    if use_f:
                        r += F[e, i, j, v]
                    R[e, i, j, v] = r
                    w = scale[v] * r
                    acc += w * w
    return acc


@njit(cache=True)
def scaled_combination(out, base, K, idx, coef, m, dtau):
    """``out[e] = base[e] + dtau[e] sum_q coef[q] K[idx[q], e]`` for every element.

    Parameters
    ----------
    out, base : (ne, n, n, 4) arrays (``out`` may be ``base``)
    K : (s, ne, n, n, 4) array
        Stage residuals.
    idx : (s,) int64 array, coef : (s,) array
        The first ``m`` entries are used.
    m : int
    dtau : (ne,) array
        Local pseudo-time step of each element.
    """
    ne, n = base.shape[0], base.shape[1]
    for e in range(ne):
        d = dtau[e]
        for i in range(n):
            for j in range(n):
                for v in range(4):
                    acc = 0.0
                    for q in range(m):
                        acc += coef[q] * K[idx[q], e, i, j, v]
                    out[e, i, j, v] = base[e, i, j, v] + d * acc


@njit(cache=True)
def tensor_transfer(T, U, out, add, work):
    """``out[e, a, b, v] (+)= sum_ij T[a, i] T[b, j] U[e, i, j, v]``, sum-factorised.

    Parameters
    ----------
    T : (m, n) array
        1D transfer matrix (restriction m < n, prolongation m > n).
    U : (ne, n, n, 4) array
    out : (ne, m, m, 4) array
    add : bool
        Add to ``out`` instead of overwriting it.
    work : (m, n, 4) array
        Scratch.
    """
    ne, n = U.shape[0], U.shape[1]
    m = T.shape[0]
    for e in range(ne):
        for a in range(m):
            for j in range(n):
                for v in range(4):
                    acc = 0.0
                    for i in range(n):
                        acc += T[a, i] * U[e, i, j, v]
                    work[a, j, v] = acc
        for a in range(m):
            for b in range(m):
                for v in range(4):
                    acc = 0.0
                    for j in range(n):
                        acc += T[b, j] * work[a, j, v]
                    if add:
                        out[e, a, b, v] += acc
                    else:
                        out[e, a, b, v] = acc


@njit(cache=True)
def _admissible(base, X, e, theta, gamma, kappa, is_increment):
    """Every point of element ``e`` of ``base + theta (X - base)`` (or ``base + theta X``) keeps
    density and pressure above ``kappa`` times those of ``base``."""
    n = base.shape[1]
    for i in range(n):
        for j in range(n):
            r0 = base[e, i, j, 0]
            m0 = base[e, i, j, 1]
            n0 = base[e, i, j, 2]
            E0 = base[e, i, j, 3]
            if is_increment:
                r = r0 + theta * X[e, i, j, 0]
                mx = m0 + theta * X[e, i, j, 1]
                my = n0 + theta * X[e, i, j, 2]
                E = E0 + theta * X[e, i, j, 3]
            else:
                r = r0 + theta * (X[e, i, j, 0] - r0)
                mx = m0 + theta * (X[e, i, j, 1] - m0)
                my = n0 + theta * (X[e, i, j, 2] - n0)
                E = E0 + theta * (X[e, i, j, 3] - E0)
            if not (r > kappa * r0):  # also false for nan
                return False
            p0 = (gamma - 1.0) * (E0 - 0.5 * (m0 * m0 + n0 * n0) / r0)
            p = (gamma - 1.0) * (E - 0.5 * (mx * mx + my * my) / r)
            if not (p > kappa * p0):
                return False
    return True


@njit(cache=True)
def limit_update(base, X, out, is_increment, gamma, kappa, halvings):
    """Damp an update per element so that density and pressure stay positive.

    ``out[e] = base[e] + theta_e (X[e] - base[e])`` (``is_increment`` false) or
    ``out[e] = base[e] + theta_e X[e]`` (true) with the largest
    ``theta_e in {1, 1/2, ..., 2^-halvings}`` for which every point keeps
    ``rho > kappa rho_base`` and ``p > kappa p_base``; ``theta_e = 0`` if none does.

    Parameters
    ----------
    base : (ne, n, n, 4) array
        Admissible starting state.
    X : (ne, n, n, 4) array
        Target state or increment.
    out : (ne, n, n, 4) array
        May be ``base`` or ``X``.
    is_increment : bool
    gamma, kappa : float
    halvings : int

    Returns
    -------
    int
        Number of elements whose update was damped (``theta_e < 1``).
    """
    ne, n = base.shape[0], base.shape[1]
    damped = 0
    for e in range(ne):
        theta = 1.0
        k = 0
        while not _admissible(base, X, e, theta, gamma, kappa, is_increment):
            k += 1
            if k > halvings:
                theta = 0.0
                break
            theta *= 0.5
        if theta < 1.0:
            damped += 1
        for i in range(n):
            for j in range(n):
                for v in range(4):
                    b = base[e, i, j, v]
                    if is_increment:
                        out[e, i, j, v] = b + theta * X[e, i, j, v]
                    else:
                        out[e, i, j, v] = b + theta * (X[e, i, j, v] - b)
    return damped
