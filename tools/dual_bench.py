"""Wall time to a converged answer: explicit RK vs dual time stepping with and without p-multigrid.

Two modes:

* vortex (default): the isentropic vortex (Shu 1998; strength 5 of Yee,
  Sandham & Djomehri 1999) in a periodic warped box at a chosen Mach
  number.  The answer is the state at ``--end``.  The reference is the same
  semi-discrete system marched by SSP-RK(5,4) at a quarter of its stable
  step (time error O(dt^4), negligible), so the "time error" column is the
  error of the time integration alone; the "space error" of the reference
  against the exact vortex is printed for scale.  A dual-time answer counts
  as converged when its time error is at most ``--accept`` (default 0.5)
  times the space error: the time integration then adds at most that
  fraction of the mesh's own error.
* ``--case FILE``: a case file's mesh, boundaries, gas and initial state.
  The explicit run uses the case's explicit scheme (ssp-rk33 at cfl 0.9 when
  the case is a dual-time case) and is the reference; dual time uses the
  case's ``[time] dt`` and ``[pseudo]`` (or ``--dt`` values).

Run: ``python -m tools.dual_bench [--mach 0.5] [--degree 4] [--elements 8] [--end 2] [--dt 0.1,0.2,0.4]``
or ``python -m tools.dual_bench --case cases/some.toml [--end T] [--dt ...]``.
"""
from __future__ import annotations

import argparse
import os
import sys
import time

import numpy as np

from tools.jsonio import write_json

__all__ = ["vortex_setup", "case_setup", "run_explicit", "run_dual", "main"]

GAMMA = 1.4


def vortex_setup(p: int = 3, nel: int = 8, half: float = 5.0, mach: float = 0.5, q: int = 2,
                 warp: float = 0.02):
    """Operator factory, initial state and exact solution of the vortex problem.

    Returns
    -------
    op_factory : callable ``op_factory(p) -> FROperator``
    U0 : (ne, p+1, p+1, 4) array
    exact : callable ``exact(t) -> U`` (the advected vortex at the degree-``p`` points)
    """
    from meshing.box import box_mesh
    from solver.basis import make_basis
    from solver.initial import isentropic_vortex
    from solver.operator import FROperator

    ref = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (GAMMA * mach * mach), gamma=GAMMA)
    mesh = box_mesh(nel, nel, extent=(-half, half, -half, half), q=q, warp=warp, name=f"vortex-{nel}")

    def op_factory(deg):
        return FROperator(mesh, make_basis(deg), GAMMA, flux="roe", ref=ref)

    op = op_factory(p)
    period = (2 * half, 2 * half)

    def exact(t):
        return isentropic_vortex(op.metrics.xy, ref, 5.0, 1.0, (0.0, 0.0), t, period)

    return op_factory, exact(0.0), exact


def case_setup(path, smoother: str = "ssp-rk33"):
    """Operator factory, initial state and the case of a case file (built as the driver builds them)."""
    from solver.basis import make_basis
    from solver.case import load_case
    from solver.dualtime import is_dual_scheme
    from solver.operator import FROperator

    case = load_case(path)
    mesh = case.make_mesh()
    ref = case.reference_state()
    s = case.scheme
    bcs = {tag: (spec.type, spec.params) for tag, spec in case.boundaries.items()}
    visc = None
    if ref.get("reynolds") is not None:
        visc = dict(mu=ref["mu"], prandtl=ref["prandtl"], law=ref["viscosity"], s_ratio=ref["sutherland_ratio"])
    # 'c+' depends on the explicit scheme: the smoother for dual time, the case's scheme otherwise
    rk = smoother if is_dual_scheme(case.time.scheme) else case.time.scheme

    def op_factory(deg):
        return FROperator(mesh, make_basis(deg, s.points, s.correction, rk), ref["gamma"], flux=s.flux,
                          boundaries=bcs, ref=ref, viscosity=visc)

    op = op_factory(s.degree)
    from solver.run import _initial_state  # the driver's own initial state

    return op_factory, _initial_state(case, op, ref)[0], case


