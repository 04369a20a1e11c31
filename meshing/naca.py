"""NACA 4-digit sections and an O-grid around them.

Section geometry after Abbott & von Doenhoff, *Theory of Wing Sections*
(1959), section 6.4: thickness

    y_t = 5 t (0.2969 sqrt(x) - 0.1260 x - 0.3516 x^2 + 0.2843 x^3 - a_4 x^4),

with ``a_4 = 0.1015`` (the original open trailing edge) or ``a_4 = 0.1036``
(closed trailing edge), laid off normal to the mean line

    y_c = m / p^2 (2 p x - x^2),                   0 <= x < p,
    y_c = m / (1 - p)^2 ((1 - 2 p) + 2 p x - x^2),  p <= x <= 1,

so ``x_u = x - y_t sin(theta)``, ``y_u = y_c + y_t cos(theta)``, ``x_l = x + y_t sin(theta)``,
``y_l = y_c - y_t cos(theta)``, ``theta = atan(dy_c/dx)``.  Digits ``MPTT``:
``m = M/100``, ``p = P/10``, ``t = TT/100``; all lengths in chords.

Each surface is parameterised by ``u = sqrt(x)``, which is regular at both
ends: at the leading edge ``dx/du = 0`` but ``dy_t/du = 5 t 0.2969 != 0``, so
the round nose is resolved without the square-root singularity of ``x``.
"""

import re

import numpy as np

from ._checks import check_degree, check_int, check_nonneg, check_positive, check_range
from .curves import ArcLength, outward_normal
from .grading import resolve_ratio
from .mesh import Mesh
from .ogrid import _unit, ogrid_mesh
from .quality import check_mesh

__all__ = ["naca4_parameters", "naca4_thickness", "naca4_camber", "naca4_surface", "naca_mesh"]

#: thickness coefficients a_0..a_4 (Abbott & von Doenhoff 1959, eq. 6.2)
THICKNESS_OPEN = (0.2969, -0.1260, -0.3516, 0.2843, -0.1015)
THICKNESS_CLOSED = (0.2969, -0.1260, -0.3516, 0.2843, -0.1036)


def naca4_parameters(digits: str) -> tuple[float, float, float]:
    """``(m, p, t)`` from a 4-digit designation such as ``'2412'``.

    Raises
    ------
    ValueError
        Not four digits, zero thickness, or camber without a position
        (and vice versa); the message names the parameter ``digits``.
    """
    s = str(digits).strip()
    if s.upper().startswith("NACA"):
        s = s[4:].strip()
    if not re.fullmatch(r"\d{4}", s):
        raise ValueError(f"parameter 'digits' must be a NACA 4-digit designation like '0012', got {digits!r}")
    m, p, t = int(s[0]) / 100.0, int(s[1]) / 10.0, int(s[2:]) / 100.0
    if t == 0:
        raise ValueError(f"parameter 'digits' = {digits!r}: thickness (last two digits) must be > 0")
    if (m == 0) != (p == 0):
        raise ValueError(f"parameter 'digits' = {digits!r}: camber {m:g} needs a camber position "
                         f"(second digit) and vice versa")
    return m, p, t


def naca4_thickness(x, t: float, closed: bool = True):
    """Half thickness ``y_t(x)`` in chords; ``x`` may be complex (complex-step derivatives)."""
    a = THICKNESS_CLOSED if closed else THICKNESS_OPEN
    return _thickness_u(np.sqrt(x), t, a)


def _thickness_u(u, t, a):
    x = u * u
    return 5.0 * t * (a[0] * u + x * (a[1] + x * (a[2] + x * (a[3] + x * a[4]))))


def naca4_camber(x, m: float, p: float):
    """Mean line ``y_c(x)`` and slope ``dy_c/dx``; the branch is chosen on ``Re(x)``."""
    x = np.asarray(x)
    if m == 0.0:
        z = np.zeros_like(x)
        return z, z
    fore = np.real(x) < p
    yc = np.where(fore, m / p**2 * (2 * p * x - x * x), m / (1 - p) ** 2 * ((1 - 2 * p) + 2 * p * x - x * x))
    dyc = np.where(fore, 2 * m / p**2 * (p - x), 2 * m / (1 - p) ** 2 * (p - x))
    return yc, dyc


def naca4_surface(u, m: float, p: float, t: float, side: int, closed: bool = True):
    """Point on the upper (``side=+1``) or lower (``side=-1``) surface at ``u = sqrt(x)``.

    Parameters
    ----------
    u : (k,) array in [0, 1], real or complex
    Returns
    -------
    (k, 2) array (complex if ``u`` is).
    """
    a = THICKNESS_CLOSED if closed else THICKNESS_OPEN
    u = np.asarray(u)
    x = u * u
    yt = _thickness_u(u, t, a)
    yc, dyc = naca4_camber(x, m, p)
    th = np.arctan(dyc)
    return np.stack([x - side * yt * np.sin(th), yc + side * yt * np.cos(th)], axis=-1)


def _surface_derivative(u, m, p, t, side, closed):
    """``dX/du`` by the complex step (Squire & Trapp 1998): exact to rounding."""
    h = 1e-30
    return np.imag(naca4_surface(np.asarray(u, dtype=float) + 1j * h, m, p, t, side, closed)) / h


