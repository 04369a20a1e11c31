"""``quadfr estimate``: what a case costs here, and what its spanwise-extruded production run costs.

Everything that can be measured is measured by a short calibration run of
the case itself in a fresh process (:func:`calibrate`): resident memory per
DoF (peak RSS growth while the problem is built and stepped, over the DoF
count), the array bytes per DoF (tracemalloc), seconds per RHS evaluation
with all threads and with one, seconds per time step and RHS evaluations per
step.  The stable explicit time step comes from the solver's own rule
(:class:`solver.stepper.ExplicitStepper`) on the initial state.

The production projection extrudes the 2D section spanwise: ``N`` layers of
hexahedra of depth ``LENGTH / N`` at degree p, so

    DoF_3D = elements_2D x N x (p + 1)^3 x 5   (5 conserved variables in 3D)

against ``DoF_2D = elements_2D x (p + 1)^2 x 4``.  Its time step adds the
spanwise spectral radius (sound speed over the layer depth; no spanwise
velocity in the state) to the 2D one at every point, and its cost is
``DoF_3D x RHS evaluations / throughput`` for a throughput (DoF x RHS per
second) per core or per device that the user states; without one the
figures of this machine's calibration are used and labelled so.
"""
from __future__ import annotations

import dataclasses
import math
import os
import time
from pathlib import Path

__all__ = ["dof_2d", "dof_3d", "calibrate", "stable_dt_extruded", "estimate", "format_estimate", "main",
           "add_arguments", "memory_estimate", "peak_rss_bytes", "current_rss_bytes"]

#: conserved variables per point in 2D (rho, rho u, rho v, rho E) and in 3D (plus rho w)
NVAR_2D, NVAR_3D = 4, 5


def dof_2d(elements: int, p: int) -> int:
    """Degrees of freedom of a 2D run: ``elements (p+1)^2 x 4``."""
    return int(elements) * (int(p) + 1) ** 2 * NVAR_2D


def dof_3d(elements: int, layers: int, p: int) -> int:
    """Degrees of freedom of the section extruded in ``layers`` hexahedra: ``elements layers (p+1)^3 x 5``."""
    return int(elements) * int(layers) * (int(p) + 1) ** 3 * NVAR_3D


def _status_kib(key: str) -> int:
    with open("/proc/self/status", encoding="ascii") as fh:
        for line in fh:
            if line.startswith(key + ":"):
                return int(line.split()[1])
    raise OSError(f"/proc/self/status has no {key}")


def current_rss_bytes() -> int:
    """Resident memory of this process now (Linux ``VmRSS``)."""
    return 1024 * _status_kib("VmRSS")


def peak_rss_bytes() -> int:
    """Peak resident memory of this process so far (Linux ``VmHWM``; ``ru_maxrss`` elsewhere)."""
    try:
        return 1024 * _status_kib("VmHWM")
    except OSError:
        import resource

        return 1024 * resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def _with_degree(case, degree):
    if degree is None or degree == case.scheme.degree:
        return case
    if not 1 <= int(degree) <= 8:
        raise ValueError(f"--degree must be an integer 1..8, got {degree}")
    return dataclasses.replace(case, scheme=dataclasses.replace(case.scheme, degree=int(degree)))


