"""Built-in initial conditions (a registry; never ``eval`` of user text).

Each entry is a function ``f(xy, ref, **params) -> U`` with ``xy`` the
solution-point coordinates (..., 2) and ``U`` conserved states (..., 4).
"""
from __future__ import annotations

import numpy as np

from .registry import Registry

__all__ = ["INITIAL_CONDITIONS", "uniform_state", "isentropic_vortex", "conserved", "primitive"]

INITIAL_CONDITIONS = Registry("initial condition")


def conserved(rho, u, v, p, gamma):
    """Conserved variables (..., 4) from primitive arrays."""
    rho, u, v, p = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (rho, u, v, p)))
    return np.ascontiguousarray(np.stack([rho, rho * u, rho * v, p / (gamma - 1.0) + 0.5 * rho * (u * u + v * v)], axis=-1))


def primitive(U, gamma):
    """(rho, u, v, p) arrays from conserved states (..., 4)."""
    rho = U[..., 0]
    u = U[..., 1] / rho
    v = U[..., 2] / rho
    p = (gamma - 1.0) * (U[..., 3] - 0.5 * rho * (u * u + v * v))
    return rho, u, v, p


@INITIAL_CONDITIONS.decorate("uniform", doc="the free stream everywhere")
def uniform_state(xy, ref):
    shape = xy.shape[:-1]
    return conserved(np.full(shape, ref["rho"]), ref["u"], ref["v"], ref["p"], ref["gamma"])


@INITIAL_CONDITIONS.decorate(
    "vortex", params=("strength", "radius", "center"),
    defaults={"strength": 5.0, "radius": 1.0, "center": (0.0, 0.0)},
    doc="isentropic vortex (Shu 1998; Yee, Sandham & Djomehri 1999) carried by the free stream")
def isentropic_vortex(xy, ref, strength=5.0, radius=1.0, center=(0.0, 0.0), t=0.0, period=None):
    """Isentropic vortex advected by the free stream, exact at time ``t``.

    Parameters
    ----------
    xy : (..., 2) array
    ref : dict
        Free stream: rho, u, v, p, gamma.
    strength : float
        beta (5 in Yee, Sandham & Djomehri 1999).
    radius : float
        Length scale R of the Gaussian.
    center : (2,)
        Centre at ``t = 0``.
    t : float
        Time; the centre moves with the free-stream velocity.
    period : (Lx, Ly), optional
        Periodic box size: the nearest periodic image of the centre is used.

    Notes
    -----
    With ``r^2 = |x - x_c(t)|^2 / R^2``, ``T_inf = p_inf / rho_inf``:
    ``delta u = beta/(2 pi) sqrt(T_inf) e^{(1 - r^2)/2} (-(y - y_c), x - x_c) / R``,
    ``T / T_inf = 1 - (gamma - 1) beta^2 / (8 gamma pi^2) e^{1 - r^2}``,
    ``rho = rho_inf (T/T_inf)^{1/(gamma-1)}``, ``p = p_inf (T/T_inf)^{gamma/(gamma-1)}``.
    This is the Yee-Sandham-Djomehri vortex written for any free stream; the
    flow is an exact steady solution of the Euler equations in the frame
    moving with the free stream.
    """
    g = ref["gamma"]
    rho_inf, u_inf, v_inf, p_inf = ref["rho"], ref["u"], ref["v"], ref["p"]
    T_inf = p_inf / rho_inf
    cx = center[0] + u_inf * t
    cy = center[1] + v_inf * t
    dx = xy[..., 0] - cx
    dy = xy[..., 1] - cy
    if period is not None:
        dx = dx - period[0] * np.round(dx / period[0])
        dy = dy - period[1] * np.round(dy / period[1])
    dx = dx / radius
    dy = dy / radius
    r2 = dx * dx + dy * dy
    b = strength
    du = b / (2 * np.pi) * np.sqrt(T_inf) * np.exp(0.5 * (1 - r2))
    T = 1.0 - (g - 1.0) * b * b / (8.0 * g * np.pi ** 2) * np.exp(1.0 - r2)
    rho = rho_inf * T ** (1.0 / (g - 1.0))
    p = p_inf * T ** (g / (g - 1.0))
    return conserved(rho, u_inf - du * dy, v_inf + du * dx, p, g)
