"""Rectangular channel / flat plate with leading-edge and wall clustering."""

import numpy as np

from ._checks import check_degree, check_int, check_nonneg, check_positive
from .geometry import equispaced_nodes
from .grading import geometric_fraction, geometric_ratio, resolve_ratio
from .mesh import Mesh, build_mesh
from .structured import structured_elements

__all__ = ["plate_mesh", "affine_node_grid"]


def affine_node_grid(xv: np.ndarray, yv: np.ndarray, q: int) -> np.ndarray:
    """Geometry-node grid of a tensor grid of rectangles, (nx q + 1, ny q + 1, 2).

    High-order nodes are equispaced inside each cell, so every element is an
    exact (affine) rectangle.
    """
    t = (equispaced_nodes(q)[:-1] + 1.0) / 2.0

    def fill(v):
        inner = (v[:-1, None] + np.diff(v)[:, None] * t[None, :]).ravel()
        return np.concatenate([inner, v[-1:]])

    xn, yn = fill(np.asarray(xv, float)), fill(np.asarray(yv, float))
    X, Y = np.meshgrid(xn, yn, indexing="ij")
    return np.stack([X, Y], axis=-1)


def _graded(first: float, length: float, n: int, name: str) -> np.ndarray:
    """``n + 1`` points on [0, length], first cell ``first``, geometric growth."""
    ratio = geometric_ratio(first, length, n, name) if first > 0 else 1.0
    return length * geometric_fraction(np.arange(n + 1) / n, n, ratio)


def plate_mesh(*, length: float = 1.0, upstream: float = 0.5, height: float = 1.0,
               nx_plate: int = 48, nx_upstream: int = 16, ny: int = 32, le_spacing: float = 0.005,
               first_height: float = 0.001, growth: float = 0.0, q: int = 1) -> Mesh:
    """Rectangle ``[-upstream, length] x [0, height]`` over a flat plate.

    Parameters
    ----------
    length : float
        Plate length; the plate runs from ``x = 0`` (leading edge) to ``x = length``.
    upstream : float
        Length of the free-slip stretch before the plate (0 = none).
    height : float
        Domain height.
    nx_plate, nx_upstream, ny : int
        Elements along the plate, before it, and across.
    le_spacing : float
        Streamwise element length at the leading edge, on both sides; cells
        grow geometrically away from it (0 = uniform along x).
    first_height, growth : float
        Wall-normal first-cell height, or growth ratio; at most one
        (0 = not given; neither = uniform in y).
    q : int
        Geometry degree 1..4 (elements are exact rectangles; higher ``q`` only
        adds equispaced nodes).

    Returns
    -------
    Mesh
        Tags ``inlet`` (x = -upstream), ``outlet`` (x = length), ``top``
        (y = height: a channel wall or a far-field/slip boundary, as the case
        decides), ``upstream`` (y = 0, x < 0: meant as a slip symmetry line) and
        ``plate`` (y = 0, 0 <= x <= length: the no-slip wall).  Element ``r`` is
        along x, ``s`` along y.
    """
    length = check_positive("length", length)
    upstream = check_nonneg("upstream", upstream)
    height = check_positive("height", height)
    nx_plate = check_int("nx_plate", nx_plate, 1)
    nx_upstream = check_int("nx_upstream", nx_upstream, 0)
    ny = check_int("ny", ny, 1)
    le_spacing = check_nonneg("le_spacing", le_spacing)
    first_height = check_nonneg("first_height", first_height)
    growth = check_nonneg("growth", growth)
    q = check_degree(q)
    if (upstream > 0) != (nx_upstream > 0):
        raise ValueError(f"parameters 'upstream' ({upstream:g}) and 'nx_upstream' ({nx_upstream}) must both "
                         "be zero or both positive")

    x_plate = _graded(le_spacing, length, nx_plate, "le_spacing")
    x_up = -_graded(le_spacing, upstream, nx_upstream, "le_spacing")[::-1] if nx_upstream else np.zeros(1)
    xv = np.concatenate([x_up[:-1], x_plate])
    ratio = resolve_ratio(ny, height, first_height, growth, 1.0)
    yv = height * geometric_fraction(np.arange(ny + 1) / ny, ny, ratio)
    P = affine_node_grid(xv, yv, q)
    geom, corners, vertices, vid, _ = structured_elements(P, q)
    nx = xv.size - 1
    i_le = nx_upstream
    tags = {}
    for j in range(ny):
        tags[(int(vid[0, j]), int(vid[0, j + 1]))] = "inlet"
        tags[(int(vid[nx, j]), int(vid[nx, j + 1]))] = "outlet"
    for i in range(nx):
        tags[(int(vid[i, ny]), int(vid[i + 1, ny]))] = "top"
        tags[(int(vid[i, 0]), int(vid[i + 1, 0]))] = "upstream" if i < i_le else "plate"
    return build_mesh(geom, corners, vertices, tags, name="plate")