def _calibrate_here(case_path: str, degree, min_time: float = 0.5) -> dict:
    """The calibration itself, in the calling process (see :func:`calibrate`)."""
    import tracemalloc

    import numba
    import numpy as np

    import solver.output  # noqa: F401 - a real run has h5py loaded too: part of the baseline
    from solver.case import load_case
    from solver.run import build_problem
    from tools.bench import time_per_call
    from tools.study import warm_up

    case = _with_degree(load_case(case_path), degree)
    warm_up(case)
    base = current_rss_bytes()
    tracemalloc.start()
    prob = build_problem(case)
    op, st = prob.op, prob.stepper
    U = prob.U0.copy()
    R = np.empty_like(U)
    dt = st.stable_dt(U)
    st.step(U, 0.0, dt)
    _, traced = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    threads = numba.get_num_threads()
    t = [dt]

    def timed_steps() -> tuple[float, float]:
        n0, k, t0 = op.n_rhs, 0, time.perf_counter()
        while k < 3 or (time.perf_counter() - t0 < min_time and k < 200):
            st.step(U, t[0], dt)
            t[0] += dt
            k += 1
        return (time.perf_counter() - t0) / k, (op.n_rhs - n0) / k

    step_all, rhs_per_step = timed_steps()
    rhs_all = time_per_call(lambda: op.rhs(0.0, U, R), min_time)
    numba.set_num_threads(1)
    try:
        step_one, _ = timed_steps()
        rhs_one = time_per_call(lambda: op.rhs(0.0, U, R), min_time)
    finally:
        numba.set_num_threads(threads)
    if not np.all(np.isfinite(U)):
        raise FloatingPointError(f"{case.path.name}: the calibration steps gave a non-finite state")
    best_threads, step_s = (threads, step_all) if step_all <= step_one else (1, step_one)
    peak = peak_rss_bytes()
    return {"case": str(case.path), "degree": op.p, "elements": int(prob.mesh.n_elements), "dof": int(op.ndof),
            "baseline_rss": int(base), "peak_rss": int(peak), "rss_per_dof": (peak - base) / op.ndof,
            "traced_bytes": int(traced), "traced_per_dof": traced / op.ndof, "threads": int(threads),
            "step_seconds": step_s, "step_threads": best_threads, "step_seconds_all": step_all,
            "step_seconds_one": step_one, "rhs_per_step": rhs_per_step,
            "rhs_seconds_all": rhs_all, "rhs_seconds_one": rhs_one,
            "ns_per_dof_rhs_all": 1e9 * rhs_all / op.ndof, "ns_per_dof_rhs_one": 1e9 * rhs_one / op.ndof}


def _calibrate_child(conn, case_path, degree, min_time, threads):
    try:
        if threads:
            os.environ["NUMBA_NUM_THREADS"] = str(int(threads))
        conn.send(("ok", _calibrate_here(case_path, degree, min_time)))
    except BaseException as exc:  # noqa: BLE001 - sent back to the parent
        conn.send(("error", f"{type(exc).__name__}: {exc}"))
    finally:
        conn.close()


def calibrate(case_path, degree=None, min_time: float = 0.5, threads: int | None = None) -> dict:
    """Short calibration run of a case in a fresh process.

    The process imports what a run imports and loads the kernels (a tiny
    warm-up), records its resident memory, then builds the case's problem,
    takes a few time steps and times the RHS.  A fresh process keeps the
    memory of other work out of the measurement.

    Parameters
    ----------
    case_path : path
    degree : int, optional
        Overrides ``[scheme] degree``.
    min_time : float
        Seconds over which each timing is averaged.
    threads : int, optional
        numba threads of the calibration process (default: all).

    Returns
    -------
    dict
        ``dof, elements, degree, baseline_rss, peak_rss, rss_per_dof`` (bytes: peak growth
        over the baseline, per DoF), ``traced_per_dof`` (numpy arrays alive at the peak,
        per DoF), ``step_seconds``, ``rhs_per_step``, ``rhs_seconds_all`` / ``_one``
        (per RHS with all threads / one), ``ns_per_dof_rhs_all`` / ``_one``, ``threads``.

    Raises
    ------
    RuntimeError
        The calibration failed; the message is the child's error.
    """
    import multiprocessing as mp

    ctx = mp.get_context("spawn")
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_calibrate_child, args=(child, str(case_path), degree, min_time, threads))
    proc.start()
    child.close()
    try:
        status, payload = parent.recv()
    except EOFError:
        proc.join()
        raise RuntimeError(f"calibration of {case_path} died (exit code {proc.exitcode})") from None
    proc.join()
    if status != "ok":
        raise RuntimeError(f"calibration of {case_path} failed: {payload}")
    return payload


def memory_estimate(calib: dict, dof: int) -> float:
    """Resident memory (bytes) of a run of ``dof`` DoF: ``baseline + rss_per_dof x dof`` from a calibration."""
    return calib["baseline_rss"] + calib["rss_per_dof"] * dof


