"""Wall forces (solver/forces.py) against exact integrals.

* A uniform pressure on a closed body gives no force and no moment
  (divergence theorem: closed-surface integrals of n and of x x n vanish).
* Potential flow past a circular cylinder with circulation Gamma (e.g.
  Batchelor 1967, An Introduction to Fluid Dynamics, sec. 6.6; from memory):
  surface speed u_theta = -2 U sin(theta - alpha) + Gamma / (2 pi a), Bernoulli
  p = p_inf + rho (U^2 - u_theta^2) / 2; no drag (d'Alembert) and the
  Kutta-Joukowski lift rho U Gamma perpendicular to the stream (downwards in
  the stream frame for counter-clockwise Gamma > 0).
* Uniform shear u = g y over a no-slip wall: the wall shear stress is mu g
  (Newtonian fluid), so the viscous force on a wall of length l is mu g l.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from meshing.box import box_mesh
from meshing.cylinder import cylinder_mesh
from meshing.naca import naca_mesh
from solver.basis import make_basis
from solver.forces import ForceIntegrator, surface_loads, wall_pressure
from solver.initial import conserved
from solver.operator import FROperator

G = 1.4


def _ref(mach=0.2, angle=0.0):
    return dict(rho=1.0, u=math.cos(angle), v=math.sin(angle), p=1.0 / (G * mach * mach), gamma=G, mach=mach)


def _op(mesh, p, wall="wall", far="far", viscous=False):
    bcs = {t: ("noslip-wall", {}) if t == wall else ("far-field", {}) for t in mesh.tags}
    visc = dict(mu=0.01, prandtl=0.72) if viscous else None
    return FROperator(mesh, make_basis(p), G, boundaries=bcs, ref=_ref(), viscosity=visc)


@pytest.mark.parametrize("viscous", [False, True])
def test_uniform_pressure_on_a_cambered_section_gives_no_load(viscous):
    # NACA 2412: no symmetry, so nothing cancels by symmetry; the fluid is at rest at pressure p0
    mesh = naca_mesh(digits="2412", n_around=24, n_radial=4, far_chords=5.0, q=3)
    op = _op(mesh, 3, viscous=viscous)
    p0 = 17.3
    U = conserved(np.ones(op.shape[:-1]), 0.0, 0.0, p0, G)
    op.rhs(0.0, U, np.empty_like(U))
    fi = ForceIntegrator(op, ["wall"], length=1.0, moment_point=(0.25, 0.1))
    fp, fv, mp, mv = fi.loads()["total"]
    # the scale of the cancelling terms is p0 times the perimeter (about 2 chords)
    assert np.all(np.abs(fp) < 1e-13 * p0 * 2.0), fp
    assert abs(mp) < 1e-13 * p0 * 2.0
    assert np.all(fv == 0.0) and mv == 0.0  # a fluid at rest has no viscous stress


def _potential_flow_fluxes(op, gamma_circ, alpha, a=0.5, p_inf=10.0):
    """Fill op.Fc on the wall with (p n)|nS| of the potential flow, n out of the fluid."""
    faces = op.mesh.boundary_faces["wall"]
    xy = op.metrics.xyf[faces[:, 0], faces[:, 1]]
    th = np.arctan2(xy[..., 1], xy[..., 0])
    ut = -2.0 * np.sin(th - alpha) + gamma_circ / (2 * math.pi * a)
    p = p_inf + 0.5 * (1.0 - ut ** 2)
    nS = op.metrics.nrm[faces[:, 0], faces[:, 1]] * op.metrics.mag[faces[:, 0], faces[:, 1], :, None]
    op.Fc[...] = np.nan  # only the wall slots may be read
    op.Fc[faces[:, 0], faces[:, 1], :, 0] = 0.0
    op.Fc[faces[:, 0], faces[:, 1], :, 1:3] = p[..., None] * nS
    op.Fc[faces[:, 0], faces[:, 1], :, 3] = 0.0


@pytest.mark.parametrize("alpha_deg", [0.0, 30.0])
def test_potential_flow_no_drag_and_kutta_joukowski_lift(alpha_deg):
    alpha = math.radians(alpha_deg)
    gam = -1.3  # clockwise circulation: lift upwards in the stream frame
    errs = []
    for n_around in (12, 24):
        mesh = cylinder_mesh(n_radial=2, n_around=n_around, far_radius=3.0, q=3)
        op = _op(mesh, 3)
        _potential_flow_fluxes(op, gam, alpha)
        fi = ForceIntegrator(op, ["wall"], length=1.0, moment_point=(0.0, 0.0), angle=alpha, q_inf=0.5)
        c = fi.coefficients()["total"]
        cl_exact = -gam / 0.5  # L = -rho U Gamma (counter-clockwise Gamma > 0), over q D = 0.5
        errs.append(abs(c["cl"] - cl_exact))
        assert abs(c["cd"]) < 1e-12 and abs(c["cd_viscous"]) == 0.0  # zero to round-off
        assert abs(c["cm"]) < 1e-4  # pressure forces on a circle pass through its centre
        # body axes are the wind axes rotated by alpha
        assert c["cx"] == pytest.approx(c["cd"] * math.cos(alpha) - c["cl"] * math.sin(alpha), abs=1e-12)
        assert c["cy"] == pytest.approx(c["cd"] * math.sin(alpha) + c["cl"] * math.cos(alpha), abs=1e-12)
    # "within quadrature error": small, and shrinking fast with the number of faces (curved q = 3 geometry)
    assert errs[1] < 1e-5 * abs(gam) and errs[1] < errs[0] / 8, errs


def test_moment_about_another_point():
    mesh = cylinder_mesh(n_radial=2, n_around=24, far_radius=3.0, q=3)
    op = _op(mesh, 3)
    _potential_flow_fluxes(op, -1.0, 0.0)
    x0, y0 = 0.7, -0.2
    c0 = ForceIntegrator(op, ["wall"], moment_point=(0.0, 0.0)).coefficients()["total"]
    c1 = ForceIntegrator(op, ["wall"], moment_point=(x0, y0)).coefficients()["total"]
    # M(x0) = M(0) - x0 F_y + y0 F_x (z component, counter-clockwise positive)
    assert c1["cm"] == pytest.approx(c0["cm"] - x0 * c0["cy"] + y0 * c0["cx"], abs=1e-12)


def test_surface_loads_by_hand():
    # two straight faces along x with unit traction in y: force = length, moment about the origin = int x dx
    w = np.polynomial.legendre.leggauss(3)[1]
    x = np.polynomial.legendre.leggauss(3)[0]
    xyf = np.stack([np.stack([x + 1.0, np.zeros(3)], -1), np.stack([x + 3.0, np.zeros(3)], -1)])
    tr = np.zeros((2, 3, 2))
    tr[..., 1] = 1.0  # |nS| = 1 for a face of length 2
    f, m = surface_loads(tr, xyf, w)
    assert f == pytest.approx([0.0, 4.0], abs=1e-14)
    assert m == pytest.approx(8.0, abs=1e-13)  # int_0^4 x dx
    with pytest.raises(ValueError, match="quadrature weights"):
        surface_loads(tr, xyf, w[:2])


def test_viscous_shear_force_on_a_wall():
    # periodic channel of length 2 and height 1, u = g y: the bottom wall feels mu g per unit length along +x
    mesh = box_mesh(4, 3, extent=(0.0, 2.0, 0.0, 1.0), q=1, periodic=(True, False))
    gsh, mu = 0.3, 0.01
    bcs = {"bottom": ("noslip-wall", {}), "top": ("noslip-wall", {"u": gsh * 1.0})}
    op = FROperator(mesh, make_basis(2), G, boundaries=bcs, ref=_ref(), viscosity=dict(mu=mu, prandtl=0.72))
    xy = op.metrics.xy
    U = conserved(np.ones(op.shape[:-1]), gsh * xy[..., 1], 0.0, 30.0, G)
    op.rhs(0.0, U, np.empty_like(U))
    c = ForceIntegrator(op, ["bottom"], length=1.0, q_inf=0.5).coefficients()["total"]
    assert c["cd_viscous"] * 0.5 == pytest.approx(mu * gsh * 2.0, rel=1e-10)
    assert abs(c["cl_viscous"]) < 1e-12
    # the pressure part: p n on a flat wall has no x component, and its y component is -p per unit length
    assert abs(c["cd_pressure"]) < 1e-12
    assert c["cl_pressure"] * 0.5 == pytest.approx(-30.0 * 2.0, rel=1e-12)


def test_trace_pressure_and_errors():
    mesh = cylinder_mesh(n_radial=2, n_around=12, far_radius=3.0, q=2)
    op = _op(mesh, 2)
    U = conserved(np.ones(op.shape[:-1]), 0.0, 0.0, 5.0, G)
    op.rhs(0.0, U, np.empty_like(U))
    xy, p = wall_pressure(op, "wall")
    assert xy.shape == p.shape + (2,) and np.allclose(p, 5.0, rtol=0, atol=1e-12)
    with pytest.raises(ValueError, match="'wal' is not a boundary tag.*did you mean 'wall'"):
        ForceIntegrator(op, ["wal"])
    with pytest.raises(ValueError, match="reference length"):
        ForceIntegrator(op, ["wall"], length=0.0)
