"""Steady states by local pseudo-time stepping (solver/steady.py).

The fixed point is checked against compressible Couette flow (White, Viscous
Fluid Flow, 3rd ed. 2006, sec. 3-2.2, from memory; tools/verify/couette.py)
and against the same semi-discrete system marched to its steady state in
physical time by SSP-RK(5,4): local time stepping and multigrid may change
the path, not the fixed point.
"""
from __future__ import annotations

import numpy as np
import pytest

from meshing.box import box_mesh
from solver.basis import make_basis
from solver.initial import conserved, primitive
from solver.operator import FROperator
from solver.steady import SteadySolver, prolong_state, solve_steady, solve_steady_sequence, steady_levels
from tools.verify.couette import GAMMA, MACH, PR, RE, exact

REF = dict(rho=1.0, u=1.0, v=0.0, p=1.0 / (GAMMA * MACH ** 2), gamma=GAMMA, mach=MACH)
GM2 = GAMMA * MACH ** 2


@pytest.fixture(scope="module")
def couette():
    mesh = box_mesh(2, 4, extent=(0.0, 0.5, 0.0, 1.0), q=2, periodic=(True, False))
    bcs = {"bottom": ("isothermal-wall", {"temperature": 1.0}),
           "top": ("isothermal-wall", {"temperature": 1.1, "u": 1.0})}

    def fac(p):
        return FROperator(mesh, make_basis(p), GAMMA, flux="roe", ref=REF, boundaries=bcs,
                          viscosity=dict(mu=1.0 / RE, prandtl=PR))
    return fac


def _at_rest(op):
    y = op.metrics.xy[..., 1]
    return conserved(np.ones_like(y), 0 * y, 0 * y, np.full_like(y, REF["p"]), GAMMA)


def _u_T(U):
    rho, u, _, p = primitive(U, GAMMA)
    return u, GM2 * p / rho


@pytest.mark.parametrize("multigrid", [False, True])
def test_steady_couette_is_the_time_marched_fixed_point(couette, multigrid):
    from solver.stepper import ExplicitStepper

    levels = steady_levels(couette, 2, multigrid=multigrid)
    op = levels[0].op
    U = _at_rest(op)                                      # walls start the flow: an impulsive start
    res = solve_steady(levels, U, multigrid=multigrid, tolerance=1e-10, drop=None, max_iterations=30000)
    assert res.converged and res.reason == "tolerance" and res.residual <= 1e-10
    assert res.rhs > 0 and (res.coarse_rhs > 0) == multigrid
    # the explicit physical-time march of the same operator, from the exact solution to t = 2.5 (as in
    # verify couette: the slowest mode decays like exp(-pi^2 nu t), below 1e-6 of its start by then)
    y = op.metrics.xy[..., 1]
    ue, Te = exact(y, 1.0, 1.1)
    V = conserved(GM2 * REF["p"] / Te, ue, 0 * ue, np.full_like(ue, REF["p"]), GAMMA)
    ExplicitStepper(couette(2), "ssp-rk54", cfl=0.9).advance(V, 0.0, 2.5)
    u, T = _u_T(U)
    uv, Tv = _u_T(V)
    # velocity and temperature do not depend on the pressure level, which a closed channel leaves free
    # (local steps do not conserve the total mass exactly, so the density level may differ)
    assert np.abs(u - uv).max() <= 1e-7
    assert np.abs(T - Tv).max() <= 1e-8
    # and both are the exact solution to the discretisation error (White)
    assert np.abs(u - ue).max() <= 3e-5 and np.abs(T - Te).max() <= 3e-6


def test_multigrid_needs_fewer_fine_residuals(couette):
    counts = {}
    for mg in (False, True):
        levels = steady_levels(couette, 3, multigrid=mg)
        U = _at_rest(levels[0].op)
        counts[mg] = solve_steady(levels, U, multigrid=mg, tolerance=1e-8, drop=None,
                                  max_iterations=40000).rhs
    assert counts[True] < 0.5 * counts[False], counts


def test_sequence_reaches_the_fixed_point_of_the_final_degree(couette):
    levels = steady_levels(couette, 3)
    U = _at_rest(levels[0].op)
    solve_steady(levels, U, tolerance=1e-10, drop=None, max_iterations=30000)
    U1 = _at_rest(couette(1))
    V, results, last = solve_steady_sequence(couette, (1, 3), U1, stages={1: dict(drop=1e-3, tolerance=None)},
                                             tolerance=1e-10, drop=None, max_iterations=30000)
    assert [r.degree for r in results] == [1, 3] and results[0].reason == "drop"
    assert results[-1].converged and last[0].op.p == 3 and V.shape == U.shape
    assert np.abs(_u_T(V)[0] - _u_T(U)[0]).max() <= 1e-7


def test_prolong_state_keeps_the_polynomial():
    # a polynomial of degree 2 in (r, s) sampled at the degree-2 points equals, after prolongation, the same
    # polynomial at the degree-4 points (numpy.polynomial evaluates the reference)
    b2, b4 = make_basis(2), make_basis(4)
    rng = np.random.default_rng(3)
    c = rng.normal(size=(3, 3, 4))

    def sample(x):
        return np.einsum("abv,ia,jb->ijv", c, np.vander(x, 3, increasing=True), np.vander(x, 3, increasing=True))

    U2 = np.stack([sample(b2.x)] * 2)
    U4 = prolong_state(U2, b2, b4)
    assert np.abs(U4 - np.stack([sample(b4.x)] * 2)).max() <= 1e-12
    assert np.abs(prolong_state(U4, b4, b2) - U2).max() <= 1e-12


def test_bad_arguments_are_refused(couette):
    levels = steady_levels(couette, 2)
    s = SteadySolver(levels)
    U = _at_rest(levels[0].op)
    with pytest.raises(ValueError, match="tolerance or a residual drop"):
        s.solve(U, tolerance=None, drop=None)
    with pytest.raises(ValueError, match="does not match"):
        s.solve(U[:, :2, :2])
    with pytest.raises(ValueError, match="drop must be in"):
        s.solve(U, drop=2.0)
    with pytest.raises(ValueError, match="coarsest"):
        steady_levels(couette, 2, coarsest=3)
    with pytest.raises(ValueError, match="strictly increasing"):
        solve_steady_sequence(couette, (2, 1), U)
    with pytest.raises(ValueError, match="not in the sequence"):
        solve_steady_sequence(couette, (1, 2), U, stages={3: {}})


def test_stops_at_max_iterations_unconverged(couette):
    levels = steady_levels(couette, 2)
    U = _at_rest(levels[0].op)
    res = solve_steady(levels, U, tolerance=1e-14, drop=None, max_iterations=5, history_every=2)
    assert not res.converged and res.reason == "max_iterations" and res.iterations == 5
    assert [h["iteration"] for h in res.history] == [0, 2, 4, 5]
