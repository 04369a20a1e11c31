"""Point-wise Euler fluxes and interface (Riemann) fluxes, numba device functions.

All functions take conserved states as scalars and a unit normal ``(nx, ny)``
and return a 4-tuple, so kernels can call them without allocating.
"""
from __future__ import annotations

import math

from numba import njit

# integer codes of the interface fluxes (the registry in solver/fluxes.py maps names to these)
RUSANOV = 0
ROE = 1


@njit(cache=True, inline="always")
def pressure(r, ru, rv, rE, gamma):
    return (gamma - 1.0) * (rE - 0.5 * (ru * ru + rv * rv) / r)


@njit(cache=True, inline="always")
def normal_flux(r, ru, rv, rE, nx, ny, gamma):
    """Euler flux projected on ``n``: ``F(U) nx + G(U) ny``."""
    u = ru / r
    v = rv / r
    p = (gamma - 1.0) * (rE - 0.5 * (ru * u + rv * v))
    un = u * nx + v * ny
    return r * un, ru * un + p * nx, rv * un + p * ny, (rE + p) * un


@njit(cache=True, inline="always")
def rusanov(rL, ruL, rvL, rEL, rR, ruR, rvR, rER, nx, ny, gamma):
    """Local Lax-Friedrichs (Rusanov 1961) flux.

    ``F* = (Fn(UL) + Fn(UR))/2 - s_max (UR - UL)/2``,
    ``s_max = max(|u_n| + a)`` over both sides.
    """
    fL0, fL1, fL2, fL3 = normal_flux(rL, ruL, rvL, rEL, nx, ny, gamma)
    fR0, fR1, fR2, fR3 = normal_flux(rR, ruR, rvR, rER, nx, ny, gamma)
    pL = pressure(rL, ruL, rvL, rEL, gamma)
    pR = pressure(rR, ruR, rvR, rER, gamma)
    sL = abs((ruL * nx + rvL * ny) / rL) + math.sqrt(gamma * pL / rL)
    sR = abs((ruR * nx + rvR * ny) / rR) + math.sqrt(gamma * pR / rR)
    s = max(sL, sR)
    return (0.5 * (fL0 + fR0) - 0.5 * s * (rR - rL),
            0.5 * (fL1 + fR1) - 0.5 * s * (ruR - ruL),
            0.5 * (fL2 + fR2) - 0.5 * s * (rvR - rvL),
            0.5 * (fL3 + fR3) - 0.5 * s * (rER - rEL))


@njit(cache=True, inline="always")
def _harten(lam, delta):
    """Harten (1983) entropy fix: smooth |lambda| near zero."""
    a = abs(lam)
    if a < delta:
        return 0.5 * (lam * lam + delta * delta) / delta
    return a


@njit(cache=True, inline="always")
def roe(rL, ruL, rvL, rEL, rR, ruR, rvR, rER, nx, ny, gamma, efix):
    """Roe (1981) approximate Riemann flux with Harten's (1983) entropy fix.

    Notes
    -----
    ``F* = (Fn(UL) + Fn(UR))/2 - 1/2 sum_k |lambda_k| alpha_k r_k`` with Roe
    averages ``rho~ = sqrt(rhoL rhoR)``, ``u~ = (sqrt(rhoL) uL + sqrt(rhoR) uR)
    / (sqrt(rhoL) + sqrt(rhoR))`` (likewise ``v~``, ``H~``), waves
    ``u_n - a, u_n, u_n, u_n + a``; the acoustic eigenvalues are smoothed when
    ``|lambda| < efix * a~``.
    """
    uL = ruL / rL
    vL = rvL / rL
    uR = ruR / rR
    vR = rvR / rR
    pL = (gamma - 1.0) * (rEL - 0.5 * rL * (uL * uL + vL * vL))
    pR = (gamma - 1.0) * (rER - 0.5 * rR * (uR * uR + vR * vR))
    HL = (rEL + pL) / rL
    HR = (rER + pR) / rR
    sL = math.sqrt(rL)
    sR = math.sqrt(rR)
    w = 1.0 / (sL + sR)
    rt = sL * sR
    ut = (sL * uL + sR * uR) * w
    vt = (sL * vL + sR * vR) * w
    Ht = (sL * HL + sR * HR) * w
    q2 = ut * ut + vt * vt
    a2 = (gamma - 1.0) * (Ht - 0.5 * q2)
    at = math.sqrt(a2)
    unt = ut * nx + vt * ny
    tx = -ny
    ty = nx
    utt = ut * tx + vt * ty

    dr = rR - rL
    dp = pR - pL
    dun = (uR - uL) * nx + (vR - vL) * ny
    dut = (uR - uL) * tx + (vR - vL) * ty

    a1 = (dp - rt * at * dun) / (2.0 * a2)
    a4 = (dp + rt * at * dun) / (2.0 * a2)
    a23 = dr - dp / a2
    a3 = rt * dut

    delta = efix * at
    l1 = _harten(unt - at, delta)
    l2 = abs(unt)
    l4 = _harten(unt + at, delta)

    d0 = l1 * a1 + l2 * a23 + l4 * a4
    d1 = l1 * a1 * (ut - at * nx) + l2 * (a23 * ut + a3 * tx) + l4 * a4 * (ut + at * nx)
    d2 = l1 * a1 * (vt - at * ny) + l2 * (a23 * vt + a3 * ty) + l4 * a4 * (vt + at * ny)
    d3 = (l1 * a1 * (Ht - at * unt) + l2 * (a23 * 0.5 * q2 + a3 * utt)
          + l4 * a4 * (Ht + at * unt))

    fL0, fL1, fL2, fL3 = normal_flux(rL, ruL, rvL, rEL, nx, ny, gamma)
    fR0, fR1, fR2, fR3 = normal_flux(rR, ruR, rvR, rER, nx, ny, gamma)
    return (0.5 * (fL0 + fR0 - d0), 0.5 * (fL1 + fR1 - d1),
            0.5 * (fL2 + fR2 - d2), 0.5 * (fL3 + fR3 - d3))


@njit(cache=True, inline="always")
def interface_flux(code, rL, ruL, rvL, rEL, rR, ruR, rvR, rER, nx, ny, gamma, efix):
    """Dispatch on the interface-flux code (see solver/fluxes.py)."""
    if code == ROE:
        return roe(rL, ruL, rvL, rEL, rR, ruR, rvR, rER, nx, ny, gamma, efix)
    return rusanov(rL, ruL, rvL, rEL, rR, ruR, rvR, rER, nx, ny, gamma)
