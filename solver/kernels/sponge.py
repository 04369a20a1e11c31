"""Absorbing-zone (sponge) source term, numba kernel."""
from __future__ import annotations

from numba import njit, prange


@njit(cache=True, parallel=True)
def sponge_apply(U, R, sigma, elems, uinf):
    """``R[e] -= sigma[e] (U[e] - uinf)`` for the elements listed in ``elems``.

    Parameters
    ----------
    U, R : (ne, n, n, 4) arrays
        Solution and residual (``R`` updated in place).
    sigma : (ne, n, n) array
        Damping rate at the solution points.
    elems : (m,) int64 array
        Elements where ``sigma`` is not zero everywhere.
    uinf : (4,) array
        Target (free-stream) conserved state.
    """
    n = U.shape[1]
    for k in prange(elems.shape[0]):
        e = elems[k]
        for i in range(n):
            for j in range(n):
                s = sigma[e, i, j]
                for v in range(4):
                    R[e, i, j, v] -= s * (U[e, i, j, v] - uinf[v])
