"""VCJH correction functions of flux reconstruction.

The one-parameter family of Vincent, Castonguay & Jameson (J. Sci. Comput.
47, 2011) contains Huynh's (AIAA 2007-4079) ``g_DG`` (c = 0) and ``g_2``
(c = c_hu) and recovers spectral difference (c = c_sd).  ``c+`` is the value
that maximises the explicit time step, which depends on the time scheme.
"""
from __future__ import annotations

import functools
import math
import numbers

import numpy as np
from numpy.polynomial import Legendre

from .registry import Registry

__all__ = [
    "a_p",
    "eta_p",
    "vcjh_right",
    "c_dg",
    "c_sd",
    "c_hu",
    "c_plus",
    "c_min",
    "CORRECTIONS",
    "correction_parameter",
]


def _check_p(p):
    if isinstance(p, bool) or not isinstance(p, numbers.Integral) or p < 1:
        raise ValueError(f"polynomial degree p must be an integer >= 1, got {p!r}")
    return int(p)


def a_p(p: int) -> float:
    """Leading coefficient of the Legendre polynomial L_p, ``(2p)! / (2^p (p!)^2)``."""
    p = _check_p(p)
    return math.factorial(2 * p) / (2.0 ** p * math.factorial(p) ** 2)


def _scale(p):
    # (2p+1) (a_p p!)^2, the factor that turns c into eta
    return (2 * p + 1) * (a_p(p) * math.factorial(p)) ** 2


def eta_p(p: int, c: float) -> float:
    """``eta_p = c (2p+1) (a_p p!)^2 / 2`` (Vincent et al. 2011)."""
    return float(c) * _scale(_check_p(p)) / 2.0


def c_min(p: int) -> float:
    """Lower stability bound ``-2 / ((2p+1)(a_p p!)^2)`` (eta_p = -1); VCJH needs c > c_min."""
    return -2.0 / _scale(_check_p(p))


def vcjh_right(p: int, c: float) -> Legendre:
    """Right VCJH correction function g_R of degree p+1.

    Parameters
    ----------
    p : int
        Solution degree (>= 1).
    c : float
        VCJH parameter, ``c > c_min(p)``.

    Returns
    -------
    numpy.polynomial.Legendre on [-1, 1] with g_R(-1) = 0, g_R(1) = 1.

    Notes
    -----
    Vincent, Castonguay & Jameson (2011), eq. for the 1D family:

        g_R(x) = 1/2 [ L_p + (eta_p L_{p-1} + L_{p+1}) / (1 + eta_p) ].

    The left function is the mirror image, g_L(x) = g_R(-x).
    """
    p = _check_p(p)
    if not float(c) > c_min(p):
        raise ValueError(f"VCJH parameter c = {c!r} for p = {p} must be > {c_min(p):.6e} "
                         "(eta_p = -1, the energy-stability bound)")
    eta = eta_p(p, c)
    coef = np.zeros(p + 2)
    coef[p] = 0.5
    coef[p - 1] += 0.5 * eta / (1.0 + eta)
    coef[p + 1] += 0.5 / (1.0 + eta)
    return Legendre(coef)


def c_dg(p: int) -> float:
    """c = 0: g_R is the right Radau polynomial and FR is nodal DG (Huynh 2007)."""
    _check_p(p)
    return 0.0


def c_sd(p: int) -> float:
    """``2p / ((2p+1)(p+1)(a_p p!)^2)``: spectral difference (Vincent et al. 2011)."""
    p = _check_p(p)
    return 2.0 * p / ((2 * p + 1) * (p + 1) * (a_p(p) * math.factorial(p)) ** 2)


def c_hu(p: int) -> float:
    """``2(p+1) / ((2p+1) p (a_p p!)^2)``: Huynh's g_2 (Vincent et al. 2011)."""
    p = _check_p(p)
    return 2.0 * (p + 1) / ((2 * p + 1) * p * (a_p(p) * math.factorial(p)) ** 2)


