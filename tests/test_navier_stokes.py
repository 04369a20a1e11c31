"""Navier-Stokes terms (BR2 in FR form): numpy reference, invariants, exact and manufactured solutions."""
import math

import numpy as np
import pytest

from meshing.box import box_mesh
from reference_fr import ns_residual_np
from solver.basis import make_basis
from solver.initial import conserved, primitive
from solver.kernels.bcstate import ghost_state, viscous_state
from solver.operator import FROperator
from solver.stepper import ExplicitStepper

G = 1.4
M = 0.5
REF = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (G * M * M), gamma=G, mach=M)
VISC = dict(mu=0.05, prandtl=0.72)


@pytest.mark.parametrize("p,q", [(1, 2), (2, 3), (3, 2)])
@pytest.mark.parametrize("walls", [False, True])
def test_br2_kernels_equal_numpy_reference(p, q, walls):
    # the same BR2-FR maths written twice (solver/kernels/fr_viscous.py vs tests/reference_fr.py)
    rng = np.random.default_rng(10 * p + q)
    mesh = box_mesh(3, 3, q=q, warp=0.05, periodic=(True, not walls))
    bcs = {}
    if walls:
        bcs = {"bottom": ("noslip-wall", {}), "top": ("isothermal-wall", {"temperature": 1.2, "u": 0.5})}
    op = FROperator(mesh, make_basis(p), G, flux="rusanov", ref=REF, boundaries=bcs, viscosity=VISC)
    U = conserved(np.ones(op.shape[:-1]), 0.3, 0.2, REF["p"], G) * (1 + 0.05 * rng.standard_normal(op.shape))
    R = np.empty_like(U)
    op.rhs(0.0, U, R)

    def group(e, f):
        tag = next(t for t in mesh.tags if any((mesh.boundary_faces[t] == [e, f]).all(1)))
        return op.bc_tags.index(tag)

    def ghost(e, f, UL, nrm):
        g = group(e, f)
        return np.array([ghost_state(op.bcode[g], op.bprm[g], *UL[k], *nrm[k], G) for k in range(len(UL))])

    def bstate(e, f, UL, nrm):
        g = group(e, f)
        out = [viscous_state(op.bcode[g], op.bprm[g], *UL[k], *nrm[k], G) for k in range(len(UL))]
        return np.array([o[:4] for o in out]), bool(out[0][4])

    Rref = ns_residual_np(U, op.metrics, op.basis, mesh, G, VISC["mu"], VISC["prandtl"], 5.0, op.gR1,
                          "rusanov", ghost=ghost, bstate=bstate)
    assert np.abs(R - Rref).max() <= 1e-12 * np.abs(Rref).max()


@pytest.mark.parametrize("p", [1, 2, 3, 4])
def test_uniform_state_has_no_viscous_flux(p):
    # grad U = 0 for a uniform state, so tau = q = 0 and free-stream preservation holds with viscosity
    mesh = box_mesh(4, 3, q=3, warp=0.06)
    op = FROperator(mesh, make_basis(p), G, ref=REF, viscosity=VISC)
    U = conserved(np.ones(op.shape[:-1]), 0.8, 0.6, REF["p"], G)
    R = np.empty_like(U)
    op.rhs(0.0, U, R)
    assert np.abs(op.Fvt).max() <= 1e-12 and np.abs(op.Fvf).max() <= 1e-12
    h = 2 * math.sqrt(op.metrics.J.min())
    assert np.abs(R).max() * h / np.abs(U).max() <= 1e-11


def test_viscous_operator_conserves_on_periodic_mesh():
    # the viscous common flux is single-valued per face, so mass, momentum and energy are conserved
    rng = np.random.default_rng(5)
    mesh = box_mesh(4, 4, q=2, warp=0.05)
    op = FROperator(mesh, make_basis(3), G, ref=REF, viscosity=VISC)
    U = conserved(np.ones(op.shape[:-1]), 0.3, 0.2, REF["p"], G) * (1 + 0.02 * rng.standard_normal(op.shape))
    R = np.empty_like(U)
    op.rhs(0.0, U, R)
    # d/dt of the integrals is the integral of R (Gauss quadrature, exact for the FR statement)
    assert np.all(np.abs(op.integrate(R)) <= 1e-12 * np.abs(op.integrate(U)).max())


def test_couette_quick():
    # White, Viscous Fluid Flow: u = U y/H, T = T0 + (T1-T0) y/H + Pr U^2/(2 cp) (y/H)(1-y/H);
    # orders >= p + 0.7 and, with equal wall temperatures, wall heat flux mu U^2/(2H) within 1 %
    from tools.verify.couette import verify_couette
    out = verify_couette(quick=True, printer=lambda *a: None)
    assert out["passed"]