def run_explicit(op_factory, p, U0, t_end, scheme="ssp-rk33", cfl=0.9):
    """Explicit run; returns (U, info dict)."""
    from solver.stepper import ExplicitStepper

    op = op_factory(p)
    st = ExplicitStepper(op, scheme, cfl=cfl)
    U = U0.copy()
    t0 = time.perf_counter()
    t, steps = st.advance(U, 0.0, t_end)
    wall = time.perf_counter() - t0
    return U, dict(method=f"explicit {scheme} cfl {cfl:g}", dt=st.stable_dt(U0), steps=steps, iterations=0,
                   rhs=op.n_rhs, coarse_rhs=0, wall=wall, unconverged=0)


def run_dual(op_factory, p, U0, t_end, cfg):
    """Dual-time run with settings ``cfg`` (see solver.dualtime.build_dual_stepper); returns (U, info)."""
    from solver.dualtime import DualTimeWarning, build_dual_stepper
    import warnings

    op = op_factory(p)
    st = build_dual_stepper(op_factory, cfg, op=op)
    U = U0.copy()
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DualTimeWarning)
        t, steps = st.advance(U, 0.0, t_end)
    wall = time.perf_counter() - t0
    tot = st.totals
    mg = "p-multigrid " + "-".join(str(d) for d in st.mg.degrees) if st.mg is not None else "RK only"
    return U, dict(method=f"{cfg['scheme']} {mg}", dt=cfg["dt"], steps=steps,
                   iterations=tot["iterations"] / max(steps, 1), rhs=tot["rhs"], coarse_rhs=tot["coarse_rhs"],
                   wall=wall, unconverged=tot["unconverged"])


def _l2(a, b):
    return float(np.sqrt(np.mean((a[..., 0] - b[..., 0]) ** 2)))


