"""The pseudo-time smoother of dual time stepping on one polynomial level.

One :class:`PseudoTimeLevel` holds an FR operator of some degree, the local
(per element) pseudo-time steps and the work arrays of an explicit RK scheme,
and advances ``dU/dtau = R*(U) + F`` by whole RK steps ("sweeps").  The same
class serves the fine level of the inner iteration and every coarse level of
the p-multigrid cycle (solver.pmultigrid).
"""
from __future__ import annotations

import math

import numpy as np

from .kernels import pseudotime as _kp
from .stability import real_axis_reach, stable_cfl
from .timeschemes import get_scheme

__all__ = ["PseudoTimeLevel", "residual_scale", "guarded_iteration", "KAPPA", "HALVINGS"]

#: admissibility safeguard: an update may not bring density or pressure below KAPPA times their
#: value before it; otherwise it is halved (at most HALVINGS times, then dropped) in that element
KAPPA = 0.1
HALVINGS = 10


def residual_scale(ref: dict) -> np.ndarray:
    """Weights of the four conserved variables in the pseudo-residual norm, (4,).

    ``1 / (rho, rho |u|, rho |u|, rho E)`` of the free stream in ``ref``
    (rho, u, v, p, gamma), so that each variable's residual is measured
    relative to its free-stream size; ones when ``ref`` lacks the state.
    """
    try:
        rho, u, v, p, g = (float(ref[k]) for k in ("rho", "u", "v", "p", "gamma"))
    except (KeyError, TypeError):
        return np.ones(4)
    q = math.hypot(u, v)
    E = p / (g - 1.0) + 0.5 * rho * q * q
    mom = rho * q if q > 0 else math.sqrt(g * p * rho)  # a fluid at rest: the momentum of a sound wave
    return 1.0 / np.array([rho, mom, mom, E])


