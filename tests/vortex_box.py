"""Case-file text of a small periodic-free vortex box, shared by the driver tests.

The isentropic vortex (Shu 1998; Yee, Sandham & Djomehri 1999) in the box [-5, 5]^2 of ``nx`` x 4
curved (q = 2) elements, Mach 0.5: small enough that a few steps take well under a second.
"""
from __future__ import annotations

from pathlib import Path

TEMPLATE = """
title = "{title}"
[flow]
mach = 0.5
[mesh]
generator = "box"
nx = {nx}
ny = 4
x0 = -5.0
x1 = 5.0
y0 = -5.0
y1 = 5.0
q = 2
{mesh_extra}
[scheme]
degree = {p}
[time]
{time}
[initial]
{initial}
{extra}
"""


def write_vortex_box(path, time: str, p: int = 2, initial: str = 'kind = "vortex"', extra: str = "",
                     nx: int = 4, mesh_extra: str = "", title: str = "vortex box test") -> Path:
    """Write the case file to ``path``; ``time`` is the body of ``[time]``, ``extra`` further sections."""
    path = Path(path)
    path.write_text(TEMPLATE.format(title=title, nx=nx, mesh_extra=mesh_extra, p=p, time=time, initial=initial,
                                    extra=extra))
    return path
