"""p-multigrid (full approximation storage) for the pseudo-time iteration.

The levels are FR operators of degrees ``p, p-1, ..., p_min`` on the same mesh
and boundaries; the transfers are modal truncation and zero-padding in the
orthonormal Legendre basis of the tensor-product element; each level is
smoothed by its :class:`solver.pseudotime.PseudoTimeLevel`.
"""
from __future__ import annotations

import numpy as np

from .kernels import pseudotime as _kp
from .pseudotime import HALVINGS, KAPPA
from .registry import Registry

__all__ = ["CYCLES", "modal_transfer", "PMultigrid"]

#: cycle shapes: the code is the number of coarse-level visits per level (1: V, 2: W)
CYCLES = Registry("multigrid cycle")
CYCLES.register("v", 1, "V-cycle: each coarser level visited once per cycle")
CYCLES.register("w", 2, "W-cycle: each coarser level visited twice per cycle")


def modal_transfer(basis_from, basis_to) -> np.ndarray:
    """1D nodal transfer matrix between two degrees through the orthonormal Legendre modes.

    Parameters
    ----------
    basis_from, basis_to : solver.basis.Basis1D

    Returns
    -------
    T : (n_to, n_from) array
        ``u_to = T u_from`` along one reference direction; the element
        transfer is ``T (x) T``.

    Notes
    -----
    With ``V[i, m] = P~_m(x_i)`` (orthonormal Legendre, ``Basis1D.modal``) the
    modal coefficients are ``c = V^{-1} u``.  Keeping the first
    ``m = min(n_from, n_to)`` of them and evaluating at the target points,

        T = V_to[:, :m] V_from^{-1}[:m, :],

    is the truncation of the modal series (restriction, ``n_to < n_from``) or
    its zero-padding (prolongation, ``n_to > n_from``).  Because the modes are
    orthonormal on [-1, 1], truncation is the L2 projection onto the lower
    degree in the reference element, and ``T_restrict T_prolong = I``.
    """
    m = min(basis_from.n, basis_to.n)
    T = np.asarray(basis_to.modal)[:, :m] @ np.asarray(basis_from.modal_inv)[:m, :]
    return np.ascontiguousarray(T)


