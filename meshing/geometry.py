"""Polynomial geometry of curved quadrilaterals.

Each element carries Lagrange geometry nodes of degree ``q`` on an equispaced
tensor grid of the reference square [-1, 1]^2, stored as ``geom[e, i, j, :]``
with ``i`` running along the first reference coordinate ``r`` (xi) and ``j``
along the second ``s`` (eta).  This module evaluates that map and its
derivatives; it knows nothing of the flow solver.

Reference-square conventions (used by every part of quadfr):

* corners 0..3 are (-1,-1), (1,-1), (1,1), (-1,1): counter-clockwise;
* face 0 is s = -1 (corner 0 -> 1), face 1 is r = +1 (1 -> 2),
  face 2 is s = +1 (2 -> 3), face 3 is r = -1 (3 -> 0); each face is
  traversed counter-clockwise, so two neighbours traverse a shared face in
  opposite directions.
"""
from __future__ import annotations

import numpy as np

__all__ = [
    "equispaced_nodes",
    "lagrange_matrix",
    "lagrange_derivative_matrix",
    "map_points",
    "map_derivatives",
    "FACE_CORNERS",
]

#: corner indices (local) at the start and end of each face, counter-clockwise
FACE_CORNERS = ((0, 1), (1, 2), (2, 3), (3, 0))


def equispaced_nodes(q: int) -> np.ndarray:
    """Equispaced geometry nodes of degree ``q`` on [-1, 1], shape (q+1,)."""
    if q < 1:
        raise ValueError(f"geometry degree must be >= 1, got {q}")
    return np.linspace(-1.0, 1.0, q + 1)


def lagrange_matrix(nodes: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Values of the Lagrange basis on ``nodes`` at points ``x``.

    Parameters
    ----------
    nodes : (n,) array
        Distinct interpolation nodes.
    x : (m,) array
        Evaluation points.

    Returns
    -------
    (m, n) array ``L`` with ``L[a, k] = l_k(x_a)``, so ``f(x) = L @ f(nodes)``.

    Notes
    -----
    Barycentric form (Berrut & Trefethen 2004), exact at the nodes.
    """
    nodes = np.asarray(nodes, dtype=float)
    x = np.atleast_1d(np.asarray(x, dtype=float))
    n = nodes.size
    w = np.array([1.0 / np.prod([nodes[k] - nodes[j] for j in range(n) if j != k]) for k in range(n)])
    diff = x[:, None] - nodes[None, :]
    out = np.empty((x.size, n))
    exact = np.isclose(diff, 0.0, atol=1e-15, rtol=0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = w[None, :] / diff
        out[:] = t / t.sum(axis=1, keepdims=True)
    rows = exact.any(axis=1)
    out[rows] = exact[rows].astype(float)
    return out


def lagrange_derivative_matrix(nodes: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Derivatives of the Lagrange basis on ``nodes`` at points ``x``.

    Returns
    -------
    (m, n) array ``D`` with ``D[a, k] = l_k'(x_a)``.

    Notes
    -----
    ``l_k'(x) = l_k(x) * sum_{j != k} 1/(x - x_j)`` away from the nodes; at a
    node the standard differentiation-matrix formula is used.
    """
    nodes = np.asarray(nodes, dtype=float)
    x = np.atleast_1d(np.asarray(x, dtype=float))
    n = nodes.size
    w = np.array([1.0 / np.prod([nodes[k] - nodes[j] for j in range(n) if j != k]) for k in range(n)])
    out = np.zeros((x.size, n))
    for a, xa in enumerate(x):
        hit = np.nonzero(np.isclose(xa, nodes, atol=1e-15, rtol=0.0))[0]
        if hit.size:
            i = hit[0]
            for k in range(n):
                if k != i:
                    out[a, k] = (w[k] / w[i]) / (nodes[i] - nodes[k])
            out[a, i] = -out[a].sum()
        else:
            lvals = lagrange_matrix(nodes, np.array([xa]))[0]
            out[a] = lvals * np.array([np.sum(1.0 / (xa - np.delete(nodes, k))) for k in range(n)])
    return out


def map_points(geom: np.ndarray, r: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Physical coordinates on the tensor grid ``r x s``.

    Parameters
    ----------
    geom : (ne, q+1, q+1, 2) array
        Geometry nodes.
    r, s : (a,), (b,) arrays
        Reference points along each direction.

    Returns
    -------
    (ne, a, b, 2) array of (x, y).
    """
    q = geom.shape[1] - 1
    nodes = equispaced_nodes(q)
    Lr = lagrange_matrix(nodes, r)
    Ls = lagrange_matrix(nodes, s)
    return np.einsum("ai,bj,eijd->eabd", Lr, Ls, geom, optimize=True)


def map_derivatives(geom: np.ndarray, r: np.ndarray, s: np.ndarray):
    """Derivatives of the map on the tensor grid ``r x s``.

    Returns
    -------
    dr, ds : (ne, a, b, 2) arrays
        ``dr[..., 0] = x_r``, ``dr[..., 1] = y_r`` and likewise for ``s``.
    jac : (ne, a, b) array
        ``J = x_r y_s - x_s y_r``.
    """
    q = geom.shape[1] - 1
    nodes = equispaced_nodes(q)
    Lr, Ls = lagrange_matrix(nodes, r), lagrange_matrix(nodes, s)
    Dr, Ds = lagrange_derivative_matrix(nodes, r), lagrange_derivative_matrix(nodes, s)
    dr = np.einsum("ai,bj,eijd->eabd", Dr, Ls, geom, optimize=True)
    ds = np.einsum("ai,bj,eijd->eabd", Lr, Ds, geom, optimize=True)
    jac = dr[..., 0] * ds[..., 1] - ds[..., 0] * dr[..., 1]
    return dr, ds, jac
