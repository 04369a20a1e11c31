"""O-grid between a closed wall curve and a concentric-ish far-field circle.

Used by the cylinder, NACA and point-list section generators.  The caller
supplies, at every geometry node position ``b`` along the wall (continuous
index ``k + a/q``, counter-clockwise, periodic), the wall point ``W_b`` exactly
on the body, a unit extrusion direction ``M_b`` (the wall normal, smoothed at
corners) and the far-field point ``F_b`` exactly on the far-field circle.

Element orientation: ``r`` (first index) runs from the wall outwards, ``s``
counter-clockwise around the body, so ``x_r x x_s > 0``.  The wall is face 3
(``r = -1``) and the far field face 1 (``r = +1``) of the elements touching
them.
"""
from __future__ import annotations

import numpy as np

from .grading import geometric_fraction
from .mesh import Mesh, build_mesh
from .structured import structured_elements

__all__ = ["ogrid_mesh"]


def ogrid_mesh(W: np.ndarray, M: np.ndarray, F: np.ndarray, n_radial: int, ratio: float, q: int,
               blend_length: float, wall_tag: str = "wall", far_tag: str = "far",
               name: str = "ogrid") -> tuple[Mesh, float]:
    """Build the O-grid mesh.

    Parameters
    ----------
    W, F : (ns q, 2) arrays
        Wall points and far-field points.
    M : (ns q, 2) array or callable
        Unit extrusion directions, or ``M(d)`` returning them for the layer at
        wall distance ``d`` (lets a corner fan widen with distance).
    n_radial : int
        Element layers between wall and far field.
    ratio : float
        Geometric growth ratio of consecutive layers.
    q : int
        Geometry degree.
    blend_length : float
        Wall distance over which the grid lines turn from the wall normal
        to the straight line towards their far-field point.

    Returns
    -------
    mesh : Mesh
    d0 : float
        Reference wall-to-far-field distance used for the layers (the mean of
        ``|F - W|``); the first layer has thickness ``d0 * g(1/n_radial)``.

    Notes
    -----
    With ``sigma`` the continuous layer index over ``n_radial`` and
    ``g(sigma) = (ratio^(n sigma) - 1)/(ratio^n - 1)``,

        X(b, sigma) = W_b + g [ (1 - beta) d0 M_b(g d0) + beta (F_b - W_b) ],
        beta = S(min(1, g d0 / blend_length)),  S(z) = 3 z^2 - 2 z^3.

    Near the wall ``beta = O(g^2)``, so the first layers are extruded along
    the wall normal (orthogonal cells of thickness ``g d0``); beyond
    ``blend_length`` the lines run straight to the far-field circle, reached
    exactly at ``sigma = 1``.  This is an algebraic (Hermite-like) blend of
    normal extrusion and linear transfinite interpolation between two curves
    (Thompson, Warsi & Mastin, Numerical Grid Generation, 1985, ch. 8).
    """
    d0 = float(np.mean(np.linalg.norm(F - W, axis=1)))
    sigma = np.arange(n_radial * q + 1) / (n_radial * q)
    g = geometric_fraction(sigma, n_radial, ratio)
    z = np.clip(g * d0 / max(min(blend_length, d0), 1e-300), 0.0, 1.0)
    beta = z * z * (3.0 - 2.0 * z)
    if callable(M):
        Mg = np.stack([M(d0 * ga) for ga in g])
    else:
        Mg = np.broadcast_to(M[None], (g.size,) + M.shape)
    P = (W[None] + g[:, None, None] * ((1.0 - beta)[:, None, None] * d0 * Mg
                                        + beta[:, None, None] * (F - W)[None]))
    P[0] = W
    P[-1] = F
    geom, corners, vertices, vid, _ = structured_elements(P, q, wrap_s=True)
    ns = W.shape[0] // q
    tags = {}
    for j in range(ns):
        tags[(int(vid[0, j]), int(vid[0, j + 1]))] = wall_tag
        tags[(int(vid[n_radial, j]), int(vid[n_radial, j + 1]))] = far_tag
    return build_mesh(geom, corners, vertices, tags, name=name), d0


def _unit(v: np.ndarray) -> np.ndarray:
    return v / np.linalg.norm(v, axis=-1, keepdims=True)
