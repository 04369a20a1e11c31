"""The run driver: case -> mesh -> operator -> time loop -> snapshots, histories and log.

The driver owns the loop and all output; schemes, operators and monitors only
compute.  One step of the loop:

1. apply the wall kick of the case (if any) for the time at the start of the step;
2. recompute the time step every ``DT_EVERY`` steps (at step numbers that are
   multiples of it, so a resumed run recomputes at the same steps);
3. take the step, clipped so that snapshot times and the end time are hit;
4. scan the new state (:class:`solver.guard.StateGuard`); on NaN/Inf or a
   non-positive density or pressure write the previous state as a snapshot,
   ``failure.json`` with the diagnostic, and raise
   :class:`solver.guard.SolutionBlowUp`;
5. add the state to the running averages, record a history row when one is
   due, print progress, write a snapshot when one is due;
6. on SIGINT (Ctrl-C) or a session step limit, write a checkpoint snapshot
   after the step in progress and stop.

Resuming (``--resume``) reads the newest snapshot: the solution, time, step,
the time step in effect, the snapshot and history schedules, the wall time so
far and the running averages, and cuts the history files back to that step.
Everything the next step depends on is restored bit for bit, so ``N`` steps,
a resume and ``N`` more steps give the same bits as ``2N`` steps in one go.
"""
from __future__ import annotations

import math
import signal
import threading
import time as _time
from dataclasses import dataclass

import numpy as np

__all__ = ["Problem", "build_problem", "run_case", "DT_EVERY", "WallKick"]

#: steps between recomputations of the time step from the state
DT_EVERY = 10
#: wall-clock seconds between history flushes to disk
FLUSH_SECONDS = 5.0


@dataclass
class Problem:
    """Everything a run needs, built and validated before anything is written."""

    case: object
    mesh: object
    ref: dict
    op: object
    stepper: object
    U0: np.ndarray
    t0: float = 0.0


def _initial_state(case, op, ref):
    """Initial state and start time ``(U0, t0)`` of the case's ``[initial]`` entry.

    An initial-condition function returns ``U`` (start time 0) or ``(U, t0)``;
    one that takes an ``op`` argument is given the operator.
    """
    import inspect

    from solver.case import CaseError
    from solver.initial import INITIAL_CONDITIONS

    ini = case.initial
    entry = INITIAL_CONDITIONS[ini.kind]
    kw = {}
    for name in entry.params:
        v = getattr(ini, name, None)
        kw[name] = entry.defaults[name] if v is None else v
    if "op" in inspect.signature(entry.obj).parameters:
        kw["op"] = op
    try:
        out = entry.obj(op.metrics.xy, ref, **kw)
    except ValueError as exc:
        raise CaseError(f"{case.path.name}: [initial] {exc}") from None
    U, t0 = out if isinstance(out, tuple) else (out, 0.0)
    return np.ascontiguousarray(U), float(t0)


def build_problem(case) -> Problem:
    """Mesh, basis, operator, stepper and initial state of a validated case.

    Raises the case, mesh or registry error of the first thing that is wrong;
    writes nothing.
    """
    from solver.basis import make_basis
    from solver.case import CaseError
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    from solver.dualtime import build_dual_stepper, dual_settings

    mesh = case.make_mesh()
    ref = case.reference_state()
    s, t = case.scheme, case.time
    dual = dual_settings(case)
    # the explicit RK scheme that sets c+ and the pseudo-time smoother in dual mode
    rk = dual["smoother"] if dual else t.scheme
    bcs = {tag: (spec.type, spec.params) for tag, spec in case.boundaries.items()}
    visc = None
    if ref.get("reynolds") is not None:
        visc = dict(mu=ref["mu"], prandtl=ref["prandtl"], law=ref["viscosity"], s_ratio=ref["sutherland_ratio"])
        if getattr(s, "viscous", None):
            visc["scheme"] = s.viscous

    def op_factory(p):
        return FROperator(mesh, make_basis(p, s.points, s.correction, rk), ref["gamma"], flux=s.flux,
                          boundaries=bcs, ref=ref, viscosity=visc)

    try:
        op = op_factory(s.degree)
    except ValueError as exc:
        raise CaseError(f"{case.path.name}: {exc}") from None
    sponge = _sponge(case, op, ref)
    if sponge is not None:
        op.sources.append(sponge)
    if dual:
        stepper = build_dual_stepper(op_factory, dual, op=op)
        if sponge is not None:
            for lvl in stepper.levels[1:]:
                lvl.op.sources.append(_sponge(case, lvl.op, ref))
    else:
        stepper = ExplicitStepper(op, t.scheme, cfl=None if t.dt is not None else t.cfl, dt=t.dt)
        if sponge is not None:
            stepper.rate_cap = sponge.max_rate
    U0, t0 = _initial_state(case, op, ref)
    if case.time.end is not None and t0 >= case.time.end:
        raise CaseError(f"{case.path.name}: [time] end = {case.time.end:g} is not after the start time {t0:g} "
                        f"of the [initial] snapshot")
    return Problem(case, mesh, ref, op, stepper, U0, t0)


