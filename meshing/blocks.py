"""Rectangular bluff bodies in a rectangular domain (block-structured).

The domain is cut by every body edge into a tensor grid of blocks; the blocks
inside bodies are removed and the rest are meshed with axis-aligned
rectangles graded towards the body edges.  Element ``r`` is along x, ``s``
along y.
"""

import numpy as np

from ._checks import check_degree, check_number, check_positive, check_range
from .channel import affine_node_grid
from .grading import graded_coordinates
from .mesh import Mesh, build_mesh
from .structured import structured_elements

__all__ = ["blocks_mesh", "towers_mesh"]


def _bodies(bodies, x0, x1, y0, y1) -> np.ndarray:
    try:
        B = np.array(bodies, dtype=float).reshape(-1, 4)
    except (TypeError, ValueError):
        raise ValueError("parameter 'bodies' must be a list of [xmin, xmax, ymin, ymax] rectangles, "
                         f"got {bodies!r}") from None
    if B.shape[0] == 0:
        raise ValueError("parameter 'bodies' must hold at least one rectangle")
    for k, (a, b, c, d) in enumerate(B):
        if not (b > a and d > c):
            raise ValueError(f"parameter 'bodies'[{k}] = {[a, b, c, d]} must have xmax > xmin and ymax > ymin")
        if not (a > x0 and b < x1 and c > y0 and d < y1):
            raise ValueError(f"parameter 'bodies'[{k}] = {[a, b, c, d]} must lie strictly inside the domain "
                             f"[{x0:g}, {x1:g}] x [{y0:g}, {y1:g}]")
    for k in range(len(B)):
        for m in range(k):
            a, b = B[k], B[m]
            if a[0] <= b[1] and b[0] <= a[1] and a[2] <= b[3] and b[2] <= a[3]:
                raise ValueError(f"parameter 'bodies': bodies {m} and {k} overlap or touch")
    return B


def blocks_mesh(*, bodies: tuple[tuple[float, float, float, float], ...] = ((-0.5, 0.5, -0.5, 0.5),),
                x0: float = -10.0, x1: float = 20.0, y0: float = -10.0, y1: float = 10.0,
                wall_spacing: float = 0.04, max_spacing: float = 1.5, growth: float = 1.2,
                q: int = 1) -> Mesh:
    """Axis-aligned rectangular bodies in the box ``[x0, x1] x [y0, y1]``.

    Parameters
    ----------
    bodies : sequence of (xmin, xmax, ymin, ymax)
        Body rectangles, strictly inside the domain, not touching each other.
    x0, x1, y0, y1 : float
        Domain.
    wall_spacing : float
        Cell size next to every body edge (both directions).
    max_spacing : float
        Largest cell size.
    growth : float
        Size ratio of neighbouring cells away from body edges (> 1).
    q : int
        Geometry degree 1..4 (elements are exact rectangles).

    Returns
    -------
    Mesh
        Tags ``body0``, ``body1``, ... (the faces of each body, in the order
        given), ``inlet`` (x = x0), ``outlet`` (x = x1), ``bottom`` (y = y0),
        ``top`` (y = y1).

    Notes
    -----
    Along x the spacing field is ``h(x) = min(max_spacing, min_w wall_spacing +
    (growth - 1)|x - x_w|)`` over all body edges ``x_w`` (likewise along y),
    equidistributed between consecutive edges (:func:`meshing.grading.graded_coordinates`),
    so every body edge is a grid line.  Edges of different bodies that almost
    line up give thin cells; ``mesh_quality`` reports the smallest size.
    """
    x0, x1, y0, y1 = (check_number(n, v) for n, v in (("x0", x0), ("x1", x1), ("y0", y0), ("y1", y1)))
    if not (x1 > x0 and y1 > y0):
        raise ValueError(f"domain needs x1 > x0 and y1 > y0, got x0={x0:g}, x1={x1:g}, y0={y0:g}, y1={y1:g}")
    wall_spacing = check_positive("wall_spacing", wall_spacing)
    max_spacing = check_positive("max_spacing", max_spacing)
    if max_spacing < wall_spacing:
        raise ValueError(f"parameter 'max_spacing' ({max_spacing:g}) must be >= 'wall_spacing' ({wall_spacing:g})")
    growth = check_range("growth", growth, 1.0, 2.0)
    q = check_degree(q)
    B = _bodies(bodies, x0, x1, y0, y1)
    ext = max(x1 - x0, y1 - y0)

    def lines(lo, hi, edges):
        br = np.unique(np.concatenate([[lo, hi], edges]))
        br = br[np.concatenate([[True], np.diff(br) > 1e-12 * ext])]
        return graded_coordinates(br, np.unique(edges), wall_spacing, growth, max_spacing)

    xv = lines(x0, x1, B[:, :2].ravel())
    yv = lines(y0, y1, B[:, 2:].ravel())
    xc, yc = 0.5 * (xv[1:] + xv[:-1]), 0.5 * (yv[1:] + yv[:-1])
    owner = -np.ones((xc.size, yc.size), dtype=int)  # body containing cell (i, j), -1 = fluid
    for k, (a, b, c, d) in enumerate(B):
        inside = (xc[:, None] > a) & (xc[:, None] < b) & (yc[None, :] > c) & (yc[None, :] < d)
        owner[inside] = k
    P = affine_node_grid(xv, yv, q)
    geom, corners, vertices, vid, eid = structured_elements(P, q, keep=owner < 0)
    nx, ny = xc.size, yc.size
    tags = {}
    for i in range(nx):
        for j in range(ny):
            if owner[i, j] >= 0:
                continue
            faces = (((i, j), (i + 1, j), (i, j - 1), "bottom"),
                     ((i + 1, j), (i + 1, j + 1), (i + 1, j), "outlet"),
                     ((i + 1, j + 1), (i, j + 1), (i, j + 1), "top"),
                     ((i, j + 1), (i, j), (i - 1, j), "inlet"))
            for va, vb, (ni, nj), border in faces:
                if 0 <= ni < nx and 0 <= nj < ny:
                    if owner[ni, nj] < 0:
                        continue
                    tag = f"body{owner[ni, nj]}"
                else:
                    tag = border
                tags[(int(vid[va]), int(vid[vb]))] = tag
    return build_mesh(geom, corners, vertices, tags, name="blocks")


