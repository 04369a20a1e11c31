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
    n = basis.x.size
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
