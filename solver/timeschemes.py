"""Explicit Runge-Kutta time schemes.

Every scheme is a set of published coefficients held by an :class:`ExplicitRK`
object.  The base class derives the Butcher tableau (used for the stability
function and the stage times) and owns the work arrays; each subclass supplies
one hook, ``_step``, that advances the solution in the form the coefficients
were published in (Butcher, Shu-Osher or Williamson 2N).

The right-hand side has the signature ``rhs(t, U, out)`` and writes dU/dt into
``out`` (same shape as ``U``); nothing is allocated per step.
"""
from __future__ import annotations

from fractions import Fraction

import numpy as np
from numba import njit

from .registry import Registry

__all__ = [
    "ExplicitRK",
    "ShuOsherRK",
    "LowStorage2NRK",
    "RKWork",
    "TIME_SCHEMES",
    "get_scheme",
]


@njit(cache=True)
def _lincomb(out, base, beta, regs, idx, coef, nterm):
    """``out = beta * base + sum_q coef[q] * regs[idx[q]]`` over ``q < nterm``.

    ``out`` may be the same array as ``base`` (element-wise read then write).
    ``base`` is not read when ``beta == 0`` so that uninitialised registers
    never leak in as ``0 * nan``.
    """
    n = out.shape[0]
    for j in range(n):
        acc = beta * base[j] if beta != 0.0 else 0.0
        for q in range(nterm):
            acc += coef[q] * regs[idx[q], j]
        out[j] = acc


class RKWork:
    """Work arrays of one scheme for one solution shape (allocated once).

    Attributes
    ----------
    shape : tuple
        Shape of the solution array the work was made for.
    regs : (m, N) float array
        Registers, ``N = prod(shape)``; ``views[k]`` is ``regs[k]`` reshaped to
        ``shape``.
    idx : (m,) int64 array, coef : (m,) float array
        Scratch for the index / coefficient lists passed to the kernel.
    owner : ExplicitRK
        Scheme that allocated it.
    """

    __slots__ = ("shape", "regs", "views", "idx", "coef", "owner")

    def __init__(self, owner, shape, nreg):
        self.owner = owner
        self.shape = tuple(shape)
        size = int(np.prod(self.shape, dtype=np.int64))
        # zeros, not empty: a register that is multiplied by 0 must not hold nan
        self.regs = np.zeros((max(nreg, 1), size))
        self.views = tuple(self.regs[k].reshape(self.shape) for k in range(nreg))
        self.idx = np.zeros(max(nreg, 1), dtype=np.int64)
        self.coef = np.zeros(max(nreg, 1))

    def arrays(self):
        """The array objects (for checks that nothing is re-allocated)."""
        return (self.regs, self.idx, self.coef) + self.views


def _as_float_array(a, name, shape=None):
    """1-D float array from numbers or ``Fraction`` objects (published rationals)."""
    arr = np.array([float(v) for v in a])
    if shape is not None and arr.shape != shape:
        raise ValueError(f"{name} must have shape {shape}, got {arr.shape}")
    return arr


