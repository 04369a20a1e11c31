"""The run driver: case -> mesh -> operator -> time loop -> snapshots and log.

The driver owns the loop and all output (scipy ``solve_ivp`` style); schemes,
operators and monitors only compute.
"""
from __future__ import annotations

import math
import time as _time
from dataclasses import dataclass

import numpy as np

__all__ = ["Problem", "build_problem", "run_case"]


@dataclass
class Problem:
    """Everything a run needs, built and validated before anything is written."""

    case: object
    mesh: object
    ref: dict
    op: object
    stepper: object
    U0: np.ndarray


def _initial_state(case, op, ref) -> np.ndarray:
    from solver.initial import INITIAL_CONDITIONS

    ini = case.initial
    entry = INITIAL_CONDITIONS[ini.kind]
    kw = {}
    for name in entry.params:
        v = getattr(ini, name, None)
        kw[name] = entry.defaults[name] if v is None else v
    return np.ascontiguousarray(entry.obj(op.metrics.xy, ref, **kw))


def build_problem(case) -> Problem:
    """Mesh, basis, operator, stepper and initial state of a validated case.

    Raises the case, mesh or registry error of the first thing that is wrong;
    writes nothing.
    """
    from solver.basis import make_basis
    from solver.case import CaseError
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    mesh = case.make_mesh()
    ref = case.reference_state()
    s, t = case.scheme, case.time
    basis = make_basis(s.degree, s.points, s.correction, t.scheme)
    bcs = {tag: (spec.type, spec.params) for tag, spec in case.boundaries.items()}
    visc = None
    if ref.get("reynolds") is not None:
        visc = dict(mu=ref["mu"], prandtl=ref["prandtl"], law=ref["viscosity"], s_ratio=ref["sutherland_ratio"])
    try:
        op = FROperator(mesh, basis, ref["gamma"], flux=s.flux, boundaries=bcs, ref=ref, viscosity=visc)
    except ValueError as exc:
        raise CaseError(f"{case.path.name}: {exc}") from None
    stepper = ExplicitStepper(op, t.scheme, cfl=None if t.dt is not None else t.cfl, dt=t.dt)
    U0 = _initial_state(case, op, ref)
    return Problem(case, mesh, ref, op, stepper, U0)


def _fmt_seconds(s: float) -> str:
    if not math.isfinite(s):
        return "?"
    if s < 120:
        return f"{s:.1f}s"
    if s < 7200:
        return f"{s / 60:.1f}min"
    return f"{s / 3600:.1f}h"


def run_case(case, resume: bool = False, printer=print) -> dict:
    """Run a case to its end time (or step count).

    Parameters
    ----------
    case : solver.case.Case
    resume : bool
        Continue from the newest snapshot in the run folder.
    printer : callable
        Where progress lines go.

    Returns
    -------
    dict with ``time``, ``step``, ``wall``, ``rhs_evaluations``, ``snapshot`` (last path), ``run_dir``.
    """
    from solver.output import RunLog, latest_snapshot, read_snapshot, snapshot_name, write_snapshot

    prob = build_problem(case)
    op, st = prob.op, prob.stepper
    tcfg, ocfg = case.time, case.output
    run_dir = case.output_dir
    U = prob.U0
    t, step = 0.0, 0
    dt = st.stable_dt(U)
    resumed_from = None
    if resume:
        last = latest_snapshot(run_dir)
        if last is None:
            raise FileNotFoundError(f"{case.path.name}: --resume given but {run_dir} holds no snapshot")
        snap = read_snapshot(last)
        if snap.U.shape != U.shape:
            raise ValueError(f"{last}: solution shape {snap.U.shape} does not fit this case ({U.shape}); "
                             "was the mesh or degree changed?")
        U = np.ascontiguousarray(snap.U)
        t, step = snap.time, snap.step
        dt = float(snap.extra.get("dt", dt)) if snap.extra else dt
        resumed_from = last

    run_dir.mkdir(parents=True, exist_ok=True)
    log = RunLog(run_dir / "run.log")
    for line in case.describe():
        printer(line)
    printer(f"  mesh: {prob.mesh.n_elements} elements, geometry degree {prob.mesh.q}; {op.ndof} DoF; "
            f"stable CFL of {st.scheme_name} for p={op.p}: {st.cfl_max:.4f}")
    log.start(case_path=case.path, resume_from=resumed_from, dof=op.ndof, elements=prob.mesh.n_elements,
              degree=op.p, scheme=st.scheme_name)

    t_end = tcfg.end
    n_steps = tcfg.steps
    every = float(ocfg.snapshot_every or 0.0)
    next_out = (math.floor(t / every + 1e-9) + 1) * every if every > 0 else math.inf
    prog_every = int(tcfg.progress_every or 100)
    dt_every = 10
    R = np.empty_like(U)

    def save(tag=""):
        path = run_dir / snapshot_name(step)
        write_snapshot(path, U=U, time=t, step=step, degree=op.p, points=op.basis.points,
                       correction=case.scheme.correction, mesh=prob.mesh, case_text=case.text,
                       reference={k: v for k, v in prob.ref.items() if isinstance(v, (int, float, str, bool))
                                  and v is not None},
                       extra={"dt": dt})
        log.line(f"snapshot {path.name} at t = {t:.6g}{tag}")
        return path

    def done() -> bool:
        if n_steps is not None:
            return step >= n_steps
        return t >= t_end * (1 - 1e-14)

    wall0 = _time.perf_counter()
    step0, t0 = step, t
    last_path = None
    status = "finished"
    try:
        while not done():
            if step % dt_every == 0 and step != step0:
                dt = st.stable_dt(U)
            h = dt
            if t_end is not None:
                h = min(h, t_end - t)
            if next_out - t < h:
                h = next_out - t
            st.step(U, t, h)
            t += h
            step += 1
            if step % prog_every == 0 or done():
                op.rhs(t, U, R)
                res = float(np.sqrt(np.mean(R * R)))
                if not math.isfinite(res):
                    raise FloatingPointError(f"solution is not finite at step {step}, t = {t:.6g}")
                wall = _time.perf_counter() - wall0
                if t_end is not None:
                    frac = (t - t0) / max(t_end - t0, 1e-300)
                else:
                    frac = (step - step0) / max(n_steps - step0, 1)
                eta = wall * (1 - frac) / frac if frac > 0 else math.inf
                printer(f"t {t:11.5f}  step {step:8d}  dt {h:.3e}  residual {res:.3e}  "
                        f"wall {_fmt_seconds(wall)}  ETA {_fmt_seconds(eta)}")
                log.progress(step, t, dt=h, residual=res, wall=wall)
            if t >= next_out * (1 - 1e-12):
                last_path = save()
                next_out += every
    except BaseException as exc:
        status = f"stopped ({type(exc).__name__}: {exc})"
        raise
    finally:
        wall = _time.perf_counter() - wall0
        if status == "finished" and (last_path is None or not last_path.name.endswith(snapshot_name(step))):
            last_path = save(" (final)")
        log.end(status, steps=step - step0, wall=f"{wall:.2f}s", rhs=op.n_rhs)
    printer(f"done: t = {t:.6g}, {step - step0} steps, wall {_fmt_seconds(wall)}, "
            f"{op.ndof * op.n_rhs / max(wall, 1e-300) / 1e6:.1f} MDoF/s per RHS incl. overheads; "
            f"last snapshot {last_path}")
    return dict(time=t, step=step, wall=wall, rhs_evaluations=op.n_rhs, snapshot=str(last_path),
                run_dir=str(run_dir), dof=op.ndof)
