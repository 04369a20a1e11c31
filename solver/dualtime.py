"""Dual time stepping: BDF in physical time, an accelerated pseudo-time iteration inside.

Each physical step solves the implicit BDF equations ``R*(U) = 0`` by marching
``dU/dtau = R*(U)`` in pseudo time with local steps and a point-implicit
physical-time term (solver.pseudotime), optionally accelerated by p-multigrid
(solver.pmultigrid).  :class:`DualTimeStepper` has the interface of
:class:`solver.stepper.ExplicitStepper` (``stable_dt``, ``step``, ``advance``)
plus per-step statistics and the history levels for checkpoints.
"""
from __future__ import annotations

import math
import tomllib
import warnings
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from .pseudotime import guarded_iteration
from .registry import Registry
from .stepper import step_to
from .timeschemes import TIME_SCHEMES

__all__ = [
    "BDFScheme",
    "PHYSICAL_SCHEMES",
    "TIME_STEPPING",
    "bdf_weights",
    "is_dual_scheme",
    "DualTimeWarning",
    "DualTimeStepper",
    "build_dual_stepper",
    "dual_settings",
    "DEFAULTS",
]


# ---------------------------------------------------------------------------
# physical-time schemes: coefficient data
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class BDFScheme:
    """A backward differentiation formula of order k.

    Attributes
    ----------
    name : str
    order : int
    coefficients : tuple of Fraction
        Constant-step weights ``a_0..a_k``:
        ``dU/dt(t^{n+1}) ~ (a_0 U^{n+1} + a_1 U^n + ... + a_k U^{n+1-k}) / dt``.
    max_ratio : float
        Largest step ratio ``dt_{n+1} / dt_n`` for which the variable-step
        formula stays zero-stable; beyond it the stepper lowers the order for
        that step.
    ref : str
    """

    name: str
    order: int
    coefficients: tuple
    max_ratio: float
    ref: str

    @property
    def weights(self) -> np.ndarray:
        """Constant-step weights as floats, (order + 1,)."""
        return np.array([float(c) for c in self.coefficients])


PHYSICAL_SCHEMES = Registry("physical time scheme")
# Constant-step BDF weights (Curtiss & Hirschfelder 1952; Hairer & Wanner, Solving ODEs II, Sec. V.1).
# Zero-stability of the variable-step formulas: BDF2 for ratios < 1 + sqrt(2) (Grigorieff 1983, from memory);
# for BDF3 we keep the ratio below 1.5, inside the bound (about 1.6) of the same analysis (from memory).
PHYSICAL_SCHEMES.register("bdf1", 1, "backward Euler (first order)", obj=BDFScheme(
    "bdf1", 1, (Fraction(1), Fraction(-1)), math.inf, "backward Euler"))
PHYSICAL_SCHEMES.register("bdf2", 2, "BDF2 (second order, A-stable); BDF1 on the first step", obj=BDFScheme(
    "bdf2", 2, (Fraction(3, 2), Fraction(-2), Fraction(1, 2)), 1.0 + math.sqrt(2.0),
    "Curtiss & Hirschfelder 1952; Jameson 1991 (dual time)"))
PHYSICAL_SCHEMES.register("bdf3", 3, "BDF3 (third order, A(86 deg)-stable); Richardson-extrapolated backward "
                                     "Euler on the first step, BDF2 on the second", obj=BDFScheme(
    "bdf3", 3, (Fraction(11, 6), Fraction(-3), Fraction(3, 2), Fraction(-1, 3)), 1.5,
    "Curtiss & Hirschfelder 1952"))

#: every name the ``[time] scheme`` key accepts: the explicit RK schemes (their
#: own codes) and the BDF schemes (code 100 + order)
TIME_STEPPING = Registry("time scheme")
for _e in TIME_SCHEMES:
    TIME_STEPPING.register(_e.name, _e.code, _e.doc + " (explicit)", obj=_e.obj)
for _e in PHYSICAL_SCHEMES:
    TIME_STEPPING.register(_e.name, 100 + _e.code, _e.doc + " with dual time stepping (needs dt)", obj=_e.obj)
del _e


