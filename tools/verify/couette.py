"""``quadfr verify couette``: compressible Couette flow with viscous heating.

Exact solution (White, Viscous Fluid Flow, 3rd ed. 2006, sec. 3-2.2, from
memory): between a wall at rest (y = 0, temperature T0) and a wall sliding
at speed U (y = H, temperature T1), with constant viscosity and pressure,

    u = U y/H,
    T = T0 + (T1 - T0) y/H + (Pr U^2 / (2 cp)) (y/H)(1 - y/H).

In our units (U = H = 1, temperatures in free-stream units) ``U^2/cp =
(gamma - 1) M^2``.  With T0 = T1 the heat flux into each wall is
``mu U^2 / (2H)``.
"""
from __future__ import annotations

import math
import time

import numpy as np

from tools.jsonio import write_json

__all__ = ["run_couette", "verify_couette"]

GAMMA = 1.4
MACH = 0.2
RE = 5.0
PR = 0.72


def exact(y, T0, T1):
    """Velocity and temperature of the exact solution at heights y."""
    return y, T0 + (T1 - T0) * y + PR * (GAMMA - 1) * MACH ** 2 / 2 * y * (1 - y)


def run_couette(p: int, ny: int, T0: float = 1.0, T1: float = 1.1, t_end: float = 2.5, q: int = 2,
                warp: float = 0.0) -> dict:
    """March from the exact state to the discrete steady state; L2 errors of u and T, wall heat flux."""
    from meshing.box import box_mesh
    from solver.basis import make_basis
    from solver.initial import conserved, primitive
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    ref = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (GAMMA * MACH ** 2), gamma=GAMMA, mach=MACH)
    mesh = box_mesh(2, ny, extent=(0.0, 0.5, 0.0, 1.0), q=q, warp=warp, periodic=(True, False))
    bcs = {"bottom": ("isothermal-wall", {"temperature": T0}),
           "top": ("isothermal-wall", {"temperature": T1, "u": 1.0})}
    op = FROperator(mesh, make_basis(p), GAMMA, flux="roe", ref=ref, boundaries=bcs,
                    viscosity=dict(mu=1.0 / RE, prandtl=PR))
    gm2 = GAMMA * MACH ** 2
    y = op.metrics.xy[..., 1]
    ue, Te = exact(y, T0, T1)
    U = conserved(gm2 * ref["p"] / Te, ue, 0 * ue, np.full_like(ue, ref["p"]), GAMMA)
    st = ExplicitStepper(op, "ssp-rk54", cfl=0.9)
    t0 = time.perf_counter()
    _, steps = st.advance(U, 0.0, t_end)
    wall = time.perf_counter() - t0
    R = np.empty_like(U)
    op.rhs(0.0, U, R)
    rho, u, v, pr = primitive(U, GAMMA)
    T = gm2 * pr / rho
    w, J = op.basis.w, op.metrics.J
    area = np.einsum("i,j,eij->", w, w, J)

    def l2(a):
        return float(math.sqrt(np.einsum("i,j,eij,eij->", w, w, J, a * a) / area))

    # heat flux through the wall at rest: the energy part of the viscous wall flux (BR2 lifting; velocity 0 there)
    faces = mesh.boundary_faces["bottom"]
    fv = op.Fvf[faces[:, 0], faces[:, 1], :, 3] / op.metrics.mag[faces[:, 0], faces[:, 1]]
    return dict(p=p, ny=ny, dof=op.ndof, h=1.0 / ny, err_u=l2(u - ue), err_T=l2(T - Te),
                wall_heat_flux=float(np.mean(np.abs(fv))), residual=float(np.abs(R).max()), steps=steps,
                wall=wall)


def verify_couette(quick: bool = False, json_path: str | None = None, printer=print) -> dict:
    """Observed orders of u and T (>= p + 0.7) and the wall heat flux (within 1 %)."""
    meshes = {1: (4, 8), 2: (2, 4), 3: (2, 4)} if quick else {1: (4, 8, 16), 2: (4, 8, 16), 3: (4, 8, 16)}
    printer("compressible Couette flow with viscous heating (White, Viscous Fluid Flow)")
    printer(f"  Mach {MACH}, Re {RE} (wall speed, gap), Pr {PR}, constant viscosity, walls T0 = 1, T1 = 1.1; "
            "LDG interior faces, BR2 lifting (penalty 5) at the walls, Roe flux, SSP-RK(5,4), steady state reached by time marching to t = 2.5 (slowest mode decays as exp(-pi^2 nu t))")
    printer(f"  {'p':>2} {'cells':>5} {'DoF':>6} {'L2 u error':>11} {'order':>6} {'L2 T error':>11} {'order':>6}")
    rows, passed = [], True
    for p, levels in meshes.items():
        prev = None
        for ny in levels:
            r = run_couette(p, ny)
            if prev:
                r["order_u"] = math.log(prev["err_u"] / r["err_u"]) / math.log(prev["h"] / r["h"])
                r["order_T"] = math.log(prev["err_T"] / r["err_T"]) / math.log(prev["h"] / r["h"])
            rows.append(r)
            ou = f"{r['order_u']:6.2f}" if "order_u" in r else "     -"
            oT = f"{r['order_T']:6.2f}" if "order_T" in r else "     -"
            printer(f"  {p:2d} {ny:5d} {r['dof']:6d} {r['err_u']:11.3e} {ou} {r['err_T']:11.3e} {oT}")
            prev = r
        ok = prev["order_u"] >= p + 0.7 and prev["order_T"] >= p + 0.7
        passed &= ok
        printer(f"     p = {p}: orders u {prev['order_u']:.2f}, T {prev['order_T']:.2f}, expected >= {p + 0.7:.1f}: "
                f"{'PASS' if ok else 'FAIL'}")
    hf = run_couette(2, 4, T0=1.0, T1=1.0)
    expect = 1.0 / (2.0 * RE)
    dev = abs(hf["wall_heat_flux"] / expect - 1.0)
    okq = dev <= 0.01
    passed &= okq
    printer(f"  equal wall temperatures: wall heat flux {hf['wall_heat_flux']:.6f}, exact mu U^2/(2H) = {expect:.6f} "
            f"({100 * dev:.3f} %, limit 1 %): {'PASS' if okq else 'FAIL'}")
    printer(f"couette: {'PASS' if passed else 'FAIL'}")
    out = {"check": "couette", "passed": bool(passed), "rows": rows, "heat_flux": hf,
           "reference": "White, Viscous Fluid Flow (2006)"}
    if json_path:
        write_json(json_path, out)
    return out
