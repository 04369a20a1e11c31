"""Registry of interface (Riemann) fluxes.

Adding a flux: write its device function in :mod:`solver.kernels.riemann`,
give it a code there, branch on it in ``interface_flux`` and register it here.
"""
from __future__ import annotations

from .kernels import riemann as _r
from .registry import Registry

__all__ = ["INTERFACE_FLUXES"]

INTERFACE_FLUXES = Registry("interface flux")
INTERFACE_FLUXES.register(
    "rusanov", code=_r.RUSANOV,
    doc="local Lax-Friedrichs: central flux plus the largest wave speed times the jump (Rusanov 1961)")
INTERFACE_FLUXES.register(
    "roe", code=_r.ROE, params=("entropy_fix",), defaults={"entropy_fix": 0.1},
    doc="Roe (1981) flux-difference splitting with Harten's (1983) entropy fix on the acoustic waves")
