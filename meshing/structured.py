"""Elements of a structured grid of geometry nodes.

Generators that build a logically rectangular grid (O-grids, channels,
Cartesian blocks) fill one array of all geometry nodes ``P[a, b]`` with
``a`` along the element direction ``r`` and ``b`` along ``s``; element
``(i, j)`` owns ``P[i q : i q + q + 1, j q : j q + q + 1]``.
"""
from __future__ import annotations

import numpy as np

__all__ = ["structured_elements"]


def structured_elements(P: np.ndarray, q: int, wrap_s: bool = False, keep: np.ndarray | None = None):
    """Cut a node grid into elements.

    Parameters
    ----------
    P : (nr q + 1, ns q [+ 1], 2) array
        All geometry nodes.  With ``wrap_s`` the grid is periodic along ``s``
        by connectivity: it has ``ns q`` columns and column ``ns q`` is column 0,
        so the elements of the last column share vertices with the first.
    q : int
        Geometry degree.
    keep : (nr, ns) bool array, optional
        Elements to keep (default all); unused vertices are dropped.

    Returns
    -------
    geom : (ne, q+1, q+1, 2)
    corners : (ne, 4) int
    vertices : (nv, 2)
    vid : (nr+1, ns+1) int
        Vertex id of grid vertex ``(i, j)`` (``-1`` if unused); with ``wrap_s``
        column ``ns`` repeats column 0.
    eid : (nr, ns) int
        Element id of grid cell ``(i, j)`` (``-1`` if removed).
    """
    P = np.asarray(P, dtype=float)
    if (P.shape[0] - 1) % q:
        raise ValueError(f"node grid has {P.shape[0]} rows, not a multiple of q={q} plus one")
    nr = (P.shape[0] - 1) // q
    if wrap_s:
        if P.shape[1] % q:
            raise ValueError(f"periodic node grid has {P.shape[1]} columns, not a multiple of q={q}")
        ns = P.shape[1] // q
        nvs = ns
    else:
        if (P.shape[1] - 1) % q:
            raise ValueError(f"node grid has {P.shape[1]} columns, not a multiple of q={q} plus one")
        ns = (P.shape[1] - 1) // q
        nvs = ns + 1
    if keep is None:
        keep = np.ones((nr, ns), dtype=bool)
    keep = np.asarray(keep, dtype=bool)

    ii, jj = np.nonzero(keep)  # row-major: elements ordered by i then j
    a = np.arange(q + 1)
    rows = ii[:, None] * q + a[None, :]
    cols = (jj[:, None] * q + a[None, :]) % P.shape[1]
    geom = P[rows[:, :, None], cols[:, None, :]]

    full = np.arange((nr + 1) * nvs).reshape(nr + 1, nvs)
    if wrap_s:
        full = np.concatenate([full, full[:, :1]], axis=1)
    c = np.stack([full[ii, jj], full[ii + 1, jj], full[ii + 1, jj + 1], full[ii, jj + 1]], axis=1)
    used = np.unique(c)
    new = -np.ones((nr + 1) * nvs, dtype=np.int64)
    new[used] = np.arange(used.size)
    corners = new[c]
    vgrid = P[::q, ::q][:, :nvs].reshape(-1, 2)
    vertices = vgrid[used]
    vid = new[full]
    eid = -np.ones((nr, ns), dtype=np.int64)
    eid[ii, jj] = np.arange(ii.size)
    return np.ascontiguousarray(geom), corners.astype(np.int64), vertices, vid, eid
