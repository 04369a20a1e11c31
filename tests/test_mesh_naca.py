"""NACA 4-digit sections (Abbott & von Doenhoff 1959) and their O-grid."""
import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import minimize_scalar

from meshing import contour_area, mesh_quality, naca_mesh
from meshing.naca import naca4_camber, naca4_parameters, naca4_surface, naca4_thickness
from meshing.quality import face_points


def test_naca0012_max_thickness():
    # NACA 0012: maximum thickness 12 % chord at about x/c = 0.30 (Abbott & von Doenhoff 1959, sec. 6.4)
    res = minimize_scalar(lambda x: -naca4_thickness(x, 0.12, closed=False), bounds=(0.05, 0.6), method="bounded")
    assert abs(2 * -res.fun - 0.12) < 2e-4
    assert abs(res.x - 0.30) < 0.01
    res_c = minimize_scalar(lambda x: -naca4_thickness(x, 0.12, closed=True), bounds=(0.05, 0.6), method="bounded")
    assert abs(2 * -res_c.fun - 0.12) < 2e-4 and abs(res_c.x - 0.30) < 0.01
    # and the mesh wall samples it: largest |y| among wall nodes
    m = naca_mesh(n_radial=12)
    X, _ = face_points(m, m.boundary_faces["wall"], np.linspace(-1, 1, m.q + 1))
    assert abs(2 * np.abs(X[..., 1]).max() - 0.12) < 1e-4


def test_closed_trailing_edge():
    # a_4 = 0.1036 closes the trailing edge; the original 0.1015 leaves 0.00252 c (2 * 5t * 0.0021)
    assert abs(naca4_thickness(1.0, 0.12, closed=True)) < 1e-15
    assert abs(2 * naca4_thickness(1.0, 0.12, closed=False) - 2 * 5 * 0.12 * 0.0021) < 1e-12
    up = np.real(naca4_surface(np.ones(1), 0.02, 0.4, 0.12, 1))
    lo = np.real(naca4_surface(np.ones(1), 0.02, 0.4, 0.12, -1))
    assert np.abs(up - lo).max() < 1e-15


@pytest.mark.parametrize("digits", ["0012", "2412", "4415"])
def test_section_area_matches_thickness_integral(digits):
    # zero camber: enclosed area = int_0^1 2 y_t dx (Abbott & von Doenhoff 1959 thickness form);
    # cambered: counter-clockwise int x dy on the analytic surfaces, upper TE->LE, lower LE->TE
    m_, p_, t_ = naca4_parameters(digits)
    mesh = naca_mesh(digits=digits, n_around=96, n_radial=8, q=4)
    area = -contour_area(mesh, "wall")
    if m_ == 0:
        ref, _ = quad(lambda x: 2 * naca4_thickness(x, t_), 0, 1, epsabs=1e-14, epsrel=1e-14, limit=200)
        assert abs(area - ref) < 1e-8
    else:
        # cambered: area by Green's theorem on the analytic surfaces (scipy quad in u = sqrt(x))
        def xdy(u, side):
            h = 1e-30
            z = naca4_surface(np.array([u + 1j * h]), m_, p_, t_, side)[0]
            return np.real(z[0]) * np.imag(z[1]) / h
        ref = quad(lambda u: xdy(u, -1), 0, 1, epsabs=1e-14, limit=200)[0] - \
            quad(lambda u: xdy(u, 1), 0, 1, epsabs=1e-14, limit=200)[0]
        assert abs(area - ref) < 1e-8


def test_wall_nodes_on_analytic_section():
    m_, p_, t_ = naca4_parameters("2412")
    mesh = naca_mesh(digits="2412", n_around=48, n_radial=6, q=3)
    X, _ = face_points(mesh, mesh.boundary_faces["wall"], np.linspace(-1, 1, 4))
    X = X.reshape(-1, 2)
    # distance to the analytic surface, densely sampled in u and refined by a local minimisation
    for x, y in X[::7]:
        best = np.inf
        for side in (1, -1):
            u = np.linspace(0, 1, 4001)
            P = np.real(naca4_surface(u, m_, p_, t_, side))
            k = int(np.argmin(np.hypot(P[:, 0] - x, P[:, 1] - y)))
            # squared distance is smooth at its minimum, so the bounded search resolves it
            r = minimize_scalar(lambda v: np.sum((np.real(naca4_surface(np.array([v]), m_, p_, t_, side))[0]
                                                  - [x, y]) ** 2),
                                bounds=(max(0, u[k] - 1e-3), min(1, u[k] + 1e-3)), method="bounded",
                                options={"xatol": 1e-14})
            best = min(best, np.sqrt(r.fun))
        assert best < 1e-9


def test_camber_line():
    # NACA 2412 mean line: maximum camber 0.02 at x = 0.4, zero slope there
    yc, dyc = naca4_camber(np.array([0.4]), 0.02, 0.4)
    assert abs(yc[0] - 0.02) < 1e-15 and abs(dyc[0]) < 1e-15


def test_mesh_valid_and_tagged():
    m = naca_mesh()
    qd = mesh_quality(m)
    assert qd["inverted"] == [] and qd["scaled_jacobian_min"] > 0.05
    assert qd["tags"] == {"far": 96, "wall": 96}


@pytest.mark.parametrize("kw, name", [({"digits": "12"}, "digits"), ({"digits": "2012"}, "digits"),
                                      ({"n_around": 95}, "n_around"), ({"clustering": 1.5}, "clustering"),
                                      ({"far_chords": 1.0}, "far_chords")])
def test_bad_parameters(kw, name):
    with pytest.raises(ValueError, match=name):
        naca_mesh(**kw)