def is_dual_scheme(name: str) -> bool:
    """True when ``name`` is a physical-time (BDF) scheme of dual time stepping."""
    return name in PHYSICAL_SCHEMES


def bdf_weights(steps) -> np.ndarray:
    """Variable-step BDF weights from the step history.

    Parameters
    ----------
    steps : sequence of k floats > 0
        ``(dt_{n+1}, dt_n, ..., dt_{n+2-k})``: the new step first, then the
        steps between the previous levels.

    Returns
    -------
    a : (k + 1,) array
        ``dU/dt(t^{n+1}) ~ sum_j a_j U^{n+1-j} / dt_{n+1}``.

    Notes
    -----
    BDF-k is the derivative at ``t^{n+1}`` of the polynomial through the
    ``k + 1`` levels.  In units of ``dt_{n+1}`` the nodes are ``x_0 = 0``,
    ``x_j = -(dt_{n+1} + ... + dt_{n+2-j}) / dt_{n+1}`` and
    ``a_j = l_j'(0)`` with ``l_j`` the Lagrange polynomials:
    ``a_0 = sum_{m>0} 1/(0 - x_m)``,
    ``a_j = 1/(x_j - 0) prod_{m != 0, j} (0 - x_m)/(x_j - x_m)``.
    With equal steps this gives the constant-step weights of
    :data:`PHYSICAL_SCHEMES` (to round-off; the stepper uses the exact
    rationals then).
    """
    h = [float(s) for s in steps]
    if not h or any(not (s > 0.0) or not math.isfinite(s) for s in h):
        raise ValueError(f"BDF steps must be positive and finite, got {steps!r}")
    x = [0.0]
    acc = 0.0
    for s in h:
        acc += s / h[0]
        x.append(-acc)
    k = len(h)
    a = np.zeros(k + 1)
    a[0] = sum(1.0 / (0.0 - x[m]) for m in range(1, k + 1))
    for j in range(1, k + 1):
        v = 1.0 / (x[j] - 0.0)
        for m in range(1, k + 1):
            if m != j:
                v *= (0.0 - x[m]) / (x[j] - x[m])
        a[j] = v
    return a


class DualTimeWarning(RuntimeWarning):
    """An inner iteration stopped at its maximum without reaching the tolerance."""


#: inner-iteration defaults (the [pseudo] section of a case file)
DEFAULTS = dict(
    smoother="ssp-rk33",
    cfl=0.9,
    tolerance=1e-5,
    drop=None,
    min_iterations=1,
    max_iterations=200,
    predictor="linear",
    multigrid=True,
    coarsest=1,
    cycle="v",
    pre_smooth=1,
    post_smooth=1,
    coarse_smooth=2,
    refresh=20,
)

PREDICTORS = ("previous", "linear")


