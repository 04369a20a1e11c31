"""Absorbing zones ("sponges") next to chosen boundaries.

A sponge adds ``-sigma(x) (U - U_inf)`` to the residual, which relaxes the
solution towards the free stream in a layer of given width along the chosen
boundary tags, so that waves and vortices leaving the domain are damped
before they reach the boundary condition (Colonius 2004, Annu. Rev. Fluid
Mech. 36; Bodony 2006, J. Comput. Phys. 212; from memory).  It is used as an
``FROperator`` source: ``FROperator(..., sources=[sponge])`` or
``op.sources.append(Sponge(op, ref, zones))``.
"""
from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from meshing.geometry import lagrange_matrix

from .initial import conserved
from .kernels import sponge as _k

__all__ = ["Sponge", "sponge_profile"]

#: points per face used to sample each boundary face as a polyline for the distance
_SAMPLES = 33


def sponge_profile(distance: np.ndarray, width: float, strength: float, exponent: float = 3.0) -> np.ndarray:
    """Damping rate from the distance to the boundary.

    ``sigma = strength * s^exponent`` with ``s = max(0, 1 - d / width)``: zero
    at the inner edge of the layer (``d = width``) with ``exponent - 1``
    vanishing derivatives there (smooth start, little reflection from the
    layer itself) and ``strength`` on the boundary.
    """
    s = np.clip(1.0 - np.asarray(distance, dtype=float) / width, 0.0, 1.0)
    return strength * s ** exponent


def _distance_to_faces(samples: np.ndarray, xy: np.ndarray) -> np.ndarray:
    """Distance of points ``xy`` (m, 2) to the polylines ``samples`` (nb, S, 2), one per face.

    The nearest sample is found with a k-d tree; the distance is then taken to
    the two polyline segments next to it, which is exact for straight faces and
    within ``kappa delta^2 / 8`` of the distance to a curve of curvature ``kappa``
    sampled at spacing ``delta``.
    """
    nb, S, _ = samples.shape
    _, idx = cKDTree(samples.reshape(-1, 2)).query(xy)
    b, m = np.divmod(idx, S)
    best = np.full(xy.shape[0], np.inf)
    for lo in (m - 1, m):
        lo = np.clip(lo, 0, S - 2)
        a = samples[b, lo]
        e = samples[b, lo + 1] - a
        t = np.clip(np.einsum("md,md->m", xy - a, e) / np.einsum("md,md->m", e, e), 0.0, 1.0)
        best = np.minimum(best, np.linalg.norm(xy - (a + t[:, None] * e), axis=1))
    return best


class Sponge:
    """Absorbing zones next to boundary tags of an operator's mesh.

    Parameters
    ----------
    op : FROperator
        Supplies the mesh tags, the solution points ``op.metrics.xy`` and the
        boundary flux points ``op.metrics.xyf``.
    ref : dict
        Free stream (rho, u, v, p, gamma): the target state ``U_inf``.
    zones : list of dict
        One dict per zone with keys ``tags`` (a tag name or a list of them),
        ``width`` (> 0, mesh units), ``strength`` (>= 0, damping rate in
        inverse time units) and optional ``exponent`` (>= 1, default 3).

    Attributes
    ----------
    sigma : (ne, n, n) array
        Damping rate at the solution points (the largest over the zones).
    max_rate : float
        ``sigma.max()``.  An explicit scheme needs ``dt * max_rate`` inside
        its stability interval on the negative real axis (about 2.5 for
        SSP-RK(3,3), 2.8 for the classical RK4); for the strengths used in
        practice (a few units) the convective limit is smaller.

    Notes
    -----
    The distance ``d`` of a solution point to a zone is the distance to the
    boundary faces of its tags, each face sampled at ``_SAMPLES`` points of
    the degree-p polynomial through its flux points (``op.metrics.xyf``) and
    treated as a polyline: nearest sample by scipy ``cKDTree``, then the
    distance to the two segments next to it.  ``sigma`` follows
    :func:`sponge_profile`.  The source ``-sigma (U - U_inf)`` is applied
    point-wise, so it conserves nothing: inside the layer the solution is
    pulled towards ``U_inf``, outside it the residual is untouched.
    """

    def __init__(self, op, ref: dict, zones: list[dict]):
        if isinstance(zones, dict):
            zones = [zones]
        tags_all = list(op.mesh.boundary_faces)
        xy = op.metrics.xy.reshape(-1, 2)
        sigma = np.zeros(xy.shape[0])
        L = lagrange_matrix(op.basis.x, np.linspace(-1.0, 1.0, _SAMPLES))
        self.zones = []
        for k, z in enumerate(zones):
            where = f"sponge zone {k}"
            if not isinstance(z, dict):
                raise ValueError(f"{where}: must be a table with tags, width, strength; got {z!r}")
            unknown = [key for key in z if key not in ("tags", "width", "strength", "exponent")]
            if unknown:
                raise ValueError(f"{where}: unknown key '{unknown[0]}'; valid keys: tags, width, strength, exponent")
            for key in ("tags", "width", "strength"):
                if key not in z:
                    raise ValueError(f"{where}: '{key}' is required")
            tags = [z["tags"]] if isinstance(z["tags"], str) else list(z["tags"])
            bad = [t for t in tags if t not in tags_all]
            if bad or not tags:
                raise ValueError(f"{where}: unknown boundary tag '{bad[0] if bad else ''}'; mesh tags: "
                                 f"{', '.join(sorted(tags_all)) or 'none'}")
            width = float(z["width"])
            strength = float(z["strength"])
            expo = float(z.get("exponent", 3.0))
            if not width > 0:
                raise ValueError(f"{where}: width must be > 0, got {width}")
            if not strength >= 0:
                raise ValueError(f"{where}: strength must be >= 0, got {strength}")
            if not expo >= 1:
                raise ValueError(f"{where}: exponent must be >= 1, got {expo}")
            faces = np.concatenate([op.mesh.boundary_faces[t] for t in tags])
            fxy = op.metrics.xyf[faces[:, 0], faces[:, 1]]               # (nb, n, 2)
            d = _distance_to_faces(np.einsum("mk,bkd->bmd", L, fxy), xy)
            sigma = np.maximum(sigma, sponge_profile(d, width, strength, expo))
            self.zones.append(dict(tags=tags, width=width, strength=strength, exponent=expo))
        self.sigma = np.ascontiguousarray(sigma.reshape(op.shape[:-1]))
        self.elems = np.nonzero(self.sigma.reshape(op.shape[0], -1).max(axis=1) > 0.0)[0].astype(np.int64)
        self.uinf = np.ascontiguousarray(conserved(ref["rho"], ref["u"], ref["v"], ref["p"], ref["gamma"]),
                                         dtype=float)
        self.max_rate = float(self.sigma.max()) if self.sigma.size else 0.0

    def apply(self, t: float, U: np.ndarray, R: np.ndarray) -> None:
        """Add ``-sigma (U - U_inf)`` to ``R`` in place (``t`` is unused: the zone is steady)."""
        if self.elems.size:
            _k.sponge_apply(U, R, self.sigma, self.elems, self.uinf)
