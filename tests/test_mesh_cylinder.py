"""Cylinder O-grid: exact wall, annulus area and its convergence rate."""
import numpy as np
import pytest

from meshing import cylinder_mesh, mesh_area, mesh_quality
from meshing.quality import face_points


def _exact_area(r, R):
    return np.pi * (R * R - r * r)  # elementary geometry


@pytest.mark.parametrize("q", [1, 2, 3, 4])
def test_wall_and_far_nodes_on_circles(q):
    m = cylinder_mesh(radius=0.5, far_radius=20.0, n_radial=6, n_around=24, q=q, centre_x=0.3, centre_y=-0.2)
    c = np.array([0.3, -0.2])
    for tag, rad in (("wall", 0.5), ("far", 20.0)):
        X, _ = face_points(m, m.boundary_faces[tag], np.linspace(-1, 1, q + 1))  # the geometry nodes
        assert np.abs(np.linalg.norm(X - c, axis=-1) - rad).max() < 1e-12
    assert len(m.boundary_faces["wall"]) == 24
    assert mesh_quality(m)["inverted"] == []


def test_area_exact_to_1e10_for_q_at_least_3():
    # q = 4 at the default 48 elements around; q = 3 needs a finer circle (error ~ h^4)
    for q, n in ((4, 48), (3, 320)):
        m = cylinder_mesh(radius=0.5, far_radius=10.0, n_radial=2, n_around=n, q=q)
        ex = _exact_area(0.5, 10.0)
        assert abs(mesh_area(m) - ex) / ex < 1e-10


@pytest.mark.parametrize("q, rate", [(1, 2), (2, 4), (3, 4), (4, 6)])
def test_area_convergence_rate(q, rate):
    # Interpolating the circle with degree-q equispaced nodes: the area error is the error of the
    # closed Newton-Cotes rule on each arc, order q+1 for odd q and q+2 for even q
    # (Davis & Rabinowitz, Methods of Numerical Integration, 1984; from memory).
    ex = _exact_area(0.5, 10.0)
    err = [abs(mesh_area(cylinder_mesh(radius=0.5, far_radius=10.0, n_radial=2, n_around=n, q=q)) - ex)
           for n in (16, 32)]
    measured = np.log2(err[0] / err[1])
    assert abs(measured - rate) < 0.3, measured


def test_first_height_sets_first_layer():
    m = cylinder_mesh(radius=0.5, far_radius=30.0, n_radial=20, n_around=32, first_height=1e-3, q=2)
    e, f = m.boundary_faces["wall"][0]
    g = m.geom[e]  # wall is face 3 (r = -1): first layer thickness along r
    assert np.isclose(np.linalg.norm(g[-1, 0] - g[0, 0]), 1e-3, rtol=1e-9)
    assert np.isclose(np.linalg.norm(g[0, 0]), 0.5, rtol=0, atol=1e-14)


def test_periodic_by_connectivity():
    m = cylinder_mesh(n_radial=3, n_around=12, q=2)
    assert m.periodic == []
    # every element has 4 neighbours or 3 + one boundary face: ring closes
    nfaces = 2 * len(m.interior_faces) + sum(len(b) for b in m.boundary_faces.values())
    assert nfaces == 4 * m.n_elements
    assert set(m.boundary_faces) == {"wall", "far"}


@pytest.mark.parametrize("kw, name", [({"radius": -1.0}, "radius"), ({"far_radius": 0.4}, "far_radius"),
                                      ({"n_around": 2}, "n_around"), ({"q": 5}, "q"),
                                      ({"first_height": 0.1, "growth": 1.1}, "first_height"),
                                      ({"first_height": 10.0}, "first_height")])
def test_bad_parameters_name_themselves(kw, name):
    with pytest.raises(ValueError, match=name):
        cylinder_mesh(**kw)