class ExplicitRK:
    """Explicit Runge-Kutta scheme given by its Butcher tableau.

    Parameters
    ----------
    name : str
    order : int
        Nominal order of accuracy.
    A : (s, s) array_like
        Strictly lower-triangular Butcher matrix.
    b : (s,) array_like
        Weights.
    ref : str
        Where the coefficients come from.

    Attributes
    ----------
    name, order, stages, ref
    A : (s, s) float array, b : (s,) float array, c : (s,) float array
        Butcher tableau, ``c = A 1``.

    Notes
    -----
    Butcher form of one step of ``y' = F(t, y)``:

        Y_i = y^n + dt sum_{j<i} a_ij K_j,   K_i = F(t^n + c_i dt, Y_i),
        y^{n+1} = y^n + dt sum_i b_i K_i.

    Stability function on ``y' = lambda y``, ``z = lambda dt``:
    ``R(z) = 1 + z b^T (I - z A)^{-1} 1``.  For explicit schemes A is
    nilpotent, so ``(I - z A)^{-1} = sum_{k<s} z^k A^k`` exactly and R is the
    polynomial ``sum_k gamma_k z^k`` with ``gamma_0 = 1``,
    ``gamma_k = b^T A^{k-1} 1``.
    """

    def __init__(self, name, order, A, b, ref=""):
        self.name = str(name)
        self.order = int(order)
        self.ref = ref
        self._set_butcher(np.asarray(A, dtype=float), np.asarray(b, dtype=float))

    # -- tableau ---------------------------------------------------------
    def _set_butcher(self, A, b):
        s = b.size
        if A.shape != (s, s):
            raise ValueError(f"time scheme '{self.name}': A has shape {A.shape}, expected ({s}, {s})")
        if np.any(np.triu(A) != 0.0):
            raise ValueError(f"time scheme '{self.name}': A is not strictly lower triangular (not explicit)")
        self.stages = s
        self.A = A
        self.b = b
        self.c = A.sum(axis=1)
        gam = [1.0]
        v = np.ones(s)
        for _ in range(s):
            gam.append(float(b @ v))
            v = A @ v
        #: stability polynomial coefficients gamma_0..gamma_s (increasing powers)
        self.stability_polynomial = np.array(gam)
        for arr in (self.A, self.b, self.c, self.stability_polynomial):
            arr.setflags(write=False)

    def stability_function(self, z):
        """``R(z) = 1 + z b^T (I - zA)^{-1} 1``.

        Parameters
        ----------
        z : complex scalar or array of any shape

        Returns
        -------
        complex array of the shape of ``z`` (scalar for scalar input).
        """
        return np.polynomial.polynomial.polyval(np.asarray(z), self.stability_polynomial)

    # -- stepping --------------------------------------------------------
    def _nregisters(self) -> int:
        # Butcher form: K_1..K_s and one stage value Y
        return self.stages + 1

    def allocate(self, U) -> RKWork:
        """Work arrays for solutions shaped like ``U`` (call once, reuse every step).

        Parameters
        ----------
        U : float64 C-contiguous array of any shape
        """
        self._check_u(U)
        return RKWork(self, U.shape, self._nregisters())

    def _check_u(self, U):
        if not isinstance(U, np.ndarray) or U.dtype != np.float64:
            raise TypeError(f"time scheme '{self.name}': the solution must be a float64 numpy array")
        if not U.flags.c_contiguous:
            raise ValueError(f"time scheme '{self.name}': the solution array must be C-contiguous "
                             "(it is updated in place through a flat view)")

    def step(self, rhs, t, U, dt, work: RKWork) -> None:
        """Advance ``U`` from ``t`` to ``t + dt`` in place.

        Parameters
        ----------
        rhs : callable ``rhs(t, U, out)``
            Writes dU/dt at time ``t`` into ``out`` (shape of ``U``).
        t, dt : float
        U : float64 C-contiguous array, updated in place
        work : RKWork
            From :meth:`allocate` of this scheme with ``U``'s shape.
        """
        if work.owner is not self or work.shape != U.shape:
            raise ValueError(f"time scheme '{self.name}': work arrays were allocated for another "
                             f"scheme or shape {work.shape} (solution has shape {U.shape})")
        if not U.flags.c_contiguous:
            raise ValueError(f"time scheme '{self.name}': the solution array must be C-contiguous")
        self._step(rhs, float(t), U, float(dt), work)

    def _step(self, rhs, t, U, dt, work):
        s = self.stages
        u = U.reshape(-1)
        regs, idx, coef = work.regs, work.idx, work.coef
        K, Y = work.views[:s], work.views[s]
        y = regs[s]
        for i in range(s):
            m = 0
            for j in range(i):
                if self.A[i, j] != 0.0:
                    idx[m] = j
                    coef[m] = dt * self.A[i, j]
                    m += 1
            if m == 0:
                rhs(t + self.c[i] * dt, U, K[i])
            else:
                _lincomb(y, u, 1.0, regs, idx, coef, m)
                rhs(t + self.c[i] * dt, Y, K[i])
        m = 0
        for j in range(s):
            if self.b[j] != 0.0:
                idx[m] = j
                coef[m] = dt * self.b[j]
                m += 1
        _lincomb(u, u, 1.0, regs, idx, coef, m)

    def __repr__(self):
        return f"{type(self).__name__}({self.name!r}, order={self.order}, stages={self.stages})"


