"""Flux reconstruction kernels of the viscous terms: LDG or BR2 common values in FR form.

Same layout as :mod:`solver.kernels.fr_inviscid`.  Extra arrays:

* ``dU``   (ne, 4, n, 4) jump ``U* - U_f`` of the common solution at each
  flux point (see below for ``U*``; the boundary state on boundaries);
* ``Fvf``  (ne, 4, n, 4) viscous normal flux ``F_v . nS`` computed on each
  element face that supplies one (zero where the face takes it from the
  neighbour);
* ``Fvt``, ``Gvt`` (ne, n, n, 4) transformed viscous fluxes at the solution points;
* ``fside`` (nf,) common-value rule of each interior face, ``role`` (ne, 4)
  what each element face computes (the ``FACE_*`` and ``SIDE_*`` codes below).

Notes
-----
Corrected gradient (Huynh 2009; Castonguay, Williams, Vincent & Jameson 2013):
``J grad U = Mr (d_r U + C_r) + Ms (d_s U + C_s)``, where ``C_r`` adds
``(U* - U_f) g_R'`` from the face r = +1 and ``(U* - U_f) g_L'`` from r = -1
along each line (likewise ``C_s``).  The viscous fluxes at the solution
points use this corrected gradient.  Two rules give the common values on
interior faces:

* LDG (Cockburn & Shu 1998, SIAM J. Numer. Anal. 35; FR form: Castonguay et
  al. 2013, here with beta = +-1/2 and no interior penalty, from memory): on
  each face one side ``A`` gives the common solution, ``U* = U_f^A``, and the
  other side ``B`` the common viscous flux, ``F_v* = F_v(U_f^B, (grad U)_f^B) . nS``
  with the corrected gradient of ``B`` interpolated to the face.  ``A`` is the
  side whose outward normal points along a fixed direction ``w`` (chosen in
  :class:`solver.operator.FROperator`), so the choice alternates consistently
  through the mesh.  The energy identity of the scheme holds face by face
  for any such choice.
* BR2 (Bassi & Rebay 1997; Bassi, Crivellini, Rebay & Savini 2005):
  ``U* = (U_L + U_R)/2``; each side evaluates the flux with its uncorrected
  gradient plus ``eta`` times the lifting of that face's own jump only, in FR
  form ``g_R'(1) (U* - U_f) nS / J_f``; ``F_v*`` is the average of the two.

Boundary faces use the BR2 form for both rules: ``U*`` is the boundary state,
the face gradient is the uncorrected gradient plus ``eta`` times the lifting of
``U_b - U_f``, and the flux is evaluated at ``U_b`` (no normal heat flux on
adiabatic walls).

Why LDG is the default: BR2's penalty is a face flux ``mu eta g_R'(1) [U]/h``
of size ``O(h^p)`` for the ``O(h^{p+1})`` jumps of a smooth solution.  When the
momentum is tied to the continuity equation and viscous forces dominate at
the element scale, the pressure / density take up this flux error the way a
Stokes pressure does, and converge at order ``p`` instead of ``p + 1``.
Measured (steady linear model ``rho_t + m_x = 0``, ``m_t + c^2 rho_x = nu m_xx``,
p = 2, 3, 4; also with symmetric interior penalty, which BR2 equals in 1D,
and for the 2D manufactured solution of tools/verify/mms.py): density order
p with BR2, growing error with ``eta`` for p = 2; p + 1 with LDG.  LDG without
an interior penalty has no such term: with one-sided values the discrete
derivative commutes with a Gauss-Radau projection, the usual route to order
p + 1 for LDG (from memory).

Viscous flux (Stokes hypothesis, Fourier conduction):
``tau = mu (grad u + grad u^T - 2/3 div u I)``,
``q = -(gamma mu / Pr) grad e`` with ``e`` the internal energy per unit mass,
which in our units (rho_inf = |u_inf| = L = 1) equals
``-(mu / ((gamma - 1) M^2 Pr)) grad (T / T_inf)``.
"""
from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from .bcstate import viscous_state

CONSTANT = 0
SUTHERLAND = 1

#: interior-face rules (``fside``): BR2 average, or the LDG side that gives ``U*``
SIDE_AVERAGE = 0
SIDE_LEFT = 1    # U* = trace of faces[k, 0]; the flux comes from faces[k, 2]
SIDE_RIGHT = 2   # U* = trace of faces[k, 2]; the flux comes from faces[k, 0]