def stable_dt_extruded(op, stepper, U, depth: float | None) -> tuple[float, float]:
    """Stable explicit step of the 2D problem and of its spanwise extrusion with layer depth ``depth``.

    Returns
    -------
    dt_2d, dt_3d : float
        ``dt_3d`` is ``nan`` without a depth.

    Notes
    -----
    The 2D rule is the stepper's (``dt = cfl min 1/(lambda_c/(2 CFL_max) + lambda_v / X)``).
    Extruding adds a third reference direction ``t`` with ``|grad t| = 2 / depth``:
    ``lambda_c += a 2 / depth`` (no spanwise velocity) and, with viscosity,
    ``lambda_v += lambda_v (2/depth)^2 / (|grad r|^2 + |grad s|^2)``
    (the BR2 radius is proportional to the summed squared reference gradients).
    """
    import numpy as np

    dt2 = stepper.stable_dt(U)
    if depth is None:
        return dt2, float("nan")
    if stepper.fixed_dt is not None:
        return dt2, dt2
    g = op.gamma
    r = U[..., 0]
    u, v = U[..., 1] / r, U[..., 2] / r
    p = (g - 1.0) * (U[..., 3] - 0.5 * r * (u * u + v * v))
    a = np.sqrt(np.maximum(g * p / r, 0.0))
    lc, lv = op.spectral_radii(U)
    gt = 2.0 / depth
    inv = (lc + a * gt) / (2.0 * stepper.cfl_max)
    if lv is not None:
        m = op.metrics
        g2 = ((m.Mr[..., 0] ** 2 + m.Mr[..., 1] ** 2) + (m.Ms[..., 0] ** 2 + m.Ms[..., 1] ** 2)) * m.invJ ** 2
        inv = inv + (lv + lv * gt * gt / g2) / stepper.reach
    return dt2, float(stepper.cfl / np.max(inv))


def run_rates(run_dir, elements: int, degree: int, tail: float = 0.5) -> dict:
    """Time step and residual evaluations per step of an earlier run of the same case, from its history.

    Parameters
    ----------
    run_dir : path
        Run folder with ``history.h5`` and at least one snapshot.
    elements, degree : int
        Of the case being estimated; the run must match them.
    tail : float
        Fraction of the history rows (the last ones: the developed flow) averaged.

    Returns
    -------
    dict
        ``run_dir``, ``rows`` (averaged), ``t_from``, ``t_to``, ``dt`` (mean time step), and for a
        dual-time run ``fine_rhs``, ``coarse_rhs`` (mean per step) and ``iterations``; ``dual`` (bool).

    Raises
    ------
    ValueError
        No history, too few rows, or a run of another mesh size or degree; names the folder.
    """
    import numpy as np

    from solver.history import read_history
    from solver.output import latest_snapshot, read_snapshot

    run_dir = Path(run_dir)
    try:
        h = read_history(run_dir)
    except (OSError, ValueError) as exc:
        raise ValueError(f"--from-run {run_dir}: {exc}") from None
    snap = latest_snapshot(run_dir)
    if snap is None:
        raise ValueError(f"--from-run {run_dir}: no snapshot in the folder (cannot tell its mesh and degree)")
    s = read_snapshot(snap)
    if s.mesh.n_elements != elements or s.degree != degree:
        raise ValueError(f"--from-run {run_dir}: the run has {s.mesh.n_elements} elements at degree {s.degree}, "
                         f"the case {elements} at degree {degree}")
    d = h["data"]
    n = len(d["time"])
    k0 = max(1, int(n * (1.0 - tail)))
    if n - k0 < 2:
        raise ValueError(f"--from-run {run_dir}: the history has {n} rows; too few to average")
    step, t = np.asarray(d["step"], dtype=float), np.asarray(d["time"], dtype=float)
    out = {"run_dir": str(run_dir), "rows": n - k0, "t_from": float(t[k0]), "t_to": float(t[-1]),
           "dt": float((t[-1] - t[k0]) / max(step[-1] - step[k0], 1.0)), "dual": "inner/rhs" in d}
    if out["dual"]:
        sl = slice(k0, n)
        out.update(fine_rhs=float(np.nanmean(d["inner/rhs"][sl])),
                   coarse_rhs=float(np.nanmean(d["inner/coarse_rhs"][sl])),
                   iterations=float(np.nanmean(d["inner/iterations"][sl])))
    return out