def _sponge(case, op, ref):
    """The absorbing sponge of ``[[sponge]]`` zones, or None."""
    zones = getattr(case, "sponge", None)
    if not zones:
        return None
    from solver.sponge import Sponge

    try:
        import dataclasses

        return Sponge(op, ref, [dataclasses.asdict(z) for z in zones])
    except ValueError as exc:
        from solver.case import CaseError
        raise CaseError(f"{case.path.name}: [[sponge]] {exc}") from None


def _fmt_seconds(s: float) -> str:
    if not math.isfinite(s):
        return "?"
    if s < 120:
        return f"{s:.1f}s"
    if s < 7200:
        return f"{s / 60:.1f}min"
    return f"{s / 3600:.1f}h"


class WallKick:
    """A brief tangential motion of walls: ``[kick]`` of a case.

    During ``start <= t < start + duration`` the wall speed of the kicked tags
    is the condition's own ``speed`` plus ``S sin^2(pi (t - start) / duration)``;
    outside it the condition's own parameters apply.  The speed is set once
    per step, from the time at the start of the step.

    Parameters
    ----------
    op : FROperator
    case : solver.case.Case
    """

    def __init__(self, op, case):
        from solver.boundaries import boundary_parameters

        k = case.kick
        tags = list(k.tags) if k.tags is not None else \
            [t for t, b in case.boundaries.items() if b.type in ("noslip-wall", "isothermal-wall")]
        self.speed, self.start, self.duration = float(k.speed), float(k.start), float(k.duration)
        self.op = op
        self.groups = []
        for t in tags:
            spec = case.boundaries[t]
            g = op.bc_tags.index(t)
            base = dict(spec.params)
            s0 = float(base.get("speed", 0.0))

            def row(extra, base=base, s0=s0, name=spec.type):
                prm = dict(base, speed=s0 + extra)
                return boundary_parameters(name, prm, op.ref)[1]

            self.groups.append((g, op.bprm[g].copy(), row))
        self.tags = tags
        self._active = None

    def apply(self, t: float) -> None:
        """Set the wall rows for time ``t``."""
        x = (t - self.start) / self.duration
        if 0.0 <= x < 1.0:
            extra = self.speed * math.sin(math.pi * x) ** 2
            for g, _, row in self.groups:
                self.op.bprm[g] = row(extra)
            self._active = True
        elif self._active is not False:
            for g, base, _ in self.groups:
                self.op.bprm[g] = base
            self._active = False


class _Interrupt:
    """SIGINT handler: the first Ctrl-C asks for a checkpoint, the second one stops at once."""

    def __init__(self, enabled: bool = True):
        self.requested = False
        self.enabled = enabled
        self._old = None

    def __enter__(self):
        if self.enabled and threading.current_thread() is threading.main_thread():
            self._old = signal.signal(signal.SIGINT, self._handle)
        return self

    def _handle(self, signum, frame):
        if self.requested:
            raise KeyboardInterrupt
        self.requested = True

    def __exit__(self, *exc):
        if self._old is not None:
            signal.signal(signal.SIGINT, self._old)
        return False


def _monitor_setup(case, prob):
    from solver.forces import wall_tags
    from solver.monitors import Monitor, RunningAverage

    m = case.monitor
    walls = list(m.walls) if m.walls is not None else wall_tags(case.boundaries)
    length = float(m.length) if m.length is not None else float(prob.ref["length"])
    monitor = Monitor(prob.op, prob.ref, walls, length, m.moment_point, m.probes,
                      inner=hasattr(prob.stepper, "last_stats"))
    avg = RunningAverage(prob.op.shape, prob.op.gamma, m.average_from) if m.average_from is not None else None
    return monitor, avg


