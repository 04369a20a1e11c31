"""Metric terms of curved elements at solution and flux points.

Notes
-----
With ``x(r, s)`` the element map, the contravariant metric terms are
``J grad r = (y_s, -x_s)`` and ``J grad s = (-y_r, x_r)`` with
``J = x_r y_s - x_s y_r``.  They are evaluated exactly from a geometry
polynomial of degree ``m = min(q, p)``: when ``q > p`` the geometry is first
interpolated to degree ``p`` on the equispaced nodes (which include the
element edges).  Then ``y_s`` is a polynomial of degree ``p`` in ``r`` and
``p - 1`` in ``s``, so the discrete metric identity
``d_r (J r_x) + d_s (J s_x) = y_sr - y_rs = 0`` holds exactly for the
degree-``p`` differentiation matrices and a uniform flow stays uniform to
round-off (the 2D case of Kopriva 2006, J. Sci. Comput. 26).  Face normals
come from the edge curve alone, so both neighbours see the same face.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from meshing.geometry import equispaced_nodes, lagrange_matrix, map_derivatives, map_points
from meshing.mesh import MeshError

__all__ = ["Metrics", "compute_metrics", "reduce_geometry"]


def reduce_geometry(geom: np.ndarray, m: int) -> np.ndarray:
    """Interpolate geometry nodes of degree q to degree ``m`` (equispaced), (ne, m+1, m+1, 2)."""
    q = geom.shape[1] - 1
    if m >= q:
        return geom
    L = lagrange_matrix(equispaced_nodes(q), equispaced_nodes(m))
    return np.einsum("ai,bj,eijd->eabd", L, L, geom, optimize=True)


@dataclass
class Metrics:
    """Geometry seen by the FR operator.

    Attributes
    ----------
    xy : (ne, n, n, 2) solution-point coordinates
    J : (ne, n, n) Jacobian at the solution points
    invJ : (ne, n, n)
    Mr, Ms : (ne, n, n, 2) ``J grad r``, ``J grad s``
    nrm : (ne, 4, n, 2) outward unit normals at the flux points
    mag : (ne, 4, n) length element (norm of the outward scaled normal)
    xyf : (ne, 4, n, 2) flux-point coordinates
    Jf : (ne, 4, n) Jacobian at the flux points
    geom : (ne, m+1, m+1, 2) geometry actually used (degree min(q, p))
    """

    xy: np.ndarray
    J: np.ndarray
    invJ: np.ndarray
    Mr: np.ndarray
    Ms: np.ndarray
    nrm: np.ndarray
    mag: np.ndarray
    xyf: np.ndarray
    Jf: np.ndarray
    geom: np.ndarray


def _face_points(x: np.ndarray):
    """(r, s) reference coordinates of the flux points of faces 0..3, each (n,)."""
    one = np.ones_like(x)
    xr = x[::-1]
    return [(x, -one), (one, x), (xr, one), (-one, xr)]


def compute_metrics(mesh, x: np.ndarray, name: str | None = None) -> Metrics:
    """Metric terms on solution points ``x`` (n,) for every element of ``mesh``.

    Raises
    ------
    MeshError
        If the Jacobian is not positive at a solution or flux point; the message
        names the element id and the location.
    """
    n = x.size
    p = n - 1
    geom = reduce_geometry(mesh.geom, min(mesh.q, p))
    ne = geom.shape[0]
    dr, ds, J = map_derivatives(geom, x, x)
    xy = map_points(geom, x, x)
    Mr = np.stack([ds[..., 1], -ds[..., 0]], axis=-1)
    Ms = np.stack([-dr[..., 1], dr[..., 0]], axis=-1)

    nS = np.empty((ne, 4, n, 2))
    Jf = np.empty((ne, 4, n))
    xyf = np.empty((ne, 4, n, 2))
    for f, (r, s) in enumerate(_face_points(x)):
        # evaluate point by point along the face (a diagonal of the r x s grid)
        fdr, fds, fJ = map_derivatives(geom, r, s)
        fxy = map_points(geom, r, s)
        k = np.arange(n)
        fdr, fds, fJ, fxy = fdr[:, k, k], fds[:, k, k], fJ[:, k, k], fxy[:, k, k]
        if f == 0:
            nS[:, f] = np.stack([fdr[..., 1], -fdr[..., 0]], axis=-1)
        elif f == 1:
            nS[:, f] = np.stack([fds[..., 1], -fds[..., 0]], axis=-1)
        elif f == 2:
            nS[:, f] = np.stack([-fdr[..., 1], fdr[..., 0]], axis=-1)
        else:
            nS[:, f] = np.stack([-fds[..., 1], fds[..., 0]], axis=-1)
        Jf[:, f] = fJ
        xyf[:, f] = fxy

    for label, jac, where in (("solution", J.reshape(ne, -1), xy.reshape(ne, -1, 2)),
                              ("flux", Jf.reshape(ne, -1), xyf.reshape(ne, -1, 2))):
        bad = np.nonzero(jac.min(axis=1) <= 0.0)[0]
        if bad.size:
            e = int(bad[0])
            k = int(np.argmin(jac[e]))
            c = where[e, k]
            more = f" and {bad.size - 1} more" if bad.size > 1 else ""
            raise MeshError(
                f"{name or mesh.name}: element {e}{more} is inverted or degenerate: Jacobian {jac[e, k]:.3e} "
                f"at {label} point ({c[0]:.6g}, {c[1]:.6g}) for degree p={p}")
    mag = np.linalg.norm(nS, axis=-1)
    nrm = nS / mag[..., None]
    return Metrics(xy=xy, J=J, invJ=1.0 / J, Mr=np.ascontiguousarray(Mr), Ms=np.ascontiguousarray(Ms),
                   nrm=np.ascontiguousarray(nrm), mag=np.ascontiguousarray(mag), xyf=xyf,
                   Jf=np.ascontiguousarray(Jf), geom=geom)