class PMultigrid:
    """FAS p-multigrid cycle over :class:`~solver.pseudotime.PseudoTimeLevel` objects.

    Parameters
    ----------
    levels : list of PseudoTimeLevel
        Finest first; strictly decreasing degrees, the same mesh.
    cycle : str
        Name in :data:`CYCLES` (``v`` or ``w``).
    pre_smooth, post_smooth : int
        Smoothing sweeps (pseudo-time RK steps) before the coarse-grid
        correction and after it, on every level but the coarsest.
    coarse_smooth : int
        Sweeps on the coarsest level.

    Notes
    -----
    Every level ``l`` solves ``N_l(U_l) = R*_l(U_l) + f_l = 0`` (``f_0 = 0``).
    One cycle on level ``l``, with ``I`` the modal truncation to level ``l+1``
    and ``P`` the zero-padding back (:func:`modal_transfer`):

    1. ``pre_smooth`` sweeps on ``N_l``;
    2. ``r_l = N_l(U_l)``; ``U_{l+1} = I U_l``, ``f_{l+1} = I r_l - R*_{l+1}(I U_l)``
       (full approximation storage, Brandt 1977), so that
       ``N_{l+1}(I U_l) = I r_l``: the coarse problem starts at the restricted
       fine residual and is already solved when the fine one is;
    3. one (V) or two (W) cycles on level ``l+1`` (smoothing only on the coarsest);
    4. ``U_l <- U_l + P (U_{l+1} - I U_l)``, damped per element if it would
       make density or pressure non-positive (see solver.pseudotime);
    5. ``post_smooth`` sweeps.

    Residual restriction: the FR residual is a nodal time derivative
    ``dU/dt`` at the solution points (the mass matrix is already inverted),
    so it lives in the same space as the solution and is restricted by the
    same modal truncation.  This is the consistent choice in two senses:
    (a) for a weak-form residual ``M_h R`` the Galerkin restriction is the
    transpose of the prolongation, and ``M_H^{-1} P^T M_h R`` is the L2
    projection of ``R`` onto the coarse space, i.e. the modal truncation in
    the orthonormal basis (reference-element mass matrices are the identity
    in modal coordinates); (b) it maps the time derivative of the fine
    solution onto the time derivative of its restriction, ``d(I U)/dtau = I R``,
    so a coarse pseudo-time step moves the coarse solution as the fine
    iteration would move its restriction.

    The physical-time history term is constant within a physical step and
    cancels between ``R*_{l+1}(U_{l+1})`` and ``f_{l+1}``, so the coarse
    levels carry only ``-a_0 U / dt`` (needed for the point-implicit factor
    and the coarse Jacobian) and no history arrays.

    p-multigrid for high-order methods: Rønquist & Patera 1987 (spectral
    elements); Fidkowski, Oliver, Lu & Darmofal 2005 and Luo, Baum & Löhner
    2006 (DG, with explicit RK smoothers in the latter).
    """

    def __init__(self, levels, cycle: str = "v", pre_smooth: int = 1, post_smooth: int = 1,
                 coarse_smooth: int = 2):
        self.levels = list(levels)
        if len(self.levels) < 2:
            raise ValueError("p-multigrid needs at least two levels (degrees p and p-1)")
        ps = [lv.p for lv in self.levels]
        if any(b >= a for a, b in zip(ps, ps[1:])):
            raise ValueError(f"p-multigrid levels must have strictly decreasing degrees, got {ps}")
        ne = self.levels[0].shape[0]
        for lv in self.levels:
            if lv.shape[0] != ne:
                raise ValueError(f"p-multigrid levels must share the mesh: {lv.shape[0]} elements on degree "
                                 f"{lv.p}, {ne} on degree {ps[0]}")
        self.cycle_name = cycle
        self.gamma = CYCLES[cycle].code
        for name, v in (("pre_smooth", pre_smooth), ("post_smooth", post_smooth),
                        ("coarse_smooth", coarse_smooth)):
            if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < 0:
                raise ValueError(f"p-multigrid {name} must be an integer >= 0, got {v!r}")
        if coarse_smooth < 1:
            raise ValueError("p-multigrid coarse_smooth must be >= 1 (the coarsest level must be smoothed)")
        self.pre, self.post, self.coarse = int(pre_smooth), int(post_smooth), int(coarse_smooth)
        # transfers between consecutive levels
        self.restrict = []
        self.prolong = []
        for a, b in zip(self.levels, self.levels[1:]):
            self.restrict.append(modal_transfer(a.op.basis, b.op.basis))
            self.prolong.append(modal_transfer(b.op.basis, a.op.basis))
        # coarse-level states and their restricted starting values, (ne, n_l, n_l, 4); index 0 unused
        self.Uc = [None] + [np.zeros(lv.shape) for lv in self.levels[1:]]
        self.Ubase = [None] + [np.zeros(lv.shape) for lv in self.levels[1:]]
        # prolongated corrections on every level but the coarsest
        self.Dc = [np.zeros(lv.shape) for lv in self.levels[:-1]]
        nmax = max(lv.shape[1] for lv in self.levels)
        self._work = np.zeros((nmax, nmax, 4))
        for lv in self.levels[1:]:
            lv.use_s = False
            lv.use_f = True

    @property
    def fine(self):
        return self.levels[0]

    @property
    def degrees(self) -> list[int]:
        return [lv.p for lv in self.levels]

    def _transfer(self, T, src, dst, add=False):
        m, n = T.shape
        _kp.tensor_transfer(T, src, dst, add, self._work[:m, :n])

    def set_physical(self, t_new: float, a0dt: float) -> None:
        """New physical time and ``a_0/dt`` on every level."""
        for lv in self.levels:
            lv.set_physical(t_new, a0dt)

    def update_dtau(self, U: np.ndarray) -> None:
        """Local pseudo-time steps on every level from ``U`` restricted down the levels."""
        self.levels[0].update_dtau(U)
        src = U
        for l in range(1, len(self.levels)):
            self._transfer(self.restrict[l - 1], src, self.Uc[l])
            self.levels[l].update_dtau(self.Uc[l])
            src = self.Uc[l]

    def cycle(self, U: np.ndarray, have_residual: bool = False) -> None:
        """One cycle on the fine-level state ``U`` in place.

        ``have_residual``: ``levels[0].K[0]`` already holds ``N_0(U)``.
        """
        self._cycle(0, U, have_residual)

    def _cycle(self, l, U, have_residual):
        L = self.levels[l]
        if l == len(self.levels) - 1:
            L.smooth(U, self.coarse, have_residual)
            return
        L.smooth(U, self.pre, have_residual)
        if self.pre > 0 or not have_residual:
            L.residual(U, L.K[0])
        C = self.levels[l + 1]
        Uc, Ub = self.Uc[l + 1], self.Ubase[l + 1]
        R, P = self.restrict[l], self.prolong[l]
        self._transfer(R, U, Uc)
        Ub[...] = Uc
        self._transfer(R, L.K[0], C.F)          # f <- I r_l for now
        C.use_f = False
        C.residual(Uc, C.K[0])                  # R*_{l+1}(I U_l)
        C.use_f = True
        C.F -= C.K[0]                           # f_{l+1} = I r_l - R*_{l+1}(I U_l)
        C.K[0] += C.F                           # N_{l+1}(I U_l) (= I r_l)
        for g in range(self.gamma):
            self._cycle(l + 1, Uc, have_residual=(g == 0))
        Uc -= Ub
        D = self.Dc[l]
        self._transfer(P, Uc, D)                # P (U_{l+1} - I U_l)
        L.n_damped += _kp.limit_update(U, D, U, True, L.op.gamma, KAPPA, HALVINGS)
        L.smooth(U, self.post, False)
