"""Flux reconstruction kernels for the inviscid (Euler) part of the residual.

Layout (see meshing/geometry.py for the reference-square conventions):

* ``U``   (ne, n, n, 4) solution at the solution points, ``U[e, i, j, v]``;
* ``Uf``  (ne, 4, n, 4) solution interpolated to the flux points of each face,
  point ``k`` counted counter-clockwise along the face;
* ``Fc``  (ne, 4, n, 4) common normal flux times the face length element,
  outward from element ``e``; every slot is written by exactly one face, so
  the face loop has no write races;
* ``Mr``, ``Ms`` (ne, n, n, 2) contravariant metric terms ``J grad r`` and
  ``J grad s`` at the solution points;
* ``nrm`` (ne, 4, n, 2) outward unit normals, ``mag`` (ne, 4, n) the length
  element of the outward scaled normal at the flux points.

The residual is ``R = -(1/J) [ d_r F~ + d_s G~ + sum_faces (Fc - Fn_loc) g' ]``
(Huynh 2007; Vincent, Castonguay & Jameson 2011), with ``F~ = J grad r . (F, G)``
and ``Fn_loc`` the outward normal value of the discontinuous transformed flux
polynomial at the face, which makes the scheme conservative.
"""
from __future__ import annotations

import numba
import numpy as np
from numba import njit, prange

from .bcstate import ghost_state
from .riemann import interface_flux


def _nchunks(ne: int) -> int:
    return max(1, min(ne, 8 * numba.get_num_threads()))


@njit(cache=True, parallel=True)
def interp_to_faces(U, Lf, Uf):
    """``Uf[e, f, k, :]`` from ``U`` with the edge interpolation weights ``Lf`` (2, n)."""
    ne, n = U.shape[0], U.shape[1]
    for e in prange(ne):
        for a in range(n):
            b = n - 1 - a
            for v in range(4):
                s0 = 0.0
                s1 = 0.0
                s2 = 0.0
                s3 = 0.0
                for m in range(n):
                    s0 += Lf[0, m] * U[e, a, m, v]  # s = -1 on line r_a
                    s2 += Lf[1, m] * U[e, a, m, v]  # s = +1 on line r_a
                    s1 += Lf[1, m] * U[e, m, a, v]  # r = +1 on line s_a
                    s3 += Lf[0, m] * U[e, m, a, v]  # r = -1 on line s_a
                Uf[e, 0, a, v] = s0
                Uf[e, 1, a, v] = s1
                Uf[e, 2, b, v] = s2
                Uf[e, 3, b, v] = s3


@njit(cache=True, parallel=True)
def interior_face_flux(Uf, faces, nrm, mag, flux_code, gamma, efix, Fc):
    """Common normal flux on interior faces, written to both sides of each face."""
    nf = faces.shape[0]
    n = Uf.shape[2]
    for k in prange(nf):
        eL = faces[k, 0]
        fL = faces[k, 1]
        eR = faces[k, 2]
        fR = faces[k, 3]
        for a in range(n):
            b = n - 1 - a
            nx = nrm[eL, fL, a, 0]
            ny = nrm[eL, fL, a, 1]
            f0, f1, f2, f3 = interface_flux(
                flux_code,
                Uf[eL, fL, a, 0], Uf[eL, fL, a, 1], Uf[eL, fL, a, 2], Uf[eL, fL, a, 3],
                Uf[eR, fR, b, 0], Uf[eR, fR, b, 1], Uf[eR, fR, b, 2], Uf[eR, fR, b, 3],
                nx, ny, gamma, efix)
            m = mag[eL, fL, a]
            Fc[eL, fL, a, 0] = f0 * m
            Fc[eL, fL, a, 1] = f1 * m
            Fc[eL, fL, a, 2] = f2 * m
            Fc[eL, fL, a, 3] = f3 * m
            Fc[eR, fR, b, 0] = -f0 * m
            Fc[eR, fR, b, 1] = -f1 * m
            Fc[eR, fR, b, 2] = -f2 * m
            Fc[eR, fR, b, 3] = -f3 * m


@njit(cache=True, parallel=True)
def boundary_face_flux(Uf, bfaces, bcode, bprm, nrm, mag, flux_code, gamma, efix, Fc, Ub):
    """Common normal flux on boundary faces from the ghost state of each condition.

    ``bfaces`` (nb, 3) holds ``e, f, group``; ``bcode[group]`` and
    ``bprm[group]`` select the condition.  The ghost state is kept in
    ``Ub`` (nb, n, 4) for the viscous terms.
    """
    nb = bfaces.shape[0]
    n = Uf.shape[2]
    for k in prange(nb):
        e = bfaces[k, 0]
        f = bfaces[k, 1]
        g = bfaces[k, 2]
        code = bcode[g]
        prm = bprm[g]
        for a in range(n):
            nx = nrm[e, f, a, 0]
            ny = nrm[e, f, a, 1]
            r = Uf[e, f, a, 0]
            ru = Uf[e, f, a, 1]
            rv = Uf[e, f, a, 2]
            rE = Uf[e, f, a, 3]
            gr, gru, grv, grE = ghost_state(code, prm, r, ru, rv, rE, nx, ny, gamma)
            Ub[k, a, 0] = gr
            Ub[k, a, 1] = gru
            Ub[k, a, 2] = grv
            Ub[k, a, 3] = grE
            f0, f1, f2, f3 = interface_flux(flux_code, r, ru, rv, rE, gr, gru, grv, grE, nx, ny, gamma, efix)
            m = mag[e, f, a]
            Fc[e, f, a, 0] = f0 * m
            Fc[e, f, a, 1] = f1 * m
            Fc[e, f, a, 2] = f2 * m
            Fc[e, f, a, 3] = f3 * m