def towers_mesh(*, side: float = 1.0, spacing: float = 3.0, angle: float = 0.0, upstream: float = 10.0,
                downstream: float = 25.0, half_width: float = 12.0, wall_spacing: float = 0.04,
                max_spacing: float = 1.5, growth: float = 1.2, q: int = 1) -> Mesh:
    """Demo: two square towers in a cross-wind (plan view), wind along +x.

    Parameters
    ----------
    side : float
        Side of each square tower.
    spacing : float
        Centre-to-centre distance.
    angle : float
        Angle (degrees) of the line from tower 0 to tower 1, measured from
        the wind direction +x: 0 = tandem (tower 1 in the wake of tower 0),
        90 = side by side.  The towers are centred at
        ``-+(spacing/2)(cos angle, sin angle)`` and stay aligned with the axes.
    upstream, downstream, half_width : float
        Domain ``[-upstream, downstream] x [-half_width, half_width]``.
    wall_spacing, max_spacing, growth, q :
        As :func:`blocks_mesh`.

    Returns
    -------
    Mesh with tags ``body0`` (tower 0), ``body1`` (tower 1), ``inlet``,
    ``outlet``, ``top``, ``bottom``.

    Notes
    -----
    Turning the pair line, not the towers, keeps every wall on a grid line,
    so the mesh stays Cartesian (staggered arrangement at fixed incidence).
    A rigid rotation of the whole pair (towers rotated too) relative to the
    wind is the same flow as the ``angle = 0`` mesh with the inflow direction
    rotated, which the case file sets, not the mesh.
    """
    side = check_positive("side", side)
    spacing = check_positive("spacing", spacing)
    angle = check_range("angle", angle, -180.0, 180.0)
    for name, v in (("upstream", upstream), ("downstream", downstream), ("half_width", half_width)):
        check_positive(name, v)
    a = np.radians(angle)
    dx, dy = 0.5 * spacing * np.cos(a), 0.5 * spacing * np.sin(a)
    if abs(2 * dx) <= side and abs(2 * dy) <= side:
        raise ValueError(f"parameters 'spacing' ({spacing:g}) and 'angle' ({angle:g}) make the towers of side "
                         f"{side:g} overlap or touch")
    h = 0.5 * side
    bodies = ((-dx - h, -dx + h, -dy - h, -dy + h), (dx - h, dx + h, dy - h, dy + h))
    mesh = blocks_mesh(bodies=bodies, x0=-upstream, x1=downstream, y0=-half_width, y1=half_width,
                       wall_spacing=wall_spacing, max_spacing=max_spacing, growth=growth, q=q)
    mesh.name = "towers"
    return mesh
