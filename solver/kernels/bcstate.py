"""Boundary ghost states, numba device functions.

Every boundary condition is a code and a row of float parameters (built by
the registry in solver/boundaries.py).  ``ghost_state`` returns the exterior
state fed to the interface flux; the viscous terms use the same state.
"""
from __future__ import annotations

from numba import njit

FIXED_STATE = 0
SLIP_WALL = 1

#: width of a boundary parameter row
NPARAM = 8


@njit(cache=True, inline="always")
def ghost_state(code, prm, r, ru, rv, rE, nx, ny, gamma):
    """Exterior state for boundary condition ``code``.

    Parameters
    ----------
    code : int
    prm : (NPARAM,) float array
        ``fixed-state``: rho, u, v, p.
    r, ru, rv, rE : float
        Interior conserved state at the flux point.
    nx, ny : float
        Outward unit normal.
    """
    if code == SLIP_WALL:
        # mirror the normal momentum: the interface flux then carries pressure only
        mn = ru * nx + rv * ny
        return r, ru - 2.0 * mn * nx, rv - 2.0 * mn * ny, rE
    # FIXED_STATE
    rho = prm[0]
    u = prm[1]
    v = prm[2]
    p = prm[3]
    return rho, rho * u, rho * v, p / (gamma - 1.0) + 0.5 * rho * (u * u + v * v)