class PseudoTimeLevel:
    """Point-implicit explicit-RK pseudo-time iteration on one FR operator.

    Parameters
    ----------
    op : FROperator
        Spatial residual ``R(U)`` of this level (``rhs(t, U, out)``,
        ``spectral_radii(U)``).
    smoother : str
        Explicit RK scheme (name in ``solver.timeschemes.TIME_SCHEMES``).
    cfl : float
        Fraction (0, 1] of the scheme's stable local pseudo-time step.
    scale : (4,) array, optional
        Norm weights (:func:`residual_scale` of ``op.ref`` by default).

    Attributes
    ----------
    K : (s, ne, n, n, 4) array
        Stage residuals; ``K[0]`` holds the unsteady residual of the current
        state after :meth:`residual` (callers pass ``have_residual=True`` to
        :meth:`smooth` to reuse it).
    F : (ne, n, n, 4) array
        FAS forcing (used when ``use_f``; set by the multigrid cycle).
    S : (ne, n, n, 4) array
        History part of the BDF derivative (used when ``use_s``; fine level).
    dtau : (ne,) array
        Effective local pseudo-time step of each element (point-implicit).
    dtau_explicit : (ne,) array
        Local step of the plain explicit scheme, before the point-implicit factor.

    Notes
    -----
    The unsteady residual of a BDF step of size ``dt`` with weights ``a_j``
    (solver.dualtime) is, in our sign convention ``dU/dt = R(U)``,

        R*(U) = R(U) - (a_0 U + sum_{j>=1} a_j U^{n+1-j}) / dt
              = R(U) - a0dt U - S,

    BDF2 with a constant step: ``a = (3/2, -2, 1/2)``, i.e.
    ``R* = R - (3U - 4U^n + U^{n-1}) / (2 dt)`` (Jameson 1991).  The inner
    iteration marches ``dU/dtau = R*(U) + F`` to a steady state.

    Local step: ``dtau_e = cfl min_{points of e} 1 / (lambda_c / (2 CFL_max) + lambda_v / X)``
    with the spectral radii of ``op.spectral_radii`` and the smoother's
    advection limit ``CFL_max(p, c)`` and real-axis reach ``X``
    (solver.stability), the rule of the explicit stepper applied per element.

    Point-implicit physical-time term (Melson, Sanetrik & Atkins 1993): the
    ``-a_0 U / dt`` part of ``R*`` is taken at the new pseudo-time level,
    ``U^{k+1} - U^k = dtau [R*(U^k) - a0dt (U^{k+1} - U^k)]``, so

        U^{k+1} = U^k + dtau R*(U^k) / (1 + a0dt dtau),

    i.e. the RK scheme is applied with the effective step
    ``dtau_eff = dtau / (1 + a0dt dtau)`` (for BDF2 ``1 + 3 dtau / (2 dt)``).
    The eigenvalues ``dtau_eff (lambda - a0dt)`` of the update are then the
    convex combination ``(dtau lambda - r) / (1 + r)``, ``r = a0dt dtau``, of
    a point ``dtau lambda`` inside the stability region and ``-1``: the
    iteration stays stable however small ``dt`` is compared with ``dtau``,
    whereas the plain explicit treatment needs ``a0dt dtau < X``.

    The RK scheme runs in its Butcher form ``Y_i = U + dtau_eff sum_{j<i} a_ij K_j``,
    ``K_i = R*(Y_i) + F``, ``U <- U + dtau_eff sum_i b_i K_i``; pseudo time
    is not a physical time, so every stage sees the physical time of the new
    level.

    Safeguard: a stage value or update that would bring density or pressure
    at some point of an element below :data:`KAPPA` times its current value
    is halved in that element until it does not
    (:func:`solver.kernels.pseudotime.limit_update`).  Every such update is
    still a positive multiple of ``R*``, so the converged state is unchanged;
    near convergence the safeguard is inactive.  It matters in violent
    transients (an impulsive start against a no-slip wall).
    """

    def __init__(self, op, smoother: str = "ssp-rk33", cfl: float = 0.9, scale=None):
        if not 0.0 < float(cfl) <= 1.0:
            raise ValueError(f"pseudo-time cfl must be in (0, 1], got {cfl!r}")
        self.op = op
        self.p = op.p
        self.smoother = str(smoother)
        self.rk = get_scheme(smoother)
        self.cfl = float(cfl)
        b = op.basis
        self.cfl_max = stable_cfl(b.p, b.c, smoother, b.points)
        self.reach = real_axis_reach(smoother)
        shape = op.shape
        s = self.rk.stages
        self.K = np.zeros((s,) + shape)
        self.Y = np.zeros(shape)
        self.F = np.zeros(shape)
        self.S = np.zeros(shape)
        self.use_f = False
        self.use_s = False
        self.a0dt = 0.0
        self.t = 0.0
        self.scale = np.ascontiguousarray(residual_scale(op.ref) if scale is None else scale, dtype=float)
        self.n_damped = 0  # element updates damped by the admissibility safeguard
        self.cfl_scale = 1.0  # < 1 after back_off
        self.dtau_explicit = np.zeros(shape[0])
        self.dtau = np.zeros(shape[0])
        # Butcher rows as (index, coefficient) lists for the stage kernel
        A, bw = self.rk.A, self.rk.b
        self._rows = []
        for i in range(s):
            nz = [j for j in range(i) if A[i, j] != 0.0]
            self._rows.append((np.array(nz, dtype=np.int64), np.array([A[i, j] for j in nz]), len(nz)))
        nz = [j for j in range(s) if bw[j] != 0.0]
        self._final = (np.array(nz, dtype=np.int64), np.array([bw[j] for j in nz]), len(nz))

    @property
    def shape(self):
        return self.op.shape

    def set_physical(self, t_new: float, a0dt: float) -> None:
        """Physical time of the new level and ``a_0 / dt`` of the BDF step."""
        self.t = float(t_new)
        self.a0dt = float(a0dt)
        self._apply_point_implicit()

    def update_dtau(self, U: np.ndarray) -> None:
        """Local pseudo-time steps from the spectral radii of ``U`` (this level's shape)."""
        lc, lv = self.op.spectral_radii(U)
        inv = lc / (2.0 * self.cfl_max)
        if lv is not None:
            inv = inv + lv / self.reach
        per_elem = inv.reshape(inv.shape[0], -1).max(axis=1)
        if not np.all(np.isfinite(per_elem)) or np.any(per_elem <= 0.0):
            bad = int(np.argmax(~np.isfinite(per_elem) | (per_elem <= 0.0)))
            raise FloatingPointError(f"pseudo-time step of element {bad} is not positive and finite "
                                     f"(degree {self.p}); is the state physical?")
        self.dtau_explicit[:] = self.cfl * self.cfl_scale / per_elem
        self._apply_point_implicit()

    def back_off(self, factor: float = 0.5) -> None:
        """Scale the local pseudo-time steps by ``factor`` until :meth:`reset_cfl` (after a failed iteration)."""
        self.cfl_scale *= factor
        self.dtau_explicit *= factor
        self._apply_point_implicit()

    def reset_cfl(self) -> None:
        """Undo :meth:`back_off` (takes effect at the next :meth:`update_dtau`)."""
        self.cfl_scale = 1.0

    def _apply_point_implicit(self) -> None:
        d = self.dtau_explicit
        np.divide(d, 1.0 + self.a0dt * d, out=self.dtau)

    def residual(self, U: np.ndarray, out: np.ndarray) -> float:
        """Write ``R*(U) + F`` into ``out``; return its weighted RMS norm.

        The norm is ``sqrt(mean over points and variables of (w_v r_v)^2)``
        with ``w`` = :attr:`scale`.
        """
        self.op.rhs(self.t, U, out)
        ss = _kp.unsteady_residual(out, U, self.a0dt, self.S, self.use_s, self.F, self.use_f, self.scale)
        return math.sqrt(ss / out.size)

    def smooth(self, U: np.ndarray, sweeps: int, have_residual: bool = False) -> None:
        """``sweeps`` RK steps of the pseudo-time iteration on ``U`` in place.

        Parameters
        ----------
        U : (ne, n, n, 4) array of this level
        sweeps : int
        have_residual : bool
            ``K[0]`` already holds ``R*(U) + F`` (saves one residual).
        """
        K, Y, d = self.K, self.Y, self.dtau
        for k in range(sweeps):
            if not (k == 0 and have_residual):
                self.residual(U, K[0])
            for i in range(1, self.rk.stages):
                idx, coef, m = self._rows[i]
                _kp.scaled_combination(Y, U, K, idx, coef, m, d)
                self.n_damped += _kp.limit_update(U, Y, Y, False, self.op.gamma, KAPPA, HALVINGS)
                self.residual(Y, K[i])
            idx, coef, m = self._final
            _kp.scaled_combination(Y, U, K, idx, coef, m, d)
            self.n_damped += _kp.limit_update(U, Y, U, False, self.op.gamma, KAPPA, HALVINGS)


