"""Blow-up guard: detect non-finite or non-physical states and describe where they appear.

After every step the driver scans the solution (:func:`solver.kernels.monitor.scan_state`,
one pass over the solution points).  The first point, in storage order, whose
conserved variables are NaN or infinite, whose density is not positive, or
whose pressure ``(gamma - 1)(rho E - |rho u|^2 / (2 rho))`` is not positive
stops the run: the driver writes the last good state as a snapshot and the
diagnostic below to ``failure.json``, and raises :class:`SolutionBlowUp`.
"""
from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np

from .kernels import monitor as _km

__all__ = ["SolutionBlowUp", "StateGuard", "write_failure"]

_VARIABLES = ("density", "x-momentum", "y-momentum", "total energy")


class SolutionBlowUp(FloatingPointError):
    """The solution became non-finite or non-physical; ``diagnostic`` says where."""

    def __init__(self, message: str, diagnostic: dict):
        super().__init__(message)
        self.diagnostic = diagnostic


class StateGuard:
    """Scan states after each step.

    Parameters
    ----------
    op : FROperator
        Supplies gamma and the solution-point coordinates.
    """

    def __init__(self, op):
        self.gamma = op.gamma
        self.xy = op.metrics.xy
        self.bounds = np.empty(4)
        self.where = np.zeros(4, dtype=np.int64)

    def check(self, U: np.ndarray) -> dict | None:
        """None when every point is good, else the diagnostic of the first bad point.

        Returns
        -------
        dict or None
            ``problem`` (text), ``element``, ``point`` ([i, j]), ``location``
            ([x, y]), ``variable`` (name) and ``value``.
        """
        code = _km.scan_state(U, self.gamma, self.bounds, self.where)
        if code == _km.OK:
            return None
        e, i, j, v = (int(x) for x in self.where)
        r, ru, rv, rE = (float(x) for x in U[e, i, j])
        if code == _km.NOT_FINITE:
            problem, var, value = "not finite", _VARIABLES[v], float(U[e, i, j, v])
        elif code == _km.NONPOSITIVE_DENSITY:
            problem, var, value = "non-positive density", "density", r
        else:
            problem, var = "non-positive pressure", "pressure"
            value = (self.gamma - 1.0) * (rE - 0.5 * (ru * ru + rv * rv) / r)
        x, y = (float(c) for c in self.xy[e, i, j])
        return {"problem": problem, "element": e, "point": [i, j], "location": [x, y], "variable": var,
                "value": value, "state": [r, ru, rv, rE]}


def write_failure(path, diagnostic: dict) -> Path:
    """Write a diagnostic as JSON atomically (temp name, then rename)."""
    path = Path(path)
    tmp = path.with_name(path.name + ".tmp")

    text = json.dumps(_plain(diagnostic), indent=2, allow_nan=False)
    tmp.write_text(text + "\n", encoding="utf-8")
    os.replace(tmp, path)
    return path


def _plain(o):
    """JSON-safe copy: numpy scalars to Python, non-finite floats to the strings 'nan', 'inf', '-inf'."""
    if isinstance(o, dict):
        return {str(k): _plain(v) for k, v in o.items()}
    if isinstance(o, (list, tuple, np.ndarray)):
        return [_plain(v) for v in o]
    if isinstance(o, np.generic):
        o = o.item()
    if isinstance(o, float) and not np.isfinite(o):
        return "nan" if np.isnan(o) else ("inf" if o > 0 else "-inf")
    if isinstance(o, Path):
        return str(o)
    return o