def c_plus(p: int, scheme="ssp-rk33") -> float:
    """The VCJH parameter with the largest stable explicit CFL.

    Parameters
    ----------
    p : int
    scheme : str or ExplicitRK
        Time scheme whose stability region is used.

    Returns
    -------
    float

    Notes
    -----
    c+ is not a property of the spatial scheme alone: it maximises
    ``stable_cfl(p, c, scheme)`` of the 1D upwind FR advection operator
    (:mod:`solver.stability`) over c, so each time scheme has its own c+
    (Vincent et al. 2011 tabulate it for one RK scheme).  The search scans
    ``c = t * c_sd(p)`` on a logarithmic grid of t in [1e-3, 1e3] plus c = 0,
    then refines with a bounded scalar minimisation (scipy) in log t between
    the neighbours of the best grid point.  Cached per (p, scheme).
    """
    from .timeschemes import get_scheme
    return _c_plus(_check_p(p), get_scheme(scheme))


@functools.lru_cache(maxsize=None)
def _c_plus(p, scheme):
    from scipy.optimize import minimize_scalar

    from .stability import stable_cfl  # stability builds bases, which import this module

    ref = c_sd(p)
    logt = np.linspace(-3.0, 3.0, 49)
    vals = np.array([stable_cfl(p, ref * 10.0 ** q, scheme) for q in logt])
    k = int(np.argmax(vals))
    lo, hi = logt[max(k - 1, 0)], logt[min(k + 1, logt.size - 1)]
    res = minimize_scalar(lambda q: -stable_cfl(p, ref * 10.0 ** q, scheme), bounds=(lo, hi),
                          method="bounded", options={"xatol": 1e-4})
    cands = [(vals[k], ref * 10.0 ** logt[k]), (-res.fun, ref * 10.0 ** res.x), (stable_cfl(p, 0.0, scheme), 0.0)]
    return float(max(cands, key=lambda t: t[0])[1])


CORRECTIONS = Registry("correction function")
CORRECTIONS.register("dg", 0, "c = 0, right Radau polynomial (nodal DG; Huynh 2007 g_DG)",
                     obj=lambda p, scheme: c_dg(p))
CORRECTIONS.register("sd", 1, "c = c_sd, spectral difference (Vincent et al. 2011)",
                     obj=lambda p, scheme: c_sd(p))
CORRECTIONS.register("hu", 2, "c = c_hu, Huynh 2007 g_2", obj=lambda p, scheme: c_hu(p))
CORRECTIONS.register("c+", 3, "c maximising the stable CFL of the chosen time scheme",
                     obj=lambda p, scheme: c_plus(p, scheme))


def correction_parameter(name_or_value, p: int, scheme="ssp-rk33") -> float:
    """VCJH parameter c from a registry name or a number.

    Parameters
    ----------
    name_or_value : str or float
        ``'dg'``, ``'sd'``, ``'hu'``, ``'c+'`` or a value of c.
    p : int
    scheme : str or ExplicitRK
        Only used by ``'c+'``.

    Returns
    -------
    float

    Raises
    ------
    UnknownNameError for an unknown name; ValueError for c <= c_min(p).
    """
    p = _check_p(p)
    if isinstance(name_or_value, str):
        return float(CORRECTIONS[name_or_value].obj(p, scheme))
    if isinstance(name_or_value, bool) or not isinstance(name_or_value, numbers.Real):
        raise TypeError(f"correction must be one of {', '.join(CORRECTIONS.names())} or a number, "
                        f"got {name_or_value!r}")
    c = float(name_or_value)
    if not np.isfinite(c) or not c > c_min(p):
        raise ValueError(f"correction parameter c = {c!r} for p = {p} is below the VCJH stability bound "
                         f"c > -2/((2p+1)(a_p p!)^2) = {c_min(p):.6e}")
    return c
