"""``quadfr verify vortex``: design order of the Euler operator on the isentropic vortex.

The vortex of Shu (1998) with the parameters of Yee, Sandham & Djomehri
(1999): strength beta = 5, radius 1, gamma = 1.4, free stream rho = 1,
p = 1 in their units; here written for our free stream (speed 1 along
(1, 1)/sqrt 2, Mach sqrt(2/gamma) so that the velocity is (1, 1) in their
units).  It is carried across a periodic, smoothly warped curved box of
side 20 (velocity perturbation e^{-49.5} ~ 3e-22 at the box edge, so the
tail sets no error floor) and compared with the exact advected vortex.
"""
from __future__ import annotations

import math
import time

import numpy as np

from tools.jsonio import write_json

__all__ = ["run_vortex_case", "verify_vortex"]

GAMMA = 1.4
BETA = 5.0
HALF = 10.0


def _reference():
    # Yee et al.: rho = p = 1, velocity (1, 1); in our units (speed 1) that is
    # Mach |(1,1)| / sqrt(gamma) = sqrt(2/gamma) at 45 degrees.
    mach = math.sqrt(2.0 / GAMMA)
    ang = math.pi / 4
    return dict(rho=1.0, u=math.cos(ang), v=math.sin(ang), p=1.0 / (GAMMA * mach * mach), gamma=GAMMA,
                mach=mach)


def run_vortex_case(p: int, nel: int, t_end: float = 2.0, q: int = 3, warp: float = 0.02,
                    flux: str = "roe", scheme: str = "ssp-rk54", cfl: float = 0.5, correction="dg",
                    points: str = "gauss-legendre") -> dict:
    """One run: returns DoF, L2 density error, steps and wall time."""
    from meshing.box import box_mesh
    from solver.basis import make_basis
    from solver.initial import isentropic_vortex
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    ref = _reference()
    mesh = box_mesh(nel, nel, extent=(-HALF, HALF, -HALF, HALF), q=q, warp=warp, name=f"vortex-{nel}")
    basis = make_basis(p, points, correction, scheme)
    op = FROperator(mesh, basis, GAMMA, flux=flux, ref=ref)
    xy = op.metrics.xy
    period = (2 * HALF, 2 * HALF)
    U = isentropic_vortex(xy, ref, BETA, 1.0, (0.0, 0.0), 0.0, period)
    st = ExplicitStepper(op, scheme, cfl=cfl)
    t0 = time.perf_counter()
    t, steps = st.advance(U, 0.0, t_end)
    wall = time.perf_counter() - t0
    Ue = isentropic_vortex(xy, ref, BETA, 1.0, (0.0, 0.0), t, period)
    w = basis.w
    J = op.metrics.J
    err2 = np.einsum("i,j,eij,eij->", w, w, J, (U[..., 0] - Ue[..., 0]) ** 2)
    area = np.einsum("i,j,eij->", w, w, J)
    return dict(p=p, elements=nel * nel, dof=op.ndof, h=2 * HALF / nel, error=float(math.sqrt(err2 / area)),
                steps=steps, wall=wall, t_end=t)


def verify_vortex(quick: bool = False, json_path: str | None = None, printer=print) -> dict:
    """Observed L2 order of the density error for p = 1..4 (quick: 1..3).

    PASS when the order between the two finest meshes is >= p + 1 - 0.3.
    """
    degrees = (1, 2, 3) if quick else (1, 2, 3, 4)
    # meshes in the asymptotic range for each degree (elements per side of the box)
    meshes = {1: (32, 64), 2: (16, 32), 3: (16, 32)} if quick else \
        {1: (16, 32, 64), 2: (16, 32, 64), 3: (8, 16, 32), 4: (16, 32, 64)}
    ref = _reference()
    printer("isentropic vortex (Shu 1998; parameters of Yee, Sandham & Djomehri 1999)")
    printer(f"  beta = {BETA}, radius = 1, gamma = {GAMMA}, Mach = {ref['mach']:.4f} at 45 deg, "
            f"periodic box [-{HALF:g}, {HALF:g}]^2 warped (q = 3), t_end = 2, Roe flux, SSP-RK(5,4) at 0.5 CFL")
    printer(f"  {'p':>2} {'elements':>9} {'DoF':>9} {'L2 rho error':>13} {'order':>6} {'wall s':>7}")
    rows, passed = [], True
    for p in degrees:
        prev = None
        order = float("nan")
        for nel in meshes[p]:
            r = run_vortex_case(p, nel)
            if prev is not None:
                order = math.log(prev["error"] / r["error"]) / math.log(prev["h"] / r["h"])
                r["order"] = order
            rows.append(r)
            o = f"{r['order']:6.2f}" if "order" in r else "     -"
            printer(f"  {p:2d} {r['elements']:9d} {r['dof']:9d} {r['error']:13.3e} {o} {r['wall']:7.2f}")
            prev = r
        ok = order >= p + 1 - 0.3
        passed &= ok
        printer(f"     p = {p}: observed order {order:.2f}, expected >= {p + 1 - 0.3:.1f}: {'PASS' if ok else 'FAIL'}")
    printer(f"vortex: {'PASS' if passed else 'FAIL'}")
    out = {"check": "vortex", "passed": bool(passed), "rows": rows,
           "reference": "Shu 1998; Yee, Sandham & Djomehri 1999"}
    if json_path:
        write_json(json_path, out)
    return out
