"""O-grid around any closed 2D section given as a list of points.

Point-list file: one ``x y`` pair per line; ``#`` starts a comment; blank
lines are ignored.  The points go once around the section in either
direction (clockwise input is reversed, with a warning); a last point equal
to the first (a closed list) is dropped.
"""

import os
import warnings

import numpy as np
from scipy.interpolate import CubicSpline

from ._checks import check_degree, check_int, check_nonneg, check_positive, check_range
from .curves import ArcLength, outward_normal
from .grading import resolve_ratio
from .mesh import Mesh
from .ogrid import ogrid_mesh
from .quality import check_mesh

__all__ = ["read_section_points", "validate_section_points", "SectionSpline", "section_mesh",
           "section_points_mesh"]


def read_section_points(path: str) -> np.ndarray:
    """Points of a section file, shape (n, 2).

    Raises
    ------
    FileNotFoundError, ValueError
        Missing file; a line that is not two numbers (names file and line).
    """
    if not path:
        raise ValueError("parameter 'path' (the section point-list file) is required")
    if not os.path.isfile(path):
        raise FileNotFoundError(f"section file '{path}' does not exist")
    pts = []
    with open(path, encoding="utf-8") as fh:
        for k, line in enumerate(fh, start=1):
            text = line.split("#", 1)[0].strip()
            if not text:
                continue
            parts = text.replace(",", " ").split()
            try:
                vals = [float(v) for v in parts]
            except ValueError:
                raise ValueError(f"{path}:{k}: expected two numbers 'x y', got {line.strip()!r}") from None
            if len(vals) != 2:
                raise ValueError(f"{path}:{k}: expected two numbers 'x y', got {len(vals)} ({line.strip()!r})")
            pts.append(vals)
    return np.array(pts, dtype=float).reshape(-1, 2)