def estimate(case_path, degree=None, span: float | None = None, span_cells: int | None = None,
             throughputs=None, per: str = "core", units: int | None = None, unit_memory_gb: float | None = None,
             calib: dict | None = None, min_time: float = 0.5, from_run=None) -> dict:
    """Cost of a case here and of its extruded production run.

    Parameters
    ----------
    case_path : path
    degree : int, optional
        Overrides ``[scheme] degree`` (of the 2D run and of the projection).
    span, span_cells : float, int
        Spanwise length (mesh units) and number of element layers of the projection.
    throughputs : list of float, optional
        DoF x RHS evaluations per second per ``per`` (core or device).  Default:
        this machine's one-thread calibration (per core).
    per : str
        ``core`` or ``device``: what one throughput figure is for.
    units : int, optional
        Number of cores/devices, for a wall time of the production run.
    unit_memory_gb : float, optional
        Memory per core/device (GB), for the smallest count that holds the run.
    calib : dict, optional
        A calibration to reuse (:func:`calibrate`); measured when not given.
    from_run : path, optional
        Folder of an earlier run of this case (:func:`run_rates`): its developed flow's mean time step
        (explicit, CFL-controlled runs) and, for dual time stepping, its residual evaluations per step
        replace the values measured on the initial state.

    Returns
    -------
    dict with every number printed by :func:`format_estimate` and the assumptions.
    """
    from solver.case import load_case
    from solver.run import build_problem

    if per not in ("core", "device"):
        raise ValueError(f"--per must be 'core' or 'device', got '{per}'")
    if (span is None) != (span_cells is None):
        raise ValueError("--span and --span-cells go together (spanwise length and number of element layers)")
    if span is not None and not (span > 0 and math.isfinite(span)):
        raise ValueError(f"--span must be a positive length, got {span}")
    if span_cells is not None and int(span_cells) < 1:
        raise ValueError(f"--span-cells must be >= 1, got {span_cells}")
    for t in throughputs or []:
        if not (t > 0 and math.isfinite(t)):
            raise ValueError(f"--throughput must be positive (DoF x RHS evaluations per second), got {t}")
    if units is not None and int(units) < 1:
        raise ValueError(f"--units must be >= 1, got {units}")
    if unit_memory_gb is not None and not (unit_memory_gb > 0):
        raise ValueError(f"--unit-memory must be positive (GB), got {unit_memory_gb}")

    case = _with_degree(load_case(case_path), degree)
    prob = build_problem(case)
    op, st = prob.op, prob.stepper
    p, ne = op.p, int(prob.mesh.n_elements)
    depth = span / span_cells if span is not None else None
    dt2, dt3 = stable_dt_extruded(op, st, prob.U0, depth)
    tcfg = case.time

    def steps_for(dt):
        if tcfg.steps is not None:
            return int(tcfg.steps)
        return int(math.ceil(tcfg.end / dt)) if math.isfinite(dt) and dt > 0 else 0

    if calib is None:
        calib = calibrate(case.path, p, min_time=min_time)
    stages = calib["rhs_per_step"]
    step_seconds = calib["step_seconds"]
    rates = None
    if from_run is not None:
        rates = run_rates(from_run, ne, p)
        if tcfg.dt is None and not rates["dual"]:
            r = rates["dt"] / dt2  # the developed flow's step; the 3D step scales with it
            dt2, dt3 = rates["dt"], (dt3 * r if dt3 is not None else None)
        if rates["dual"]:
            new = rates["fine_rhs"] + rates["coarse_rhs"]
            step_seconds = calib["step_seconds"] * new / stages
            stages = new
    n2 = dof_2d(ne, p)
    if n2 != op.ndof:  # the formula and the operator must agree; a mismatch is our bug
        raise AssertionError(f"DoF formula {n2} != operator {op.ndof}")
    steps2 = steps_for(dt2)
    out = {
        "case": str(case.path), "degree": p, "elements": ne, "dof_2d": n2,
        "time_scheme": tcfg.scheme, "cfl": tcfg.cfl if tcfg.dt is None else None, "fixed_dt": tcfg.dt,
        "end": tcfg.end, "dt_2d": dt2, "steps_2d": steps2, "rhs_per_step": stages,
        "rhs_2d": steps2 * stages, "memory_2d": memory_estimate(calib, n2), "calibration": calib,
        "wall_2d": steps2 * step_seconds, "step_seconds": step_seconds, "threads": calib["step_threads"],
        "from_run": rates,
    }
    assumptions = [
        f"DoF = elements x (p+1)^2 x {NVAR_2D} in 2D; elements x layers x (p+1)^3 x {NVAR_3D} in 3D "
        "(one variable per conserved quantity)",
        ("time step: the fixed [time] dt of the case" if tcfg.dt is not None else
         f"time step: the mean step of the developed flow in {rates['run_dir']} (t = {rates['t_from']:.4g} .. "
         f"{rates['t_to']:.4g})" if rates is not None and not rates["dual"] else
         "time step: the solver's explicit stability rule on the initial state, refreshed by the run every 10 "
         "steps; a developed flow with faster local speeds takes somewhat smaller steps (--from-run DIR uses a "
         "run's own steps)"),
        f"memory: {_mb(calib['baseline_rss'])} baseline (Python, numpy, numba kernels, h5py) + "
        f"{calib['rss_per_dof']:.0f} B per DoF measured as the peak resident-memory growth of the calibration "
        f"run ({calib['dof']} DoF; numpy arrays alone {calib['traced_per_dof']:.0f} B per DoF by tracemalloc)",
        f"wall time here: steps x the measured {calib['step_seconds']:.3g} s per step with {calib['step_threads']} "
        f"thread(s), the faster of {calib['threads']} thread(s) ({calib['step_seconds_all']:.3g} s) and 1 thread "
        f"({calib['step_seconds_one']:.3g} s) on this machine at the time of the calibration; output, monitors and "
        "start-up not included",
    ]
    if rates is not None and rates["dual"]:
        assumptions.append(
            f"RHS per step: mean of the last {rates['rows']} history rows of {rates['run_dir']} (t = "
            f"{rates['t_from']:.4g} .. {rates['t_to']:.4g}): {rates['iterations']:.1f} inner iterations, "
            f"{rates['fine_rhs']:.1f} fine-level + {rates['coarse_rhs']:.1f} coarse-level evaluations, the coarse "
            "ones counted as fine ones (an upper bound); the wall time per step is the calibration's scaled by "
            "this count")
    elif tcfg.scheme.startswith("bdf"):
        assumptions.append(
            f"RHS per step: measured on the first calibration steps from the initial state "
            f"({calib['rhs_per_step']:.0f}), which need not represent the developed flow: pass --from-run DIR "
            "with a short run of the case for its own count")
    if calib["threads"] > 1 and calib["step_seconds_all"] > calib["step_seconds_one"]:
        assumptions.append(f"{calib['threads']} threads were slower than 1 during the calibration: the machine is "
                           "busy or the problem is too small to share; rerun on an idle machine for parallel figures")
    if span is not None:
        n3 = dof_3d(ne, span_cells, p)
        steps3 = steps_for(dt3)
        rhs3 = steps3 * stages
        own = 1e9 / calib["ns_per_dof_rhs_one"]
        given = list(throughputs or [])
        rows = []
        if given:
            for tp in given:
                rows.append({"throughput": tp, "per": per, "source": "stated"})
        else:
            rows.append({"throughput": own, "per": "core",
                         "source": "this machine's calibration (2D kernels, 1 thread)"})
        for r in rows:
            r["unit_hours"] = n3 * rhs3 / r["throughput"] / 3600.0
            if units:
                r["units"] = int(units)
                r["wall_hours"] = r["unit_hours"] / int(units)
        mem3 = calib["rss_per_dof"] * n3
        out["production"] = {"span": span, "layers": int(span_cells), "depth": depth, "dof_3d": n3,
                             "dt_3d": dt3, "steps_3d": steps3, "rhs_3d": rhs3, "memory_3d": mem3,
                             "cost": rows}
        if unit_memory_gb:
            out["production"]["min_units_for_memory"] = int(math.ceil(mem3 / (unit_memory_gb * 1e9)))
            out["production"]["unit_memory_gb"] = unit_memory_gb
        assumptions += [
            f"production: the section extruded spanwise over {span:g} in {span_cells} uniform layers "
            f"(depth {depth:.4g}), same degree p = {p}, same time scheme and CFL fraction",
            "3D time step: the 2D rule plus the spanwise sound-speed radius a 2/depth (and the spanwise viscous "
            "radius) at every point; no spanwise velocity",
            f"3D memory: {calib['rss_per_dof']:.0f} B per DoF as measured here for 2D (a 3D operator keeps 3 x 3 "
            "metric terms and 6 faces per element, so this is a lower bound); the per-process baseline is excluded",
            "3D cost: DoF_3D x RHS evaluations / throughput; the throughput is DoF x RHS evaluations per second"
            + ("" if given else f"; the default {own:.3g} is this machine's one-thread 2D figure, which assumes a "
               "3D RHS costs per DoF what a 2D one costs here (3D does more work per DoF)"),
        ]
    out["assumptions"] = assumptions
    return out


