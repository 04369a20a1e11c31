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


# ---------------------------------------------------------------------------
# viscous limit: 1D FR diffusion (LDG or BR2 common values) and the real-axis reach of an RK scheme
# ---------------------------------------------------------------------------
VISCOUS_RULES = ("ldg", "br2")


def _check_rule(scheme):
    if scheme not in VISCOUS_RULES:
        raise ValueError(f"unknown viscous scheme '{scheme}'; valid: {', '.join(VISCOUS_RULES)}")


def diffusion_matrix(basis: Basis1D, theta, eta: float = 5.0, scheme: str = "ldg") -> np.ndarray:
    """Fourier symbol of the 1D FR diffusion operator, ``du/dt = (nu/h^2) S u``.

    Parameters
    ----------
    basis : Basis1D
    theta : float or (m,) array
        Bloch wave numbers, ``u_{j+1} = e^{i theta} u_j``.
    eta : float
        BR2 penalty (``scheme = "br2"`` only).
    scheme : str
        ``"ldg"`` or ``"br2"``, the interior common values of
        solver/kernels/fr_viscous.py.

    Returns
    -------
    (n, n) complex array, or (m, n, n) for array ``theta``.

    Notes
    -----
    With ``xi = 2 (x - x_j)/h`` the corrected gradient is
    ``q = (2/h)[D u + g_L' (u*_L - Lf[0] u) + g_R' (u*_R - Lf[1] u)]`` and
    ``u_t = nu (2/h)[D q + g_L' (q*_L - Lf[0] q) + g_R' (q*_R - Lf[1] q)]``.

    * LDG (Cockburn & Shu 1998): the left element of each interface gives the
      solution and the right one the gradient, ``u*_{j+1/2} = Lf[1] u_j``,
      ``q*_{j+1/2} = Lf[0] q_{j+1}`` (the operator's switch direction has a
      positive x component, so this is the same choice).
    * BR2: ``u*`` is the average and ``q*`` averages both sides'
      ``Lf q^D + eta g_R'(1) (u* - u_f) (2/h) (+-1)`` with ``q^D = (2/h) D u``
      (the uncorrected gradient plus the lifting of that face only).

    Same construction as solver/kernels/fr_viscous.py, reduced to one dimension.
    """
    _check_rule(scheme)
    th = np.atleast_1d(np.asarray(theta, dtype=float))
    n = basis.x.size
    D, Lm, Lp = basis.D, basis.Lf[0], basis.Lf[1]
    gR, gL = basis.dgR, basis.dgL
    gR1 = float(_gR1(basis.p, basis.c))
    out = np.empty((th.size, n, n), dtype=complex)
    for k, t in enumerate(th):
        ep, em = np.exp(1j * t), np.exp(-1j * t)
        if scheme == "ldg":
            # q_j: u*_R = own trace (no right correction), u*_L = right trace of j-1
            q0 = D + np.outer(gL, em * Lp - Lm)
            # u_t: q*_L = own left trace of q (no left correction), q*_R = left trace of q_{j+1}
            out[k] = 4.0 * (D @ q0 + np.outer(gR, (ep * Lm - Lp) @ q0))
            continue
        # interface values as row operators on u_j (neighbours through the Bloch factor)
        ustarR = 0.5 * (Lp + ep * Lm)   # right face: own trace, neighbour's left trace
        ustarL = 0.5 * (Lm + em * Lp)   # left face: own trace, neighbour's right trace
        # corrected gradient of u_j (in units of 2/h)
        q0 = D + np.outer(gL, ustarL - Lm) + np.outer(gR, ustarR - Lp)
        # BR2 face gradients at the right face of j (own side) and the left face of j+1 (neighbour side)
        liftR_own = eta * gR1 * (ustarR - Lp)            # own side, outward +1
        liftR_nb = -eta * gR1 * (ustarR - ep * Lm)       # neighbour's side at its left face (outward -1)
        qR = 0.5 * (Lp @ D + liftR_own + ep * (Lm @ D) + liftR_nb)
        liftL_own = -eta * gR1 * (ustarL - Lm)
        liftL_nb = eta * gR1 * (ustarL - em * Lp)
        qL = 0.5 * (Lm @ D + liftL_own + em * (Lp @ D) + liftL_nb)
        out[k] = 4.0 * (D @ q0 + np.outer(gL, qL - Lm @ q0) + np.outer(gR, qR - Lp @ q0))
    return out if np.ndim(theta) else out[0]


