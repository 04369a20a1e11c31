"""Steady states ``R(U) = 0`` by local pseudo-time stepping, optionally with p-multigrid.

The smoother and the multigrid cycle are those of dual time stepping
(:class:`solver.pseudotime.PseudoTimeLevel`, :class:`solver.pmultigrid.PMultigrid`)
with the physical-time term switched off (``a_0 / dt = 0``, no history): the
iteration marches ``dU/dtau = R(U)`` with a local step per element until the
residual has fallen far enough.  :func:`solve_steady_sequence` adds degree
sequencing: the steady state of a low degree, prolongated, starts the next
degree.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from .pmultigrid import PMultigrid, modal_transfer
from .pseudotime import PseudoTimeLevel, guarded_iteration

__all__ = ["SteadyResult", "SteadySolver", "steady_levels", "solve_steady", "prolong_state",
           "solve_steady_sequence"]


@dataclass
class SteadyResult:
    """Outcome of one steady solve.

    Attributes
    ----------
    converged : bool
        The stopping test (tolerance or drop) was met.
    reason : str
        ``tolerance``, ``drop``, ``max_iterations`` or ``max_wall``.
    iterations : int
        Pseudo-time steps (single level) or multigrid cycles.
    residual0, residual : float
        Weighted RMS residual of the starting and of the final state
        (:meth:`solver.pseudotime.PseudoTimeLevel.residual`, in 1/time).
    rhs, coarse_rhs : int
        Residual evaluations on the fine level and on all coarser levels.
    wall, cpu : float
        Wall-clock and process CPU seconds of the solve.
    damped, backoffs : int
        Element updates damped by the positivity safeguard; iterations undone
        because the residual was not finite (each halves the pseudo-time steps).
    degree : int
    history : list of dict
        ``iteration``, ``residual``, ``rhs``, ``coarse_rhs``, ``wall`` every
        ``history_every`` iterations, plus the first and the last.
    """

    converged: bool
    reason: str
    iterations: int
    residual0: float
    residual: float
    rhs: int
    coarse_rhs: int
    wall: float
    cpu: float
    damped: int
    backoffs: int
    degree: int
    history: list = field(default_factory=list)

    @property
    def drop(self) -> float:
        """``residual / residual0``."""
        return self.residual / self.residual0 if self.residual0 > 0 else 0.0

    def as_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__dataclass_fields__}
        d["drop"] = self.drop
        return d


def steady_levels(op_factory, degree: int, coarsest: int = 1, smoother: str = "ssp-rk33", cfl: float = 0.9,
                  multigrid: bool = True) -> list:
    """Pseudo-time levels of degrees ``degree, degree - 1, ..., coarsest`` (one level without multigrid).

    Parameters
    ----------
    op_factory : callable ``op_factory(p) -> FROperator``
        Operators of every degree on the same mesh, boundaries and gas.
    degree : int
    coarsest : int
    smoother : str
        Explicit RK scheme of the pseudo-time iteration.
    cfl : float
        Fraction of the smoother's stable local step.
    multigrid : bool

    Returns
    -------
    list of PseudoTimeLevel
        Finest first; every level shares the fine level's norm weights.
    """
    degree = int(degree)
    if not 1 <= int(coarsest) <= degree:
        raise ValueError(f"coarsest multigrid degree must be in 1..{degree}, got {coarsest!r}")
    fine = PseudoTimeLevel(op_factory(degree), smoother, cfl)
    levels = [fine]
    if multigrid:
        for q in range(degree - 1, int(coarsest) - 1, -1):
            op = op_factory(q)
            if op.p != q or op.shape[0] != fine.shape[0]:
                raise ValueError(f"op_factory({q}) returned degree {op.p} with {op.shape[0]} elements; expected "
                                 f"degree {q} on the {fine.shape[0]}-element mesh")
            levels.append(PseudoTimeLevel(op, smoother, cfl, scale=fine.scale))
    return levels


class SteadySolver:
    """Local pseudo-time iteration (with p-multigrid) for ``R(U) = 0``.

    Parameters
    ----------
    levels : list of PseudoTimeLevel
        Finest first (:func:`steady_levels`).  With more than one level and
        ``multigrid`` true each iteration is a p-multigrid cycle.
    multigrid : bool
    cycle, pre_smooth, post_smooth, coarse_smooth
        p-multigrid settings (:class:`solver.pmultigrid.PMultigrid`).
    refresh : int
        Iterations between updates of the local pseudo-time steps.

    Notes
    -----
    Every level is put in steady mode: no physical-time term (``a_0/dt = 0``,
    so the point-implicit factor is 1) and no BDF history, so the fine level
    marches

        U^{k+1} = U^k + dtau_e RK(R)(U^k),

    with ``dtau_e`` the local explicit step of element ``e``
    (``cfl min 1 / (lambda_c / (2 CFL_max) + lambda_v / X)`` over its points;
    solver.pseudotime), and the coarse levels solve the FAS problems
    ``R_l(U_l) + f_l = 0`` of :class:`~solver.pmultigrid.PMultigrid`.  Local
    time stepping changes the path, not the fixed point: a converged ``U``
    satisfies ``R(U) = 0`` whatever the steps were (Jameson, Schmidt & Turkel
    1981 for the multistage form; Fidkowski et al. 2005, Luo, Baum & Löhner
    2006 for p-multigrid).  As in dual time stepping an iteration that gives a
    non-finite residual is undone and the pseudo-time steps are halved for
    the rest of the solve.
    """

    #: failed iterations tolerated per solve, each halving the pseudo-time steps
    MAX_BACKOFFS = 8

    def __init__(self, levels, multigrid: bool = True, cycle: str = "v", pre_smooth: int = 1,
                 post_smooth: int = 1, coarse_smooth: int = 2, refresh: int = 20):
        self.levels = list(levels)
        if not self.levels:
            raise ValueError("the steady solver needs at least the fine level")
        if not (isinstance(refresh, (int, np.integer)) and not isinstance(refresh, bool) and refresh >= 1):
            raise ValueError(f"refresh must be an integer >= 1, got {refresh!r}")
        self.refresh = int(refresh)
        self.fine = self.levels[0]
        self.op = self.fine.op
        self.mg = None
        if multigrid and len(self.levels) > 1:
            self.mg = PMultigrid(self.levels, cycle, pre_smooth, post_smooth, coarse_smooth)
        else:
            self.levels = [self.fine]
        self.fine.use_s = False
        self.fine.use_f = False
        for lv in self.levels:
            lv.set_physical(0.0, 0.0)
        self._backup = np.zeros(self.op.shape)

    def solve(self, U: np.ndarray, tolerance: float | None = None, drop: float | None = 1e-6,
              max_iterations: int = 10000, min_iterations: int = 0, max_wall: float | None = None,
              history_every: int = 10, callback=None) -> SteadyResult:
        """Iterate on ``U`` (fine-level shape) in place until converged.

        Parameters
        ----------
        U : (ne, n, n, 4) array
        tolerance : float, optional
            Converged when the weighted RMS residual is at most this.
        drop : float, optional
            Converged when the residual is at most ``drop`` times that of the
            starting state.  At least one of ``tolerance`` and ``drop``.
        max_iterations, min_iterations : int
        max_wall : float, optional
            Stop (unconverged) after this many wall-clock seconds.
        history_every : int
            Iterations between history records.
        callback : callable, optional
            ``callback(iteration, residual, U)`` after every recorded iteration;
            returning True stops the solve (reason ``callback``).

        Returns
        -------
        SteadyResult
        """
        if U.shape != self.op.shape:
            raise ValueError(f"solution shape {U.shape} does not match the operator's {self.op.shape}")
        if tolerance is None and drop is None:
            raise ValueError("give a tolerance or a residual drop (or both)")
        if tolerance is not None and not float(tolerance) > 0.0:
            raise ValueError(f"tolerance must be > 0, got {tolerance!r}")
        if drop is not None and not 0.0 < float(drop) < 1.0:
            raise ValueError(f"residual drop must be in (0, 1), got {drop!r}")
        if not (0 <= int(min_iterations) <= int(max_iterations) and int(max_iterations) >= 1):
            raise ValueError(f"need 0 <= min_iterations <= max_iterations, max_iterations >= 1; got "
                             f"{min_iterations!r}, {max_iterations!r}")
        history_every = max(1, int(history_every))
        fine = self.fine
        solver = self.mg if self.mg is not None else fine
        n0 = fine.op.n_rhs
        c0 = sum(lv.op.n_rhs for lv in self.levels[1:])
        d0 = sum(lv.n_damped for lv in self.levels)
        w0, p0 = time.perf_counter(), time.process_time()
        for lv in self.levels:
            lv.reset_cfl()
        solver.update_dtau(U)
        r0 = r = fine.residual(U, fine.K[0])
        if not math.isfinite(r0):
            raise FloatingPointError("steady solve: the residual of the starting state is not finite")

        def record(it):
            history.append(dict(iteration=it, residual=r, rhs=fine.op.n_rhs - n0,
                                coarse_rhs=sum(lv.op.n_rhs for lv in self.levels[1:]) - c0,
                                wall=time.perf_counter() - w0))

        history = []
        record(0)
        it = backoffs = 0
        reason = "max_iterations"
        while True:
            if it >= min_iterations:
                if tolerance is not None and r <= tolerance:
                    reason = "tolerance"
                    break
                if drop is not None and r <= drop * r0:
                    reason = "drop"
                    break
            if it >= max_iterations:
                reason = "max_iterations"
                break
            if max_wall is not None and time.perf_counter() - w0 >= max_wall:
                reason = "max_wall"
                break
            r, failed = guarded_iteration(U, fine, self.mg, self._backup, it, self.refresh)
            it += 1
            if failed:
                backoffs += 1
                if backoffs > self.MAX_BACKOFFS:
                    raise FloatingPointError(f"steady solve: residual not finite after {it} iterations, even with "
                                             f"the pseudo-time steps halved {self.MAX_BACKOFFS} times")
                continue
            if it % history_every == 0:
                record(it)
                if callback is not None and callback(it, r, U):
                    reason = "callback"
                    break
        if history[-1]["iteration"] != it:
            record(it)
        converged = reason in ("tolerance", "drop")
        return SteadyResult(converged=converged, reason=reason, iterations=it, residual0=r0, residual=r,
                            rhs=fine.op.n_rhs - n0, coarse_rhs=sum(lv.op.n_rhs for lv in self.levels[1:]) - c0,
                            wall=time.perf_counter() - w0, cpu=time.process_time() - p0,
                            damped=sum(lv.n_damped for lv in self.levels) - d0, backoffs=backoffs,
                            degree=fine.p, history=history)


def solve_steady(levels, U: np.ndarray, multigrid: bool = True, cycle: str = "v", pre_smooth: int = 1,
                 post_smooth: int = 1, coarse_smooth: int = 2, refresh: int = 20, **solve_kw) -> SteadyResult:
    """:class:`SteadySolver` ``(levels, ...)`` then :meth:`SteadySolver.solve` ``(U, **solve_kw)``."""
    return SteadySolver(levels, multigrid, cycle, pre_smooth, post_smooth, coarse_smooth,
                        refresh).solve(U, **solve_kw)


def prolong_state(U: np.ndarray, basis_from, basis_to) -> np.ndarray:
    """A solution of one degree on the solution points of another (modal zero-padding or truncation).

    Parameters
    ----------
    U : (ne, n_from, n_from, 4) array
    basis_from, basis_to : solver.basis.Basis1D

    Returns
    -------
    (ne, n_to, n_to, 4) array
        ``(T (x) T) U`` with ``T`` of :func:`solver.pmultigrid.modal_transfer`:
        the same polynomial when ``n_to >= n_from``.
    """
    T = modal_transfer(basis_from, basis_to)
    return np.ascontiguousarray(np.einsum("ai,bj,eijv->eabv", T, T, U))


def solve_steady_sequence(op_factory, degrees, U0: np.ndarray, stages: dict | None = None,
                          smoother: str = "ssp-rk33", cfl: float = 0.9, multigrid: bool = True, coarsest: int = 1,
                          cycle: str = "v", pre_smooth: int = 1, post_smooth: int = 1, coarse_smooth: int = 2,
                          refresh: int = 20, printer=None, **solve_kw):
    """Degree sequencing: the steady state of each degree, prolongated, starts the next one.

    Parameters
    ----------
    op_factory : callable ``op_factory(p) -> FROperator``
    degrees : sequence of int
        Strictly increasing degrees, e.g. ``(1, 2, 3)``; the last is the final one.
    U0 : (ne, n, n, 4) array
        Starting state at ``degrees[0]`` (n = degrees[0] + 1).
    stages : dict, optional
        ``degree -> dict`` of :meth:`SteadySolver.solve` keywords for that stage
        (e.g. a looser ``drop`` on the low degrees); the others take ``solve_kw``.
    smoother, cfl, multigrid, coarsest
        As in :func:`steady_levels`; each stage uses p-multigrid over its own
        degree down to ``coarsest``.
    cycle, pre_smooth, post_smooth, coarse_smooth, refresh
        As in :class:`SteadySolver`.
    printer : callable, optional
        Called with one line per stage.

    Returns
    -------
    U : (ne, p + 1, p + 1, 4) array
        The final state, p = ``degrees[-1]``.
    results : list of SteadyResult
        One per stage.
    levels : list of PseudoTimeLevel
        Those of the final stage (``levels[0].op`` is the fine operator).

    Notes
    -----
    Full-multigrid start (Brandt 1977) in the degree: the low-degree steady
    state carries the flow development (e.g. the growth of a boundary layer
    along a plate) cheaply, so the expensive high-degree iteration starts
    close to its own fixed point.  The final state is a steady state of the
    final degree alone.
    """
    degrees = [int(q) for q in degrees]
    if not degrees or any(b <= a for a, b in zip(degrees, degrees[1:])) or degrees[0] < 1:
        raise ValueError(f"degrees must be a strictly increasing sequence of degrees >= 1, got {degrees!r}")
    stages = dict(stages or {})
    unknown = sorted(set(stages) - set(degrees))
    if unknown:
        raise ValueError(f"stages given for degrees {unknown} that are not in the sequence {degrees}")
    U = np.ascontiguousarray(U0, dtype=float)
    results = []
    prev_basis = None
    levels = None
    for q in degrees:
        mg = multigrid and q > coarsest
        levels = steady_levels(op_factory, q, coarsest=min(coarsest, q), smoother=smoother, cfl=cfl, multigrid=mg)
        basis = levels[0].op.basis
        if prev_basis is not None:
            U = prolong_state(U, prev_basis, basis)
        if U.shape != levels[0].shape:
            raise ValueError(f"starting state has shape {U.shape}, degree {q} needs {levels[0].shape}")
        kw = dict(solve_kw)
        kw.update(stages.get(q, {}))
        res = solve_steady(levels, U, multigrid=mg, cycle=cycle, pre_smooth=pre_smooth, post_smooth=post_smooth,
                           coarse_smooth=coarse_smooth, refresh=refresh, **kw)
        results.append(res)
        if printer is not None:
            printer(f"  degree {q}: {res.iterations} {'cycles' if mg else 'steps'}, residual {res.residual0:.3e} -> "
                    f"{res.residual:.3e} ({res.reason}), {res.rhs} fine RHS, {res.wall:.1f} s")
        prev_basis = basis
    return U, results, levels
