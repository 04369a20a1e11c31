"""Registry of boundary conditions.

Each entry maps a name used in case files to the integer code of
:mod:`solver.kernels.bcstate` and to a function building the kernel's
parameter row from the user's parameters and the free-stream state.  Adding a
condition: one branch in ``ghost_state`` and one ``register`` call here.
"""
from __future__ import annotations

import numpy as np

from .kernels import bcstate as _k
from .registry import Registry

__all__ = ["BOUNDARY_CONDITIONS", "boundary_parameters", "NPARAM"]

NPARAM = _k.NPARAM

BOUNDARY_CONDITIONS = Registry("boundary condition")


def _fixed_state_row(given: dict, ref: dict) -> list[float]:
    rho = float(given.get("density", ref["rho"]))
    u = float(given.get("u", ref["u"]))
    v = float(given.get("v", ref["v"]))
    p = float(given.get("pressure", ref["p"]))
    if rho <= 0 or p <= 0:
        raise ValueError(f"fixed-state needs positive density and pressure, got {rho}, {p}")
    return [rho, u, v, p]


BOUNDARY_CONDITIONS.register(
    "fixed-state", code=_k.FIXED_STATE, params=("density", "u", "v", "pressure"),
    defaults={"density": None, "u": None, "v": None, "pressure": None}, obj=_fixed_state_row,
    doc="exterior state imposed (the free stream unless given) and passed through the interface flux")
BOUNDARY_CONDITIONS.register(
    "slip-wall", code=_k.SLIP_WALL, obj=lambda given, ref: [],
    doc="inviscid wall: mirrored normal velocity, so only pressure crosses the wall")


def boundary_parameters(name: str, given: dict | None, ref: dict, where: str = "") -> tuple[int, np.ndarray]:
    """Code and parameter row of condition ``name``.

    Parameters
    ----------
    name : str
        Registry name.
    given : dict
        User parameters (from the case file); unknown ones are an error.
    ref : dict
        Free-stream state with keys rho, u, v, p, gamma.
    where : str
        Location for error messages (file, section, tag).

    Returns
    -------
    code : int
    row : (NPARAM,) float array
    """
    entry = BOUNDARY_CONDITIONS[name]
    given = dict(given or {})
    given.pop("type", None)
    loc = f"{where}: " if where else ""
    for k in given:
        if k not in entry.params:
            from .registry import closest
            raise ValueError(f"{loc}boundary condition '{name}' has no parameter '{k}'{closest(k, entry.params)}; "
                             f"its parameters: {', '.join(entry.params) or 'none'}")
    try:
        vals = entry.obj(given, ref)
    except ValueError as exc:
        raise ValueError(f"{loc}{exc}") from None
    row = np.zeros(NPARAM)
    row[: len(vals)] = vals
    return entry.code, row
