"""Verification checks run by ``quadfr verify NAME``.

:data:`CHECKS` maps a check name to a callable ``check(quick: bool) -> dict``
that prints its own table and returns a dict with at least ``"passed": bool``
(plus whatever it measured, written by ``--json``).  Adding a check is one
entry here.
"""
from __future__ import annotations

__all__ = ["CHECKS"]

from .couette import verify_couette
from .cylinder import verify_cylinder
from .inviscid_cylinder import verify_inviscid_cylinder
from .mms import verify_mms
from .vortex import verify_vortex

#: name -> callable(quick: bool) -> dict with key "passed"
CHECKS: dict = {
    "vortex": lambda quick: verify_vortex(quick),
    "couette": lambda quick: verify_couette(quick),
    "mms": lambda quick: verify_mms(quick),
    "inviscid-cylinder": lambda quick: verify_inviscid_cylinder(quick=quick),
    "cylinder": lambda quick: verify_cylinder(quick=quick),
    "cylinder-dual": lambda quick: __import__("tools.verify.cylinder_dual",
                                              fromlist=["_"]).verify_cylinder_dual(quick=quick),
    "blasius": lambda quick: __import__("tools.verify.blasius", fromlist=["_"]).verify_blasius(quick=quick),
}