def test_taylor_green_decay():
    # 2D Taylor-Green vortex (Taylor & Green 1937): u = sin x cos y, v = -cos x sin y decays as exp(-2 nu t)
    # for incompressible flow, so the kinetic energy decays as exp(-4 nu k^2 t) with k = 1. Mach 0.1 keeps
    # compressibility small; rate over one decay time within 2 %.
    Mt = 0.1
    ref = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (G * Mt * Mt), gamma=G, mach=Mt)
    L = 2 * math.pi
    nu = 0.1
    mesh = box_mesh(6, 6, extent=(0, L, 0, L), q=2, warp=0.02)
    op = FROperator(mesh, make_basis(3), G, flux="roe", ref=ref, viscosity=dict(mu=nu, prandtl=0.72))
    x, y = op.metrics.xy[..., 0], op.metrics.xy[..., 1]
    u = np.sin(x) * np.cos(y)
    v = -np.cos(x) * np.sin(y)
    pr = ref["p"] + 0.25 * (np.cos(2 * x) + np.cos(2 * y))
    U = conserved(np.ones_like(x), u, v, pr, G)

    def ke(U):
        r, uu, vv, _ = primitive(U, G)
        return op.integrate(np.stack([0.5 * r * (uu * uu + vv * vv)] * 4, axis=-1))[0]

    k0 = ke(U)
    t_end = 1.0 / (4 * nu)  # one decay time of the energy
    st = ExplicitStepper(op, "ssp-rk54", cfl=0.9)
    st.advance(U, 0.0, t_end)
    rate = -math.log(ke(U) / k0) / t_end
    assert abs(rate / (4 * nu) - 1.0) <= 0.02


@pytest.mark.parametrize("p", [1, pytest.param(3, marks=pytest.mark.slow)])
def test_manufactured_solution_order(p):
    # method of manufactured solutions (Roache 2002; Salari & Knupp 2000), warped periodic mesh
    from tools.verify.mms import run_mms
    levels = {1: (8, 16), 3: (8, 16)}[p]
    e = [run_mms(p, n)["error"] for n in levels]
    order = math.log(e[0] / e[1], 2)
    assert order >= p + 0.7


@pytest.mark.xfail(strict=True, reason="known defect: BR2 order for p = 2 is about 1.5-2.2, under investigation")
def test_manufactured_solution_order_p2():
    from tools.verify.mms import run_mms
    e = [run_mms(2, n)["error"] for n in (4, 8)]
    assert math.log(e[0] / e[1], 2) >= 2.7


def test_manufactured_source_matches_sympy():
    # the hand-derived source of solver/manufactured.py against sympy's symbolic derivatives
    sp = pytest.importorskip("sympy")
    from solver.manufactured import DEFAULT_FLOW as F
    x, y, t = sp.symbols("x y t")

    def w(W):
        return W.a + W.b * sp.sin(W.kx * x + W.ky * y + W.w * t + W.phase)

    r, u, v, p = w(F.rho), w(F.u), w(F.v), w(F.p)
    g, mu = F.gamma, F.mu
    e = p / ((g - 1) * r)
    E = e + (u * u + v * v) / 2
    d = sp.diff
    txx = mu * (sp.Rational(4, 3) * d(u, x) - sp.Rational(2, 3) * d(v, y))
    tyy = mu * (sp.Rational(4, 3) * d(v, y) - sp.Rational(2, 3) * d(u, x))
    txy = mu * (d(u, y) + d(v, x))
    k = g * mu / F.prandtl
    qx, qy = -k * d(e, x), -k * d(e, y)
    S = [d(r, t) + d(r * u, x) + d(r * v, y),
         d(r * u, t) + d(r * u * u + p, x) + d(r * u * v, y) - d(txx, x) - d(txy, y),
         d(r * v, t) + d(r * u * v, x) + d(r * v * v + p, y) - d(txy, x) - d(tyy, y),
         d(r * E, t) + d((r * E + p) * u, x) + d((r * E + p) * v, y)
         - d(u * txx + v * txy - qx, x) - d(u * txy + v * tyy - qy, y)]
    f = sp.lambdify((x, y, t), S, "numpy")
    X = np.random.default_rng(0).uniform(0, 1, (40, 3))
    a = np.array(f(X[:, 0], X[:, 1], X[:, 2])).T
    b = F.source(X[:, 0], X[:, 1], X[:, 2])
    assert np.abs(a - b).max() <= 1e-11 * np.abs(a).max()
