"""Point evaluation of the solution polynomial: locate points, then interpolate.

A point is located in two stages: a bounding-box prefilter over the element
geometry nodes (padded, because a curved edge can bulge past its nodes), then
a Newton inversion of the element map ``x(r, s) = x_target`` in each
candidate.  The value at the point is the element's solution polynomial
``U(r, s) = sum_ij U_ij l_i(r) l_j(s)`` (Lagrange basis on the solution
points), not the nearest node.
"""
from __future__ import annotations

import numpy as np

from meshing.geometry import equispaced_nodes, lagrange_derivative_matrix, lagrange_matrix

__all__ = ["locate_points", "PointSampler"]

#: Newton tolerance on |x(r, s) - x_target| relative to the element size
_TOL = 1e-12
#: a point counts as inside when |r|, |s| <= 1 + _INSIDE
_INSIDE = 1e-9


def _newton(geom_e: np.ndarray, target: np.ndarray, nodes: np.ndarray, max_iter: int = 40):
    """Reference coordinates of ``target`` in one element, or None if Newton fails.

    Notes
    -----
    Iterates ``(r, s) <- (r, s) - J^{-1} (x(r, s) - x_target)`` from the
    element centre with the exact map derivatives; steps are halved while they
    do not reduce the residual, and the iterate is kept in [-1.5, 1.5]^2 so a
    point outside the element does not send it to infinity.
    """
    size = float(np.ptp(geom_e.reshape(-1, 2), axis=0).max())
    rs = np.zeros(2)

    def residual(rs):
        Lr = lagrange_matrix(nodes, rs[:1])[0]
        Ls = lagrange_matrix(nodes, rs[1:])[0]
        return np.einsum("i,j,ijd->d", Lr, Ls, geom_e) - target

    res = residual(rs)
    for _ in range(max_iter):
        if np.linalg.norm(res) <= _TOL * max(size, 1e-300):
            return rs
        Lr = lagrange_matrix(nodes, rs[:1])[0]
        Ls = lagrange_matrix(nodes, rs[1:])[0]
        Dr = lagrange_derivative_matrix(nodes, rs[:1])[0]
        Ds = lagrange_derivative_matrix(nodes, rs[1:])[0]
        jac = np.stack([np.einsum("i,j,ijd->d", Dr, Ls, geom_e), np.einsum("i,j,ijd->d", Lr, Ds, geom_e)],
                       axis=1)
        try:
            delta = np.linalg.solve(jac, res)
        except np.linalg.LinAlgError:
            return None
        lam = 1.0
        while lam > 1e-4:
            trial = np.clip(rs - lam * delta, -1.5, 1.5)
            rt = residual(trial)
            if np.linalg.norm(rt) < np.linalg.norm(res):
                break
            lam *= 0.5
        else:
            return None
        rs, res = trial, rt
    return rs if np.linalg.norm(res) <= 1e3 * _TOL * max(size, 1e-300) else None


def locate_points(geom: np.ndarray, points, pad: float = 0.1):
    """Element and reference coordinates of each point.

    Parameters
    ----------
    geom : (ne, m+1, m+1, 2) array
        Geometry nodes (equispaced, degree m) of the map used by the solver.
    points : (np, 2) array_like
    pad : float
        Bounding boxes are enlarged by this fraction of their size on each side.

    Returns
    -------
    elements : (np,) int64 array
    rs : (np, 2) array
        Reference coordinates in [-1, 1]^2.

    Raises
    ------
    ValueError
        A point lies in no element (outside the mesh or inside a body); the
        message gives its index and coordinates.
    """
    geom = np.asarray(geom, dtype=float)
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    nodes = equispaced_nodes(geom.shape[1] - 1)
    flat = geom.reshape(geom.shape[0], -1, 2)
    lo, hi = flat.min(axis=1), flat.max(axis=1)
    ext = (hi - lo).max(axis=1, keepdims=True) * pad
    lo, hi = lo - ext, hi + ext
    centre = flat.mean(axis=1)
    elems = np.empty(len(pts), dtype=np.int64)
    rs_out = np.empty((len(pts), 2))
    for a, x in enumerate(pts):
        cand = np.nonzero(np.all((x >= lo) & (x <= hi), axis=1))[0]
        cand = cand[np.argsort(np.linalg.norm(centre[cand] - x, axis=1))]
        found = False
        for e in cand:
            rs = _newton(geom[e], x, nodes)
            if rs is not None and np.all(np.abs(rs) <= 1.0 + _INSIDE):
                elems[a] = e
                rs_out[a] = np.clip(rs, -1.0, 1.0)
                found = True
                break
        if not found:
            raise ValueError(f"probe {a} at ({x[0]:.6g}, {x[1]:.6g}) lies in no element of the mesh "
                             "(outside the domain or inside a body)")
    return elems, rs_out


class PointSampler:
    """Evaluate solutions ``U`` (ne, n, n, 4) at fixed physical points.

    Parameters
    ----------
    geom : (ne, m+1, m+1, 2) array
        Geometry used by the solver (``op.metrics.geom``).
    nodes : (n,) array
        1D solution points.
    points : (np, 2) array_like

    Attributes
    ----------
    points : (np, 2) array
    elements : (np,) int64 array
    rs : (np, 2) array
    weights : (np, n, n) array
        ``l_i(r) l_j(s)`` of each point.
    """

    def __init__(self, geom, nodes, points):
        self.points = np.asarray(points, dtype=float).reshape(-1, 2)
        nodes = np.asarray(nodes, dtype=float)
        if len(self.points):
            self.elements, self.rs = locate_points(geom, self.points)
        else:
            self.elements, self.rs = np.zeros(0, dtype=np.int64), np.zeros((0, 2))
        Lr = lagrange_matrix(nodes, self.rs[:, 0]) if len(self.points) else np.zeros((0, nodes.size))
        Ls = lagrange_matrix(nodes, self.rs[:, 1]) if len(self.points) else np.zeros((0, nodes.size))
        self.weights = np.einsum("ai,aj->aij", Lr, Ls)

    def __len__(self) -> int:
        return len(self.points)

    def conserved(self, U: np.ndarray) -> np.ndarray:
        """Conserved variables at the points, (np, 4)."""
        return np.einsum("aij,aijv->av", self.weights, U[self.elements])

    def primitive(self, U: np.ndarray, gamma: float) -> np.ndarray:
        """``(rho, u, v, p)`` at the points, (np, 4), from the interpolated conserved variables."""
        W = self.conserved(U)
        r = W[:, 0]
        u = W[:, 1] / r
        v = W[:, 2] / r
        p = (gamma - 1.0) * (W[:, 3] - 0.5 * r * (u * u + v * v))
        return np.stack([r, u, v, p], axis=1)
