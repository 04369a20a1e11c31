"""The flux reconstruction spatial operator: residual ``dU/dt = R(U)``.

Orchestration only: geometry, boundary tables and work arrays are prepared
once here; the arithmetic is in :mod:`solver.kernels`.
"""
from __future__ import annotations

import numba
import numpy as np

from .boundaries import NPARAM, boundary_parameters
from .fluxes import INTERFACE_FLUXES
from .kernels import fr_inviscid as _k
from .kernels import fr_viscous as _kv
from .metrics import compute_metrics
from .registry import Registry

__all__ = ["FROperator", "VISCOUS_SCHEMES", "LDG_DIRECTION"]

#: common values of the viscous terms on interior faces (boundary faces use the BR2 form for both)
VISCOUS_SCHEMES = Registry("viscous scheme")
VISCOUS_SCHEMES.register(
    "ldg", 0, "local DG common values (Cockburn & Shu 1998) in FR form, no interior penalty: one side gives "
    "the common solution, the other the common viscous flux")
VISCOUS_SCHEMES.register(
    "br2", 1, "BR2 (Bassi & Rebay 1997): averaged solution, averaged fluxes with the uncorrected gradient plus "
    "eta times the face's own lifting; density / pressure one order short when viscous forces dominate "
    "at the element scale (see solver/kernels/fr_viscous.py)")

#: LDG switch: on each interior face the side whose outward normal has a positive component along this
#: direction gives U*; any fixed direction works (the energy identity holds face by face), a tilted one
#: avoids ties on Cartesian faces and alternates consistently on structured meshes
LDG_DIRECTION = (0.955336489125606, 0.295520206661340)  # (cos 0.3, sin 0.3)


