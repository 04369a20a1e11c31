"""Accuracy per cost: the cost each degree needs to reach a given error.

Given, per polynomial degree, measured pairs (cost, error) — cost being the
number of degrees of freedom or the wall time — the cost at a target error
is read off the piecewise-linear curve through the points in log-log
coordinates (never extrapolated beyond the measured range).  The ratio
``cost(p = 1) / cost(best higher degree)`` at equal error is what the claim
"high order reaches the same accuracy with several times fewer DoF" is about;
here it is measured.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["cost_at_error", "default_targets", "equal_error_table", "curves_from_levels"]


def cost_at_error(cost, error, target: float) -> float:
    """Cost at which the measured curve first reaches ``target`` (log-log interpolation).

    Parameters
    ----------
    cost : (k,) array
        Costs (DoF or seconds), any order; sorted internally.
    error : (k,) array
        Errors at those costs (> 0).
    target : float
        Error to reach (> 0).

    Returns
    -------
    float
        ``nan`` if the curve never crosses ``target`` inside the measured range.

    Notes
    -----
    On the first segment ``[c_i, c_{i+1}]`` (in increasing cost) whose errors
    bracket the target, ``log c = log c_i + (log e* - log e_i) (log c_{i+1} - log c_i)
    / (log e_{i+1} - log e_i)``: the error is taken as a power of the cost
    between two measurements.
    """
    c = np.asarray(cost, dtype=float)
    e = np.asarray(error, dtype=float)
    if c.shape != e.shape or c.ndim != 1:
        raise ValueError(f"cost_at_error: cost and error must be 1D arrays of one length, got {c.shape}, {e.shape}")
    if not (target > 0):
        raise ValueError(f"cost_at_error: the target error must be positive, got {target!r}")
    ok = np.isfinite(c) & np.isfinite(e) & (c > 0) & (e > 0)
    c, e = c[ok], e[ok]
    order = np.argsort(c, kind="stable")
    c, e = c[order], e[order]
    lt = math.log(target)
    for i in range(len(c) - 1):
        a, b = math.log(e[i]), math.log(e[i + 1])
        if (a - lt) * (b - lt) <= 0 and a != b:
            s = (lt - a) / (b - a)
            return float(math.exp(math.log(c[i]) + s * (math.log(c[i + 1]) - math.log(c[i]))))
        if a == lt:
            return float(c[i])
    if len(c) and e[-1] == target:
        return float(c[-1])
    return float("nan")


def default_targets(curves: dict, baseline: int = 1) -> list[float]:
    """Target errors where the baseline curve and at least one other curve overlap.

    Decades ``1, 2, 5 x 10^k`` strictly inside the overlap of the baseline
    degree's error range with some other degree's; if none fits, the
    geometric middle of the widest overlap.
    """
    if baseline not in curves:
        return []
    b = np.asarray(curves[baseline][1], dtype=float)
    b = b[np.isfinite(b) & (b > 0)]
    if b.size < 2:
        return []
    best, out = None, set()
    for deg, (_, err) in curves.items():
        if deg == baseline:
            continue
        e = np.asarray(err, dtype=float)
        e = e[np.isfinite(e) & (e > 0)]
        if e.size < 2:
            continue
        lo, hi = max(b.min(), e.min()), min(b.max(), e.max())
        if lo >= hi:
            continue
        if best is None or hi / lo > best[1] / best[0]:
            best = (lo, hi)
        for k in range(int(math.floor(math.log10(lo))) - 1, int(math.ceil(math.log10(hi))) + 1):
            for m in (1.0, 2.0, 5.0):
                t = m * 10.0 ** k
                if lo < t < hi:
                    out.add(float(f"{t:.12g}"))
    if not out and best is not None:
        out.add(math.sqrt(best[0] * best[1]))
    return sorted(out, reverse=True)


def equal_error_table(curves: dict, targets=None, baseline: int = 1) -> list[dict]:
    """Cost of each degree at each target error, and the baseline's cost ratio to the best other degree.

    Parameters
    ----------
    curves : dict
        degree -> (cost array, error array).
    targets : sequence of float, optional
        Errors to compare at (default :func:`default_targets`).
    baseline : int
        The degree the others are compared with (1).

    Returns
    -------
    list of dict
        One per target: ``target``, ``costs`` {degree: cost or nan}, ``baseline_cost``,
        ``best_degree`` (the other degree of least cost, None if none reaches the
        target), ``best_cost``, ``ratio`` = baseline cost / best cost (nan when
        either is outside the measured range).
    """
    if targets is None:
        targets = default_targets(curves, baseline)
    rows = []
    for t in targets:
        costs = {d: cost_at_error(c, e, t) for d, (c, e) in sorted(curves.items())}
        others = {d: v for d, v in costs.items() if d != baseline and math.isfinite(v)}
        best = min(others, key=others.get) if others else None
        base = costs.get(baseline, float("nan"))
        ratio = base / others[best] if best is not None and math.isfinite(base) else float("nan")
        rows.append({"target": float(t), "costs": costs, "baseline_cost": base, "best_degree": best,
                     "best_cost": others[best] if best is not None else float("nan"), "ratio": ratio})
    return rows


def curves_from_levels(levels, output: str, cost: str = "dof", exact: float = 0.0) -> dict:
    """degree -> (cost array, |value - exact| array) from finished study levels.

    ``levels`` are dicts (or objects) with ``degree``, ``status``, ``outputs``
    and the cost attribute (``dof``, ``wall`` or ``cpu``).
    """
    out: dict = {}
    for lv in levels:
        g = lv if isinstance(lv, dict) else vars(lv)
        if g["status"] != "ok" or output not in g["outputs"]:
            continue
        v = abs(float(g["outputs"][output]) - exact)
        out.setdefault(int(g["degree"]), ([], []))
        out[int(g["degree"])][0].append(float(g[cost]))
        out[int(g["degree"])][1].append(v)
    return {d: (np.array(c), np.array(e)) for d, (c, e) in sorted(out.items())}