def _mb(b: float) -> str:
    return f"{b / 1e6:.1f} MB" if b < 1e9 else f"{b / 1e9:.2f} GB"


def _hours(h: float) -> str:
    if h < 1 / 60:
        return f"{h * 3600:.1f} s"
    if h < 1:
        return f"{h * 60:.1f} min"
    return f"{h:.3g} h"


def format_estimate(est: dict) -> str:
    """Plain-text report of :func:`estimate`."""
    c = est["calibration"]
    p = est["degree"]
    step = f"cfl {est['cfl']:g}" if est["cfl"] is not None else f"fixed dt {est['fixed_dt']:g}"
    stop = f"to t = {est['end']:g}" if est["end"] is not None else "(fixed step count)"
    lines = [f"quadfr estimate: {Path(est['case']).name}, degree p = {p}", "",
             "2D run on this machine",
             f"  DoF            {est['elements']} elements x ({p}+1)^2 x {NVAR_2D} = {est['dof_2d']:,}",
             f"  memory         {_mb(est['memory_2d'])} (peak resident; baseline {_mb(c['baseline_rss'])} + "
             f"{c['rss_per_dof']:.0f} B/DoF)",
             f"  time step      {est['dt_2d']:.4g} ({est['time_scheme']}, {step}), {est['steps_2d']:,} steps {stop}",
             f"  RHS per step   {est['rhs_per_step']:g} -> {est['rhs_2d']:,.0f} RHS evaluations",
             f"  time/DoF/RHS   {c['ns_per_dof_rhs_all']:.3g} ns with {c['threads']} thread(s), "
             f"{c['ns_per_dof_rhs_one']:.3g} ns with 1 thread (measured)",
             f"  wall time here {_hours(est['wall_2d'] / 3600)} ({est.get('step_seconds', c['step_seconds']):.3g} s "
             f"per step, {c['step_threads']} thread(s))"]
    pr = est.get("production")
    if pr:
        lines += ["", f"Production projection: extruded over span {pr['span']:g} in {pr['layers']} layers",
                  f"  DoF            {est['elements']} x {pr['layers']} x ({p}+1)^3 x {NVAR_3D} = {pr['dof_3d']:,}",
                  f"  memory         {_mb(pr['memory_3d'])} (arrays, at the measured bytes per DoF)",
                  f"  time step      {pr['dt_3d']:.4g}, {pr['steps_3d']:,} steps, {pr['rhs_3d']:,.0f} RHS "
                  "evaluations"]
        if "min_units_for_memory" in pr:
            lines.append(f"  fits on        >= {pr['min_units_for_memory']} units of {pr['unit_memory_gb']:g} GB")
        for r in pr["cost"]:
            unit = r["per"]
            txt = (f"  cost           {r['unit_hours']:.4g} {unit}-hours at {r['throughput']:.3g} DoF x RHS/s per "
                   f"{unit} ({r['source']})")
            if "wall_hours" in r:
                txt += f"; {_hours(r['wall_hours'])} on {r['units']} {unit}s"
            lines.append(txt)
    lines += ["", "Assumptions"] + [f"  - {a}" for a in est["assumptions"]]
    return "\n".join(lines) + "\n"