#: what an element face computes (``role``)
FACE_BR2 = 0        # interior BR2 face: uncorrected gradient + eta * own lifting, own trace
FACE_BOUNDARY = 1   # boundary face: BR2 form at the boundary state
FACE_LDG_TRACE = 2  # interior LDG face giving U* (its own trace); takes the flux from the neighbour
FACE_LDG_FLUX = 3   # interior LDG face giving F_v* from its corrected gradient


@njit(cache=True, inline="always")
def viscosity(e, law, mu_inf, e_inf, s_ratio):
    """Dynamic viscosity: constant, or Sutherland's law in T/T_inf = e/e_inf."""
    if law == SUTHERLAND:
        T = e / e_inf
        return mu_inf * T * math.sqrt(T) * (1.0 + s_ratio) / (T + s_ratio)
    return mu_inf


@njit(cache=True, inline="always")
def stress_heat(r, ru, rv, rE, rx, rux, rvx, rEx, ry, ruy, rvy, rEy, gamma, prandtl, law, mu_inf, e_inf,
                s_ratio):
    """Velocity, viscous stress and heat flux from conserved values and gradients.

    Returns
    -------
    u, v, txx, txy, tyy, qx, qy : float
    """
    ir = 1.0 / r
    u = ru * ir
    v = rv * ir
    Et = rE * ir
    e = Et - 0.5 * (u * u + v * v)
    ux = (rux - u * rx) * ir
    uy = (ruy - u * ry) * ir
    vx = (rvx - v * rx) * ir
    vy = (rvy - v * ry) * ir
    ex = (rEx - Et * rx) * ir - (u * ux + v * vx)
    ey = (rEy - Et * ry) * ir - (u * uy + v * vy)
    mu = viscosity(e, law, mu_inf, e_inf, s_ratio)
    div = ux + vy
    txx = mu * (2.0 * ux - 2.0 / 3.0 * div)
    tyy = mu * (2.0 * vy - 2.0 / 3.0 * div)
    txy = mu * (uy + vx)
    k = gamma * mu / prandtl
    return u, v, txx, txy, tyy, -k * ex, -k * ey


@njit(cache=True, parallel=True)
def common_solution(Uf, faces, fside, bfaces, bcode, bprm, nrm, gamma, dU, adiab):
    """``dU = U* - U_f`` on every flux point; ``adiab[e, f] = 1`` on adiabatic walls.

    ``fside[k]`` selects ``U*`` on interior face ``k``: the average
    (``SIDE_AVERAGE``), or the trace of the left / right element (LDG).
    """
    nf = faces.shape[0]
    n = Uf.shape[2]
    for k in prange(nf):
        eL = faces[k, 0]
        fL = faces[k, 1]
        eR = faces[k, 2]
        fR = faces[k, 3]
        # weight of the jump U_R - U_L taken by the left side; the right side takes (wL - 1)
        wL = 0.5
        if fside[k] == SIDE_LEFT:
            wL = 0.0
        elif fside[k] == SIDE_RIGHT:
            wL = 1.0
        for a in range(n):
            b = n - 1 - a
            for v in range(4):
                jmp = Uf[eR, fR, b, v] - Uf[eL, fL, a, v]
                dU[eL, fL, a, v] = wL * jmp
                dU[eR, fR, b, v] = (wL - 1.0) * jmp
    nb = bfaces.shape[0]
    for k in prange(nb):
        e = bfaces[k, 0]
        f = bfaces[k, 1]
        g = bfaces[k, 2]
        flag = 0
        for a in range(n):
            r = Uf[e, f, a, 0]
            ru = Uf[e, f, a, 1]
            rv = Uf[e, f, a, 2]
            rE = Uf[e, f, a, 3]
            b0, b1, b2, b3, ad = viscous_state(bcode[g], bprm[g], r, ru, rv, rE, nrm[e, f, a, 0], nrm[e, f, a, 1],
                                               gamma)
            dU[e, f, a, 0] = b0 - r
            dU[e, f, a, 1] = b1 - ru
            dU[e, f, a, 2] = b2 - rv
            dU[e, f, a, 3] = b3 - rE
            if ad:
                flag = 1
        adiab[e, f] = flag


