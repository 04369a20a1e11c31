"""Boundary states, numba device functions.

Every boundary condition is a code and a row of float parameters (built by
the registry in solver/boundaries.py).  Two states are defined per flux point:

* ``ghost_state``: the exterior state fed to the inviscid interface flux;
* ``viscous_state``: the boundary value of the solution used by the viscous
  terms (the common solution of the gradient and the state of the boundary
  viscous flux), with a flag that removes the normal heat flux on adiabatic
  walls.

Conventions follow Mengaldo et al. 2014 (AIAA 2014-2923, "A guide to the
implementation of boundary conditions in compact high-order methods for
compressible aerodynamics"): walls use a reflected ghost state for the
inviscid flux and the wall state (wall velocity; wall or interior
temperature) for the viscous terms.  Temperatures are in units of the
free-stream temperature, so ``p = rho T / (gamma M^2)``; parameter rows that
need it carry ``gamma M^2``.

Open boundaries (codes 4..8) return a *boundary state* ``U_b`` that is used
as the exterior state of the interface flux ``F*(U_i, U_b)`` (the weak
Riemann imposition of Mengaldo et al. 2014); the viscous terms use the same
state.  Notation: ``n`` outward unit normal, ``u_n = u . n``,
``a = sqrt(gamma p / rho)``, entropy ``s = p / rho^gamma``, Riemann invariants
``R+- = u_n +- 2 a / (gamma - 1)`` of the 1D flow normal to the boundary.

* ``FAR_FIELD`` (characteristic far field; Blazek 2015, *Computational Fluid
  Dynamics: Principles and Applications*, 3rd ed., sec. 8.3, from memory;
  the Riemann-invariant form as in Mengaldo et al. 2014).  With the interior
  normal velocity ``u_n,i`` and sound speed ``a_i``:

  - ``u_n,i <= -a_i`` (supersonic inflow): ``U_b = U_inf``;
  - ``u_n,i >= a_i`` (supersonic outflow): ``U_b = U_i``;
  - otherwise ``R+ = u_n,i + 2 a_i/(gamma-1)`` (leaves the domain: from the
    interior), ``R- = u_n,inf - 2 a_inf/(gamma-1)`` (enters: from the free
    stream); ``u_n,b = (R+ + R-)/2``, ``a_b = (gamma-1)(R+ - R-)/4``.
    Entropy ``s`` and tangential velocity ``u_t`` come from the interior where
    ``u_n,b > 0`` (outflow) and from the free stream otherwise;
    ``rho_b = (a_b^2 / (gamma s))^(1/(gamma-1))``, ``p_b = rho_b a_b^2 / gamma``,
    ``u_b = u_t + u_n,b n``.

* ``TOTAL_INFLOW`` (subsonic inflow; Blazek 2015 sec. 8.4, from memory;
  Mengaldo et al. 2014): given total pressure ``p0``, ``R T0 = p0/rho0`` and a
  unit flow direction ``d``.  ``R+`` comes from the interior; the total
  enthalpy ``H0 = a0^2/(gamma-1)`` (``a0^2 = gamma R T0``) and ``d`` from
  outside.  With ``u_b = V d``, ``c = d . n`` and ``a_b = (gamma-1)(R+ - V c)/2``,
  energy ``a_b^2/(gamma-1) + V^2/2 = H0`` is the quadratic
  ``(1 + (gamma-1) c^2/2) V^2 - (gamma-1) R+ c V + (gamma-1) R+^2/2 - 2 H0 = 0``
  whose non-negative root is ``V``; then the isentropic relations
  (Anderson, *Modern Compressible Flow*) ``a_b^2 = a0^2 - (gamma-1) V^2/2``,
  ``p_b = p0 (a_b^2/a0^2)^(gamma/(gamma-1))``, ``rho_b = gamma p_b / a_b^2``.
  So ``p0`` and ``T0`` of ``U_b`` are the imposed ones exactly.  The
  condition is meant for inflow faces (``c < 0``: one positive root); where
  ``d`` points outwards and both roots are non-negative the one nearer the
  interior speed is taken, so a uniform flow stays exact on every face.

* ``STATIC_OUTFLOW`` (subsonic outflow at static pressure ``p_b``): entropy,
  ``R+`` and tangential velocity from the interior, pressure imposed:
  ``rho_b = rho_i (p_b / p_i)^(1/gamma)``, ``u_n,b = R+ - 2 a_b/(gamma-1)``.
  This is the nonlinear form of Blazek's (2015, sec. 8.4, from memory)
  linearised characteristic outflow ``rho_b = rho_i + (p_b - p_i)/a^2``,
  ``u_b = u_i + n (p_i - p_b)/(rho a)``; it was chosen over "density and
  velocity from the interior" because it agrees with the far field on the
  outgoing invariant.  Where ``u_n,i >= a_i`` the interior state is returned
  (a supersonic outflow admits no imposed pressure).

* ``SUPERSONIC_INFLOW``: the given state; ``SUPERSONIC_OUTFLOW``: the interior
  state.
"""
from __future__ import annotations

