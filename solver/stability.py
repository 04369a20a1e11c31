"""Von Neumann analysis of 1D flux reconstruction for linear advection.

Gives the Fourier symbol of the upwind FR operator and the largest stable
CFL number of an explicit RK scheme; :func:`solver.corrections.c_plus` uses
it to pick the correction with the largest time step.
"""
from __future__ import annotations

import functools

import numpy as np

from .basis import Basis1D, make_basis
from .timeschemes import ExplicitRK, get_scheme

__all__ = ["N_THETA", "fourier_matrix", "fr_eigenvalues", "stable_cfl"]

#: default number of Bloch wave numbers in [0, pi] (both ends included)
N_THETA = 1001

_TOL = 1e-10


def fourier_matrix(basis: Basis1D, theta) -> np.ndarray:
    """Fourier symbol S(theta) of the upwind FR advection operator.

    Parameters
    ----------
    basis : Basis1D
    theta : float or (m,) array
        Bloch wave numbers, ``u_{j+1} = e^{i theta} u_j``.

    Returns
    -------
    (n, n) complex array, or (m, n, n) for array ``theta``.

    Notes
    -----
    For ``u_t + a u_x = 0`` (a > 0) on uniform elements of width h, the
    reference coordinate ``xi = 2 (x - x_j) / h`` gives, at the solution
    points of element j,

        du_j/dt = -(2a/h) [ D u_j + g_L'(x) (u*_{j-1/2} - Lf[0] u_j)
                                   + g_R'(x) (u*_{j+1/2} - Lf[1] u_j) ].

    The fully upwind common values are ``u*_{j+1/2} = Lf[1] u_j`` (the right
    correction vanishes) and ``u*_{j-1/2} = Lf[1] u_{j-1} = e^{-i theta} Lf[1] u_j``,
    so ``du/dt = (a/h) S(theta) u`` with

        S(theta) = -2 [ D + g_L' (e^{-i theta} Lf[1] - Lf[0]) ],

    ``g_L'(x_i) = -g_R'(x_{n-1-i})`` (Huynh 2007; Vincent et al. 2011).
    """
    th = np.asarray(theta, dtype=float)
    jump = np.exp(-1j * th)[..., None] * basis.Lf[1] - basis.Lf[0]  # (..., n)
    return -2.0 * (basis.D + basis.dgL[:, None] * jump[..., None, :])


def fr_eigenvalues(p: int, c: float, points: str = "gauss-legendre", thetas=None) -> np.ndarray:
    """Eigenvalues of S(theta), scaled so that ``du/dt = (a/h) S u``.

    Parameters
    ----------
    p : int
    c : float or str
        VCJH parameter or correction name (``'c+'`` uses ssp-rk33).
    points : str
    thetas : (m,) array, optional
        Default: ``N_THETA`` values spanning [0, pi].

    Returns
    -------
    (m, n) complex array, one row per theta.
    """
    if thetas is None:
        thetas = np.linspace(0.0, np.pi, N_THETA)
    basis = make_basis(p, points, c)
    return np.linalg.eigvals(fourier_matrix(basis, np.atleast_1d(thetas)))


@functools.lru_cache(maxsize=512)
def _spectrum(p, c, points):
    # S(-theta) = conj(S(theta)) and R has real coefficients, so [0, pi] suffices
    return fr_eigenvalues(p, c, points).ravel()


def stable_cfl(p: int, c, scheme="ssp-rk33", points: str = "gauss-legendre") -> float:
    """Largest CFL = a dt / h for which the RK-FR advection scheme is stable.

    Parameters
    ----------
    p : int
    c : float or str
        VCJH parameter or correction name (``'c+'`` taken for ``scheme``).
    scheme : str or ExplicitRK
    points : str

    Returns
    -------
    float

    Notes
    -----
    Stable means ``|R(CFL * lambda)| <= 1 + 1e-10`` for every eigenvalue
    lambda of S(theta), theta on ``N_THETA`` points of [0, pi], with R the
    scheme's stability function.  The CFL range is scanned upward (64 steps up
    to the first unstable value) so the result is the end of the first stable
    interval, then bisected to 1e-7 relative.  Cached.
    """
    from .corrections import correction_parameter

    rk = get_scheme(scheme)
    cval = correction_parameter(c, p, rk)
    return _stable_cfl(int(p), float(cval), rk, str(points))


@functools.lru_cache(maxsize=4096)
def _stable_cfl(p, c, rk: ExplicitRK, points):
    lam = _spectrum(p, c, points)

    def stable(cfl):
        return np.max(np.abs(rk.stability_function(cfl * lam))) <= 1.0 + _TOL

    # R is a polynomial of degree s with |R| -> inf, so instability sets in
    # once CFL * max|lambda| exceeds the size of the stability region
    scale = 1.0 / np.max(np.abs(lam))
    hi = scale
    while stable(hi):
        hi *= 2.0
    grid = np.linspace(0.0, hi, 65)[1:]
    lo = 0.0
    for g in grid:
        if not stable(g):
            hi = g
            break
        lo = g
    while hi - lo > 1e-7 * hi:
        mid = 0.5 * (lo + hi)
        if stable(mid):
            lo = mid
        else:
            hi = mid
    return lo