def _segments_intersect(P: np.ndarray, label: str) -> None:
    """Raise if two non-adjacent edges of the closed polygon ``P`` intersect."""
    n = len(P)
    A, B = P, np.roll(P, -1, axis=0)
    chunk = max(1, 2_000_000 // max(n, 1))
    for s0 in range(0, n, chunk):
        i = np.arange(s0, min(n, s0 + chunk))[:, None]
        j = np.arange(n)[None, :]
        a, b, c, d = A[i], B[i], A[j], B[j]

        def orient(p, q, r):
            return (q[..., 0] - p[..., 0]) * (r[..., 1] - p[..., 1]) - (q[..., 1] - p[..., 1]) * (r[..., 0] - p[..., 0])

        o1, o2 = orient(a, b, c), orient(a, b, d)
        o3, o4 = orient(c, d, a), orient(c, d, b)
        hit = (o1 * o2 < 0) & (o3 * o4 < 0)
        adjacent = (np.abs(i - j) <= 1) | (np.abs(i - j) == n - 1)
        hit &= ~adjacent & (j > i)
        if hit.any():
            a_, b_ = np.argwhere(hit)[0]
            ia, jb = int(a_ + s0), int(b_)
            raise ValueError(f"{label}: the section crosses itself: edge from point {ia + 1} "
                             f"({P[ia, 0]:.6g}, {P[ia, 1]:.6g}) intersects edge from point {jb + 1} "
                             f"({P[jb, 0]:.6g}, {P[jb, 1]:.6g})")


def validate_section_points(points: np.ndarray, label: str = "section") -> np.ndarray:
    """Checked, counter-clockwise copy of a section's points, (n, 2).

    Raises
    ------
    ValueError
        Fewer than 4 points, duplicate consecutive points, a self-intersecting
        outline; each message names ``label`` and the point number (1-based).
    """
    P = np.array(points, dtype=float).reshape(-1, 2)
    if not np.all(np.isfinite(P)):
        raise ValueError(f"{label}: points must be finite numbers")
    if len(P) >= 2 and np.array_equal(P[0], P[-1]):
        P = P[:-1]  # a closed list repeats the first point
    if len(P) < 4:
        raise ValueError(f"{label}: a section needs at least 4 distinct points, got {len(P)}")
    size = float(np.ptp(P, axis=0).max())
    step = np.linalg.norm(np.roll(P, -1, axis=0) - P, axis=1)
    dup = np.nonzero(step <= 1e-12 * size)[0]
    if dup.size:
        k = int(dup[0])
        raise ValueError(f"{label}: points {k + 1} and {(k + 1) % len(P) + 1} coincide at "
                         f"({P[k, 0]:.6g}, {P[k, 1]:.6g}); remove the duplicate")
    _segments_intersect(P, label)
    area = 0.5 * np.sum(P[:, 0] * np.roll(P[:, 1], -1) - np.roll(P[:, 0], -1) * P[:, 1])
    if area < 0:
        warnings.warn(f"{label}: points run clockwise; reversed to counter-clockwise", stacklevel=3)
        P = np.concatenate([P[:1], P[:0:-1]])
    return P


class SectionSpline:
    """Cubic spline(s) through the points, split at sharp corners, with arc length.

    Parameters
    ----------
    P : (n, 2) array, counter-clockwise, validated
    corner_angle : float
        A point where the outline turns by more than this (degrees) is a
        corner: the outline is only continuous there.

    Notes
    -----
    Without corners: one periodic cubic spline, parameterised by cumulative
    chord length (de Boor 1978), twice continuously differentiable around the
    loop.  With corners: one not-a-knot cubic spline per piece between
    consecutive corners, so a sharp trailing edge stays sharp (a periodic
    spline would overshoot into a small loop there).
    """

    def __init__(self, P: np.ndarray, corner_angle: float = 45.0):
        n = len(P)
        e_in = P - np.roll(P, 1, axis=0)
        e_out = np.roll(P, -1, axis=0) - P
        cosang = np.sum(e_in * e_out, axis=1) / (np.linalg.norm(e_in, axis=1) * np.linalg.norm(e_out, axis=1))
        corners = np.nonzero(cosang < np.cos(np.radians(corner_angle)))[0]
        self.corners = corners
        self.pieces = []  # (spline, d1, d2, arc)
        if corners.size == 0:
            closed = np.concatenate([P, P[:1]])
            t = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(closed, axis=0), axis=1))])
            self._add(CubicSpline(t, closed, bc_type="periodic"), t)
        else:
            order = np.roll(np.arange(n), -int(corners[0]))
            Q = P[order]
            bounds = list(np.sort((corners - corners[0]) % n)) + [n]
            for c0, c1 in zip(bounds[:-1], bounds[1:]):
                seg = Q[np.arange(c0, c1 + 1) % n]
                t = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(seg, axis=0), axis=1))])
                bc = "not-a-knot" if len(seg) > 3 else "natural"
                self._add(CubicSpline(t, seg, bc_type=bc), t)
        self.lengths = np.array([pc[3].length for pc in self.pieces])

    def _add(self, sp, t):
        d1 = sp.derivative(1)
        arc = ArcLength(lambda u, d=d1: d(u), float(t[0]), float(t[-1]), n_intervals=4 * len(t), breaks=t)
        self.pieces.append((sp, d1, sp.derivative(2), arc))

    def curvature(self, k: int, t: np.ndarray) -> np.ndarray:
        """Signed curvature of piece ``k`` at parameters ``t``, (m,)."""
        _, d1, d2, _ = self.pieces[k]
        a, b = d1(t), d2(t)
        return (a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0]) / np.linalg.norm(a, axis=1) ** 3

    def sample(self, per_piece: int) -> np.ndarray:
        """Closed polygon of points on the spline, for crossing checks, (m, 2)."""
        out = []
        for sp, _, _, arc in self.pieces:
            t = np.linspace(arc.knots[0], arc.knots[-1], per_piece + 1)[:-1]
            out.append(sp(t))
        return np.concatenate(out)