def _warm_up(op_factory, p, U0, cfg):
    # compile every kernel once (numba caches), so the timings exclude JIT
    run_explicit(op_factory, p, U0, 1e-3)
    for mg in (False, True):
        c = dict(cfg, multigrid=mg, max_iterations=3)
        run_dual(op_factory, p, U0, c["dt"], c)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(prog="python -m tools.dual_bench", description=__doc__.split("\n")[0])
    ap.add_argument("--case", help="case file (default: the vortex problem)")
    ap.add_argument("--mach", type=float, default=0.5, help="vortex: free-stream Mach number")
    ap.add_argument("--degree", type=int, default=4, help="vortex: solution degree")
    ap.add_argument("--elements", type=int, default=8, help="vortex: elements per side of the box [-5, 5]^2")
    ap.add_argument("--end", type=float, default=None, help="end time (vortex default 2; case: its [time] end)")
    ap.add_argument("--dt", default=None, help="comma-separated physical steps for dual time")
    ap.add_argument("--scheme", default="bdf2", help="physical-time scheme")
    ap.add_argument("--tolerance", type=float, default=None, help="inner tolerance (default: [pseudo] or 1e-5)")
    ap.add_argument("--drop", type=float, default=None, help="inner relative residual drop (default: [pseudo] or none)")
    ap.add_argument("--max-iterations", type=int, default=None, help="inner iteration cap (default: [pseudo] or 200)")
    ap.add_argument("--accept", type=float, default=0.5,
                    help="vortex: converged when time error <= accept * space error")
    ap.add_argument("--json", help="write the table as JSON")
    args = ap.parse_args(argv)

    from solver.dualtime import DEFAULTS, dual_settings

    rows = []
    if args.case:
        op_factory, U0, case = case_setup(args.case)
        p = case.scheme.degree
        t_end = args.end if args.end is not None else case.time.end
        if t_end is None:
            ap.error("the case gives steps, not an end time: pass --end")
        base = dual_settings(case)
        if base is None:  # an explicit case: it is the reference as written
            base = dict(DEFAULTS, scheme=args.scheme, dt=None, degree=p)
            exp_scheme, exp_cfl = case.time.scheme, case.time.cfl
        else:
            exp_scheme, exp_cfl = "ssp-rk33", 0.9
        dts = [float(x) for x in args.dt.split(",")] if args.dt else [base["dt"]]
        if dts[0] is None:
            ap.error("the case is explicit: pass --dt for the dual-time runs")
        title = f"case {case.path.name}: degree {p}, {U0.shape[0]} elements, end {t_end:g}"
        ref_U = None
        exact_err = None
    else:
        p = args.degree
        op_factory, U0, exact = vortex_setup(p, args.elements, mach=args.mach)
        t_end = 2.0 if args.end is None else args.end
        base = dict(DEFAULTS, scheme=args.scheme, degree=p)
        exp_scheme, exp_cfl = "ssp-rk33", 0.9
        dts = [float(x) for x in args.dt.split(",")] if args.dt else [0.05, 0.1, 0.2, 0.4]
        title = (f"isentropic vortex, Mach {args.mach:g}, degree {p}, {args.elements}x{args.elements} elements "
                 f"on [-5, 5]^2, end {t_end:g}")
    for key, v in (("tolerance", args.tolerance), ("drop", args.drop), ("max_iterations", args.max_iterations)):
        if v is not None:
            base[key] = v
    import numba

    print(title)
    print(f"  {numba.get_num_threads()} numba threads; load average {os.getloadavg()[0]:.2f} "
          f"(timings on a loaded machine are noisy)")
    _warm_up(op_factory, p, U0, dict(base, dt=dts[0]))
    Uexp, info = run_explicit(op_factory, p, U0, t_end, exp_scheme, exp_cfl)
    if args.case:
        ref_U = Uexp
        info["time_error"] = 0.0
    else:
        ref_U, _ = run_explicit(op_factory, p, U0, t_end, "ssp-rk54", 0.25)
        exact_err = _l2(ref_U, exact(t_end))
        info["time_error"] = _l2(Uexp, ref_U)
    rows.append(info)
    for dt in dts:
        for mg in (False, True):
            cfg = dict(base, dt=dt, multigrid=mg)
            try:
                U, r = run_dual(op_factory, p, U0, t_end, cfg)
            except FloatingPointError as exc:  # unconverged inner iterations can let the state run away
                print(f"  {cfg['scheme']} dt {dt:g} {'with' if mg else 'without'} p-multigrid: {exc}")
                continue
            r["time_error"] = _l2(U, ref_U)
            rows.append(r)
    hdr = (f"  {'method':34s} {'dt':>9s} {'steps':>6s} {'inner/step':>10s} {'fine RHS':>9s} {'coarse RHS':>10s} "
           f"{'wall s':>8s} {'time err':>9s}")
    print(hdr)
    for r in rows:
        flag = "" if not r["unconverged"] else f"  ({r['unconverged']} steps unconverged)"
        print(f"  {r['method']:34s} {r['dt']:9.3e} {r['steps']:6d} {r['iterations']:10.1f} {r['rhs']:9d} "
              f"{r['coarse_rhs']:10d} {r['wall']:8.2f} {r['time_error']:9.2e}{flag}")
    out = dict(title=title, rows=rows)
    if exact_err is not None:
        out["space_error"] = exact_err
        print(f"  space error of the reference against the exact vortex: {exact_err:.2e}; converged answer: "
              f"time error <= {args.accept:g} x that = {args.accept * exact_err:.2e}")
        for mg in (False, True):
            ok = [r for r in rows[1:] if r["time_error"] <= args.accept * exact_err
                  and (("multigrid" in r["method"]) == mg) and not r["unconverged"]]
            if ok:
                best = min(ok, key=lambda r: r["wall"])
                print(f"  fastest converged dual-time run {'with' if mg else 'without'} p-multigrid: dt "
                      f"{best['dt']:g}, {best['wall']:.2f} s (explicit: {rows[0]['wall']:.2f} s)")
            else:
                print(f"  no dual-time run {'with' if mg else 'without'} p-multigrid met the acceptance")
    if args.json:
        write_json(args.json, out)
    return 0


if __name__ == "__main__":
    sys.exit(main())