from numba import njit

FIXED_STATE = 0
SLIP_WALL = 1
NOSLIP_WALL = 2        # adiabatic, no-slip, optional tangential wall speed
ISOTHERMAL_WALL = 3    # given temperature, no-slip, optional tangential wall speed
FAR_FIELD = 4          # characteristic far field (Riemann invariants); prm: rho, u, v, p of the free stream
TOTAL_INFLOW = 5       # subsonic inflow; prm: p0, R T0 (= p0 / rho0), flow direction dx, dy
STATIC_OUTFLOW = 6     # subsonic outflow; prm: static pressure
SUPERSONIC_INFLOW = 7  # prm: rho, u, v, p
SUPERSONIC_OUTFLOW = 8  # the interior state, no parameters

#: width of a boundary parameter row
NPARAM = 8


@njit(cache=True, inline="always")
def _wall_velocity(prm, nx, ny):
    # tangential wall velocity: the tangential part of (prm[3], prm[4]) plus the speed prm[0] along
    # t = (-ny, nx); the normal part is dropped so the wall stays impermeable
    ut = prm[3] * (-ny) + prm[4] * nx + prm[0]
    return -ut * ny, ut * nx


@njit(cache=True, inline="always")
def _given_state(prm, gamma):
    rho = prm[0]
    u = prm[1]
    v = prm[2]
    p = prm[3]
    return rho, rho * u, rho * v, p / (gamma - 1.0) + 0.5 * rho * (u * u + v * v)


@njit(cache=True, inline="always")
def _far_field(prm, r, ru, rv, rE, nx, ny, gamma):
    # Riemann-invariant far field; formulas in the module docstring
    gm1 = gamma - 1.0
    u = ru / r
    v = rv / r
    p = gm1 * (rE - 0.5 * r * (u * u + v * v))
    a = (gamma * p / r) ** 0.5
    un = u * nx + v * ny
    if un <= -a:
        return _given_state(prm, gamma)
    if un >= a:
        return r, ru, rv, rE
    rinf = prm[0]
    uinf = prm[1]
    vinf = prm[2]
    pinf = prm[3]
    ainf = (gamma * pinf / rinf) ** 0.5
    uninf = uinf * nx + vinf * ny
    rp = un + 2.0 * a / gm1
    rm = uninf - 2.0 * ainf / gm1
    unb = 0.5 * (rp + rm)
    ab = 0.25 * gm1 * (rp - rm)
    if ab <= 0.0:
        # R+ < R- only for states far outside the subsonic range: keep the flux defined
        return _given_state(prm, gamma)
    if unb > 0.0:
        s = p / r ** gamma
        ut = u - un * nx
        vt = v - un * ny
    else:
        s = pinf / rinf ** gamma
        ut = uinf - uninf * nx
        vt = vinf - uninf * ny
    rb = (ab * ab / (gamma * s)) ** (1.0 / gm1)
    pb = rb * ab * ab / gamma
    ub = ut + unb * nx
    vb = vt + unb * ny
    return rb, rb * ub, rb * vb, pb / gm1 + 0.5 * rb * (ub * ub + vb * vb)


@njit(cache=True, inline="always")
def _total_inflow(prm, r, ru, rv, rE, nx, ny, gamma):
    # R+ from the interior, total enthalpy and flow direction from outside; see the module docstring
    gm1 = gamma - 1.0
    u = ru / r
    v = rv / r
    p = gm1 * (rE - 0.5 * r * (u * u + v * v))
    rp = u * nx + v * ny + 2.0 * (gamma * p / r) ** 0.5 / gm1
    p0 = prm[0]
    a02 = gamma * prm[1]
    dx = prm[2]
    dy = prm[3]
    c = dx * nx + dy * ny
    qa = 1.0 + 0.5 * gm1 * c * c
    qb = -gm1 * rp * c
    qc = 0.5 * gm1 * rp * rp - 2.0 * a02 / gm1
    disc = qb * qb - 4.0 * qa * qc
    V = 0.0
    if disc > 0.0:
        sq = disc ** 0.5
        V = (-qb + sq) / (2.0 * qa)
        if qc > 0.0 and c > 0.0:
            # d points out of the domain: two non-negative roots; take the one nearer the interior
            # speed (keeps a uniform flow exact); the small root in the cancellation-free form
            V2 = 2.0 * qc / (-qb + sq)
            spd = (u * u + v * v) ** 0.5
            if abs(V2 - spd) < abs(V - spd):
                V = V2
    # V = 0 (the stagnation state) when the interior admits no inflow root;
    # V^2 < 2 H0 keeps the static temperature positive
    if V < 0.0:
        V = 0.0
    vmax2 = 2.0 * a02 / gm1
    if V * V > 0.999 * vmax2:
        V = (0.999 * vmax2) ** 0.5
    ab2 = a02 - 0.5 * gm1 * V * V
    pb = p0 * (ab2 / a02) ** (gamma / gm1)
    rb = gamma * pb / ab2
    ub = V * dx
    vb = V * dy
    return rb, rb * ub, rb * vb, pb / gm1 + 0.5 * rb * (ub * ub + vb * vb)


