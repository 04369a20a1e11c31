"""O-grid around a circular cylinder."""

import numpy as np

from ._checks import check_degree, check_int, check_nonneg, check_number, check_positive
from .grading import resolve_ratio
from .mesh import Mesh
from .ogrid import ogrid_mesh
from .quality import check_mesh

__all__ = ["cylinder_mesh"]


def cylinder_mesh(*, radius: float = 0.5, far_radius: float = 50.0, n_radial: int = 24,
                  n_around: int = 48, first_height: float = 0.0, growth: float = 0.0,
                  centre_x: float = 0.0, centre_y: float = 0.0, q: int = 3) -> Mesh:
    """O-grid of curved quads between a cylinder and a concentric far-field circle.

    Parameters
    ----------
    radius : float
        Cylinder radius (the default 0.5 makes the diameter the unit length).
    far_radius : float
        Far-field radius, same unit.  The default 50 (= 50 diameters, a domain
        100 diameters across) is chosen because blockage ``D / W`` keeps
        changing the low-Reynolds-number wake until ``D / W <= 0.01``
        (Sen, Mittal & Biswas 2009, J. Fluid Mech. 620; from memory).
    n_radial, n_around : int
        Element layers from wall to far field; elements around.
    first_height, growth : float
        Thickness of the first layer, or growth ratio of consecutive layers
        (give at most one; 0 = not given).  With ``first_height`` the ratio that
        reaches the far field in ``n_radial`` layers is computed.  With neither,
        the layers are uniform in ``log r`` (ratio ``(far_radius/radius)^(1/n_radial)``),
        which keeps cells near-square when ``n_around`` is matched.
    centre_x, centre_y : float
        Cylinder centre.
    q : int
        Geometry degree 1..4.

    Returns
    -------
    Mesh
        Boundary tags ``wall`` (the cylinder, ``n_around`` edges) and ``far``
        (the far-field circle).  Periodic around the cylinder by connectivity
        (the last column of elements shares vertices with the first).

    Notes
    -----
    Node ``(a, b)`` of the node grid sits at ``r_a (cos t_b, sin t_b)`` with
    ``t_b = 2 pi b / (n_around q)`` and ``r_a = radius + g(sigma_a) (far_radius - radius)``,
    ``g`` the continuous geometric distribution of :mod:`meshing.grading`; so
    every node lies exactly on a circle and a radial line, wall nodes on the
    cylinder, far-field nodes on the far-field circle.  Element ``r`` points
    outwards, ``s`` counter-clockwise; the wall is face 3.
    """
    radius = check_positive("radius", radius)
    far_radius = check_positive("far_radius", far_radius)
    if far_radius <= radius:
        raise ValueError(f"parameter 'far_radius' ({far_radius:g}) must exceed 'radius' ({radius:g})")
    n_radial = check_int("n_radial", n_radial, 1)
    n_around = check_int("n_around", n_around, 3)
    first_height = check_nonneg("first_height", first_height)
    growth = check_nonneg("growth", growth)
    q = check_degree(q)
    centre_x, centre_y = check_number("centre_x", centre_x), check_number("centre_y", centre_y)
    ratio = resolve_ratio(n_radial, far_radius - radius, first_height, growth,
                          (far_radius / radius) ** (1.0 / n_radial))
    t = 2.0 * np.pi * np.arange(n_around * q) / (n_around * q)
    e = np.stack([np.cos(t), np.sin(t)], axis=1)
    c = np.array([centre_x, centre_y], dtype=float)
    mesh, _ = ogrid_mesh(c + radius * e, e, c + far_radius * e, n_radial, ratio, q,
                         blend_length=radius, name="cylinder")
    check_mesh(mesh)
    return mesh
