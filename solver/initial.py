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


@INITIAL_CONDITIONS.decorate(
    "snapshot", params=("file",), defaults={"file": None},
    doc="the state of an earlier run's snapshot on the same mesh; the run starts at its time")
def snapshot_state(xy, ref, file=None, op=None):
    """State of a snapshot file, carried over to the operator's degree and points.

    Parameters
    ----------
    xy : (ne, n, n, 2) array
        Solution points of the new run (only their shape is used).
    ref : dict
        Free stream (unused: the snapshot holds the whole state).
    file : str or Path
        Snapshot written by ``solver.output.write_snapshot``.
    op : FROperator
        Operator of the new run; its mesh must be the snapshot's mesh.

    Returns
    -------
    U : (ne, n, n, 4) array
    t0 : float
        Time of the snapshot: the start time of the new run.

    Raises
    ------
    ValueError
        Another mesh (element count, geometry degree or node positions), or a
        state that is not finite; the message names the file.

    Notes
    -----
    The state is carried between degrees and point sets by the modal transfer
    of solver.pmultigrid (truncation of the orthonormal Legendre series when
    the new degree is lower, zero padding when it is higher), applied along
    both reference directions: ``U_new = (T (x) T) U_old``.  On the same
    degree and points ``T = I`` and the state is copied exactly.
    """
    from solver.basis import make_basis
    from solver.output import read_snapshot
    from solver.pmultigrid import modal_transfer

    snap = read_snapshot(file)
    mine, theirs = op.mesh, snap.mesh
    if theirs.geom.shape != mine.geom.shape:
        raise ValueError(f"{file}: snapshot mesh has {theirs.n_elements} elements of geometry degree {theirs.q}, "
                         f"this case's mesh {mine.n_elements} of degree {mine.q}: start from a snapshot of the "
                         "same mesh")
    size = float(np.ptp(mine.geom.reshape(-1, 2), axis=0).max())
    off = np.abs(theirs.geom - mine.geom).reshape(theirs.n_elements, -1).max(axis=1)
    if off.max() > 1e-9 * size:
        e = int(np.argmax(off))
        raise ValueError(f"{file}: snapshot mesh differs from this case's mesh (element {e}: nodes moved by "
                         f"{off[e]:.3g}): start from a snapshot of the same mesh")
    U = np.asarray(snap.U, dtype=float)
    if not np.all(np.isfinite(U)):
        raise ValueError(f"{file}: the snapshot state is not finite")
    b_old = make_basis(snap.degree, snap.points)
    b_new = op.basis
    if b_old.n == b_new.n and np.array_equal(np.asarray(b_old.x), np.asarray(b_new.x)):
        return np.ascontiguousarray(U), float(snap.time)
    T = modal_transfer(b_old, b_new)
    return np.ascontiguousarray(np.einsum("ia,jb,eabv->eijv", T, T, U)), float(snap.time)
