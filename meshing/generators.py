"""Registry of mesh generators: name -> function with keyword-only parameters.

Every generator takes only keyword-only, annotated parameters with
defaults, so a case file's ``[mesh]`` table can be checked against
``inspect.signature`` (unknown key -> closest name, type from the
annotation).  The generator modules do not use postponed annotations, so
``parameter.annotation`` is the type itself (``float``, ``int``, ``str``,
``bool``, or ``tuple[...]`` for ``blocks.bodies``).  Range errors are ValueErrors naming the parameter.

========== ==============================================================
name       mesh (tags)
========== ==============================================================
box        rectangle, optionally periodic (left, right, bottom, top)
cylinder   O-grid around a circular cylinder (wall, far)
naca       O-grid around a NACA 4-digit section (wall, far)
section    O-grid around a section from a point-list file (wall, far)
plate      flat plate / channel (inlet, outlet, top, upstream, plate)
blocks     rectangular bodies in a box (body0.., inlet, outlet, bottom, top)
towers     two square towers in a cross-wind (body0, body1, inlet, outlet, bottom, top)
========== ==============================================================
"""

import difflib
import inspect
from typing import Callable

from ._checks import check_degree, check_int
from .blocks import blocks_mesh, towers_mesh
from .box import box_mesh
from .channel import plate_mesh
from .cylinder import cylinder_mesh
from .mesh import Mesh
from .naca import naca_mesh
from .section import section_mesh

__all__ = ["GENERATORS", "generator_names", "make_mesh", "box"]


def box(*, nx: int = 8, ny: int = 8, x0: float = 0.0, x1: float = 1.0, y0: float = 0.0, y1: float = 1.0,
        q: int = 1, warp: float = 0.0, periodic_x: bool = True, periodic_y: bool = True) -> Mesh:
    """Rectangle ``[x0, x1] x [y0, y1]`` of ``nx x ny`` quads; see :func:`meshing.box.box_mesh`.

    Tags ``left``, ``right``, ``bottom``, ``top`` on non-periodic sides.
    """
    nx = check_int("nx", nx, 1)
    ny = check_int("ny", ny, 1)
    q = check_degree(q)
    if not (x1 > x0):
        raise ValueError(f"parameter 'x1' ({x1:g}) must exceed 'x0' ({x0:g})")
    if not (y1 > y0):
        raise ValueError(f"parameter 'y1' ({y1:g}) must exceed 'y0' ({y0:g})")
    return box_mesh(nx, ny, (x0, x1, y0, y1), q=q, warp=warp, periodic=(bool(periodic_x), bool(periodic_y)))


GENERATORS: dict[str, Callable[..., Mesh]] = {
    "box": box,
    "cylinder": cylinder_mesh,
    "naca": naca_mesh,
    "section": section_mesh,
    "plate": plate_mesh,
    "blocks": blocks_mesh,
    "towers": towers_mesh,
}


def generator_names() -> list[str]:
    """Names of the registered generators, sorted."""
    return sorted(GENERATORS)


def make_mesh(kind: str, **params) -> Mesh:
    """Run generator ``kind`` with ``params``.

    Raises
    ------
    ValueError
        Unknown kind (lists the valid ones) or unknown parameter (names the
        closest valid one and lists them all).
    """
    if kind not in GENERATORS:
        close = difflib.get_close_matches(str(kind), GENERATORS, n=1, cutoff=0.5)
        hint = f" (did you mean '{close[0]}'?)" if close else ""
        raise ValueError(f"unknown mesh kind '{kind}'{hint}; valid kinds: {', '.join(generator_names())}")
    fn = GENERATORS[kind]
    valid = list(inspect.signature(fn).parameters)
    for key in params:
        if key not in valid:
            close = difflib.get_close_matches(key, valid, n=1, cutoff=0.5)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            raise ValueError(f"mesh kind '{kind}' has no parameter '{key}'{hint}; "
                             f"its parameters: {', '.join(valid)}")
    return fn(**params)