# ---------------------------------------------------------------------------
# the stepper
# ---------------------------------------------------------------------------
class DualTimeStepper:
    """Advance ``dU/dt = R(U)`` by BDF steps, each converged by a pseudo-time iteration.

    Parameters
    ----------
    levels : list of solver.pseudotime.PseudoTimeLevel
        Finest first; ``levels[0].op`` is the operator of the solution.
        More than one level and ``multigrid`` true: p-multigrid cycles.
    scheme : str
        Name in :data:`PHYSICAL_SCHEMES` (``bdf1``, ``bdf2``, ``bdf3``).
    dt : float
        Physical time step (the user's; there is no stability limit).
    tolerance : float
        Converged when the weighted RMS unsteady residual (see
        :meth:`solver.pseudotime.PseudoTimeLevel.residual`) is at most this.
    drop : float, optional
        Also converged when the residual has fallen by this factor from its
        value at the predictor (e.g. 1e-3).
    min_iterations, max_iterations : int
        Bounds on the inner iterations (RK steps, or multigrid cycles) per
        physical step; a step that hits the maximum is kept and reported
        (``converged`` false and a :class:`DualTimeWarning` through
        :attr:`on_warning`).
    predictor : str
        Starting guess: ``previous`` (``U^n``) or ``linear`` (extrapolation
        through ``U^{n-1}, U^n``).
    multigrid : bool
    cycle, pre_smooth, post_smooth, coarse_smooth
        p-multigrid settings (solver.pmultigrid.PMultigrid).
    refresh : int
        Inner iterations between updates of the local pseudo-time steps.

    Attributes
    ----------
    op : FROperator
        Fine-level operator.
    scheme_name : str
    cfl_max : float
        Stable advection CFL of the smoother on the fine level.
    fixed_dt : float
    last_stats : dict
        Of the last :meth:`step`: ``iterations``, ``rhs`` (fine-level RHS
        evaluations), ``coarse_rhs`` (all coarser levels), ``residual``
        (final), ``residual0`` (at the predictor), ``converged``, ``order``
        (BDF order used), ``damped`` (element updates damped by the
        positivity safeguard, solver.pseudotime), ``backoffs`` (iterations
        undone because the residual was not finite; each halves the
        pseudo-time steps for the rest of the step), ``solves`` (inner
        solves: 3 on the first BDF3 step).
    totals : dict
        Sums over all steps: ``steps``, ``iterations``, ``rhs``,
        ``coarse_rhs``, ``damped``, ``backoffs``, ``unconverged``.
    on_warning : callable or None
        Called with a message when a step does not converge; default
        ``warnings.warn(msg, DualTimeWarning)``.

    Notes
    -----
    Physical step ``t^n -> t^{n+1} = t^n + dt`` of order ``k``:

        R*(U) = R(U) - (a_0 U + sum_{j=1..k} a_j U^{n+1-j}) / dt = 0,

    with the weights of :func:`bdf_weights` (the exact constant-step
    rationals when the steps are equal; BDF2: ``(3U - 4U^n + U^{n-1})/(2 dt)``,
    Jameson 1991).  The order is ``min(k_scheme, levels available)``: BDF2
    takes BDF1 on the first step (local error O(dt^2) once, so the global
    error stays O(dt^2)); BDF3 takes on its first step the Richardson
    extrapolation ``2 U_{dt/2, dt/2} - U_{dt}`` of backward Euler (local error
    O(dt^3)) and BDF2 on the second.  A step whose ratio to the previous one
    exceeds :attr:`BDFScheme.max_ratio` is taken at a lower order.

    Inner iteration: ``U <- U + dtau_eff (R*(U))`` by RK steps or p-multigrid
    cycles until the residual is below ``tolerance`` (or ``drop`` times its
    first value).  An absolute tolerance around 1e-5 on the residual is
    common practice for engineering dual-time runs; the error it leaves in
    ``U`` is about ``dt / a_0`` times the residual when ``dt`` is small
    against the flow time scales.
    """

    #: failed inner iterations (non-finite residual) tolerated per solve, each halving the pseudo-time steps
    MAX_BACKOFFS = 8

    def __init__(self, levels, scheme: str = "bdf2", dt: float = None, tolerance: float = 1e-5,
                 drop: float | None = None, min_iterations: int = 1, max_iterations: int = 200,
                 predictor: str = "linear", multigrid: bool = True, cycle: str = "v", pre_smooth: int = 1,
                 post_smooth: int = 1, coarse_smooth: int = 2, refresh: int = 20):
        from .pmultigrid import PMultigrid

        self.bdf = PHYSICAL_SCHEMES[scheme].obj
        self.scheme_name = scheme
        if dt is None or not (float(dt) > 0.0) or not math.isfinite(float(dt)):
            raise ValueError(f"dual time stepping needs a physical time step dt > 0, got {dt!r}")
        self.fixed_dt = float(dt)
        self.cfl = None
        if not (tolerance is not None and float(tolerance) > 0.0):
            raise ValueError(f"inner tolerance must be > 0, got {tolerance!r}")
        self.tolerance = float(tolerance)
        if drop is not None and not 0.0 < float(drop) < 1.0:
            raise ValueError(f"inner residual drop must be in (0, 1), got {drop!r}")
        self.drop = None if drop is None else float(drop)
        if not (isinstance(min_iterations, (int, np.integer)) and isinstance(max_iterations, (int, np.integer))
                and 0 <= min_iterations <= max_iterations and max_iterations >= 1):
            raise ValueError(f"need 0 <= min_iterations <= max_iterations, max_iterations >= 1; got "
                             f"{min_iterations!r}, {max_iterations!r}")
        self.min_it, self.max_it = int(min_iterations), int(max_iterations)
        if predictor not in PREDICTORS:
            raise ValueError(f"unknown predictor '{predictor}'; valid: {', '.join(PREDICTORS)}")
        self.predictor = predictor
        if not (isinstance(refresh, (int, np.integer)) and refresh >= 1):
            raise ValueError(f"refresh must be an integer >= 1, got {refresh!r}")
        self.refresh = int(refresh)
        self.levels = list(levels)
        if not self.levels:
            raise ValueError("dual time stepping needs at least the fine level")
        self.fine = self.levels[0]
        self.op = self.fine.op
        self.cfl_max = self.fine.cfl_max
        self.fine.use_s = True
        self.fine.use_f = False
        self.mg = None
        if multigrid and len(self.levels) > 1:
            self.mg = PMultigrid(self.levels, cycle, pre_smooth, post_smooth, coarse_smooth)
        shape = self.op.shape
        self.shape = shape
        nh = max(self.bdf.order - 1, 1)
        self._hist = [np.zeros(shape) for _ in range(nh)]   # U^{n-1}, U^{n-2}, ...
        self._hs = [0.0] * nh                               # dt_n, dt_{n-1}, ...: steps ending at U^n, U^{n-1}
        self._nh = 0                                        # valid history levels
        self._Un = np.zeros(shape)
        self._backup = np.zeros(shape)
        self._tmp = None
        self.last_stats = {}
        self.totals = dict(steps=0, iterations=0, rhs=0, coarse_rhs=0, damped=0, backoffs=0, unconverged=0)
        self.on_warning = None

    # -- interface of ExplicitStepper ---------------------------------------
    def stable_dt(self, U: np.ndarray) -> float:
        """The physical time step (fixed by the user)."""
        return self.fixed_dt

    def step(self, U: np.ndarray, t: float, dt: float) -> None:
        """One physical step ``t -> t + dt`` in place (``U`` is ``U^n`` on entry)."""
        if U.shape != self.shape:
            raise ValueError(f"solution shape {U.shape} does not match the operator's {self.shape}")
        dt = float(dt)
        if not dt > 0.0:
            raise ValueError(f"physical time step must be > 0, got {dt!r}")
        np.copyto(self._Un, U)
        stats = dict(iterations=0, rhs=0, coarse_rhs=0, damped=0, backoffs=0, solves=0)
        if self.bdf.order >= 3 and self._nh == 0:
            order = self._richardson_start(U, t, dt, stats)
        else:
            order = self._order_for(dt)
            w = self._weights(order, dt)
            self._predict(U, dt)
            self._solve(U, t, dt, w, [self._Un] + self._hist[:order - 1], stats)
        stats["order"] = order
        self._push(dt)
        self.last_stats = stats
        tot = self.totals
        tot["steps"] += 1
        for k in ("iterations", "rhs", "coarse_rhs", "damped", "backoffs"):
            tot[k] += stats[k]
        if not stats["converged"]:
            tot["unconverged"] += 1
            msg = (f"dual time step to t = {t + dt:.6g}: the inner iteration stopped at max_iterations = "
                   f"{self.max_it} with residual {stats['residual']:.3e} > tolerance {self.tolerance:.3e}"
                   + (f" (drop {self.drop:g})" if self.drop else ""))
            if self.on_warning is not None:
                self.on_warning(msg)
            else:
                warnings.warn(msg, DualTimeWarning, stacklevel=2)

    def advance(self, U: np.ndarray, t: float, t_end: float, dt_every: int = 10, max_steps: int | None = None):
        """March ``U`` in place from ``t`` to ``t_end`` with steps of ``dt`` (the last one may be shorter).

        ``dt_every`` is accepted for the signature of ``ExplicitStepper.advance`` and ignored.

        Returns
        -------
        t : float, steps : int
        """
        steps = 0
        dt = self.fixed_dt
        while t < t_end * (1 - 1e-14) - 1e-300:
            h = step_to(t, dt, t_end)
            self.step(U, t, h)
            t = t + h
            steps += 1
            if max_steps is not None and steps >= max_steps:
                break
            if not math.isfinite(float(U[0, 0, 0, 0])):
                raise FloatingPointError(f"solution is not finite at t = {t:.6g} after {steps} steps")
        return t, steps

    # -- checkpoints ----------------------------------------------------------
    def get_state(self) -> dict:
        """History needed to continue bit-exactly from the current ``U`` (copies).

        Returns
        -------
        dict
            ``scheme`` (str), ``levels`` (int, valid history levels),
            ``previous`` ((m, ne, n, n, 4) array: ``U^{n-1}, U^{n-2}, ...``, the
            first ``levels`` rows valid), ``steps`` ((m,) array: ``dt_n, dt_{n-1}, ...``).
            Every value is an HDF5-storable scalar or array.
        """
        return dict(scheme=self.scheme_name, levels=int(self._nh),
                    previous=np.array([h.copy() for h in self._hist]), steps=np.array(self._hs, dtype=float))

    def set_state(self, state: dict) -> None:
        """Restore :meth:`get_state` output (e.g. read back from a checkpoint).

        Raises
        ------
        ValueError
            Another scheme, or arrays that do not fit this operator.
        """
        try:
            scheme, nh = str(state["scheme"]), int(state["levels"])
            prev, hs = np.asarray(state["previous"], dtype=float), np.asarray(state["steps"], dtype=float)
        except KeyError as exc:
            raise ValueError(f"dual-time state lacks '{exc.args[0]}' (needs scheme, levels, previous, steps)") \
                from None
        if scheme != self.scheme_name:
            raise ValueError(f"dual-time state was written by scheme '{scheme}', this run uses "
                             f"'{self.scheme_name}'")
        want = (len(self._hist),) + tuple(self.shape)
        if prev.shape != want or hs.shape != (len(self._hs),) or not 0 <= nh <= len(self._hist):
            raise ValueError(f"dual-time state does not fit: previous levels {prev.shape} (expected {want}), "
                             f"steps {hs.shape}, levels {nh}")
        for k in range(len(self._hist)):
            np.copyto(self._hist[k], prev[k])
        self._hs = [float(x) for x in hs]
        self._nh = nh

    # -- internals ------------------------------------------------------------
    def _order_for(self, dt: float) -> int:
        k = min(self.bdf.order, self._nh + 1)
        while k >= 2:
            ratios = [dt / self._hs[0]] + [self._hs[j] / self._hs[j + 1] for j in range(k - 2)]
            lim = PHYSICAL_SCHEMES[f"bdf{k}"].obj.max_ratio
            if max(ratios) <= lim:
                break
            k -= 1
        return k

    def _weights(self, order: int, dt: float) -> np.ndarray:
        steps = [dt] + self._hs[:order - 1]
        if all(s == dt for s in steps):
            return PHYSICAL_SCHEMES[f"bdf{order}"].obj.weights
        return bdf_weights(steps)

    def _predict(self, U: np.ndarray, dt: float) -> None:
        if self.predictor == "linear" and self._nh >= 1:
            # U = U^n + (dt / dt_n) (U^n - U^{n-1})
            r = dt / self._hs[0]
            U -= self._hist[0]
            U *= r                                  # now the increment
            # an extrapolation that would make density or pressure non-positive is damped per element
            from .kernels.pseudotime import limit_update
            from .pseudotime import HALVINGS, KAPPA

            limit_update(self._Un, U, U, True, self.op.gamma, KAPPA, HALVINGS)

    def _push(self, dt: float) -> None:
        """After a step: U^n becomes the newest history level."""
        last = self._hist.pop()
        self._hist.insert(0, self._Un)
        self._Un = last
        self._hs = [dt] + self._hs[:-1]
        self._nh = min(self._nh + 1, len(self._hist))

    def _solve(self, U, t, dt, w, levels, stats):
        """Inner iteration of one BDF solve with weights ``w`` on history ``levels`` (U^n first)."""
        fine = self.fine
        # S = sum_{j>=1} a_j U^{n+1-j} / dt
        S = fine.S
        np.multiply(levels[0], w[1] / dt, out=S)
        for j in range(2, len(w)):
            S += (w[j] / dt) * levels[j - 1]
        a0dt = w[0] / dt
        solver = self.mg if self.mg is not None else fine
        solver.set_physical(t + dt, a0dt)
        n0 = fine.op.n_rhs
        c0 = sum(lv.op.n_rhs for lv in self.levels[1:])
        d0 = sum(lv.n_damped for lv in self.levels)
        active = self.levels if self.mg is not None else [fine]
        for lv in active:
            lv.reset_cfl()
        solver.update_dtau(U)
        r0 = r = fine.residual(U, fine.K[0])
        if not math.isfinite(r0) and levels[0] is not U:
            np.copyto(U, levels[0])  # the predictor failed: start from U^n
            solver.update_dtau(U)
            r0 = r = fine.residual(U, fine.K[0])
        if not math.isfinite(r0):
            raise FloatingPointError(f"dual time step to t = {t + dt:.6g}: the residual of the starting state "
                                     "is not finite")
        it = backoffs = 0
        converged = False
        while True:
            converged = r <= self.tolerance or (self.drop is not None and r <= self.drop * r0)
            if (converged and it >= self.min_it) or it >= self.max_it:
                break
            r, failed = guarded_iteration(U, fine, self.mg, self._backup, it, self.refresh)
            it += 1
            if failed:
                # an iteration ran into an unphysical state: it was undone, and the pseudo-time steps of
                # every level halved
                backoffs += 1
                if backoffs > self.MAX_BACKOFFS:
                    raise FloatingPointError(f"dual time step to t = {t + dt:.6g}: inner residual is not finite "
                                             f"after {it} iterations, even with the pseudo-time steps reduced "
                                             f"{self.MAX_BACKOFFS} times by half")
        stats["backoffs"] += backoffs
        stats["iterations"] += it
        stats["rhs"] += fine.op.n_rhs - n0
        stats["coarse_rhs"] += sum(lv.op.n_rhs for lv in self.levels[1:]) - c0
        stats["damped"] += sum(lv.n_damped for lv in self.levels) - d0
        stats["solves"] += 1
        stats["residual"] = r
        stats.setdefault("residual0", r0)          # of the first solve (BDF3 start: three solves)
        stats["converged"] = stats.get("converged", True) and bool(converged)

    def _richardson_start(self, U, t, dt, stats) -> int:
        """First step of a third-order scheme: ``2 U_{dt/2,dt/2} - U_{dt}`` of backward Euler."""
        if self._tmp is None:
            self._tmp = (np.zeros(self.shape), np.zeros(self.shape))
        full, half = self._tmp
        w1 = PHYSICAL_SCHEMES["bdf1"].obj.weights
        np.copyto(full, self._Un)
        self._solve(full, t, dt, w1, [self._Un], stats)
        np.copyto(half, self._Un)
        self._solve(half, t, 0.5 * dt, w1, [self._Un], stats)
        mid = half.copy()
        self._solve(half, t + 0.5 * dt, 0.5 * dt, w1, [mid], stats)
        np.multiply(half, 2.0, out=U)
        U -= full
        return 1