@njit(cache=True, parallel=True)
def viscous_fluxes(U, Uf, dU, adiab, role, Mr, Ms, invJ, nS, Jf, D, Lf, dgR, gR1, eta, gamma, prandtl, law,
                   mu_inf, e_inf, s_ratio, nchunk, Fvt, Gvt, Fvf):
    """Transformed viscous fluxes at solution points and the face fluxes each element supplies.

    ``role[e, f]`` (``FACE_*``): BR2 and boundary faces use the uncorrected
    gradient plus ``eta`` times the face's own lifting (boundary faces at the
    boundary state ``U_f + dU`` and, on adiabatic walls, without normal heat
    flux); an LDG flux face uses the corrected gradient and its own trace; an
    LDG trace face supplies nothing (``Fvf = 0``).
    """
    ne, n = U.shape[0], U.shape[1]
    per = (ne + nchunk - 1) // nchunk
    for c in prange(nchunk):
        dr = np.empty((n, n, 4))
        ds = np.empty((n, n, 4))
        gx = np.empty((n, n, 4))
        gy = np.empty((n, n, 4))
        cx = np.empty((n, n, 4))
        cy = np.empty((n, n, 4))
        fgx = np.empty(4)
        fgy = np.empty(4)
        e0 = c * per
        e1 = min(ne, e0 + per)
        for e in range(e0, e1):
            # reference derivatives of the discontinuous solution
            for i in range(n):
                for j in range(n):
                    for v in range(4):
                        sr = 0.0
                        ss = 0.0
                        for m in range(n):
                            sr += D[i, m] * U[e, m, j, v]
                            ss += D[j, m] * U[e, i, m, v]
                        dr[i, j, v] = sr
                        ds[i, j, v] = ss
            # uncorrected physical gradient (BR2 and boundary faces)
            for i in range(n):
                for j in range(n):
                    w = invJ[e, i, j]
                    for v in range(4):
                        gx[i, j, v] = w * (Mr[e, i, j, 0] * dr[i, j, v] + Ms[e, i, j, 0] * ds[i, j, v])
                        gy[i, j, v] = w * (Mr[e, i, j, 1] * dr[i, j, v] + Ms[e, i, j, 1] * ds[i, j, v])
            # corrected gradient: add the jumps of the common solution along each line
            for i in range(n):
                for j in range(n):
                    gp_r = dgR[i]
                    gm_r = dgR[n - 1 - i]
                    gp_s = dgR[j]
                    gm_s = dgR[n - 1 - j]
                    w = invJ[e, i, j]
                    for v in range(4):
                        a = dr[i, j, v] + dU[e, 1, j, v] * gp_r - dU[e, 3, n - 1 - j, v] * gm_r
                        b = ds[i, j, v] + dU[e, 2, n - 1 - i, v] * gp_s - dU[e, 0, i, v] * gm_s
                        cx[i, j, v] = w * (Mr[e, i, j, 0] * a + Ms[e, i, j, 0] * b)
                        cy[i, j, v] = w * (Mr[e, i, j, 1] * a + Ms[e, i, j, 1] * b)
            # face fluxes
            for f in range(4):
                rl = role[e, f]
                if rl == FACE_LDG_TRACE:
                    for k in range(n):
                        for v in range(4):
                            Fvf[e, f, k, v] = 0.0
                    continue
                ldg = rl == FACE_LDG_FLUX
                bnd = rl == FACE_BOUNDARY
                Ax = cx if ldg else gx
                Ay = cy if ldg else gy
                for k in range(n):
                    for v in range(4):
                        sx = 0.0
                        sy = 0.0
                        if f == 0:
                            for m in range(n):
                                sx += Lf[0, m] * Ax[k, m, v]
                                sy += Lf[0, m] * Ay[k, m, v]
                        elif f == 1:
                            for m in range(n):
                                sx += Lf[1, m] * Ax[m, k, v]
                                sy += Lf[1, m] * Ay[m, k, v]
                        elif f == 2:
                            for m in range(n):
                                sx += Lf[1, m] * Ax[n - 1 - k, m, v]
                                sy += Lf[1, m] * Ay[n - 1 - k, m, v]
                        else:
                            for m in range(n):
                                sx += Lf[0, m] * Ax[m, n - 1 - k, v]
                                sy += Lf[0, m] * Ay[m, n - 1 - k, v]
                        if not ldg:
                            lift = eta * gR1 * dU[e, f, k, v] / Jf[e, f, k]
                            sx += lift * nS[e, f, k, 0]
                            sy += lift * nS[e, f, k, 1]
                        fgx[v] = sx
                        fgy[v] = sy
                    r = Uf[e, f, k, 0]
                    ru = Uf[e, f, k, 1]
                    rv = Uf[e, f, k, 2]
                    rE = Uf[e, f, k, 3]
                    if bnd:
                        r += dU[e, f, k, 0]
                        ru += dU[e, f, k, 1]
                        rv += dU[e, f, k, 2]
                        rE += dU[e, f, k, 3]
                    u, v_, txx, txy, tyy, qx, qy = stress_heat(
                        r, ru, rv, rE, fgx[0], fgx[1], fgx[2], fgx[3], fgy[0], fgy[1], fgy[2], fgy[3],
                        gamma, prandtl, law, mu_inf, e_inf, s_ratio)
                    if bnd and adiab[e, f] == 1:
                        qx = 0.0
                        qy = 0.0
                    nx = nS[e, f, k, 0]
                    ny = nS[e, f, k, 1]
                    Fvf[e, f, k, 0] = 0.0
                    Fvf[e, f, k, 1] = txx * nx + txy * ny
                    Fvf[e, f, k, 2] = txy * nx + tyy * ny
                    Fvf[e, f, k, 3] = (u * txx + v_ * txy - qx) * nx + (u * txy + v_ * tyy - qy) * ny
            # viscous fluxes at the solution points, transformed
            for i in range(n):
                for j in range(n):
                    a0 = Mr[e, i, j, 0]
                    a1 = Mr[e, i, j, 1]
                    b0 = Ms[e, i, j, 0]
                    b1 = Ms[e, i, j, 1]
                    u, v_, txx, txy, tyy, qx, qy = stress_heat(
                        U[e, i, j, 0], U[e, i, j, 1], U[e, i, j, 2], U[e, i, j, 3],
                        cx[i, j, 0], cx[i, j, 1], cx[i, j, 2], cx[i, j, 3],
                        cy[i, j, 0], cy[i, j, 1], cy[i, j, 2], cy[i, j, 3],
                        gamma, prandtl, law, mu_inf, e_inf, s_ratio)
                    f1 = txx
                    f2 = txy
                    f3 = u * txx + v_ * txy - qx
                    g1 = txy
                    g2 = tyy
                    g3 = u * txy + v_ * tyy - qy
                    Fvt[e, i, j, 0] = 0.0
                    Fvt[e, i, j, 1] = a0 * f1 + a1 * g1
                    Fvt[e, i, j, 2] = a0 * f2 + a1 * g2
                    Fvt[e, i, j, 3] = a0 * f3 + a1 * g3
                    Gvt[e, i, j, 0] = 0.0
                    Gvt[e, i, j, 1] = b0 * f1 + b1 * g1
                    Gvt[e, i, j, 2] = b0 * f2 + b1 * g2
                    Gvt[e, i, j, 3] = b0 * f3 + b1 * g3


