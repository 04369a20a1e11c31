"""Plain-numpy reference implementation of the FR Euler residual.

Written independently of solver/kernels (vectorised over elements, Python
loops over faces, explicit formulas for the Riemann fluxes) so the numba
kernels can be checked against it.  Slow; for tests and the benchmark's
speed-up figure only.
"""
from __future__ import annotations

import numpy as np


def euler_flux_np(U, gamma):
    """Cartesian Euler fluxes F, G of states U (..., 4)."""
    r, ru, rv, rE = U[..., 0], U[..., 1], U[..., 2], U[..., 3]
    u, v = ru / r, rv / r
    p = (gamma - 1) * (rE - 0.5 * r * (u ** 2 + v ** 2))
    F = np.stack([ru, ru * u + p, ru * v, (rE + p) * u], axis=-1)
    G = np.stack([rv, rv * u, rv * v + p, (rE + p) * v], axis=-1)
    return F, G


def rusanov_np(UL, UR, n, gamma):
    """Rusanov flux for arrays of states (..., 4) and unit normals (..., 2)."""
    FL, GL = euler_flux_np(UL, gamma)
    FR, GR = euler_flux_np(UR, gamma)
    nx, ny = n[..., :1], n[..., 1:2]
    fnL, fnR = FL * nx + GL * ny, FR * nx + GR * ny

    def speed(U):
        r = U[..., 0]
        vel = U[..., 1:3] / r[..., None]
        p = (gamma - 1) * (U[..., 3] - 0.5 * r * (vel ** 2).sum(-1))
        return np.abs((vel * n).sum(-1)) + np.sqrt(gamma * p / r)

    s = np.maximum(speed(UL), speed(UR))[..., None]
    return 0.5 * (fnL + fnR) - 0.5 * s * (UR - UL)


def roe_np(UL, UR, n, gamma, efix=0.1):
    """Roe flux written through the full Roe matrix |A| = R |Lambda| R^-1.

    Independent of the wave-strength form in solver/kernels/riemann.py: the
    eigenvectors of the rotated 1D Jacobian are built and inverted with numpy.
    """
    out = np.empty(np.broadcast_shapes(UL.shape, UR.shape))
    ULf, URf = np.broadcast_to(UL, out.shape).reshape(-1, 4), np.broadcast_to(UR, out.shape).reshape(-1, 4)
    nf = np.broadcast_to(n, out.shape[:-1] + (2,)).reshape(-1, 2)
    res = out.reshape(-1, 4)
    for k in range(ULf.shape[0]):
        uL, uR, (nx, ny) = ULf[k], URf[k], nf[k]
        def prim(U):
            r = U[0]; u = U[1] / r; v = U[2] / r
            p = (gamma - 1) * (U[3] - 0.5 * r * (u * u + v * v))
            return r, u, v, p, (U[3] + p) / r
        rl, ul, vl, pl, hl = prim(uL)
        rr, ur, vr, pr, hr = prim(uR)
        wl, wr = np.sqrt(rl), np.sqrt(rr)
        u = (wl * ul + wr * ur) / (wl + wr)
        v = (wl * vl + wr * vr) / (wl + wr)
        h = (wl * hl + wr * hr) / (wl + wr)
        a = np.sqrt((gamma - 1) * (h - 0.5 * (u * u + v * v)))
        un = u * nx + v * ny
        ut = -u * ny + v * nx
        # right eigenvectors (columns) of dFn/dU at the Roe state
        Rm = np.array([
            [1, 1, 0, 1],
            [u - a * nx, u, -ny, u + a * nx],
            [v - a * ny, v, nx, v + a * ny],
            [h - a * un, 0.5 * (u * u + v * v), ut, h + a * un],
        ])
        lam = np.abs(np.array([un - a, un, un, un + a]))
        d = efix * a
        for i in (0, 3):
            if lam[i] < d:
                lam[i] = 0.5 * (lam[i] ** 2 + d * d) / d
        absA = Rm @ np.diag(lam) @ np.linalg.inv(Rm)
        FL, GL = euler_flux_np(uL, gamma)
        FR, GR = euler_flux_np(uR, gamma)
        res[k] = 0.5 * (FL * nx + GL * ny + FR * nx + GR * ny) - 0.5 * absA @ (uR - uL)
    return out


