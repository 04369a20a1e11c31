"""``quadfr bench``: throughput of the FR residual (RHS) in MDoF/s.

DoF = solution points x 4 conserved variables.  Measured on a periodic,
warped (curved, q = 2) box with an isentropic-vortex state, for p = 1..6,
with one thread and with all threads, plus the speed-up over the plain-numpy
reference implementation (tests/reference_fr.py, measured in the same run
on a smaller mesh because it is slow) and the JIT compile time (a fresh
process with an empty numba cache).
"""
from __future__ import annotations

import math
import os
import platform
import subprocess
import sys
import tempfile
import time

import numpy as np

from tools.jsonio import write_json

__all__ = ["main", "measure_rhs", "time_per_call"]


def _operator(p: int, nel: int, viscous: bool = False, flux: str = "roe"):
    from meshing.box import box_mesh
    from solver.basis import make_basis
    from solver.initial import isentropic_vortex
    from solver.operator import FROperator

    g = 1.4
    mach = 0.5
    ref = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (g * mach * mach), gamma=g)
    mesh = box_mesh(nel, nel, extent=(-10, 10, -10, 10), q=2, warp=0.03)
    kw = {}
    if viscous:
        kw = dict(viscosity=dict(mu=1e-3, prandtl=0.72, law="constant"))
    op = FROperator(mesh, make_basis(p), g, flux=flux, ref=ref, **kw)
    U = isentropic_vortex(op.metrics.xy, ref, 5.0, 1.0, (0.0, 0.0), 0.0, (20.0, 20.0))
    return op, U


def time_per_call(fn, min_time: float = 0.5, min_calls: int = 3) -> float:
    """Mean wall seconds of one call of ``fn()``.

    ``fn`` is called once untimed (JIT compilation, first-touch memory), then
    repeatedly until at least ``min_time`` seconds and ``min_calls`` calls
    have passed, so that short calls are averaged over many repeats.

    Parameters
    ----------
    fn : callable
        Called with no arguments; its result is ignored.
    min_time : float
        Shortest timed span, seconds.
    min_calls : int
        Fewest timed calls.

    Returns
    -------
    float
        Timed span divided by the number of timed calls.
    """
    fn()
    t0 = time.perf_counter()
    k = 0
    while True:
        fn()
        k += 1
        el = time.perf_counter() - t0
        if el >= min_time and k >= min_calls:
            return el / k


def measure_rhs(p: int, nel: int, threads: int, viscous: bool = False, min_time: float = 0.5,
                flux: str = "roe") -> dict:
    """Seconds per RHS evaluation and MDoF/s for one degree, mesh and thread count."""
    import numba

    op, U = _operator(p, nel, viscous, flux)
    R = np.empty_like(U)
    old = numba.get_num_threads()
    numba.set_num_threads(threads)
    try:
        sec = time_per_call(lambda: op.rhs(0.0, U, R), min_time)
    finally:
        numba.set_num_threads(old)
    return dict(p=p, elements=nel * nel, dof=op.ndof, threads=threads, seconds=sec, mdofs=op.ndof / sec / 1e6)


def _numpy_reference_seconds(p: int, nel: int) -> tuple[float, int]:
    here = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "tests")
    sys.path.insert(0, here)
    try:
        from reference_fr import residual_np
    finally:
        sys.path.remove(here)
    op, U = _operator(p, nel)
    t0 = time.perf_counter()
    residual_np(U, op.metrics, op.basis, op.mesh, op.gamma, "rusanov")
    return time.perf_counter() - t0, op.ndof


def _compile_seconds() -> float:
    """Wall time of the first RHS call in a fresh process with an empty numba cache, minus a warm call."""
    code = ("import time, numpy as np; from tools.bench import _operator; op, U = _operator(3, 8); "
            "R = np.empty_like(U); t = time.perf_counter(); op.rhs(0.0, U, R); a = time.perf_counter() - t; "
            "t = time.perf_counter(); op.rhs(0.0, U, R); b = time.perf_counter() - t; print(a - b)")
    with tempfile.TemporaryDirectory() as d:
        env = dict(os.environ, NUMBA_CACHE_DIR=d)
        root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=root)
    if out.returncode != 0:
        raise RuntimeError(f"compile-time probe failed: {out.stderr.strip()[-400:]}")
    return float(out.stdout.strip().splitlines()[-1])