@njit(cache=True, parallel=True)
def subtract_common_viscous(Fvf, faces, fside, bfaces, Fc):
    """``Fc -= F_v*`` (flux = inviscid - viscous).

    Interior ``F_v*``: the average of both sides (BR2) or the flux of the side
    that does not give ``U*`` (LDG); boundary faces: the face's own flux.
    """
    nf = faces.shape[0]
    n = Fvf.shape[2]
    for k in prange(nf):
        eL = faces[k, 0]
        fL = faces[k, 1]
        eR = faces[k, 2]
        fR = faces[k, 3]
        # nS_R = -nS_L, so the right side's flux in the left normal is -Fvf[R]
        wL = 0.5
        if fside[k] == SIDE_LEFT:
            wL = 0.0
        elif fside[k] == SIDE_RIGHT:
            wL = 1.0
        for a in range(n):
            b = n - 1 - a
            for v in range(4):
                c = wL * Fvf[eL, fL, a, v] - (1.0 - wL) * Fvf[eR, fR, b, v]
                Fc[eL, fL, a, v] -= c
                Fc[eR, fR, b, v] += c
    nb = bfaces.shape[0]
    for k in prange(nb):
        e = bfaces[k, 0]
        f = bfaces[k, 1]
        for a in range(n):
            for v in range(4):
                Fc[e, f, a, v] -= Fvf[e, f, a, v]