def _clear_previous_run(run_dir, printer) -> None:
    from solver.output import list_snapshots

    old = list_snapshots(run_dir) if run_dir.is_dir() else []
    extra = [run_dir / n for n in ("history.h5", "history.csv", "failure.json") if (run_dir / n).exists()]
    for p in old + extra:
        p.unlink()
    if old or extra:
        printer(f"  fresh start: removed {len(old)} snapshot(s) and {len(extra)} other file(s) of an earlier run "
                f"in {run_dir} (use --resume to continue it instead)")


def run_case(case, resume: bool = False, printer=print, stop_after: int | None = None,
             catch_sigint: bool = True) -> dict:
    """Run a case to its end time (or step count).

    Parameters
    ----------
    case : solver.case.Case
    resume : bool
        Continue from the newest snapshot in the run folder and append to its
        histories.  Without it, snapshots and histories of an earlier run in
        the folder are removed first.
    printer : callable
        Where progress lines go.
    stop_after : int, optional
        Stop after this many steps of this session and write a checkpoint
        (the run can be resumed from it).
    catch_sigint : bool
        Turn the first SIGINT into "write a checkpoint and stop" (main thread only).

    Returns
    -------
    dict
        ``status`` ("finished", "interrupted" or "stopped"), ``time``, ``step``,
        ``wall`` (this session, s), ``rhs_evaluations``, ``snapshot`` (last
        path), ``run_dir``, ``dof``; with dual time stepping also
        ``inner_totals`` (this session: steps, iterations, fine-level ``rhs``,
        ``coarse_rhs``, ``unconverged``, ...).

    Raises
    ------
    solver.guard.SolutionBlowUp
        The state became non-finite or non-physical; the last good state and
        ``failure.json`` were written first.
    """
    from solver.guard import SolutionBlowUp, StateGuard, write_failure
    from solver.history import HistoryFile
    from solver.output import RunLog, latest_snapshot, read_snapshot, snapshot_name, write_snapshot
    from solver.stepper import step_to

    wall_start = _time.perf_counter()
    prob = build_problem(case)
    op, st = prob.op, prob.stepper
    tcfg, ocfg = case.time, case.output
    run_dir = case.output_dir
    monitor, avg = _monitor_setup(case, prob)
    kick = WallKick(op, case) if case.kick is not None else None
    guard = StateGuard(op)
    hist = HistoryFile(run_dir, monitor.columns, monitor.attrs)

    dual_mode = hasattr(st, "get_state")
    if dual_mode:
        st.on_warning = lambda m: (printer("warning: " + m), log.line("warning: " + m))
    every = float(ocfg.snapshot_every or 0.0)
    h_every = int(ocfg.history_every)
    h_interval = float(ocfg.history_interval or 0.0)
    U = prob.U0
    t, step = prob.t0, 0  # t0 > 0: started from another run's snapshot
    dt = st.stable_dt(U)
    k_out = math.floor(t / every + 1e-9) + 1 if every > 0 else 1  # next scheduled snapshot: time k_out * every
    k_hist = math.floor(t / h_interval + 1e-9) + 1 if h_interval > 0 and t > 0 else 0  # next history sample
    wall_before = 0.0    # wall time of earlier sessions
    resumed_from = None
    if resume:
        last = latest_snapshot(run_dir) if run_dir.is_dir() else None
        if last is None:
            raise FileNotFoundError(f"{case.path.name}: --resume given but {run_dir} holds no snapshot")
        snap = read_snapshot(last)
        if snap.U.shape != U.shape:
            raise ValueError(f"{last}: solution shape {snap.U.shape} does not fit this case ({U.shape}); "
                             "was the mesh or degree changed?")
        U = np.ascontiguousarray(snap.U)
        t, step = snap.time, snap.step
        ex = snap.extra or {}
        dt = float(ex.get("dt", dt))
        k_out = int(ex["next_snapshot"]) if "next_snapshot" in ex else \
            (math.floor(t / every + 1e-9) + 1 if every > 0 else 1)
        k_hist = int(ex["next_history"]) if "next_history" in ex else \
            (math.floor(t / h_interval) + 1 if h_interval > 0 else 0)
        wall_before = float(ex.get("wall_time", 0.0))
        if avg is not None:
            avg.load(ex, t, str(last))
        if hasattr(st, "set_state"):
            if "dual_scheme" not in ex:
                raise ValueError(f"{last}: no dual-time history in this snapshot (written by an explicit run?)")
            st.set_state({k[5:]: ex[k] for k in ex if k.startswith("dual_")})
        resumed_from = last
    else:
        _clear_previous_run(run_dir, printer)

    run_dir.mkdir(parents=True, exist_ok=True)
    state = {"last_save_wall": _time.perf_counter(), "last_flush": _time.perf_counter(),
             "last_path": resumed_from, "saved_step": None}
    log = RunLog(run_dir / "run.log")
    for line in case.describe():
        printer(line)
    if dual_mode:
        sm = st.fine
        scheme_line = (f"{st.scheme_name} dt {st.fixed_dt:g}; pseudo-time {sm.smoother} (stable CFL for p={op.p}: "
                       f"{sm.cfl_max:.4f}), "
                       + (f"p-multigrid {'-'.join(str(d) for d in st.mg.degrees)}" if st.mg is not None
                          else "no multigrid"))
    else:
        scheme_line = f"stable CFL of {st.scheme_name} for p={op.p}: {st.cfl_max:.4f}"
    printer(f"  mesh: {prob.mesh.n_elements} elements, geometry degree {prob.mesh.q}; {op.ndof} DoF; "
            + scheme_line)
    if prob.t0 > 0 and not resume:
        printer(f"  start: t = {prob.t0:g} from snapshot {case.initial.file}")
    if monitor.forces is not None:
        printer(f"  forces on {', '.join(monitor.forces.tags)} (reference length {monitor.forces.length:g}, moment "
                f"about ({monitor.forces.point[0]:g}, {monitor.forces.point[1]:g})); "
                f"{len(monitor.sampler)} probe(s); history every "
                + (f"{h_interval:g} time units" if h_interval > 0 else f"{h_every} steps"))
    if kick is not None:
        printer(f"  kick: walls {', '.join(kick.tags)} slide at up to {kick.speed:g} U_inf for "
                f"{kick.start:g} <= t < {kick.start + kick.duration:g}")
    log.start(case_path=case.path, resume_from=resumed_from, dof=op.ndof, elements=prob.mesh.n_elements,
              degree=op.p, scheme=st.scheme_name)
    if resume:
        state["saved_step"] = step
        kept = hist.truncate(step)
        log.line(f"history: kept {kept} rows up to step {step}")
    else:
        hist.create()

    t_end = tcfg.end
    n_steps = tcfg.steps
    prog_every = int(tcfg.progress_every or 100)
    chk_seconds = float(ocfg.checkpoint_minutes or 0.0) * 60.0
    R = np.empty_like(U)
    U_prev = np.empty_like(U)

    def wall_now() -> float:
        return wall_before + (_time.perf_counter() - wall_start)

    def save(Us, ts, steps, tag="", reason="scheduled"):
        hist.flush()
        path = run_dir / snapshot_name(steps)
        extra = {"dt": dt, "next_snapshot": k_out, "next_history": k_hist, "wall_time": wall_now(),
                 "reason": reason}
        if avg is not None:
            extra.update(avg.to_extra())
        if hasattr(st, "get_state"):
            extra.update({f"dual_{k}": v for k, v in st.get_state().items()})
        write_snapshot(path, U=Us, time=ts, step=steps, degree=op.p, points=op.basis.points,
                       correction=case.scheme.correction, mesh=prob.mesh, case_text=case.text,
                       reference={k: v for k, v in prob.ref.items() if isinstance(v, (int, float, str, bool))
                                  and v is not None},
                       extra=extra)
        log.line(f"snapshot {path.name} at t = {ts:.6g}{tag}")
        state["last_path"], state["saved_step"] = path, steps
        state["last_save_wall"] = _time.perf_counter()
        return path

    def done() -> bool:
        if n_steps is not None:
            return step >= n_steps
        return t >= t_end * (1 - 1e-14)

    def sample_due() -> bool:
        if h_interval > 0:
            return t >= k_hist * h_interval * (1 - 1e-12)
        return step % h_every == 0

    def record():
        nonlocal k_hist
        hist.append(monitor.sample(t, U, step, wall_now(), dt, getattr(st, "last_stats", None)))
        if h_interval > 0:
            k_hist = math.floor(t / h_interval * (1 + 1e-12)) + 1
        if _time.perf_counter() - state["last_flush"] > FLUSH_SECONDS:
            hist.flush()
            state["last_flush"] = _time.perf_counter()

    loop_wall0 = _time.perf_counter()
    step0, t0 = step, t
    status = "finished"
    if not resume:
        record()  # the initial state
    try:
        with _Interrupt(catch_sigint) as stop:
            while not done():
                if stop.requested:
                    status = "interrupted"
                    break
                if stop_after is not None and step - step0 >= stop_after:
                    status = "stopped"
                    break
                if kick is not None:
                    kick.apply(t)
                if step % DT_EVERY == 0:
                    dt = st.stable_dt(U)
                h = step_to(t, dt, t_end)
                next_out = k_out * every if every > 0 else math.inf
                if next_out - t < h and not dual_mode:
                    h = next_out - t
                np.copyto(U_prev, U)
                t_prev = t
                st.step(U, t, h)
                t += h
                step += 1
                bad = guard.check(U)
                if bad is not None:
                    diag = {"step": step, "time": t, "dt": h, **bad, "last_good_step": step - 1,
                            "last_good_time": t_prev}
                    np.copyto(U, U_prev)
                    step, t = step - 1, t_prev
                    path = save(U, t, step, " (last good state before the failure)",
                                reason=f"last good state before the failure at step {step + 1}")
                    diag["last_good_snapshot"] = str(path)
                    fpath = write_failure(run_dir / "failure.json", diag)
                    x, y = bad["location"]
                    msg = (f"solution {bad['problem']} ({bad['variable']} = {bad['value']:.6g}) at step {step + 1}, "
                           f"t = {diag['time']:.6g}, element {bad['element']} near ({x:.6g}, {y:.6g}); "
                           f"last good state (step {step}, t = {t:.6g}) written to {path}; diagnostic in {fpath}")
                    log.line("FAILURE: " + msg)
                    status = "failed"
                    raise SolutionBlowUp(msg, diag)
                if avg is not None:
                    avg.add(U, t_prev, t)
                sampled = False
                if sample_due():
                    record()
                    sampled = True
                if step % prog_every == 0 or done():
                    if sampled:
                        res = monitor.residual_rms()
                    else:
                        op.rhs(t, U, R)
                        res = float(np.sqrt(np.mean(R * R)))
                    wall = _time.perf_counter() - loop_wall0
                    if t_end is not None:
                        frac = (t - t0) / max(t_end - t0, 1e-300)
                    else:
                        frac = (step - step0) / max(n_steps - step0, 1)
                    eta = wall * (1 - frac) / frac if frac > 0 else math.inf
                    inner = ""
                    if dual_mode and st.last_stats:
                        ls = st.last_stats
                        inner = (f"  inner {ls.get('iterations', 0)} it, res {ls.get('residual', float('nan')):.2e}"
                                 + ("" if ls.get("converged", True) else " (not converged)"))
                    printer(f"t {t:11.5f}  step {step:8d}  dt {h:.3e}  residual {res:.3e}{inner}  "
                            f"wall {_fmt_seconds(wall)}  ETA {_fmt_seconds(eta)}")
                    log.progress(step, t, dt=h, residual=res, wall=wall)
                if every > 0 and t >= k_out * every * (1 - 1e-12):
                    k_out = math.floor(t / every * (1 + 1e-12)) + 1
                    save(U, t, step)
                elif chk_seconds > 0 and _time.perf_counter() - state["last_save_wall"] > chk_seconds:
                    save(U, t, step, " (checkpoint)", reason="checkpoint")
    except BaseException as exc:
        if status != "failed":
            status = f"stopped ({type(exc).__name__}: {exc})"
        try:
            hist.flush()
        finally:
            log.end(status, steps=step - step0, wall=f"{_time.perf_counter() - loop_wall0:.2f}s", rhs=op.n_rhs)
        raise
    if state["saved_step"] != step:
        if status == "finished":
            save(U, t, step, " (final)", reason="final")
        else:
            save(U, t, step, f" ({status}: checkpoint)", reason=status)
    hist.flush()
    wall = _time.perf_counter() - loop_wall0
    log.end(status, steps=step - step0, wall=f"{wall:.2f}s", rhs=op.n_rhs)
    if status == "interrupted":
        printer(f"interrupted at t = {t:.6g}, step {step}: checkpoint {state['last_path']} written; "
                f"continue with --resume")
    elif status == "stopped":
        printer(f"stopped after {step - step0} steps at t = {t:.6g}: checkpoint {state['last_path']}")
    else:
        printer(f"done: t = {t:.6g}, {step - step0} steps, wall {_fmt_seconds(wall)}, "
                f"{op.ndof * op.n_rhs / max(wall, 1e-300) / 1e6:.1f} MDoF/s per RHS incl. overheads; "
                f"last snapshot {state['last_path']}")
    out = dict(status=status, time=t, step=step, wall=wall, rhs_evaluations=op.n_rhs,
               snapshot=str(state["last_path"]), run_dir=str(run_dir), dof=op.ndof)
    if dual_mode:
        out["inner_totals"] = dict(st.totals)  # this session's steps: iterations, fine/coarse RHS, unconverged
    return out
