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


def _wall_motion(given: dict) -> tuple[float, float, float]:
    return float(given.get("speed", 0.0)), float(given.get("u", 0.0)), float(given.get("v", 0.0))


def _noslip_row(given: dict, ref: dict) -> list[float]:
    s, u, v = _wall_motion(given)
    return [s, 0.0, 0.0, u, v]


def _isothermal_row(given: dict, ref: dict) -> list[float]:
    T = float(given.get("temperature", 1.0))
    if T <= 0:
        raise ValueError(f"isothermal-wall temperature must be positive (units of the free-stream temperature), "
                         f"got {T}")
    s, u, v = _wall_motion(given)
    return [s, T, ref["gamma"] * ref["mach"] ** 2, u, v]


_MOTION_DOC = ("the wall slides with the tangential part of (u, v) plus `speed` along t = (-n_y, n_x), n the "
               "outward normal of the flow domain (counter-clockwise around the domain, so clockwise around a body)")
BOUNDARY_CONDITIONS.register(
    "noslip-wall", code=_k.NOSLIP_WALL, params=("u", "v", "speed"), defaults={"u": 0.0, "v": 0.0, "speed": 0.0},
    obj=_noslip_row, doc="adiabatic no-slip wall; " + _MOTION_DOC)
BOUNDARY_CONDITIONS.register(
    "isothermal-wall", code=_k.ISOTHERMAL_WALL, params=("temperature", "u", "v", "speed"),
    defaults={"temperature": 1.0, "u": 0.0, "v": 0.0, "speed": 0.0}, obj=_isothermal_row,
    doc="no-slip wall at `temperature` (units of the free-stream temperature); " + _MOTION_DOC)


# ---------------------------------------------------------------------------
# open boundaries (formulas in solver/kernels/bcstate.py).  Pressures are in
# solver units (rho_inf U_inf^2, so p_inf = 1/(gamma M^2)), temperatures in
# units of the free-stream temperature, angles in degrees from the x axis.
# ---------------------------------------------------------------------------
def _free_stream_totals(ref: dict) -> tuple[float, float, float]:
    """Total pressure, total temperature (units of T_inf) and flow angle (deg) of the free stream.

    ``T0/T = 1 + (gamma-1)/2 M^2``, ``p0/p = (T0/T)^(gamma/(gamma-1))`` (Anderson, Modern
    Compressible Flow); ``M`` from the state itself, so a ``ref`` without ``mach`` works too.
    """
    g = ref["gamma"]
    m2 = (ref["u"] ** 2 + ref["v"] ** 2) * ref["rho"] / (g * ref["p"])
    t0 = 1.0 + 0.5 * (g - 1.0) * m2
    return ref["p"] * t0 ** (g / (g - 1.0)), t0, float(np.degrees(np.arctan2(ref["v"], ref["u"])))


def _state_row(kind: str):
    def row(given: dict, ref: dict) -> list[float]:
        vals = [float(given.get(k, ref[r])) for k, r in (("density", "rho"), ("u", "u"), ("v", "v"),
                                                         ("pressure", "p"))]
        if vals[0] <= 0 or vals[3] <= 0:
            raise ValueError(f"{kind} needs positive density and pressure, got {vals[0]}, {vals[3]}")
        return vals
    return row


def _total_inflow_row(given: dict, ref: dict) -> list[float]:
    p0_inf, t0_inf, ang_inf = _free_stream_totals(ref)
    p0 = float(given.get("total_pressure", p0_inf))
    t0 = float(given.get("total_temperature", t0_inf))
    ang = float(given.get("angle", ang_inf))
    if p0 <= 0 or t0 <= 0:
        raise ValueError(f"total-inflow needs positive total_pressure and total_temperature, got {p0}, {t0}")
    rt_inf = ref["p"] / ref["rho"]  # R T_inf in solver units
    a = np.radians(ang)
    return [p0, t0 * rt_inf, float(np.cos(a)), float(np.sin(a))]


def _static_outflow_row(given: dict, ref: dict) -> list[float]:
    p = float(given.get("pressure", ref["p"]))
    if p <= 0:
        raise ValueError(f"static-outflow needs a positive pressure, got {p}")
    return [p]


_STATE_PARAMS = ("density", "u", "v", "pressure")
_NONE4 = dict.fromkeys(_STATE_PARAMS)
BOUNDARY_CONDITIONS.register(
    "far-field", code=_k.FAR_FIELD, params=_STATE_PARAMS, defaults=_NONE4, obj=_state_row("far-field"),
    doc="characteristic far field from Riemann invariants: outgoing waves leave, incoming ones carry the "
        "free stream (or the given state); supersonic in/outflow take the outer/inner state")
BOUNDARY_CONDITIONS.register(
    "total-inflow", code=_k.TOTAL_INFLOW, params=("total_pressure", "total_temperature", "angle"),
    defaults={"total_pressure": None, "total_temperature": None, "angle": None}, obj=_total_inflow_row,
    doc="subsonic inflow at given total pressure (solver units), total temperature (units of T_inf) and flow "
        "angle (degrees); the outgoing Riemann invariant comes from inside")
BOUNDARY_CONDITIONS.register(
    "static-outflow", code=_k.STATIC_OUTFLOW, params=("pressure",), defaults={"pressure": None},
    obj=_static_outflow_row,
    doc="subsonic outflow at a given static pressure (solver units); entropy, outgoing Riemann invariant and "
        "tangential velocity from inside; the interior state where the outflow is supersonic")
BOUNDARY_CONDITIONS.register(
    "supersonic-inflow", code=_k.SUPERSONIC_INFLOW, params=_STATE_PARAMS, defaults=_NONE4,
    obj=_state_row("supersonic-inflow"),
    doc="supersonic inflow: the whole state is given (the free stream unless set)")
BOUNDARY_CONDITIONS.register(
    "supersonic-outflow", code=_k.SUPERSONIC_OUTFLOW, obj=lambda given, ref: [],
    doc="supersonic outflow: the interior state, nothing imposed")


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
