"""One-dimensional node distributions (geometric growth, spacing fields).

Generators place element vertices at integer values of a continuous index
``k`` and the high-order geometry nodes at fractional values ``k + a/q`` of
the same smooth distribution, so node spacing varies smoothly inside an
element as well as across elements.
"""
from __future__ import annotations

import numpy as np
from scipy.optimize import brentq

__all__ = ["geometric_ratio", "geometric_fraction", "resolve_ratio", "graded_coordinates"]


def geometric_ratio(first: float, total: float, n: int, name: str = "first_height") -> float:
    """Growth ratio ``g`` of ``n`` cells whose first has size ``first`` and which fill ``total``.

    Notes
    -----
    Solves ``first (g^n - 1) / (g - 1) = total`` for ``g > 1`` (sum of a
    geometric series) with Brent's method on ``log g``.

    Raises
    ------
    ValueError
        ``first * n >= total``: the cells would have to shrink (names ``name``).
    """
    if n == 1:
        return 1.0
    if first * n >= total:
        raise ValueError(
            f"parameter '{name}' = {first:g} is too large: {n} cells of that size already exceed "
            f"the available length {total:g} (need {name} < {total / n:g})")

    def f(lg: float) -> float:
        return first * np.expm1(n * lg) / np.expm1(lg) - total

    hi = np.log(total / first) / (n - 1) + 1.0
    return float(np.exp(brentq(f, 1e-14, hi, xtol=1e-15, rtol=1e-15, maxiter=500)))


def geometric_fraction(sigma: np.ndarray, n: int, ratio: float) -> np.ndarray:
    """Continuous geometric distribution on [0, 1].

    Parameters
    ----------
    sigma : (m,) array in [0, 1]
        Continuous cell index divided by ``n``.
    n : int
        Number of cells.
    ratio : float
        Size ratio of consecutive cells.

    Returns
    -------
    (m,) array ``(ratio^(n sigma) - 1) / (ratio^n - 1)``: at ``sigma = k/n`` it
    is the end of cell ``k`` of a geometric series normalised to 1; ``0 -> 0``
    and ``1 -> 1`` exactly.
    """
    sigma = np.asarray(sigma, dtype=float)
    lg = np.log(ratio)
    if abs(lg) < 1e-14:
        return sigma.copy()
    out = np.expm1(sigma * n * lg) / np.expm1(n * lg)
    out[sigma == 1.0] = 1.0
    return out


def resolve_ratio(n: int, total: float, first_height: float, growth: float, default_ratio: float,
                  first_name: str = "first_height", growth_name: str = "growth") -> float:
    """Growth ratio from the user's ``first_height`` or ``growth`` (0 = not given).

    ``first_height > 0``: the ratio that fills ``total`` with ``n`` cells;
    ``growth > 0``: that ratio; neither: ``default_ratio``.  Giving both is an
    error, since together with ``n`` and ``total`` they over-determine the grading.
    """
    if first_height < 0:
        raise ValueError(f"parameter '{first_name}' must be >= 0 (0 = automatic), got {first_height:g}")
    if growth < 0:
        raise ValueError(f"parameter '{growth_name}' must be >= 0 (0 = automatic), got {growth:g}")
    if first_height > 0 and growth > 0:
        raise ValueError(f"give '{first_name}' or '{growth_name}', not both: with the cell count and the "
                         "extent fixed, one determines the other")
    if first_height > 0:
        return geometric_ratio(first_height, total, n, first_name)
    if growth > 0:
        if growth < 1.0:
            raise ValueError(f"parameter '{growth_name}' must be >= 1 (cells grow away from the wall), "
                             f"got {growth:g}")
        return float(growth)
    return float(default_ratio)


def graded_coordinates(breaks: np.ndarray, walls: np.ndarray, h_wall: float, growth: float,
                       h_max: float, samples: int = 4000) -> np.ndarray:
    """Vertex coordinates on a line, graded towards wall positions.

    Parameters
    ----------
    breaks : (nb,) array
        Sorted coordinates that must be vertices (domain ends, body edges).
    walls : (nw,) array
        Positions the cells are graded towards.
    h_wall, growth, h_max : float
        Target spacing ``h(x) = min(h_max, min_w h_wall + (growth - 1)|x - x_w|)``.

    Returns
    -------
    (nv,) sorted array containing every break.

    Notes
    -----
    A spacing growing linearly with distance, ``h = h_w + (g - 1) d``, gives
    consecutive cells whose sizes have ratio ``g`` (to first order).  Each
    interval between breaks gets ``n = max(1, round(int dx/h))`` cells placed
    where the cumulative ``int dx/h`` passes ``k/n`` of its total
    (equidistribution).
    """
    breaks = np.asarray(breaks, dtype=float)
    walls = np.asarray(walls, dtype=float)
    out = [breaks[:1]]
    for a, b in zip(breaks[:-1], breaks[1:]):
        x = np.linspace(a, b, samples + 1)
        h = np.full_like(x, h_max)
        if walls.size:
            d = np.abs(x[:, None] - walls[None, :]).min(axis=1)
            h = np.minimum(h, h_wall + (growth - 1.0) * d)
        inv = 1.0 / h
        phi = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(x))])
        n = max(1, int(round(phi[-1])))
        targets = np.linspace(0.0, phi[-1], n + 1)[1:]
        pts = np.interp(targets, phi, x)
        pts[-1] = b
        out.append(pts)
    return np.concatenate(out)