class FROperator:
    """Semi-discrete FR operator on a curved quad mesh.

    Parameters
    ----------
    mesh : meshing.mesh.Mesh
    basis : solver.basis.Basis1D
        Solution points, differentiation and correction data of degree p.
    gamma : float
        Ratio of specific heats.
    flux : str
        Interface flux registry name (``solver.fluxes.INTERFACE_FLUXES``).
    flux_params : dict, optional
    boundaries : dict
        ``tag -> (condition name, parameter dict)``; every mesh tag needs one.
    ref : dict
        Free-stream state (rho, u, v, p, gamma) used by the boundary defaults.
    viscosity : dict, optional
        Navier-Stokes terms (BR2): ``mu`` (free-stream dynamic viscosity in our
        units, 1/Re), ``prandtl``, ``law`` ("constant" or "sutherland"),
        ``s_ratio`` (Sutherland constant / free-stream temperature),
        ``penalty`` (BR2 eta, default 5 > 4 faces; used on boundary faces, and on interior faces with
        BR2), ``scheme`` (:data:`VISCOUS_SCHEMES`: "ldg", the default, or "br2"). None: Euler.
    sources : list, optional
        Objects with ``apply(t, U, R)`` that add a source term to the residual
        in place (e.g. an absorbing sponge); called after the flux terms.

    Attributes
    ----------
    shape : tuple
        ``(ne, n, n, 4)``, the solution array shape.
    metrics : solver.metrics.Metrics
    """

    def __init__(self, mesh, basis, gamma: float = 1.4, flux: str = "roe", flux_params: dict | None = None,
                 boundaries: dict | None = None, ref: dict | None = None, viscosity: dict | None = None,
                 sources: list | None = None):
        self.mesh = mesh
        self.basis = basis
        self.gamma = float(gamma)
        self.n = basis.x.size
        self.p = self.n - 1
        ne = mesh.n_elements
        self.shape = (ne, self.n, self.n, 4)
        self.metrics = compute_metrics(mesh, basis.x)
        fe = INTERFACE_FLUXES[flux]
        self.flux_name = flux
        self.flux_code = fe.code
        fp = INTERFACE_FLUXES.param_array(flux, flux_params)
        self.efix = fp[0] if fp else 0.0
        self.ref = dict(ref or {})

        boundaries = dict(boundaries or {})
        missing = [t for t in mesh.tags if t not in boundaries]
        extra = [t for t in boundaries if t not in mesh.tags]
        if missing or extra:
            raise ValueError(f"boundary tags do not match: mesh has {mesh.tags}, conditions given for "
                             f"{sorted(boundaries)}")
        self.bc_tags = list(mesh.tags)
        codes, rows, bf = [], [], []
        for g, tag in enumerate(self.bc_tags):
            name, params = boundaries[tag]
            code, row = boundary_parameters(name, params, self.ref, where=f"boundary '{tag}'")
            codes.append(code)
            rows.append(row)
            faces = mesh.boundary_faces[tag]
            bf.append(np.column_stack([faces, np.full(len(faces), g)]))
        self.bcode = np.array(codes, dtype=np.int64)
        self.bprm = np.array(rows, dtype=float).reshape(-1, NPARAM)
        self.bfaces = (np.concatenate(bf).astype(np.int64) if bf else np.zeros((0, 3), dtype=np.int64))
        self.ifaces = np.ascontiguousarray(mesh.interior_faces, dtype=np.int64)

        # work arrays, allocated once
        self.Uf = np.zeros((ne, 4, self.n, 4))
        self.Fc = np.zeros((ne, 4, self.n, 4))
        self.Ub = np.zeros((len(self.bfaces), self.n, 4))
        self._D = np.ascontiguousarray(basis.D)
        self._Lf = np.ascontiguousarray(basis.Lf)
        self._dgR = np.ascontiguousarray(basis.dgR)
        self.nchunk = _k._nchunks(ne)
        self.sources = list(sources or [])
        self.n_rhs = 0
        self._setup_viscous(viscosity)

    def _setup_viscous(self, viscosity: dict | None) -> None:
        self.viscous = viscosity is not None
        ne, n = self.shape[0], self.n
        if not self.viscous:
            self.Fvt = self.Gvt = np.zeros((1, 1, 1, 4))
            return
        from .corrections import vcjh_right

        v = dict(viscosity)
        laws = {"constant": _kv.CONSTANT, "sutherland": _kv.SUTHERLAND}
        law = v.get("law", "constant")
        if law not in laws:
            raise ValueError(f"unknown viscosity law '{law}'; valid: {', '.join(laws)}")
        self.law = laws[law]
        self.mu = float(v["mu"])
        self.prandtl = float(v.get("prandtl", 0.72))
        self.s_ratio = float(v.get("s_ratio", 110.4 / 288.15))
        self.penalty = float(v.get("penalty", 5.0))
        if self.mu <= 0 or self.prandtl <= 0 or self.penalty <= 0:
            raise ValueError(f"viscosity, Prandtl number and BR2 penalty must be positive, got "
                             f"{self.mu}, {self.prandtl}, {self.penalty}")
        unknown = sorted(set(v) - {"mu", "prandtl", "law", "s_ratio", "penalty", "scheme"})
        if unknown:
            raise ValueError(f"viscosity: unknown key '{unknown[0]}'; valid: mu, prandtl, law, s_ratio, penalty, "
                             f"scheme")
        self.viscous_scheme = str(v.get("scheme", "ldg"))
        ldg = VISCOUS_SCHEMES[self.viscous_scheme].name == "ldg"
        ref = self.ref
        self.e_inf = ref["p"] / ((self.gamma - 1.0) * ref["rho"])
        self.gR1 = float(vcjh_right(self.p, self.basis.c).deriv()(1.0))
        self.dU = np.zeros((ne, 4, n, 4))
        self.Fvf = np.zeros((ne, 4, n, 4))
        self.Fvt = np.zeros(self.shape)
        self.Gvt = np.zeros(self.shape)
        self.adiab = np.zeros((ne, 4), dtype=np.int64)
        # interior-face rule and the role of every element face (codes of solver.kernels.fr_viscous)
        f = self.ifaces
        if ldg:
            # outward normal of the left element summed over the face points: one decision per face
            nL = self.metrics.nrm[f[:, 0], f[:, 1]].sum(axis=1)
            left_gives = nL @ np.asarray(LDG_DIRECTION) > 0.0
            self.fside = np.where(left_gives, _kv.SIDE_LEFT, _kv.SIDE_RIGHT).astype(np.int64)
        else:
            self.fside = np.full(len(f), _kv.SIDE_AVERAGE, dtype=np.int64)
        self.role = np.full((ne, 4), _kv.FACE_BR2, dtype=np.int64)
        if ldg:
            lg = self.fside == _kv.SIDE_LEFT
            self.role[f[:, 0], f[:, 1]] = np.where(lg, _kv.FACE_LDG_TRACE, _kv.FACE_LDG_FLUX)
            self.role[f[:, 2], f[:, 3]] = np.where(lg, _kv.FACE_LDG_FLUX, _kv.FACE_LDG_TRACE)
        self.role[self.bfaces[:, 0], self.bfaces[:, 1]] = _kv.FACE_BOUNDARY
        self._nS = np.ascontiguousarray(self.metrics.nrm * self.metrics.mag[..., None])
        # 1D diffusion radius per element: elements with a boundary face see the BR2-form boundary penalty
        from .stability import diffusion_radius

        b = self.basis
        k_in = diffusion_radius(self.p, b.c, b.points, self.penalty, self.viscous_scheme)
        k_bd = diffusion_radius(self.p, b.c, b.points, self.penalty, self.viscous_scheme, boundary=True)
        self._Kv = np.full(ne, k_in)
        self._Kv[self.bfaces[:, 0]] = k_bd

    # ------------------------------------------------------------------ residual
    @property
    def ndof(self) -> int:
        """Degrees of freedom: solution points x 4 conserved variables."""
        return int(np.prod(self.shape))

    #: below this many elements the kernels run on one thread: thread start-up
    #: costs more than the work (measured: 70 us vs 250 us per RHS for 16 elements)
    SERIAL_BELOW = 200

    def rhs(self, t: float, U: np.ndarray, out: np.ndarray) -> np.ndarray:
        """Write ``dU/dt`` into ``out`` (same shape as ``U``) and return it."""
        if self.shape[0] < self.SERIAL_BELOW and numba.get_num_threads() > 1:
            nt = numba.get_num_threads()
            numba.set_num_threads(1)
            try:
                return self._rhs(t, U, out)
            finally:
                numba.set_num_threads(nt)
        return self._rhs(t, U, out)

    def _rhs(self, t: float, U: np.ndarray, out: np.ndarray) -> np.ndarray:
        m = self.metrics
        _k.interp_to_faces(U, self._Lf, self.Uf)
        _k.interior_face_flux(self.Uf, self.ifaces, m.nrm, m.mag, self.flux_code, self.gamma, self.efix, self.Fc)
        if len(self.bfaces):
            _k.boundary_face_flux(self.Uf, self.bfaces, self.bcode, self.bprm, m.nrm, m.mag, self.flux_code,
                                  self.gamma, self.efix, self.Fc, self.Ub)
        if self.viscous:
            _kv.common_solution(self.Uf, self.ifaces, self.fside, self.bfaces, self.bcode, self.bprm, m.nrm,
                                self.gamma, self.dU, self.adiab)
            _kv.viscous_fluxes(U, self.Uf, self.dU, self.adiab, self.role, m.Mr, m.Ms, m.invJ, self._nS, m.Jf,
                               self._D, self._Lf, self._dgR, self.gR1, self.penalty, self.gamma, self.prandtl,
                               self.law, self.mu, self.e_inf, self.s_ratio, self.nchunk, self.Fvt, self.Gvt,
                               self.Fvf)
            _kv.subtract_common_viscous(self.Fvf, self.ifaces, self.fside, self.bfaces, self.Fc)
        _k.flux_residual(U, self.Fc, m.Mr, m.Ms, m.invJ, self._D, self._Lf, self._dgR, self.gamma,
                         self.nchunk, self.viscous, self.Fvt, self.Gvt, out)
        for src in self.sources:
            src.apply(t, U, out)
        self.n_rhs += 1
        return out

    # ------------------------------------------------------------------ helpers
    def integrate(self, U: np.ndarray) -> np.ndarray:
        """Integral of each conserved variable over the domain, (4,).

        Gauss quadrature on the solution points (exact for the FR
        conservation statement when the points are Gauss-Legendre).
        """
        w = self.basis.w
        return np.einsum("i,j,eij,eijv->v", w, w, self.metrics.J, U)

    def spectral_radii(self, U: np.ndarray):
        """Convective and viscous spectral-radius estimates at the solution points.

        Returns
        -------
        lam_c : (ne, n, n) array
            ``lambda_r + lambda_s`` with ``lambda_r = (|u . J grad r| + a |J grad r|) / J``
            (and likewise ``s``): the reference element has width 2, so a 1D
            element of width ``h`` gives ``2 / lambda = h / (|u| + a)``.  The two
            directions are added, the usual conservative choice for tensor elements.
        lam_v : (ne, n, n) array or None
            ``K(p) nu_eff (|grad r|^2 + |grad s|^2) / 4`` with ``K(p)`` the
            spectral radius of the 1D FR diffusion operator of the viscous
            scheme for unit viscosity and element width
            (solver.stability.diffusion_radius; on elements with a boundary face
            the bound that includes the BR2-form boundary penalty) and
            ``nu_eff = max(4/3, gamma/Pr) mu / rho``.
        """
        m = self.metrics
        r = U[..., 0]
        u = U[..., 1] / r
        v = U[..., 2] / r
        e = U[..., 3] / r - 0.5 * (u * u + v * v)
        p = (self.gamma - 1.0) * r * e
        a = np.sqrt(np.maximum(self.gamma * p / r, 0.0))
        gr2 = (m.Mr[..., 0] ** 2 + m.Mr[..., 1] ** 2)
        gs2 = (m.Ms[..., 0] ** 2 + m.Ms[..., 1] ** 2)
        lr = (np.abs(u * m.Mr[..., 0] + v * m.Mr[..., 1]) + a * np.sqrt(gr2)) * m.invJ
        ls = (np.abs(u * m.Ms[..., 0] + v * m.Ms[..., 1]) + a * np.sqrt(gs2)) * m.invJ
        if not self.viscous:
            return lr + ls, None
        K = self._Kv[:, None, None]
        mu = self.mu
        if self.law == _kv.SUTHERLAND:
            T = e / self.e_inf
            mu = self.mu * T ** 1.5 * (1.0 + self.s_ratio) / (T + self.s_ratio)
        nu = max(4.0 / 3.0, self.gamma / self.prandtl) * mu / r
        lv = 0.25 * K * nu * (gr2 + gs2) * m.invJ ** 2
        return lr + ls, lv