# ---------------------------------------------------------------------------
# construction
# ---------------------------------------------------------------------------
def _get(cfg, key, default):
    if isinstance(cfg, dict):
        v = cfg.get(key, None)
    else:
        v = getattr(cfg, key, None)
    return default if v is None else v


def build_dual_stepper(op_factory, cfg, op=None) -> DualTimeStepper:
    """A :class:`DualTimeStepper` (with its p-multigrid levels) from settings.

    Parameters
    ----------
    op_factory : callable ``op_factory(p) -> FROperator``
        Builds the FR operator of degree ``p`` on the case's mesh with the
        case's boundaries, flux, correction, gas and viscosity.
    cfg : dict or object with attributes
        ``scheme`` (bdf1/bdf2/bdf3), ``dt``, and optionally ``degree`` (when
        ``op`` is not given) and the inner-iteration keys of :data:`DEFAULTS`
        (missing or None: the default).  :func:`dual_settings` returns such a
        dict for a case.
    op : FROperator, optional
        The fine operator if the driver already built it (otherwise
        ``op_factory(cfg['degree'])``).

    Returns
    -------
    DualTimeStepper
    """
    from .pseudotime import PseudoTimeLevel

    if op is None:
        deg = _get(cfg, "degree", None)
        if deg is None:
            raise ValueError("build_dual_stepper: give the fine operator or the degree in cfg")
        op = op_factory(int(deg))
    p = op.p
    s = {k: _get(cfg, k, d) for k, d in DEFAULTS.items()}
    coarsest = int(s["coarsest"])
    if not 1 <= coarsest <= p:
        raise ValueError(f"coarsest multigrid degree must be in 1..{p} (the solution degree), got {coarsest}")
    smoother, cfl = s["smoother"], float(s["cfl"])
    levels = [PseudoTimeLevel(op, smoother, cfl)]
    if s["multigrid"]:
        for q in range(p - 1, coarsest - 1, -1):
            cop = op_factory(q)
            if cop.p != q or cop.shape[0] != op.shape[0]:
                raise ValueError(f"op_factory({q}) returned degree {cop.p} with {cop.shape[0]} elements; "
                                 f"expected degree {q} on the {op.shape[0]}-element mesh")
            levels.append(PseudoTimeLevel(cop, smoother, cfl, scale=levels[0].scale))
    return DualTimeStepper(levels, scheme=_get(cfg, "scheme", "bdf2"), dt=_get(cfg, "dt", None),
                           tolerance=s["tolerance"], drop=s["drop"], min_iterations=int(s["min_iterations"]),
                           max_iterations=int(s["max_iterations"]), predictor=s["predictor"],
                           multigrid=bool(s["multigrid"]), cycle=s["cycle"], pre_smooth=int(s["pre_smooth"]),
                           post_smooth=int(s["post_smooth"]), coarse_smooth=int(s["coarse_smooth"]),
                           refresh=int(s["refresh"]))


