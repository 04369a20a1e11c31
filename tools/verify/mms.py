"""``quadfr verify mms``: design order of the full Navier-Stokes operator.

Manufactured solution (solver/manufactured.py; Roache 2002; Salari & Knupp
2000) on a periodic, smoothly warped curved mesh of the unit square: the
time-dependent source is added to the residual, the run starts from the exact
state and the L2 density error at t = 0.1 gives the observed order.

The density is the strict variable: with BR2 common values it converges at
order p only (p >= 2) in this viscous-dominated flow (element Reynolds number
of order one), see solver/kernels/fr_viscous.py; the default LDG values give
p + 1.  The meshes are in the asymptotic range of the LDG scheme: p = 2
approaches 3 from below (2.65 from 6 to 12 elements, 2.99 from 12 to 24).
"""
from __future__ import annotations

import math
import time

import numpy as np

from tools.jsonio import write_json

__all__ = ["run_mms", "verify_mms", "ManufacturedSource", "LEVELS", "T_END"]

#: elements per side of the mesh sequences, by form and degree
LEVELS = {"quick": {1: (8, 16), 2: (12, 24), 3: (6, 12)},
          "full": {1: (8, 16, 32), 2: (6, 12, 24), 3: (6, 12, 24)}}
#: end time of every run
T_END = 0.1


class ManufacturedSource:
    """Residual source term ``+S(x, t)`` at the solution points (``sources`` hook of FROperator)."""

    def __init__(self, flow, xy):
        self.flow = flow
        self.x = np.ascontiguousarray(xy[..., 0])
        self.y = np.ascontiguousarray(xy[..., 1])

    def apply(self, t, U, R):
        R += self.flow.source(self.x, self.y, t)


def run_mms(p: int, nel: int, t_end: float = T_END, q: int = 3, warp: float = 0.04, flow=None,
            scheme: str = "ldg") -> dict:
    """One manufactured-solution run on ``nel x nel`` elements of degree ``p``.

    Parameters
    ----------
    p, nel : int
    t_end : float
    q : int
        Geometry degree of the mesh; ``warp`` its interior warping amplitude.
    flow : solver.manufactured.ManufacturedFlow, optional
        Default :data:`solver.manufactured.DEFAULT_FLOW`.
    scheme : str
        Viscous scheme (``solver.operator.VISCOUS_SCHEMES``).

    Returns
    -------
    dict
        ``p, elements, dof, h, error`` (L2 density error), ``errors`` (per
        conserved variable), ``steps, wall``.
    """
    from meshing.box import box_mesh
    from solver.basis import make_basis
    from solver.manufactured import DEFAULT_FLOW
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    flow = flow or DEFAULT_FLOW
    g = flow.gamma
    mach = 0.5
    ref = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (g * mach * mach), gamma=g, mach=mach)
    mesh = box_mesh(nel, nel, q=q, warp=warp, name=f"mms-{nel}")
    op = FROperator(mesh, make_basis(p), g, flux="roe", ref=ref,
                    viscosity=dict(mu=flow.mu, prandtl=flow.prandtl, scheme=scheme))
    xy = op.metrics.xy
    op.sources.append(ManufacturedSource(flow, xy))
    U = np.ascontiguousarray(flow.state(xy[..., 0], xy[..., 1], 0.0))
    st = ExplicitStepper(op, "ssp-rk54", cfl=0.8)
    t0 = time.perf_counter()
    t, steps = st.advance(U, 0.0, t_end)
    wall = time.perf_counter() - t0
    Ue = flow.state(xy[..., 0], xy[..., 1], t)
    w, J = op.basis.w, op.metrics.J
    err = {}
    for k, name in enumerate(("rho", "rhou", "rhov", "rhoE")):
        err[name] = float(math.sqrt(np.einsum("i,j,eij,eij->", w, w, J, (U[..., k] - Ue[..., k]) ** 2)))
    return dict(p=p, elements=nel * nel, dof=op.ndof, h=1.0 / nel, error=err["rho"], errors=err, steps=steps,
                wall=wall)


def verify_mms(quick: bool = False, json_path: str | None = None, printer=print) -> dict:
    """Observed L2 order of the density error >= p + 0.7 for p = 1..3 (last two meshes of :data:`LEVELS`)."""
    meshes = LEVELS["quick" if quick else "full"]
    from solver.manufactured import DEFAULT_FLOW as F
    printer("manufactured solution, full compressible Navier-Stokes (Roache 2002; Salari & Knupp 2000)")
    printer(f"  periodic unit square, warped curved mesh (q = 3); mu = {F.mu}, Pr = {F.prandtl}, gamma = {F.gamma}; "
            f"LDG viscous common values, Roe flux, SSP-RK(5,4), t_end = {T_END}")
    printer(f"  {'p':>2} {'elements':>9} {'DoF':>7} {'L2 rho error':>13} {'order':>6} {'L2 rhoE error':>14} "
            f"{'order':>6}")
    rows, passed = [], True
    for p, levels in meshes.items():
        prev = None
        for nel in levels:
            r = run_mms(p, nel)
            if prev:
                dh = math.log(prev["h"] / r["h"])
                r["order"] = math.log(prev["error"] / r["error"]) / dh
                r["order_rhoE"] = math.log(prev["errors"]["rhoE"] / r["errors"]["rhoE"]) / dh
            rows.append(r)
            o = f"{r['order']:6.2f}" if "order" in r else "     -"
            oE = f"{r['order_rhoE']:6.2f}" if "order" in r else "     -"
            printer(f"  {p:2d} {r['elements']:9d} {r['dof']:7d} {r['error']:13.3e} {o} {r['errors']['rhoE']:14.3e} "
                    f"{oE}")
            prev = r
        ok = prev["order"] >= p + 0.7
        passed &= ok
        printer(f"     p = {p}: observed order {prev['order']:.2f}, expected >= {p + 0.7:.1f}: {'PASS' if ok else 'FAIL'}")
    printer(f"mms: {'PASS' if passed else 'FAIL'}")
    out = {"check": "mms", "passed": bool(passed), "rows": rows, "reference": "Roache 2002; Salari & Knupp 2000"}
    if json_path:
        write_json(json_path, out)
    return out