@njit(cache=True, parallel=True)
def flux_residual(U, Fc, Mr, Ms, invJ, D, Lf, dgR, gamma, nchunk, viscous, Fvt, Gvt, R):
    """``R = -(1/J) div F`` with FR corrections; see the module docstring.

    With ``viscous`` true the transformed viscous fluxes ``Fvt, Gvt``
    (ne, n, n, 4) are subtracted from the inviscid ones (``Fc`` then already
    holds the total common flux).  Work arrays are allocated once per chunk of
    elements, not per element.
    """
    ne, n = U.shape[0], U.shape[1]
    per = (ne + nchunk - 1) // nchunk
    for c in prange(nchunk):
        Ft = np.empty((n, n, 4))
        Gt = np.empty((n, n, 4))
        dv = np.empty((n, n, 4))
        jump = np.empty((n, 4))
        e0 = c * per
        e1 = min(ne, e0 + per)
        for e in range(e0, e1):
            # transformed fluxes at the solution points
            for i in range(n):
                for j in range(n):
                    r = U[e, i, j, 0]
                    ru = U[e, i, j, 1]
                    rv = U[e, i, j, 2]
                    rE = U[e, i, j, 3]
                    u = ru / r
                    v = rv / r
                    p = (gamma - 1.0) * (rE - 0.5 * (ru * u + rv * v))
                    a0 = Mr[e, i, j, 0]
                    a1 = Mr[e, i, j, 1]
                    b0 = Ms[e, i, j, 0]
                    b1 = Ms[e, i, j, 1]
                    ucr = u * a0 + v * a1
                    ucs = u * b0 + v * b1
                    Ft[i, j, 0] = r * ucr
                    Ft[i, j, 1] = ru * ucr + p * a0
                    Ft[i, j, 2] = rv * ucr + p * a1
                    Ft[i, j, 3] = (rE + p) * ucr
                    Gt[i, j, 0] = r * ucs
                    Gt[i, j, 1] = ru * ucs + p * b0
                    Gt[i, j, 2] = rv * ucs + p * b1
                    Gt[i, j, 3] = (rE + p) * ucs
                    if viscous:
                        for k in range(4):
                            Ft[i, j, k] -= Fvt[e, i, j, k]
                            Gt[i, j, k] -= Gvt[e, i, j, k]
            # divergence of the discontinuous flux polynomial
            for i in range(n):
                for j in range(n):
                    for v in range(4):
                        s = 0.0
                        for m in range(n):
                            s += D[i, m] * Ft[m, j, v] + D[j, m] * Gt[i, m, v]
                        dv[i, j, v] = s
            # face 0 (s = -1): point k = i; correction decays in s from j = 0
            for i in range(n):
                for v in range(4):
                    s = 0.0
                    for m in range(n):
                        s += Lf[0, m] * Gt[i, m, v]
                    jump[i, v] = Fc[e, 0, i, v] + s
            for i in range(n):
                for j in range(n):
                    g = dgR[n - 1 - j]
                    for v in range(4):
                        dv[i, j, v] += jump[i, v] * g
            # face 2 (s = +1): point k = n-1-i
            for i in range(n):
                for v in range(4):
                    s = 0.0
                    for m in range(n):
                        s += Lf[1, m] * Gt[i, m, v]
                    jump[i, v] = Fc[e, 2, n - 1 - i, v] - s
            for i in range(n):
                for j in range(n):
                    g = dgR[j]
                    for v in range(4):
                        dv[i, j, v] += jump[i, v] * g
            # face 1 (r = +1): point k = j
            for j in range(n):
                for v in range(4):
                    s = 0.0
                    for m in range(n):
                        s += Lf[1, m] * Ft[m, j, v]
                    jump[j, v] = Fc[e, 1, j, v] - s
            for i in range(n):
                gp = dgR[i]
                for j in range(n):
                    for v in range(4):
                        dv[i, j, v] += jump[j, v] * gp
            # face 3 (r = -1): point k = n-1-j; the outward normal flux is -F~
            for j in range(n):
                for v in range(4):
                    s = 0.0
                    for m in range(n):
                        s += Lf[0, m] * Ft[m, j, v]
                    jump[j, v] = Fc[e, 3, n - 1 - j, v] + s
            for i in range(n):
                gm = dgR[n - 1 - i]
                for j in range(n):
                    w = -invJ[e, i, j]
                    for v in range(4):
                        R[e, i, j, v] = (dv[i, j, v] + jump[j, v] * gm) * w