class ShuOsherRK(ExplicitRK):
    """Explicit RK scheme in Shu-Osher form.

    Parameters
    ----------
    alpha, beta : (s, s) array_like
        Row ``i`` (0-based) gives stage ``u^(i+1)`` in terms of ``u^(0..i)``;
        only the lower triangle (``k <= i``) is used.

    Notes
    -----
    Shu & Osher (1988):

        u^(0) = u^n,
        u^(i) = sum_{k<i} [ alpha_ik u^(k) + dt beta_ik L(u^(k)) ],  i = 1..s,
        u^{n+1} = u^(s),

    with ``sum_k alpha_ik = 1``.  Writing ``u^(i) = u^n + dt sum_j K_ij L_j``
    gives ``K_i = sum_k alpha_ik K_k + beta_ik e_k``; the Butcher matrix row of
    stage ``i`` (argument ``u^(i-1)``) is ``K_{i-1}`` and ``b = K_s``.
    """

    def __init__(self, name, order, alpha, beta, ref=""):
        alpha = np.asarray(alpha, dtype=float)
        beta = np.asarray(beta, dtype=float)
        s = alpha.shape[0]
        if alpha.shape != (s, s) or beta.shape != (s, s):
            raise ValueError(f"time scheme '{name}': alpha and beta must both be (s, s)")
        if np.any(np.triu(alpha, 1) != 0) or np.any(np.triu(beta, 1) != 0):
            raise ValueError(f"time scheme '{name}': alpha/beta row i may only use stages 0..i")
        rows = alpha.sum(axis=1)
        if np.max(np.abs(rows - 1.0)) > 1e-13:
            raise ValueError(f"time scheme '{name}': Shu-Osher alpha rows must sum to 1, got {rows}")
        self.alpha, self.beta = alpha, beta
        K = np.zeros((s + 1, s))
        for i in range(1, s + 1):
            for k in range(i):
                K[i] += alpha[i - 1, k] * K[k]
                K[i, k] += beta[i - 1, k]
        super().__init__(name, order, K[:s], K[s], ref)

    def _nregisters(self) -> int:
        # u^(1..s-1) and L(u^(0..s-1)); u^(0) is U itself until the last stage
        return 2 * self.stages - 1

    def _step(self, rhs, t, U, dt, work):
        s = self.stages
        u = U.reshape(-1)
        regs, idx, coef, views = work.regs, work.idx, work.coef, work.views
        # register layout: F^(k) -> k (k = 0..s-1), u^(k) -> s + k - 1 (k = 1..s-1)
        for i in range(1, s + 1):
            ustage = U if i == 1 else views[s + i - 2]
            rhs(t + self.c[i - 1] * dt, ustage, views[i - 1])
            m = 0
            for k in range(i):
                if k > 0 and self.alpha[i - 1, k] != 0.0:
                    idx[m] = s + k - 1
                    coef[m] = self.alpha[i - 1, k]
                    m += 1
                if self.beta[i - 1, k] != 0.0:
                    idx[m] = k
                    coef[m] = dt * self.beta[i - 1, k]
                    m += 1
            out = u if i == s else regs[s + i - 1]
            _lincomb(out, u, self.alpha[i - 1, 0], regs, idx, coef, m)


class LowStorage2NRK(ExplicitRK):
    """Williamson (1980) 2N-storage explicit RK scheme.

    Parameters
    ----------
    A2, B2, C2 : (s,) array_like
        Coefficients of the 2N form (``A2[0] = 0``).

    Notes
    -----
    One step, ``i = 1..s``:

        dU <- A_i dU + dt F(t^n + C_i dt, U),   U <- U + B_i dU.

    With ``dU_i = dt sum_j Q_ij F_j``, ``Q_i = A_i Q_{i-1} + e_i`` and
    ``U^(i) = U^n + dt sum_j P_ij F_j``, ``P_i = P_{i-1} + B_i Q_i``; the
    Butcher row of stage ``i`` is ``P_{i-1}`` and ``b = P_s``.  The registers
    are ``U`` and ``dU``; because ``rhs`` overwrites its output one more array
    holds ``F`` (a right-hand side that accumulated into ``dU`` would remove it).
    """

    def __init__(self, name, order, A2, B2, C2, ref=""):
        A2 = _as_float_array(A2, "A")
        B2 = _as_float_array(B2, "B", A2.shape)
        C2 = _as_float_array(C2, "C", A2.shape)
        if A2[0] != 0.0:
            raise ValueError(f"time scheme '{name}': the first 2N coefficient A_1 must be 0")
        s = A2.size
        Q = np.zeros(s)
        P = np.zeros((s + 1, s))
        for i in range(s):
            Q = A2[i] * Q
            Q[i] += 1.0
            P[i + 1] = P[i] + B2[i] * Q
        self.A2, self.B2, self.C2 = A2, B2, C2
        super().__init__(name, order, P[:s], P[s], ref)

    def _nregisters(self) -> int:
        return 2  # dU and F

    def _step(self, rhs, t, U, dt, work):
        u = U.reshape(-1)
        regs, idx, coef = work.regs, work.idx, work.coef
        dU, F = work.views
        for i in range(self.stages):
            rhs(t + self.C2[i] * dt, U, F)
            idx[0] = 1
            coef[0] = dt
            _lincomb(regs[0], regs[0], self.A2[i], regs, idx, coef, 1)
            idx[0] = 0
            coef[0] = self.B2[i]
            _lincomb(u, u, 1.0, regs, idx, coef, 1)