def _face_values(A, Lm, Lp):
    """Values of a nodal field A (ne, n, n, ...) on faces 0..3, counter-clockwise order, (ne, 4, n, ...)."""
    f0 = np.einsum("m,eim...->ei...", Lm, A)
    f1 = np.einsum("m,emj...->ej...", Lp, A)
    f2 = np.einsum("m,eim...->ei...", Lp, A)[:, ::-1]
    f3 = np.einsum("m,emj...->ej...", Lm, A)[:, ::-1]
    return np.stack([f0, f1, f2, f3], axis=1)


def residual_np(U, metrics, basis, mesh, gamma, flux="rusanov", efix=0.1, ghost=None):
    """FR Euler residual in numpy.

    Parameters
    ----------
    ghost : callable(e, f, UL (n,4), nrm (n,2)) -> UR (n,4), optional
        Exterior state on boundary faces (by element, face).
    """
    D, Lm, Lp, g = basis.D, basis.Lf[0], basis.Lf[1], basis.dgR
    F, G = euler_flux_np(U, gamma)
    Mr, Ms = metrics.Mr, metrics.Ms
    Ft = Mr[..., 0:1] * F + Mr[..., 1:2] * G
    Gt = Ms[..., 0:1] * F + Ms[..., 1:2] * G
    div = np.einsum("im,emjv->eijv", D, Ft) + np.einsum("jm,eimv->eijv", D, Gt)
    Uf = _face_values(U, Lm, Lp)
    Ftf, Gtf = _face_values(Ft, Lm, Lp), _face_values(Gt, Lm, Lp)
    # outward normal flux of the discontinuous polynomial
    loc = np.stack([-Gtf[:, 0], Ftf[:, 1], Gtf[:, 2], -Ftf[:, 3]], axis=1)
    riem = {"rusanov": rusanov_np, "roe": lambda a, b, c, d: roe_np(a, b, c, d, efix)}[flux]
    Fc = np.zeros_like(Uf)
    for eL, fL, eR, fR in mesh.interior_faces:
        nrm = metrics.nrm[eL, fL]
        fs = riem(Uf[eL, fL], Uf[eR, fR][::-1], nrm, gamma) * metrics.mag[eL, fL][:, None]
        Fc[eL, fL] = fs
        Fc[eR, fR] = -fs[::-1]
    for tag, faces in mesh.boundary_faces.items():
        for e, f in faces:
            nrm = metrics.nrm[e, f]
            UR = ghost(e, f, Uf[e, f], nrm)
            Fc[e, f] = riem(Uf[e, f], UR, nrm, gamma) * metrics.mag[e, f][:, None]
    jump = Fc - loc
    # map face points back to lines: faces 2, 3 run backwards
    j0, j1, j2, j3 = jump[:, 0], jump[:, 1], jump[:, 2][:, ::-1], jump[:, 3][:, ::-1]
    gm = g[::-1]
    div += (np.einsum("eiv,j->eijv", j0, gm) + np.einsum("eiv,j->eijv", j2, g)
            + np.einsum("ejv,i->eijv", j1, g) + np.einsum("ejv,i->eijv", j3, gm))
    return -div / metrics.J[..., None]


# ---------------------------------------------------------------------------
# viscous terms (LDG or BR2 common values in FR form), numpy
# ---------------------------------------------------------------------------
def _stress_heat_np(U, gx, gy, gamma, prandtl, mu):
    """Viscous fluxes Fv, Gv (..., 4) from U (..., 4) and conserved gradients gx, gy (..., 4)."""
    r = U[..., 0]
    vel = U[..., 1:3] / r[..., None]
    Et = U[..., 3] / r
    dvx = (gx[..., 1:3] - vel * gx[..., :1]) / r[..., None]
    dvy = (gy[..., 1:3] - vel * gy[..., :1]) / r[..., None]
    u, v = vel[..., 0], vel[..., 1]
    ex = (gx[..., 3] - Et * gx[..., 0]) / r - (u * dvx[..., 0] + v * dvx[..., 1])
    ey = (gy[..., 3] - Et * gy[..., 0]) / r - (u * dvy[..., 0] + v * dvy[..., 1])
    div = dvx[..., 0] + dvy[..., 1]
    txx = mu * (2 * dvx[..., 0] - 2 / 3 * div)
    tyy = mu * (2 * dvy[..., 1] - 2 / 3 * div)
    txy = mu * (dvy[..., 0] + dvx[..., 1])
    k = gamma * mu / prandtl
    qx, qy = -k * ex, -k * ey
    z = np.zeros_like(r)
    Fv = np.stack([z, txx, txy, u * txx + v * txy - qx], -1)
    Gv = np.stack([z, txy, tyy, u * txy + v * tyy - qy], -1)
    return Fv, Gv