def _around_nodes(sp: SectionSpline, n_around: int, q: int, clustering: float):
    """Wall nodes, unit normals and corner flags along the loop, (n_around q, ...)."""
    L = float(sp.lengths.sum())
    dens = []
    for k, (_, _, _, arc) in enumerate(sp.pieces):
        ss = np.linspace(0.0, arc.length, 4000 + 1)
        tt = arc.inverse(ss)
        kap = np.abs(sp.curvature(k, tt))
        w = (1.0 - clustering) + clustering * np.sqrt(kap * L / (2.0 * np.pi))
        if sp.corners.size:
            dc = np.minimum(ss, arc.length - ss)
            w = w + clustering * 4.0 * np.exp(-50.0 * dc / L)
        Wc = np.concatenate([[0.0], np.cumsum(0.5 * (w[1:] + w[:-1]) * np.diff(ss))])
        dens.append((ss, Wc))
    totals = np.array([d[1][-1] for d in dens])
    npieces = len(sp.pieces)
    if n_around < npieces:
        raise ValueError(f"parameter 'n_around' ({n_around}) must be at least the number of pieces between "
                         f"sharp corners ({npieces})")
    # elements per piece: proportional to the weighted length, at least one (largest remainder)
    share = totals / totals.sum() * n_around
    ne = np.maximum(1, np.floor(share).astype(int))
    while ne.sum() < n_around:
        ne[np.argmax(share - ne)] += 1
    while ne.sum() > n_around:
        ne[np.argmax(np.where(ne > 1, ne - share, -np.inf))] -= 1
    Ws, Ns, Cs = [], [], []
    for k, ((spl, d1, _, arc), (ss, Wc)) in enumerate(zip(sp.pieces, dens)):
        frac = np.arange(ne[k] * q) / (ne[k] * q)
        s_nodes = np.interp(frac * Wc[-1], Wc, ss)
        t_nodes = arc.inverse(s_nodes)
        t_nodes[0] = arc.knots[0]
        Ws.append(spl(t_nodes))
        Ns.append(outward_normal(d1(t_nodes)))
        c = np.zeros(t_nodes.size, dtype=bool)
        c[0] = sp.corners.size > 0
        Cs.append(c)
    W, N, C = np.concatenate(Ws), np.concatenate(Ns), np.concatenate(Cs)
    if sp.corners.size:
        # the node at a corner gets the bisector of the two one-sided normals
        start = np.concatenate([[0], np.cumsum(ne * q)[:-1]])
        for k, j in enumerate(start):
            _, d1_in, _, arc_in = sp.pieces[(k - 1) % npieces]
            n_in = outward_normal(d1_in(np.array([arc_in.knots[-1]])))[0]
            nb = N[j] + n_in
            N[j] = nb / np.linalg.norm(nb)
    return W, N, C


def _loop_distance(W: np.ndarray, j: int) -> np.ndarray:
    """Polygonal distance along the closed node loop from node ``j`` (either way), (m,)."""
    step = np.linalg.norm(np.roll(W, -1, axis=0) - W, axis=1)
    fwd = np.concatenate([[0.0], np.cumsum(np.roll(step, -j))[:-1]])
    return np.roll(np.minimum(fwd, step.sum() - fwd), j)