@njit(cache=True, inline="always")
def _static_outflow(prm, r, ru, rv, rE, nx, ny, gamma):
    # entropy, R+ and tangential velocity from the interior, static pressure imposed
    gm1 = gamma - 1.0
    u = ru / r
    v = rv / r
    p = gm1 * (rE - 0.5 * r * (u * u + v * v))
    a = (gamma * p / r) ** 0.5
    un = u * nx + v * ny
    if un >= a:
        return r, ru, rv, rE
    pb = prm[0]
    rb = r * (pb / p) ** (1.0 / gamma)
    ab = (gamma * pb / rb) ** 0.5
    dun = 2.0 * (a - ab) / gm1   # u_n,b - u_n,i from R+_b = R+_i
    ub = u + dun * nx
    vb = v + dun * ny
    return rb, rb * ub, rb * vb, pb / gm1 + 0.5 * rb * (ub * ub + vb * vb)


@njit(cache=True, inline="always")
def ghost_state(code, prm, r, ru, rv, rE, nx, ny, gamma):
    """Exterior state for the inviscid interface flux.

    Parameters
    ----------
    code : int
    prm : (NPARAM,) float array
        ``fixed-state``, ``far-field``, ``supersonic-inflow``: rho, u, v, p.
        ``total-inflow``: p0, R T0 (= p0/rho0), flow direction dx, dy.
        ``static-outflow``: static pressure.  ``supersonic-outflow``: none.  Walls: tangential speed, wall
        temperature and gamma M^2 (isothermal), wall velocity u, v.
    r, ru, rv, rE : float
        Interior conserved state at the flux point.
    nx, ny : float
        Outward unit normal.
    """
    if code == SLIP_WALL:
        # mirror the normal momentum: the interface flux then carries pressure only
        mn = ru * nx + rv * ny
        return r, ru - 2.0 * mn * nx, rv - 2.0 * mn * ny, rE
    if code == NOSLIP_WALL or code == ISOTHERMAL_WALL:
        # reflect the velocity about the wall velocity: u_g = 2 u_w - u, same density and pressure
        uw, vw = _wall_velocity(prm, nx, ny)
        u = ru / r
        v = rv / r
        ug = 2.0 * uw - u
        vg = 2.0 * vw - v
        ke = 0.5 * r * (u * u + v * v)
        keg = 0.5 * r * (ug * ug + vg * vg)
        return r, r * ug, r * vg, rE - ke + keg
    if code == FAR_FIELD:
        return _far_field(prm, r, ru, rv, rE, nx, ny, gamma)
    if code == TOTAL_INFLOW:
        return _total_inflow(prm, r, ru, rv, rE, nx, ny, gamma)
    if code == STATIC_OUTFLOW:
        return _static_outflow(prm, r, ru, rv, rE, nx, ny, gamma)
    if code == SUPERSONIC_OUTFLOW:
        return r, ru, rv, rE
    # FIXED_STATE and SUPERSONIC_INFLOW: the given state
    return _given_state(prm, gamma)


@njit(cache=True, inline="always")
def viscous_state(code, prm, r, ru, rv, rE, nx, ny, gamma):
    """Boundary state of the viscous terms and the adiabatic flag.

    Returns
    -------
    rb, rub, rvb, rEb : float
        Boundary state.
    adiabatic : bool
        True where the normal heat flux must vanish.
    """
    if code == NOSLIP_WALL:
        uw, vw = _wall_velocity(prm, nx, ny)
        u = ru / r
        v = rv / r
        e_int = rE - 0.5 * r * (u * u + v * v)  # interior temperature (internal energy) kept
        return r, r * uw, r * vw, e_int + 0.5 * r * (uw * uw + vw * vw), True
    if code == ISOTHERMAL_WALL:
        uw, vw = _wall_velocity(prm, nx, ny)
        Tw = prm[1]
        gm2 = prm[2]
        p = r * Tw / gm2
        return r, r * uw, r * vw, p / (gamma - 1.0) + 0.5 * r * (uw * uw + vw * vw), False
    if code == SLIP_WALL:
        mn = ru * nx + rv * ny
        return r, ru - mn * nx, rv - mn * ny, rE - 0.5 * mn * mn / r, True
    g0, g1, g2, g3 = ghost_state(code, prm, r, ru, rv, rE, nx, ny, gamma)
    return g0, g1, g2, g3, False
