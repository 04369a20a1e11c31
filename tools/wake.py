"""Wake measures of a bluff body from a snapshot: the recirculation length.

The closed recirculation bubble behind a circular cylinder at low Reynolds
number ends where the streamwise velocity on the wake axis changes sign from
negative (reversed flow) to positive.  Its length ``L`` is measured from the
rear of the cylinder and quoted as ``L / D``.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["axis_velocity", "recirculation_length"]


def _sampler(snap, points):
    from solver.metrics import reduce_geometry
    from solver.probes import PointSampler

    geom = reduce_geometry(snap.mesh.geom, min(snap.mesh.q, snap.degree))  # the geometry the solver used
    return PointSampler(geom, snap.nodes, points)


def axis_velocity(snap, x, y0: float = 0.0, U=None) -> np.ndarray:
    """Streamwise velocity ``u`` at the points ``(x, y0)``, from the element polynomials.

    Parameters
    ----------
    snap : solver.output.Snapshot
    x : (m,) array
    y0 : float
    U : (ne, n, n, 4) array, optional
        A state to use instead of ``snap.U`` (e.g. a time average in conserved form).
    """
    x = np.asarray(x, dtype=float)
    pts = np.stack([x, np.full_like(x, y0)], axis=1)
    s = _sampler(snap, pts)
    W = s.conserved(snap.U if U is None else U)
    return W[:, 1] / W[:, 0]


def recirculation_length(snap, centre=(0.0, 0.0), radius: float = 0.5, reach: float = 12.0, samples: int = 241):
    """Length of the recirculation bubble behind a cylinder, in diameters.

    Parameters
    ----------
    snap : solver.output.Snapshot
        The (steady) state.
    centre, radius : cylinder centre and radius (flow along +x).
    reach : float
        How far behind the cylinder (in diameters) the axis is searched.
    samples : int
        Points of the coarse search along the axis.

    Returns
    -------
    dict
        ``L_over_D`` (nan when no sign change is found), ``x_end`` (where u = 0),
        ``u_min`` (the strongest reversed velocity) and ``x_umin``.

    Notes
    -----
    ``u`` is sampled on ``x = x_c + a + D s``, ``s`` in (0, reach]; the first
    sign change from negative to positive is then refined by Brent's method
    (scipy ``brentq``) on the polynomial value itself, so the result does not
    depend on the sampling.
    """
    from scipy.optimize import brentq

    xc, yc = float(centre[0]), float(centre[1])
    D = 2.0 * radius
    xs = xc + radius + D * np.linspace(1e-3, reach, samples)
    u = axis_velocity(snap, xs, yc)
    k = int(np.argmin(u))
    out = {"u_min": float(u[k]), "x_umin": float(xs[k]), "L_over_D": math.nan, "x_end": math.nan}
    if u[k] >= 0.0:
        return out
    up = np.nonzero((u[k:-1] < 0.0) & (u[k + 1:] >= 0.0))[0]
    if up.size == 0:
        return out
    i = k + int(up[0])

    def f(x):
        return float(axis_velocity(snap, np.array([x]), yc)[0])

    x_end = brentq(f, xs[i], xs[i + 1], xtol=1e-10)
    out["x_end"] = float(x_end)
    out["L_over_D"] = float((x_end - (xc + radius)) / D)
    return out