def naca_mesh(*, digits: str = "0012", chord: float = 1.0, far_chords: float = 50.0,
              n_around: int = 96, n_radial: int = 24, first_height: float = 0.0, growth: float = 0.0,
              clustering: float = 0.85, q: int = 3) -> Mesh:
    """O-grid around a NACA 4-digit section with a closed trailing edge.

    Parameters
    ----------
    digits : str
        Designation ``MPTT`` (e.g. ``'0012'``, ``'2412'``).
    chord : float
        Chord length; the leading edge is at the origin, the trailing edge at
        ``(chord, 0)``.  The section is at zero incidence: set the angle of
        attack through the inflow direction.
    far_chords : float
        Far-field radius in chords, circle centred at mid-chord.
    n_around : int
        Elements around the section, even (half on each surface, so the
        leading and trailing edges are element vertices).
    n_radial : int
        Element layers from wall to far field.
    first_height, growth : float
        First-layer thickness (same length unit as ``chord``) or layer growth
        ratio; at most one (0 = not given).  Neither: uniform in ``log r`` with
        ratio ``(2 far_chords)^(1/n_radial)``.
    clustering : float in [0, 1)
        Leading/trailing-edge clustering.  Along each surface the arc length
        from the trailing edge is ``S f(lambda)``, ``lambda`` the element index
        fraction, ``f = (1 - c) lambda + c (1 - cos(pi lambda))/2``: cosine-like,
        the end elements are ``(1 - c)/(1 - c + c pi/2)`` times the mid-surface
        ones.  0 = uniform in arc length.
    q : int
        Geometry degree 1..4.

    Returns
    -------
    Mesh
        Tags ``wall`` (the section) and ``far`` (far-field circle).

    Notes
    -----
    Every wall geometry node is the analytic section point at its ``u``; the
    ``u`` of each node solves ``s(u) = target`` (arc length by composite Gauss
    quadrature, Newton's method), the target arc lengths being ``f`` at the
    fractional index of the node.  Interior nodes follow
    :func:`meshing.ogrid.ogrid_mesh` with the wall normal as extrusion
    direction, except near the trailing-edge corner where the normal is
    blended into the corner bisector (weight ``exp(-(s/delta)^2)``, ``s`` the
    arc distance from the corner, ``delta`` two trailing-edge elements or the
    first-layer thickness if larger), so the grid line leaving the corner is
    shared by both surfaces and the corner fan does not fold.  Far-field node angles are uniform in the index
    (``2 pi k / n_around``), the trailing edge facing angle 0.
    """
    m, p, t = naca4_parameters(digits)
    chord = check_positive("chord", chord)
    far_chords = check_positive("far_chords", far_chords)
    if far_chords < 2.0:
        raise ValueError(f"parameter 'far_chords' must be >= 2 (far field around the section), got {far_chords:g}")
    n_around = check_int("n_around", n_around, 8)
    if n_around % 2:
        raise ValueError(f"parameter 'n_around' must be even (half the elements on each surface), got {n_around}")
    n_radial = check_int("n_radial", n_radial, 1)
    first_height = check_nonneg("first_height", first_height)
    growth = check_nonneg("growth", growth)
    clustering = check_range("clustering", clustering, 0.0, 0.99)
    q = check_degree(q)
    closed = True

    half = n_around // 2
    lam = np.arange(half * q + 1) / (half * q)  # TE -> LE on the upper surface, LE -> TE on the lower
    frac = (1.0 - clustering) * lam + clustering * 0.5 * (1.0 - np.cos(np.pi * lam))
    sides = {}
    for side in (1, -1):
        arc = ArcLength(lambda u, s=side: _surface_derivative(u, m, p, t, s, closed), 0.0, 1.0)
        sides[side] = arc
    up, lo = sides[1], sides[-1]
    # upper: arc length from the LE is L (1 - f) going TE -> LE; lower: L f going LE -> TE
    u_up = up.inverse(up.length * (1.0 - frac))
    u_lo = lo.inverse(lo.length * frac)
    u_up[0], u_up[-1], u_lo[0], u_lo[-1] = 1.0, 0.0, 0.0, 1.0
    W = np.concatenate([np.real(naca4_surface(u_up[:-1], m, p, t, 1, closed)),
                        np.real(naca4_surface(u_lo[:-1], m, p, t, -1, closed))])
    # counter-clockwise tangent: upper runs in -u, lower in +u
    T = np.concatenate([-_surface_derivative(u_up[:-1], m, p, t, 1, closed),
                        _surface_derivative(u_lo[:-1], m, p, t, -1, closed)])
    N = outward_normal(T)
    n_te = outward_normal(-_surface_derivative(np.ones(1), m, p, t, 1, closed))[0] + \
        outward_normal(_surface_derivative(np.ones(1), m, p, t, -1, closed))[0]
    n_te /= np.linalg.norm(n_te)
    s_te = np.concatenate([up.length - up(u_up[:-1]), lo.length - lo(u_lo[:-1])])  # distance from the TE
    th = 2.0 * np.pi * np.arange(n_around * q) / (n_around * q)
    F = np.array([0.5, 0.0])[None, :] + far_chords * np.stack([np.cos(th), np.sin(th)], axis=1)
    d0 = float(np.mean(np.linalg.norm(F - W, axis=1)))  # the layer reference length of ogrid_mesh
    ratio = resolve_ratio(n_radial, d0 * chord, first_height, growth, (2.0 * far_chords) ** (1.0 / n_radial))
    h1 = d0 * (ratio - 1.0) / (ratio**n_radial - 1.0) if ratio != 1.0 else d0 / n_radial
    # the corner fan spreads over two trailing-edge elements, or over the first-layer thickness if
    # that is larger (a thick first layer folds a fan squeezed into one element)
    delta = max(2.0 * up.length * frac[q], h1)
    wgt = np.exp(-(s_te / delta) ** 2)[:, None]
    Mdir = _unit((1.0 - wgt) * N + wgt * n_te[None, :])
    mesh, _ = ogrid_mesh(W * chord, Mdir, F * chord, n_radial, ratio, q, blend_length=chord,
                         name=f"naca{round(m * 100):d}{round(p * 10):d}{round(t * 100):02d}")
    check_mesh(mesh)
    return mesh