def _nel_for(p: int, dof: float) -> int:
    return max(2, int(round(math.sqrt(dof / (4 * (p + 1) ** 2)))))


def main(args=None, printer=print) -> dict:
    """Run the benchmark; ``args`` has ``json`` (path or None) and ``quick`` (bool)."""
    import numba

    quick = bool(getattr(args, "quick", False))
    json_path = getattr(args, "json", None)
    nthreads = numba.config.NUMBA_NUM_THREADS
    target = 1e5 if quick else 4e5
    degrees = (1, 3) if quick else (1, 2, 3, 4, 5, 6)
    res = {"machine": {"python": platform.python_version(), "numba": numba.__version__,
                       "cpu_count": os.cpu_count(), "threads": nthreads, "platform": platform.platform()},
           "dof_definition": "solution points x 4 conserved variables", "euler": [], "scaling": []}
    printer(f"quadfr bench: FR residual throughput (DoF = solution points x 4), {nthreads} threads available")
    for viscous in ((False,) if not _has_viscous() else (False, True)):
        key = "navier_stokes" if viscous else "euler"
        res.setdefault(key, [])
        printer(f"\n{key.replace('_', '-')} RHS, periodic warped box (q = 2), Roe flux")
        printer(f"  {'p':>2} {'DoF':>9} {'1 thread MDoF/s':>16} {f'{nthreads} threads MDoF/s':>18}")
        for p in degrees:
            nel = _nel_for(p, target)
            one = measure_rhs(p, nel, 1, viscous)
            allt = measure_rhs(p, nel, nthreads, viscous) if nthreads > 1 else one
            res[key].append({"p": p, "dof": one["dof"], "mdofs_1": one["mdofs"], "mdofs_all": allt["mdofs"],
                             "threads_all": nthreads})
            printer(f"  {p:2d} {one['dof']:9d} {one['mdofs']:16.1f} {allt['mdofs']:18.1f}")
    # cost per DoF across sizes, p = 3, one thread
    printer("\ncost per DoF across mesh sizes (Euler, p = 3, 1 thread)")
    sizes = (1e4, 1e5) if quick else (1e4, 1e5, 1e6)
    for dof in sizes:
        m = measure_rhs(3, _nel_for(3, dof), 1)
        ns = m["seconds"] / m["dof"] * 1e9
        res["scaling"].append({"dof": m["dof"], "ns_per_dof": ns})
        printer(f"  {m['dof']:9d} DoF: {ns:6.2f} ns/DoF")
    c = [r["ns_per_dof"] for r in res["scaling"]]
    res["scaling_spread"] = max(c) / min(c) - 1.0
    printer(f"  spread (max/min - 1): {100 * res['scaling_spread']:.0f} %")
    # speed-up over numpy
    nel = _nel_for(3, 2e4)
    tnp, dof = _numpy_reference_seconds(3, nel)
    tnb = measure_rhs(3, nel, 1, flux="rusanov")["seconds"]
    res["numpy_speedup"] = {"p": 3, "dof": dof, "numpy_seconds": tnp, "numba_seconds_1thread": tnb,
                            "speedup": tnp / tnb}
    printer(f"\nspeed-up over the numpy reference (p = 3, {dof} DoF, 1 thread, Rusanov flux in both): "
            f"{tnp / tnb:.0f}x ({tnp * 1e3:.0f} ms vs {tnb * 1e3:.2f} ms)")
    res["compile_seconds"] = _compile_seconds()
    printer(f"JIT compile time (first RHS call, empty cache): {res['compile_seconds']:.1f} s")
    if json_path:
        write_json(json_path, res)
    return res


def _has_viscous() -> bool:
    import inspect

    from solver.operator import FROperator
    return "viscosity" in inspect.signature(FROperator).parameters
