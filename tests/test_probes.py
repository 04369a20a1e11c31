"""Point evaluation (solver/probes.py) and the recirculation length (tools/wake.py).

The references are exact: a polynomial field of degree <= p is reproduced
exactly by the element polynomial at any point, and Newton's inversion of
the element map must return the point it was given.
"""
from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from meshing.box import box_mesh
from meshing.cylinder import cylinder_mesh
from meshing.geometry import map_points
from solver.basis import solution_points
from solver.metrics import compute_metrics
from solver.probes import PointSampler, locate_points


def test_locate_points_inverts_the_curved_map():
    mesh = cylinder_mesh(n_radial=3, n_around=8, far_radius=4.0, q=3)
    rng = np.random.default_rng(1)
    e = rng.integers(0, mesh.n_elements, 20)
    rs = rng.uniform(-0.95, 0.95, (20, 2))
    pts = np.array([map_points(mesh.geom[k:k + 1], rs[a, :1], rs[a, 1:])[0, 0, 0] for a, k in enumerate(e)])
    el, rs2 = locate_points(mesh.geom, pts)
    assert np.array_equal(el, e)
    assert np.allclose(rs2, rs, rtol=0, atol=1e-10)


def test_sampler_is_exact_for_polynomials_of_degree_p():
    p = 3
    mesh = box_mesh(3, 3, extent=(0.0, 3.0, 0.0, 3.0), q=3, warp=0.05, periodic=(False, False))
    x = solution_points(p)[0]
    m = compute_metrics(mesh, x)
    # on a warped mesh a polynomial in (x, y) is not one of degree p in (r, s), but the coordinates
    # themselves are (the map has degree min(q, p) = 3 in r and s): fields linear in x and y are exact
    U = np.zeros(m.xy.shape[:-1] + (4,))
    U[..., 0] = 1.0 + m.xy[..., 0]
    U[..., 1] = 2.0 * m.xy[..., 1]
    U[..., 3] = 10.0
    pts = np.array([[0.31, 0.27], [1.5, 1.5], [2.93, 0.05], [1.0, 2.0]])
    s = PointSampler(m.geom, x, pts)
    W = s.conserved(U)
    assert np.allclose(W[:, 0], 1.0 + pts[:, 0], rtol=0, atol=1e-12)
    assert np.allclose(W[:, 1], 2.0 * pts[:, 1], rtol=0, atol=1e-12)
    prim = s.primitive(U, 1.4)
    assert np.allclose(prim[:, 2], 0.0) and np.allclose(prim[:, 1], 2.0 * pts[:, 1] / (1.0 + pts[:, 0]))


def test_points_outside_are_refused():
    mesh = cylinder_mesh(n_radial=2, n_around=8, far_radius=3.0, q=2)
    with pytest.raises(ValueError, match=r"probe 1 at \(0, 0\) lies in no element"):
        locate_points(mesh.geom, [[1.0, 0.0], [0.0, 0.0]])
    with pytest.raises(ValueError, match=r"probe 0 at \(5, 0\)"):
        locate_points(mesh.geom, [[5.0, 0.0]])


def test_recirculation_length_of_a_linear_axis_velocity():
    from tools.wake import recirculation_length

    p = 2
    mesh = cylinder_mesh(n_radial=6, n_around=12, far_radius=20.0, q=2)
    x = solution_points(p)[0]
    m = compute_metrics(mesh, x)
    U = np.zeros(m.xy.shape[:-1] + (4,))
    U[..., 0] = 1.0
    U[..., 1] = 0.3 * (m.xy[..., 0] - 2.75)  # u = 0 at x = 2.75: L = 2.75 - 0.5 = 2.25 diameters
    U[..., 3] = 40.0
    snap = SimpleNamespace(mesh=mesh, degree=p, nodes=x, U=U)
    r = recirculation_length(snap, (0.0, 0.0), 0.5)
    assert r["L_over_D"] == pytest.approx(2.25, abs=1e-9)
    U[..., 1] = 0.3  # no reversed flow: no bubble
    assert np.isnan(recirculation_length(snap)["L_over_D"])