def guarded_iteration(U: np.ndarray, fine: "PseudoTimeLevel", mg, backup: np.ndarray, it: int,
                      refresh: int) -> tuple[float, bool]:
    """One inner iteration (a multigrid cycle, or one smoother sweep) that is undone if it fails.

    Parameters
    ----------
    U : (ne, n, n, 4) array
        State, updated in place; ``fine.K[0]`` must hold its residual.
    fine : PseudoTimeLevel
        Finest level.
    mg : solver.pmultigrid.PMultigrid or None
        Cycle over the levels; None: plain smoothing on ``fine``.
    backup : (ne, n, n, 4) array
        Work array for the state before the iteration.
    it : int
        Iterations done so far; the local pseudo-time steps are refreshed
        every ``refresh`` iterations.

    Returns
    -------
    r : float
        Weighted RMS residual after the iteration (``fine.K[0]`` holds it).
    failed : bool
        The iteration produced a non-finite residual (e.g. an unphysical
        state at the flux points): ``U`` was restored and every active
        level's pseudo-time steps halved; the caller counts these and gives up
        after a limit.
    """
    solver = mg if mg is not None else fine
    if it > 0 and it % refresh == 0:
        solver.update_dtau(U)
    np.copyto(backup, U)
    if mg is not None:
        mg.cycle(U, have_residual=True)
    else:
        fine.smooth(U, 1, have_residual=True)
    r = fine.residual(U, fine.K[0])
    if math.isfinite(r):
        return r, False
    np.copyto(U, backup)
    for lv in (mg.levels if mg is not None else [fine]):
        lv.back_off(0.5)
    return fine.residual(U, fine.K[0]), True
