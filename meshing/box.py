"""Rectangular box of curved quadrilaterals, optionally periodic and warped."""
from __future__ import annotations

import numpy as np

from .geometry import equispaced_nodes
from .mesh import Mesh, build_mesh

__all__ = ["box_mesh"]


def box_mesh(
    nx: int,
    ny: int,
    extent: tuple[float, float, float, float] = (0.0, 1.0, 0.0, 1.0),
    q: int = 1,
    warp: float = 0.0,
    periodic: bool | tuple[bool, bool] = True,
    name: str = "box",
) -> Mesh:
    """Structured quad mesh of the box ``[x0, x1] x [y0, y1]``.

    Parameters
    ----------
    nx, ny : int
        Elements along x and y.
    extent : (x0, x1, y0, y1)
    q : int
        Geometry degree (1..4 are tested).
    warp : float
        Amplitude, as a fraction of the box size, of the smooth interior
        warping ``x += warp Lx sin(2 pi X) sin(2 pi Y)``,
        ``y += warp Ly sin(2 pi X) sin(2 pi Y)`` with ``X, Y`` the normalised
        coordinates.  It vanishes on the border, so periodic faces still match
        by a translation, and it curves every interior element for ``q > 1``.
    periodic : bool or (bool, bool)
        Periodic in x and/or y.  Non-periodic sides keep their tags
        ``left``, ``right``, ``bottom``, ``top``.

    Returns
    -------
    Mesh
    """
    if nx < 1 or ny < 1:
        raise ValueError(f"box needs at least one element each way, got nx={nx}, ny={ny}")
    if isinstance(periodic, bool):
        periodic = (periodic, periodic)
    x0, x1, y0, y1 = map(float, extent)
    if not (x1 > x0 and y1 > y0):
        raise ValueError(f"box extent must have x1 > x0 and y1 > y0, got {extent}")
    lx, ly = x1 - x0, y1 - y0
    t = (equispaced_nodes(q) + 1.0) / 2.0
    # normalised coordinates X[ex, ey, a, b] of geometry node (a, b) of element (ex, ey)
    ex = np.arange(nx)[:, None, None, None]
    ey = np.arange(ny)[None, :, None, None]
    X, Y = np.broadcast_arrays((ex + t[None, None, :, None]) / nx, (ey + t[None, None, None, :]) / ny)
    bump = np.sin(2 * np.pi * X) * np.sin(2 * np.pi * Y)
    xs = x0 + lx * (X + warp * bump)
    ys = y0 + ly * (Y + warp * bump)
    geom = np.stack([xs, ys], axis=-1).reshape(nx * ny, q + 1, q + 1, 2)

    vid = lambda i, j: i * (ny + 1) + j  # noqa: E731
    ii, jj = np.meshgrid(np.arange(nx), np.arange(ny), indexing="ij")
    ii, jj = ii.ravel(), jj.ravel()
    corners = np.stack([vid(ii, jj), vid(ii + 1, jj), vid(ii + 1, jj + 1), vid(ii, jj + 1)], axis=1)
    vi, vj = np.meshgrid(np.arange(nx + 1), np.arange(ny + 1), indexing="ij")
    vertices = np.stack([x0 + lx * vi.ravel() / nx, y0 + ly * vj.ravel() / ny], axis=1)

    tags: dict[tuple[int, int], str] = {}
    for j in range(ny):
        tags[(vid(0, j), vid(0, j + 1))] = "left"
        tags[(vid(nx, j), vid(nx, j + 1))] = "right"
    for i in range(nx):
        tags[(vid(i, 0), vid(i + 1, 0))] = "bottom"
        tags[(vid(i, ny), vid(i + 1, ny))] = "top"
    pairs = []
    if periodic[0]:
        pairs.append(("left", "right", (lx, 0.0)))
    if periodic[1]:
        pairs.append(("bottom", "top", (0.0, ly)))
    return build_mesh(geom, corners, vertices, tags, pairs, name=name)