def section_points_mesh(points: np.ndarray, *, far_radius: float = 50.0, n_radial: int = 24,
                        n_around: int = 64, first_height: float = 0.0, growth: float = 0.0,
                        clustering: float = 0.5, corner_angle: float = 45.0, q: int = 3,
                        label: str = "section") -> Mesh:
    """O-grid around the spline through ``points`` (n, 2); see :func:`section_mesh`."""
    far_radius = check_positive("far_radius", far_radius)
    n_radial = check_int("n_radial", n_radial, 1)
    n_around = check_int("n_around", n_around, 4)
    first_height = check_nonneg("first_height", first_height)
    growth = check_nonneg("growth", growth)
    clustering = check_range("clustering", clustering, 0.0, 1.0)
    corner_angle = check_range("corner_angle", corner_angle, 1.0, 179.0)
    q = check_degree(q)
    P = validate_section_points(points, label)
    sp = SectionSpline(P, corner_angle)
    try:
        _segments_intersect(sp.sample(8 * len(P) // len(sp.pieces) + 8), label + " (spline)")
    except ValueError as err:
        raise ValueError(f"{err}; the spline through the points loops: add points where the outline "
                         "bends sharply, or lower 'corner_angle' so the bend counts as a corner") from None
    W, N, C = _around_nodes(sp, n_around, q, clustering)

    closed = np.concatenate([P, P[:1]])
    cross = closed[:-1, 0] * closed[1:, 1] - closed[1:, 0] * closed[:-1, 1]
    area = 0.5 * cross.sum()
    centre = np.array([np.sum((closed[:-1, 0] + closed[1:, 0]) * cross),
                       np.sum((closed[:-1, 1] + closed[1:, 1]) * cross)]) / (6.0 * area)
    reach = float(np.linalg.norm(W - centre, axis=1).max())
    if far_radius < 2.0 * reach:
        raise ValueError(f"parameter 'far_radius' ({far_radius:g}) must be at least twice the largest "
                         f"distance from the section centroid to its outline ({reach:g})")
    rel = W[0] - centre
    th = np.arctan2(rel[1], rel[0]) + 2.0 * np.pi * np.arange(n_around * q) / (n_around * q)
    F = centre + far_radius * np.stack([np.cos(th), np.sin(th)], axis=1)
    d0 = float(np.mean(np.linalg.norm(F - W, axis=1)))
    size = float(np.ptp(P, axis=0).max())
    ratio = resolve_ratio(n_radial, d0, first_height, growth, (far_radius / (0.5 * size)) ** (1.0 / n_radial))
    if C.any():
        # near a corner the normal turns into the corner bisector over two wall elements, or over
        # the first-layer thickness if larger, so the corner's grid line is shared and the fan opens
        h1 = d0 * (ratio - 1.0) / (ratio**n_radial - 1.0) if ratio != 1.0 else d0 / n_radial
        h_wall = float(np.linalg.norm(W - np.roll(W, q, axis=0), axis=1).min())
        delta = max(2.0 * h_wall, h1)
        Mdir = N.copy()
        for j in np.nonzero(C)[0]:
            wgt = np.exp(-(_loop_distance(W, j) / delta) ** 2)[:, None]
            Mdir = Mdir * (1.0 - wgt) + wgt * N[j][None, :]
        N = Mdir / np.linalg.norm(Mdir, axis=1, keepdims=True)
    mesh, _ = ogrid_mesh(W, N, F, n_radial, ratio, q, blend_length=size, name=label)
    check_mesh(mesh)
    return mesh


def section_mesh(*, path: str = "", far_radius: float = 50.0, n_radial: int = 24, n_around: int = 64,
                 first_height: float = 0.0, growth: float = 0.0, clustering: float = 0.5,
                 corner_angle: float = 45.0, q: int = 3) -> Mesh:
    """O-grid around a closed section read from a point-list file.

    Parameters
    ----------
    path : str
        Point-list file (format in the module docstring).  Required.
    far_radius : float
        Far-field circle radius, in the file's length unit, centred at the
        section's centroid; at least twice the section's reach from it.
    n_radial, n_around : int
        Element layers; elements around the section.
    first_height, growth : float
        First-layer thickness or layer growth ratio, at most one (0 = not
        given).  Neither: uniform in ``log r`` from half the section size to
        ``far_radius``.
    clustering : float in [0, 1]
        Clustering of the wall elements: vertices equidistribute
        ``w = (1 - c) + c [sqrt(|kappa| L / 2 pi) + 4 exp(-50 d_c / L)]`` in arc
        length (``L`` the perimeter, ``d_c`` the arc distance to the nearest
        sharp corner, the last term only if there are corners); ``w = 1`` on a
        circle whatever ``c``; 0 = uniform arc length.
    corner_angle : float
        Turning angle (degrees) above which a point is a sharp corner: the
        outline is split there into separate splines, the corner is an element
        vertex and the grid line leaving it follows the bisector.
    q : int
        Geometry degree 1..4.

    Returns
    -------
    Mesh
        Tags ``wall`` (the section) and ``far`` (far-field circle).

    Notes
    -----
    The outline is the periodic cubic spline through the points (split at
    sharp corners, see :class:`SectionSpline`), parameterised by cumulative
    chord length, then re-parameterised by arc length; every wall geometry
    node lies on the spline.  The spline interpolation error is
    ``O(h^4)`` (for a circle of radius ``R`` sampled every ``h``, about
    ``(5/384) h^4 / R^3``, de Boor 1978, from memory), so the outline is the
    true section to that accuracy.  Interior nodes: :func:`meshing.ogrid.ogrid_mesh`,
    i.e. extrusion along the spline normal (orthogonal first layers) blended
    into straight lines to the far-field circle beyond one section size.
    The first wall vertex is the first point of the file (after re-orientation),
    or the first sharp corner if there is one.
    """
    P = read_section_points(path)
    return section_points_mesh(P, far_radius=far_radius, n_radial=n_radial, n_around=n_around,
                               first_height=first_height, growth=growth, clustering=clustering,
                               corner_angle=corner_angle, q=q, label=path)
