"""Richardson extrapolation, apparent order and the grid convergence index (GCI).

Three solutions ``phi_1, phi_2, phi_3`` on levels of representative spacing
``h_1 < h_2 < h_3`` (level 1 the finest) give an apparent order of
convergence, an extrapolated value and an error band, following the
procedure of Celik, Ghia, Roache, Freitas, Coleman & Raad (2008), "Procedure
for estimation and reporting of uncertainty due to discretization in CFD
applications", ASME J. Fluids Eng. 130, 078001, which rests on Richardson's
extrapolation and Roache's grid convergence index (Roache 1994, ASME J.
Fluids Eng. 116, 405; Roache 1998, *Verification and Validation in
Computational Science and Engineering*).  The refinement ratios need not be
equal: the apparent order comes from a fixed-point iteration.

For a high-order method the "spacing" of a level is ``h = N^(-1/d)`` with
``N`` the number of degrees of freedom per variable (or per field) and ``d``
the dimension (Celik et al. Eq. 1 with the cell count replaced by the DoF
count): mesh refinement at fixed degree then gives the usual ``h`` ratio,
and degree refinement at a fixed mesh is measured in the same unit.  With
degree refinement the error falls faster than any power, so the apparent
order is an effective exponent over that DoF range, not a constant.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

__all__ = ["RichardsonResult", "apparent_order", "richardson", "two_level_gci", "representative_spacing",
           "convergence_kind", "SAFETY_THREE_LEVEL", "SAFETY_TWO_LEVEL"]

#: GCI safety factor with three (or more) levels (Roache 1998; Celik et al. 2008)
SAFETY_THREE_LEVEL = 1.25
#: GCI safety factor for a two-level estimate with an assumed order (Roache 1994, 1998)
SAFETY_TWO_LEVEL = 3.0


def representative_spacing(n: float, dim: int = 2, size: float = 1.0) -> float:
    """Representative spacing ``h = (size / N)^(1/dim)`` of a level with ``N`` cells or DoF.

    Parameters
    ----------
    n : float
        Number of cells (Celik et al. 2008, Eq. 1) or of degrees of freedom per field.
    dim : int
        Space dimension.
    size : float
        Area (2D) or volume (3D) of the domain; only ratios matter.
    """
    if not (n > 0):
        raise ValueError(f"representative_spacing: the count must be positive, got {n!r}")
    return (size / float(n)) ** (1.0 / dim)


def convergence_kind(phi1: float, phi2: float, phi3: float) -> str:
    """Classify three solutions (finest first) by ``R = eps21 / eps32``.

    ``monotonic`` (0 < R < 1), ``oscillatory`` (-1 < R < 0), ``divergent``
    (|R| > 1), ``converged`` (the two finest agree exactly, R = 0) or
    ``undefined`` (eps32 = 0).  The classification is that of Stern, Wilson,
    Coleman & Paterson (2001), ASME J. Fluids Eng. 123, 793 (from memory).
    """
    e21, e32 = phi2 - phi1, phi3 - phi2
    if e32 == 0.0:
        return "converged" if e21 == 0.0 else "undefined"
    R = e21 / e32
    if R == 0.0:
        return "converged"
    if 0.0 < R < 1.0:
        return "monotonic"
    if -1.0 < R < 0.0:
        return "oscillatory"
    return "divergent"


def apparent_order(h, phi, tol: float = 1e-13, max_iter: int = 500) -> tuple[float, int, int, str]:
    """Apparent order of three solutions by the fixed-point iteration of Celik et al. (2008).

    Parameters
    ----------
    h : sequence of 3 floats
        Representative spacings, finest first (``h1 < h2 < h3``).
    phi : sequence of 3 floats
        The solutions on those levels.
    tol : float
        Stop when successive iterates differ by less than ``tol * max(1, p)``.
    max_iter : int

    Returns
    -------
    order : float
        ``nan`` when an error difference is zero or no root exists.
    s : int
        ``sign(eps32 / eps21)``.
    iterations : int
        Fixed-point iterations taken.
    method : str
        ``fixed-point``, ``bracketed`` (the iteration did not settle, see Notes),
        ``constant`` (equal differences on a constant ratio: order 0) or ``undefined``.

    Notes
    -----
    With ``r21 = h2/h1``, ``r32 = h3/h2``, ``eps32 = phi3 - phi2``,
    ``eps21 = phi2 - phi1`` and ``s = sign(eps32/eps21)`` (Celik et al. 2008,
    Eqs. 3-5)::

        p = |ln|eps32/eps21| + q(p)| / ln r21,
        q(p) = ln((r21^p - s) / (r32^p - s)),

    iterated from ``q = 0`` (exact for a constant ratio, where ``q = 0`` for
    every ``p``).  The map contracts only when the two ratios are not too
    different: near ``p -> 0`` its slope is about ``ln(r32/r21) / (2 ln r21)``.
    When it does not settle, the same equation written as
    ``G(p) = ln|eps32/eps21| - p ln r21 - ln((r32^p - s)/(r21^p - s)) = 0`` (the
    three-term model ``phi = phi_ext + C h^p`` without the outer absolute
    value, strictly decreasing in ``p`` for ``s = 1``) is solved by Brent's
    method on ``[1e-8, 100]``.
    """
    h1, h2, h3 = (float(x) for x in h)
    p1, p2, p3 = (float(x) for x in phi)
    if not (0.0 < h1 < h2 < h3):
        raise ValueError(f"apparent_order: spacings must be positive and increasing (finest first), got {h!r}")
    r21, r32 = h2 / h1, h3 / h2
    e21, e32 = p2 - p1, p3 - p2
    if e21 == 0.0 or e32 == 0.0 or not all(math.isfinite(x) for x in (e21, e32)):
        return float("nan"), 0, 0, "undefined"
    s = 1 if e32 / e21 > 0 else -1
    a = math.log(abs(e32 / e21))
    lr = math.log(r21)

    def q(p: float) -> float:
        try:
            num, den = r21 ** p - s, r32 ** p - s
        except OverflowError:
            return float("nan")
        if num <= 0.0 or den <= 0.0 or not (math.isfinite(num) and math.isfinite(den)):
            return float("nan")
        return math.log(num / den)

    p = abs(a) / lr
    for it in range(1, max_iter + 1):
        if p == 0.0:  # equal differences on a constant ratio; q(0) is 0/0
            return 0.0, s, it, "constant"
        qp = q(p)
        if not math.isfinite(qp):
            break
        new = abs(a + qp) / lr
        if abs(new - p) <= tol * max(1.0, abs(p)):
            return new, s, it, "fixed-point"
        p = new

    from scipy.optimize import brentq

    def G(p: float) -> float:
        qp = q(p)
        return a - p * lr + qp if math.isfinite(qp) else -math.inf

    lo, hi = 1e-8, 100.0
    glo, ghi = G(lo), G(hi)
    if not (math.isfinite(glo) and glo > 0 and ghi < 0):
        return float("nan"), s, max_iter, "undefined"
    while not math.isfinite(ghi):  # shrink the top of the bracket below any overflow
        hi *= 0.5
        ghi = G(hi)
        if ghi > 0:
            return float("nan"), s, max_iter, "undefined"
    root = brentq(G, lo, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=500)
    return float(root), s, max_iter, "bracketed"


@dataclass(frozen=True)
class RichardsonResult:
    """Three-level discretisation-error estimate (Celik et al. 2008 notation; level 1 finest).

    Attributes
    ----------
    h, phi : tuple of 3 floats
        Spacings and solutions, finest first.
    r21, r32 : float
        Refinement ratios ``h2/h1``, ``h3/h2``.
    order : float
        Apparent order p (``nan`` if undefined).
    kind : str
        :func:`convergence_kind`.
    extrapolated : float
        ``phi_ext^21 = (r21^p phi1 - phi2) / (r21^p - 1)``.
    extrapolated32 : float
        ``phi_ext^32 = (r32^p phi2 - phi3) / (r32^p - 1)``.
    rel_change : float
        Approximate relative error ``e_a^21 = |(phi1 - phi2) / phi1|``.
    rel_extrapolated_error : float
        ``e_ext^21 = |(phi_ext^21 - phi1) / phi_ext^21|``.
    gci : float
        Fine-level grid convergence index ``GCI_fine^21 = Fs e_a^21 / (r21^p - 1)`` (relative).
    gci_abs : float
        The same band in the units of phi: ``Fs |phi1 - phi2| / (r21^p - 1)`` (usable when phi1 ~ 0).
    gci32 : float
        ``GCI^32 = Fs |(phi2 - phi3)/phi2| / (r32^p - 1)``.
    asymptotic : float
        ``GCI^32 / (r21^p GCI^21)``; near 1 in the asymptotic range (Roache 1998).
    safety : float
    iterations : int
    method : str
        How the order was found (:func:`apparent_order`), or ``given``.
    """

    h: tuple
    phi: tuple
    r21: float
    r32: float
    order: float
    kind: str
    extrapolated: float
    extrapolated32: float
    rel_change: float
    rel_extrapolated_error: float
    gci: float
    gci_abs: float
    gci32: float
    asymptotic: float
    safety: float
    iterations: int
    method: str

    def as_dict(self) -> dict:
        return asdict(self)


def _rel(num: float, den: float) -> float:
    return abs(num / den) if den != 0.0 else float("nan")


def richardson(h, phi, safety: float = SAFETY_THREE_LEVEL, order: float | None = None) -> RichardsonResult:
    """Richardson extrapolation and GCI of three levels (finest first).

    Parameters
    ----------
    h : sequence of 3 floats
        Representative spacings ``h1 < h2 < h3`` (see :func:`representative_spacing`).
    phi : sequence of 3 floats
        Solutions on those levels.
    safety : float
        GCI safety factor Fs (1.25 for three levels).
    order : float, optional
        Use this order instead of the apparent one (e.g. the formal order).

    Returns
    -------
    RichardsonResult

    Notes
    -----
    Celik et al. (2008), Eqs. 3-8::

        phi_ext^21 = (r21^p phi1 - phi2) / (r21^p - 1)
        e_a^21     = |(phi1 - phi2) / phi1|
        e_ext^21   = |(phi_ext^21 - phi1) / phi_ext^21|
        GCI_fine^21 = Fs e_a^21 / (r21^p - 1),  Fs = 1.25
    """
    if len(h) != 3 or len(phi) != 3:
        raise ValueError(f"richardson: needs three levels, got {len(h)} spacings and {len(phi)} values")
    h = tuple(float(x) for x in h)
    phi = tuple(float(x) for x in phi)
    if not all(math.isfinite(x) for x in phi):
        raise ValueError(f"richardson: the solutions must be finite, got {phi}")
    if order is None:
        p, _, its, method = apparent_order(h, phi)
    else:
        p, its, method = float(order), 0, "given"
    h1, h2, h3 = h
    p1, p2, p3 = phi
    r21, r32 = h2 / h1, h3 / h2
    nan = float("nan")
    kind = convergence_kind(p1, p2, p3)
    if math.isfinite(p) and p > 0:
        f21, f32 = r21 ** p - 1.0, r32 ** p - 1.0
        ext = (r21 ** p * p1 - p2) / f21
        ext32 = (r32 ** p * p2 - p3) / f32
        gci = safety * _rel(p1 - p2, p1) / f21
        gci_abs = safety * abs(p1 - p2) / f21
        gci32 = safety * _rel(p2 - p3, p2) / f32
        asym = gci32 / (r21 ** p * gci) if gci != 0.0 and math.isfinite(gci) else nan
    elif p1 == p2:
        ext = ext32 = p1
        gci = gci_abs = 0.0
        gci32 = safety * _rel(p2 - p3, p2) if p2 != p3 else 0.0
        asym = nan
    else:
        ext = ext32 = gci = gci_abs = gci32 = asym = nan
    return RichardsonResult(h=h, phi=phi, r21=r21, r32=r32, order=p, kind=kind, extrapolated=ext,
                            extrapolated32=ext32, rel_change=_rel(p1 - p2, p1),
                            rel_extrapolated_error=_rel(ext - p1, ext) if math.isfinite(ext) else nan,
                            gci=gci, gci_abs=gci_abs, gci32=gci32, asymptotic=asym, safety=float(safety),
                            iterations=its, method=method)


def two_level_gci(h, phi, order: float, safety: float = SAFETY_TWO_LEVEL) -> dict:
    """Two-level GCI with an assumed order (Roache 1994; Fs = 3 for two grids).

    Parameters
    ----------
    h, phi : sequences of 2 floats, finest first
    order : float
        Assumed (formal) order.

    Returns
    -------
    dict with ``extrapolated``, ``gci`` (relative), ``gci_abs``.
    """
    (h1, h2), (p1, p2) = h, phi
    r = h2 / h1
    f = r ** order - 1.0
    return {"extrapolated": (r ** order * p1 - p2) / f, "gci": safety * _rel(p1 - p2, p1) / f,
            "gci_abs": safety * abs(p1 - p2) / f}