def add_arguments(p) -> None:
    """The options of ``quadfr estimate``."""
    p.add_argument("case", help="case file (.toml)")
    p.add_argument("--degree", type=int, help="solution degree p (default: the case's)")
    p.add_argument("--span", type=float, metavar="LENGTH", help="spanwise length of the production run (mesh units)")
    p.add_argument("--span-cells", type=int, dest="span_cells", metavar="N", help="spanwise element layers")
    p.add_argument("--throughput", type=float, nargs="+", metavar="DOF_PER_S",
                   help="DoF x RHS evaluations per second per core or device (one or more figures); "
                        "default: this machine's one-thread calibration")
    p.add_argument("--per", default="core", choices=("core", "device"), help="what a throughput figure is for")
    p.add_argument("--units", type=int, help="number of cores/devices, for a wall time of the production run")
    p.add_argument("--unit-memory", type=float, dest="unit_memory", metavar="GB",
                   help="memory per core/device, for the smallest count that holds the run")
    p.add_argument("--from-run", dest="from_run", metavar="DIR",
                   help="run folder of an earlier (short) run of this case: use its developed flow's time step "
                        "and, for dual time stepping, its residual evaluations per step")
    p.add_argument("--json", metavar="FILE", help="also write the numbers as JSON")


def main(args, printer=print) -> int:
    """``quadfr estimate``."""
    est = estimate(args.case, degree=args.degree, span=args.span, span_cells=args.span_cells,
                   throughputs=args.throughput, per=args.per, units=args.units, unit_memory_gb=args.unit_memory,
                   from_run=args.from_run)
    printer(format_estimate(est))
    if args.json:
        from tools.jsonio import write_json

        write_json(args.json, est)
    return 0