def ns_residual_np(U, metrics, basis, mesh, gamma, mu, prandtl, eta, gR1, flux="rusanov", efix=0.1, ghost=None,
                   bstate=None, scheme="ldg", direction=(np.cos(0.3), np.sin(0.3))):
    """Navier-Stokes FR residual with LDG or BR2 common values, numpy, constant viscosity.

    Parameters
    ----------
    bstate : callable(e, f, UL (n,4), nrm (n,2)) -> (Ub (n,4), adiabatic bool), optional
        Viscous boundary state on boundary faces.
    scheme : str
        "ldg": on each interior face the side whose outward normal, summed over
        the face points, has a positive component along ``direction`` gives the
        common solution (its trace) and the other side the common viscous flux
        (from its corrected gradient).  "br2": averaged solution, averaged
        fluxes from the uncorrected gradient plus eta times the own-face lifting.
        Boundary faces use the BR2 form for both.
    """
    D, Lm, Lp, g = basis.D, basis.Lf[0], basis.Lf[1], basis.dgR
    gm = g[::-1]
    Mr, Ms, J = metrics.Mr, metrics.Ms, metrics.J
    nS = metrics.nrm * metrics.mag[..., None]
    Uf = _face_values(U, Lm, Lp)
    # common solution jumps; ldg_flux[e, f]: this face supplies the LDG common flux
    dU = np.zeros_like(Uf)
    adiab = np.zeros(Uf.shape[:2], dtype=bool)
    isb = np.zeros(Uf.shape[:2], dtype=bool)
    ldg_flux = np.zeros(Uf.shape[:2], dtype=bool)
    for eL, fL, eR, fR in mesh.interior_faces:
        UL, UR = Uf[eL, fL], Uf[eR, fR][::-1]
        if scheme == "br2":
            star = 0.5 * (UL + UR)
        elif scheme == "ldg":
            left_gives = metrics.nrm[eL, fL].sum(axis=0) @ np.asarray(direction) > 0
            star = UL if left_gives else UR
            ldg_flux[eR, fR] = left_gives
            ldg_flux[eL, fL] = not left_gives
        else:
            raise ValueError(scheme)
        dU[eL, fL] = star - UL
        dU[eR, fR] = (star - UR)[::-1]
    for faces in mesh.boundary_faces.values():
        for e, f in faces:
            Ub, ad = bstate(e, f, Uf[e, f], metrics.nrm[e, f])
            dU[e, f] = Ub - Uf[e, f]
            adiab[e, f] = ad
            isb[e, f] = True
    dr = np.einsum("im,emjv->eijv", D, U)
    ds = np.einsum("jm,eimv->eijv", D, U)

    def phys(a, b):
        gx = (Mr[..., 0:1] * a + Ms[..., 0:1] * b) / J[..., None]
        gy = (Mr[..., 1:2] * a + Ms[..., 1:2] * b) / J[..., None]
        return gx, gy

    gxD, gyD = phys(dr, ds)
    # corrected gradient at solution points
    j0, j1, j2, j3 = dU[:, 0], dU[:, 1], dU[:, 2][:, ::-1], dU[:, 3][:, ::-1]
    drc = dr + np.einsum("ejv,i->eijv", j1, g) - np.einsum("ejv,i->eijv", j3, gm)
    dsc = ds + np.einsum("eiv,j->eijv", j2, g) - np.einsum("eiv,j->eijv", j0, gm)
    gx, gy = phys(drc, dsc)
    # face gradients: BR2 form (uncorrected + eta * own-face lifting), LDG flux faces: corrected gradient trace
    gxf, gyf = _face_values(gxD, Lm, Lp), _face_values(gyD, Lm, Lp)
    lift = eta * gR1 * dU / metrics.Jf[..., None]
    gxf = gxf + lift * nS[..., 0:1]
    gyf = gyf + lift * nS[..., 1:2]
    sel = ldg_flux[..., None, None]
    gxf = np.where(sel, _face_values(gx, Lm, Lp), gxf)
    gyf = np.where(sel, _face_values(gy, Lm, Lp), gyf)
    Ustate = np.where(isb[..., None, None], Uf + dU, Uf)
    Fvf_x, Fvf_y = _stress_heat_np(Ustate, gxf, gyf, gamma, prandtl, mu)
    Fvn = Fvf_x * nS[..., 0:1] + Fvf_y * nS[..., 1:2]
    # adiabatic: remove the heat-flux part of the energy flux
    if adiab.any():
        r = Ustate[..., 0]
        vel = Ustate[..., 1:3] / r[..., None]
        Fx2, Fy2 = _stress_heat_np(Ustate, gxf, gyf, gamma, prandtl, mu)
        tx = Fx2[..., 1] * nS[..., 0] + Fy2[..., 1] * nS[..., 1]
        ty = Fx2[..., 2] * nS[..., 0] + Fy2[..., 2] * nS[..., 1]
        work = vel[..., 0] * tx + vel[..., 1] * ty
        Fvn[..., 3] = np.where(adiab[..., None], work, Fvn[..., 3])
    Fv, Gv = _stress_heat_np(U, gx, gy, gamma, prandtl, mu)
    Fvt = Mr[..., 0:1] * Fv + Mr[..., 1:2] * Gv
    Gvt = Ms[..., 0:1] * Fv + Ms[..., 1:2] * Gv
    # common viscous normal flux
    Fcv = np.zeros_like(Uf)
    for eL, fL, eR, fR in mesh.interior_faces:
        if scheme == "br2":
            c = 0.5 * (Fvn[eL, fL] - Fvn[eR, fR][::-1])
        elif ldg_flux[eL, fL]:
            c = Fvn[eL, fL]
        else:
            c = -Fvn[eR, fR][::-1]
        Fcv[eL, fL] = c
        Fcv[eR, fR] = -c[::-1]
    for faces in mesh.boundary_faces.values():
        for e, f in faces:
            Fcv[e, f] = Fvn[e, f]
    # total: inviscid minus viscous, then the same FR divergence + correction
    F, G = euler_flux_np(U, gamma)
    Ft = Mr[..., 0:1] * F + Mr[..., 1:2] * G - Fvt
    Gt = Ms[..., 0:1] * F + Ms[..., 1:2] * G - Gvt
    div = np.einsum("im,emjv->eijv", D, Ft) + np.einsum("jm,eimv->eijv", D, Gt)
    Ftf, Gtf = _face_values(Ft, Lm, Lp), _face_values(Gt, Lm, Lp)
    loc = np.stack([-Gtf[:, 0], Ftf[:, 1], Gtf[:, 2], -Ftf[:, 3]], axis=1)
    riem = {"rusanov": rusanov_np, "roe": lambda a, b, c, d: roe_np(a, b, c, d, efix)}[flux]
    Fc = np.zeros_like(Uf)
    for eL, fL, eR, fR in mesh.interior_faces:
        fs = riem(Uf[eL, fL], Uf[eR, fR][::-1], metrics.nrm[eL, fL], gamma) * metrics.mag[eL, fL][:, None]
        Fc[eL, fL] = fs
        Fc[eR, fR] = -fs[::-1]
    for faces in mesh.boundary_faces.values():
        for e, f in faces:
            UR = ghost(e, f, Uf[e, f], metrics.nrm[e, f])
            Fc[e, f] = riem(Uf[e, f], UR, metrics.nrm[e, f], gamma) * metrics.mag[e, f][:, None]
    jump = Fc - Fcv - loc
    k0, k1, k2, k3 = jump[:, 0], jump[:, 1], jump[:, 2][:, ::-1], jump[:, 3][:, ::-1]
    div += (np.einsum("eiv,j->eijv", k0, gm) + np.einsum("eiv,j->eijv", k2, g)
            + np.einsum("ejv,i->eijv", k1, g) + np.einsum("ejv,i->eijv", k3, gm))
    return -div / J[..., None]
