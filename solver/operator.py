"""The flux reconstruction spatial operator: residual ``dU/dt = R(U)``.

Orchestration only: geometry, boundary tables and work arrays are prepared
once here; the arithmetic is in :mod:`solver.kernels`.
"""
from __future__ import annotations

import numpy as np

from .boundaries import NPARAM, boundary_parameters
from .fluxes import INTERFACE_FLUXES
from .kernels import fr_inviscid as _k
from .metrics import compute_metrics

__all__ = ["FROperator"]


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

    Attributes
    ----------
    shape : tuple
        ``(ne, n, n, 4)``, the solution array shape.
    metrics : solver.metrics.Metrics
    """

    def __init__(self, mesh, basis, gamma: float = 1.4, flux: str = "roe", flux_params: dict | None = None,
                 boundaries: dict | None = None, ref: dict | None = None):
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
        self.n_rhs = 0

    # ------------------------------------------------------------------ residual
    @property
    def ndof(self) -> int:
        """Degrees of freedom: solution points x 4 conserved variables."""
        return int(np.prod(self.shape))

    def rhs(self, t: float, U: np.ndarray, out: np.ndarray) -> np.ndarray:
        """Write ``dU/dt`` into ``out`` (same shape as ``U``) and return it."""
        m = self.metrics
        _k.interp_to_faces(U, self._Lf, self.Uf)
        _k.interior_face_flux(self.Uf, self.ifaces, m.nrm, m.mag, self.flux_code, self.gamma, self.efix, self.Fc)
        if len(self.bfaces):
            _k.boundary_face_flux(self.Uf, self.bfaces, self.bcode, self.bprm, m.nrm, m.mag, self.flux_code,
                                  self.gamma, self.efix, self.Fc, self.Ub)
        _k.inviscid_residual(U, self.Fc, m.Mr, m.Ms, m.invJ, self._D, self._Lf, self._dgR, self.gamma,
                             self.nchunk, out)
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

    def wave_speed_limit(self, U: np.ndarray) -> float:
        """Largest ``dt`` at unit CFL: ``min 2 / (lambda_r + lambda_s)`` over solution points.

        Notes
        -----
        ``lambda_r = (|u . J grad r| + a |J grad r|) / J`` and likewise for ``s``:
        the reference element has width 2, so a 1D element of width ``h`` gives
        ``dt = CFL h / (|u| + a)``; the two directions are added, which is the
        usual conservative choice for tensor-product elements.
        """
        m = self.metrics
        r = U[..., 0]
        u = U[..., 1] / r
        v = U[..., 2] / r
        p = (self.gamma - 1.0) * (U[..., 3] - 0.5 * r * (u * u + v * v))
        a = np.sqrt(np.maximum(self.gamma * p / r, 0.0))
        lr = (np.abs(u * m.Mr[..., 0] + v * m.Mr[..., 1]) + a * np.hypot(m.Mr[..., 0], m.Mr[..., 1])) * m.invJ
        ls = (np.abs(u * m.Ms[..., 0] + v * m.Ms[..., 1]) + a * np.hypot(m.Ms[..., 0], m.Ms[..., 1])) * m.invJ
        return float(2.0 / np.max(lr + ls))