# ---------------------------------------------------------------------------
# coefficient data
# ---------------------------------------------------------------------------
TIME_SCHEMES = Registry("time scheme")

# Shu & Osher (1988), J. Comput. Phys. 77: the optimal third-order TVD (SSP) RK.
_SSP33 = ShuOsherRK(
    "ssp-rk33", 3,
    alpha=[[1.0, 0.0, 0.0],
           [3.0 / 4.0, 1.0 / 4.0, 0.0],
           [1.0 / 3.0, 0.0, 2.0 / 3.0]],
    beta=[[1.0, 0.0, 0.0],
          [0.0, 1.0 / 4.0, 0.0],
          [0.0, 0.0, 2.0 / 3.0]],
    ref="Shu & Osher 1988, J. Comput. Phys. 77:439",
)

# Spiteri & Ruuth (2002), SIAM J. Numer. Anal. 40: SSP(5,4), Shu-Osher form.
_SSP54 = ShuOsherRK(
    "ssp-rk54", 4,
    alpha=[[1.0, 0, 0, 0, 0],
           [0.444370493651235, 0.555629506348765, 0, 0, 0],
           [0.620101851488403, 0, 0.379898148511597, 0, 0],
           [0.178079954393132, 0, 0, 0.821920045606868, 0],
           [0, 0, 0.517231671970585, 0.096059710526147, 0.386708617503269]],
    beta=[[0.391752226571890, 0, 0, 0, 0],
          [0, 0.368410593050371, 0, 0, 0],
          [0, 0, 0.251891774271694, 0, 0],
          [0, 0, 0, 0.544974750228521, 0],
          [0, 0, 0, 0.063692468666290, 0.226007483236906]],
    ref="Spiteri & Ruuth 2002, SIAM J. Numer. Anal. 40:469",
)

# Carpenter & Kennedy (1994), NASA TM-109112: RK4(3)5[2N], solution 3.
_LSRK45 = LowStorage2NRK(
    "lsrk45", 4,
    A2=[Fraction(0), Fraction(-567301805773, 1357537059087), Fraction(-2404267990393, 2016746695238),
        Fraction(-3550918686646, 2091501179385), Fraction(-1275806237668, 842570457699)],
    B2=[Fraction(1432997174477, 9575080441755), Fraction(5161836677717, 13612068292357),
        Fraction(1720146321549, 2090206949498), Fraction(3134564353537, 4481467310338),
        Fraction(2277821191437, 14882151754819)],
    C2=[Fraction(0), Fraction(1432997174477, 9575080441755), Fraction(2526269341429, 6820363962896),
        Fraction(2006345519317, 3224310063776), Fraction(2802321613138, 2924317926251)],
    ref="Carpenter & Kennedy 1994, NASA TM-109112",
)

# Kutta (1901): the classical fourth-order scheme.
_RK4 = ExplicitRK(
    "rk4", 4,
    A=[[0, 0, 0, 0], [0.5, 0, 0, 0], [0, 0.5, 0, 0], [0, 0, 1.0, 0]],
    b=[1 / 6, 1 / 3, 1 / 3, 1 / 6],
    ref="Kutta 1901 (classical RK4)",
)

TIME_SCHEMES.register("ssp-rk33", 0, "SSP-RK(3,3), Shu & Osher 1988", obj=_SSP33)
TIME_SCHEMES.register("ssp-rk54", 1, "SSP-RK(5,4), Spiteri & Ruuth 2002", obj=_SSP54)
TIME_SCHEMES.register("lsrk45", 2, "low-storage RK4(3)5[2N], Carpenter & Kennedy 1994", obj=_LSRK45)
TIME_SCHEMES.register("rk4", 3, "classical fourth-order RK", obj=_RK4)


def get_scheme(scheme) -> ExplicitRK:
    """The :class:`ExplicitRK` for a registry name (instances pass through)."""
    if isinstance(scheme, ExplicitRK):
        return scheme
    return TIME_SCHEMES[scheme].obj