def dual_settings(case):
    """Dual-time settings of a validated case, or None for an explicit scheme.

    Parameters
    ----------
    case : solver.case.Case

    Returns
    -------
    dict or None
        ``scheme``, ``dt``, ``degree`` and every key of the ``[pseudo]``
        section (defaults filled in), ready for :func:`build_dual_stepper`.

    Raises
    ------
    solver.case.CaseError
        A BDF scheme without ``[time] dt``; ``[pseudo]`` with an
        explicit scheme; an invalid ``[pseudo]`` key (when the case object does
        not carry the validated section itself).
    """
    from . import case as _case

    where = case.path.name
    raw = tomllib.loads(case.text)
    has_pseudo = "pseudo" in raw
    name = case.time.scheme
    if not is_dual_scheme(name):
        if has_pseudo:
            raise _case.CaseError(f"{where}: [pseudo] applies to dual time stepping ([time] scheme = "
                                  f"{', '.join(repr(n) for n in PHYSICAL_SCHEMES.names())}); "
                                  f"[time] scheme is '{name}'")
        return None
    if case.time.dt is None:
        raise _case.CaseError(f"{where}: [time] scheme '{name}' (dual time stepping) needs dt, the physical "
                              "time step")
    # ([time] cfl together with dt is refused by load_case itself)
    sec = getattr(case, "pseudo", None)
    if sec is None:
        table = raw.get("pseudo", {})
        if not isinstance(table, dict):
            raise _case.CaseError(f"{where}: 'pseudo' must be a section [pseudo], got {table!r}")
        vals = _case._section_values(_case._Ctx(where), "pseudo", table)
    else:
        vals = {k: getattr(sec, k) for k in _case.SCHEMA["pseudo"]}
    out = {k: (vals.get(k) if vals.get(k) is not None else d) for k, d in DEFAULTS.items()}
    if out["min_iterations"] > out["max_iterations"]:
        raise _case.CaseError(f"{where}: [pseudo] min_iterations ({out['min_iterations']}) exceeds "
                              f"max_iterations ({out['max_iterations']})")
    if out["coarsest"] > case.scheme.degree:
        raise _case.CaseError(f"{where}: [pseudo] coarsest ({out['coarsest']}) exceeds the solution degree "
                              f"([scheme] degree = {case.scheme.degree})")
    out.update(scheme=name, dt=case.time.dt, degree=case.scheme.degree)
    return out