def bounded_diffusion_matrix(basis: Basis1D, ne: int, eta: float = 5.0, scheme: str = "ldg") -> np.ndarray:
    """1D FR diffusion on ``ne`` elements of unit width with ``u = 0`` at both ends, ``du/dt = nu S u``.

    Parameters
    ----------
    basis : Basis1D
    ne : int
        Number of elements.
    eta : float
        BR2 penalty of the two boundary faces (and of interior faces for ``"br2"``).
    scheme : str
        Interior common values, ``"ldg"`` or ``"br2"``.

    Returns
    -------
    (ne n, ne n) real array acting on ``u`` ordered element by element.

    Notes
    -----
    Interior faces as in :func:`diffusion_matrix`; the two boundary faces in
    the BR2 form of solver/kernels/fr_viscous.py: ``u* = u_b = 0`` and
    ``q* = Lf q^D + eta g_R'(1) (u_b - u_f) (2/h) n`` with ``n = -1`` on the
    left end and ``+1`` on the right end.  Built column by column from unit
    vectors.
    """
    _check_rule(scheme)
    n = basis.x.size
    D, Lm, Lp = basis.D, basis.Lf[0], basis.Lf[1]
    gR, gL = basis.dgR, basis.dgL
    gR1 = float(_gR1(basis.p, basis.c))
    s = 2.0  # 2/h with h = 1
    N = ne * n
    S = np.empty((N, N))
    for col in range(N):
        u = np.zeros(N)
        u[col] = 1.0
        u = u.reshape(ne, n)
        uL, uR = u @ Lm, u @ Lp
        # common solution jumps at the left (dL) and right (dR) face of every element
        if scheme == "ldg":
            dR = np.zeros(ne)
            dL = np.concatenate(([0.0], uR[:-1])) - uL
        else:
            dR = 0.5 * (np.concatenate((uL[1:], [0.0])) - uR)
            dL = 0.5 * (np.concatenate(([0.0], uR[:-1])) - uL)
        dR[-1] = -uR[-1]
        dL[0] = -uL[0]
        du = u @ D.T
        q = s * (du + np.outer(dR, gR) + np.outer(dL, gL))
        qs = np.empty(ne + 1)  # common gradient at interface k (left face of element k)
        gD_R = s * (du @ Lp) + eta * gR1 * dR * s
        gD_L = s * (du @ Lm) - eta * gR1 * dL * s
        qs[0] = gD_L[0]
        qs[ne] = gD_R[ne - 1]
        if scheme == "ldg":
            qs[1:ne] = (q @ Lm)[1:]
        else:
            qs[1:ne] = 0.5 * (gD_R[:-1] + gD_L[1:])
        r = s * (q @ D.T + np.outer(qs[1:] - q @ Lp, gR) + np.outer(qs[:-1] - q @ Lm, gL))
        S[:, col] = r.ravel()
    return S


def _gR1(p, c):
    from .corrections import vcjh_right
    return vcjh_right(p, c).deriv()(1.0)


@functools.lru_cache(maxsize=256)
def diffusion_radius(p: int, c: float, points: str = "gauss-legendre", eta: float = 5.0, scheme: str = "ldg",
                     boundary: bool = False) -> float:
    """Spectral radius constant ``K`` with ``|lambda| <= K nu / h^2`` of the 1D FR diffusion operator.

    Parameters
    ----------
    p, c, points
        Basis (degree, VCJH parameter, solution points).
    eta : float
        BR2 penalty.
    scheme : str
        ``"ldg"`` or ``"br2"``.
    boundary : bool
        False: the periodic operator (:func:`diffusion_matrix`, 181 wave numbers
        in [0, pi]).  True: the larger of that and :func:`bounded_diffusion_matrix`
        on 1..4 elements, for elements with a boundary face (the BR2-form
        boundary penalty can exceed the interior LDG radius).
    """
    basis = make_basis(int(p), points, float(c))
    S = diffusion_matrix(basis, np.linspace(0.0, np.pi, 181), eta, scheme)
    K = float(np.max(np.abs(np.linalg.eigvals(S))))
    if boundary:
        for ne in (1, 2, 3, 4):
            K = max(K, float(np.max(np.abs(np.linalg.eigvals(bounded_diffusion_matrix(basis, ne, eta, scheme))))))
    return K


@functools.lru_cache(maxsize=64)
def real_axis_reach(scheme) -> float:
    """Largest ``x`` with ``|R(-y)| <= 1`` for all ``0 <= y <= x`` (the scheme's negative real-axis interval)."""
    rk = get_scheme(scheme)
    ys = np.linspace(0.0, 20.0, 20001)
    ok = np.abs(rk.stability_function(-ys)) <= 1.0 + _TOL
    bad = np.nonzero(~ok)[0]
    hi = ys[bad[0]] if bad.size else ys[-1]
    lo = ys[bad[0] - 1] if bad.size else ys[-1]
    while hi - lo > 1e-9:
        mid = 0.5 * (lo + hi)
        if abs(rk.stability_function(np.array([-mid]))[0]) <= 1.0 + _TOL:
            lo = mid
        else:
            hi = mid
    return float(lo)
