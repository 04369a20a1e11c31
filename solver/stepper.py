"""Explicit time marching of an FR operator: the time-step rule and the loop core.

The driver (solver/run.py) owns output and monitors; this module only knows
how large a step may be and how to take it.
"""
from __future__ import annotations

import math

import numpy as np

from .stability import real_axis_reach, stable_cfl
from .timeschemes import TIME_SCHEMES

__all__ = ["ExplicitStepper", "step_to", "END_SNAP"]

#: a step that would stop short of the end time by at most this fraction of itself is stretched to end there
END_SNAP = 1e-6


def step_to(t: float, dt: float, t_end: float | None) -> float:
    """The next step from ``t``: ``dt``, or what is left to ``t_end`` when that is less.

    When what is left exceeds ``dt`` by at most ``END_SNAP dt`` (steps that add up to ``t_end`` but for
    round-off, e.g. ten steps of 0.1 to t = 1) the step is stretched to end at ``t_end``, rather than
    followed by a step of 1e-16 relative size: for dual time stepping that would be a whole inner
    solve that cannot meet an absolute tolerance, and a step ratio that drops the BDF order.
    """
    if t_end is None:
        return dt
    rest = t_end - t
    return rest if rest <= dt * (1.0 + END_SNAP) else dt


class ExplicitStepper:
    """Advance ``dU/dt = R(U)`` with an explicit RK scheme.

    Parameters
    ----------
    op : FROperator
    scheme : str
        Name in ``TIME_SCHEMES``.
    cfl : float, optional
        Fraction (0, 1] of the scheme's stable limit for the operator's
        degree and correction function.
    dt : float, optional
        Fixed step instead of ``cfl``.

    Notes
    -----
    At each solution point ``dt_c = CFL_max(p, c, scheme) 2 / (lambda_r + lambda_s)``
    with ``CFL_max`` the 1D von Neumann limit of the upwind FR advection
    operator (solver.stability.stable_cfl) and ``lambda_r, lambda_s`` the
    convective spectral radii along the reference directions; with viscosity
    ``dt_v = X / lambda_v`` with ``X`` the scheme's reach along the negative
    real axis and ``lambda_v`` the LDG or BR2 diffusion spectral radius
    (``FROperator.spectral_radii``).  ``dt = cfl * min_points 1 / (1/dt_c + 1/dt_v)``.
    """

    def __init__(self, op, scheme: str = "ssp-rk33", cfl: float | None = 0.9, dt: float | None = None):
        self.op = op
        self.scheme = TIME_SCHEMES[scheme].obj
        self.scheme_name = scheme
        if dt is None and cfl is None:
            raise ValueError("give either a CFL fraction or a fixed time step")
        self.fixed_dt = dt
        self.cfl = cfl
        b = op.basis
        self.cfl_max = stable_cfl(b.p, b.c, scheme, b.points)
        self.reach = real_axis_reach(scheme)
        #: largest relaxation rate of a source term (e.g. a sponge), or 0
        self.rate_cap = 0.0
        self.work = None

    def stable_dt(self, U: np.ndarray) -> float:
        """Time step from the CFL rule (or the fixed step)."""
        if self.fixed_dt is not None:
            return float(self.fixed_dt)
        dt = self._flux_dt(U)
        if self.rate_cap > 0:
            # a damping source -sigma (U - U_ref) is stable while sigma dt stays inside the real-axis reach
            dt = min(dt, self.cfl * self.reach / self.rate_cap)
        return dt

    def _flux_dt(self, U: np.ndarray) -> float:
        lc, lv = self.op.spectral_radii(U)
        inv = lc / (2.0 * self.cfl_max)
        if lv is not None:
            inv = inv + lv / self.reach
        return float(self.cfl / np.max(inv))

    def step(self, U: np.ndarray, t: float, dt: float) -> None:
        """One step in place."""
        if self.work is None:
            self.work = self.scheme.allocate(U)
        self.scheme.step(self.op.rhs, t, U, dt, self.work)

    def advance(self, U: np.ndarray, t: float, t_end: float, dt_every: int = 10, max_steps: int | None = None):
        """March ``U`` in place from ``t`` to ``t_end`` (the last step lands exactly).

        Returns
        -------
        t : float, steps : int
        """
        steps = 0
        dt = self.stable_dt(U)
        while t < t_end * (1 - 1e-14) - 1e-300:
            if steps and steps % dt_every == 0:
                dt = self.stable_dt(U)
            h = step_to(t, dt, t_end)
            self.step(U, t, h)
            t += h
            steps += 1
            if max_steps is not None and steps >= max_steps:
                break
            if not math.isfinite(float(U[0, 0, 0, 0])):
                raise FloatingPointError(f"solution is not finite at t = {t:.6g} after {steps} steps")
        return t, steps
