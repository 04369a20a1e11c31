"""Manufactured solution of the compressible Navier-Stokes equations.

Method of manufactured solutions (Roache 2002, J. Fluids Eng. 124; Salari &
Knupp 2000, Sandia SAND2000-1444): choose smooth fields, add the source
``S = dU/dt + div(F - F_v)`` they leave, and the discrete solution must
converge to them at design order.  Every primitive field here is
``a + b sin(kx x + ky y + w t + phase)`` with ``k = 2 pi (integers)``, so it
is periodic on the unit square; the source is written out by hand with the
product and quotient rules (tests/test_navier_stokes.py checks it against
sympy).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["Wave", "ManufacturedFlow", "DEFAULT_FLOW"]


@dataclass(frozen=True)
class Wave:
    """``f = a + b sin(kx x + ky y + w t + phase)`` and its derivatives."""

    a: float
    b: float
    kx: float
    ky: float
    w: float
    phase: float = 0.0

    def _arg(self, x, y, t):
        return self.kx * x + self.ky * y + self.w * t + self.phase

    def value(self, x, y, t):
        return self.a + self.b * np.sin(self._arg(x, y, t))

    def grad(self, x, y, t):
        """(f_t, f_x, f_y)."""
        c = self.b * np.cos(self._arg(x, y, t))
        return self.w * c, self.kx * c, self.ky * c

    def hess(self, x, y, t):
        """(f_xx, f_xy, f_yy)."""
        s = -self.b * np.sin(self._arg(x, y, t))
        return self.kx * self.kx * s, self.kx * self.ky * s, self.ky * self.ky * s


@dataclass(frozen=True)
class ManufacturedFlow:
    """Manufactured density, velocity and pressure with constant viscosity.

    Attributes
    ----------
    rho, u, v, p : Wave
    gamma, mu, prandtl : float
    """

    rho: Wave
    u: Wave
    v: Wave
    p: Wave
    gamma: float
    mu: float
    prandtl: float

    def state(self, x, y, t):
        """Conserved variables (..., 4)."""
        r, u, v, p = (f.value(x, y, t) for f in (self.rho, self.u, self.v, self.p))
        return np.stack([r, r * u, r * v, p / (self.gamma - 1) + 0.5 * r * (u * u + v * v)], axis=-1)

    def source(self, x, y, t):
        """``S = dU/dt + div F - div F_v`` at points (..., 4).

        Notes
        -----
        With ``E = p/((gamma-1) rho) + (u^2+v^2)/2``, ``H = E + p/rho``,
        ``tau_xx = mu (4/3 u_x - 2/3 v_y)``, ``tau_yy = mu (4/3 v_y - 2/3 u_x)``,
        ``tau_xy = mu (u_y + v_x)``, ``q = -(gamma mu/Pr) grad e``,
        ``e = p/((gamma-1) rho)``:
        ``S_rho = rho_t + (rho u)_x + (rho v)_y``,
        ``S_mx = (rho u)_t + (rho u^2 + p)_x + (rho u v)_y - (tau_xx)_x - (tau_xy)_y``,
        ``S_my`` likewise, ``S_E = (rho E)_t + (rho u H)_x + (rho v H)_y
        - (u tau_xx + v tau_xy - q_x)_x - (u tau_xy + v tau_yy - q_y)_y``.
        """
        g, mu = self.gamma, self.mu
        r = self.rho.value(x, y, t)
        u = self.u.value(x, y, t)
        v = self.v.value(x, y, t)
        p = self.p.value(x, y, t)
        rt, rx, ry = self.rho.grad(x, y, t)
        ut, ux, uy = self.u.grad(x, y, t)
        vt, vx, vy = self.v.grad(x, y, t)
        pt, px, py = self.p.grad(x, y, t)
        uxx, uxy, uyy = self.u.hess(x, y, t)
        vxx, vxy, vyy = self.v.hess(x, y, t)
        rxx, rxy, ryy = self.rho.hess(x, y, t)
        pxx, pxy, pyy = self.p.hess(x, y, t)

        # continuity
        s0 = rt + rx * u + r * ux + ry * v + r * vy
        # momentum: (rho u)_t + (rho u u + p)_x + (rho u v)_y
        mx = (rt * u + r * ut) + (rx * u * u + 2 * r * u * ux + px) + (ry * u * v + r * uy * v + r * u * vy)
        my = (rt * v + r * vt) + (rx * u * v + r * ux * v + r * u * vx) + (ry * v * v + 2 * r * v * vy + py)
        txx = mu * (4 / 3 * ux - 2 / 3 * vy)
        tyy = mu * (4 / 3 * vy - 2 / 3 * ux)
        txy = mu * (uy + vx)
        txx_x = mu * (4 / 3 * uxx - 2 / 3 * vxy)
        txy_y = mu * (uyy + vxy)
        txy_x = mu * (uxy + vxx)
        tyy_y = mu * (4 / 3 * vyy - 2 / 3 * uxy)
        s1 = mx - txx_x - txy_y
        s2 = my - txy_x - tyy_y
        # energy
        gm1 = g - 1
        e = p / (gm1 * r)
        et = (pt * r - p * rt) / (gm1 * r * r)
        ex = (px * r - p * rx) / (gm1 * r * r)
        ey = (py * r - p * ry) / (gm1 * r * r)
        exx = (pxx / r - 2 * px * rx / r ** 2 - p * rxx / r ** 2 + 2 * p * rx ** 2 / r ** 3) / gm1
        eyy = (pyy / r - 2 * py * ry / r ** 2 - p * ryy / r ** 2 + 2 * p * ry ** 2 / r ** 3) / gm1
        k2 = 0.5 * (u * u + v * v)
        k2t = u * ut + v * vt
        k2x = u * ux + v * vx
        k2y = u * uy + v * vy
        E = e + k2
        Et, Ex, Ey = et + k2t, ex + k2x, ey + k2y
        rE_t = rt * E + r * Et
        # (rho u H)_x with rho H = rho E + p
        rH = r * E + p
        rH_x = rx * E + r * Ex + px
        rH_y = ry * E + r * Ey + py
        conv = rH_x * u + rH * ux + rH_y * v + rH * vy
        kap = g * mu / self.prandtl
        qx_x = -kap * exx
        qy_y = -kap * eyy
        work_x = ux * txx + u * txx_x + vx * txy + v * txy_x
        work_y = uy * txy + u * txy_y + vy * tyy + v * tyy_y
        s3 = rE_t + conv - (work_x - qx_x) - (work_y - qy_y)
        return np.stack([s0, s1, s2, s3], axis=-1)


_TP = 2 * math.pi
#: the flow used by ``quadfr verify mms``: Mach about 0.5, Reynolds about 20 per unit length
DEFAULT_FLOW = ManufacturedFlow(
    rho=Wave(1.0, 0.1, _TP, _TP, -1.0),
    u=Wave(0.3, 0.1, _TP, -_TP, 1.0, 0.3),
    v=Wave(0.2, 0.1, _TP, 2 * _TP, -1.0, 0.7),
    p=Wave(1 / (1.4 * 0.25), 0.2, 2 * _TP, -_TP, 1.0, 1.1),
    gamma=1.4, mu=0.05, prandtl=0.72)
