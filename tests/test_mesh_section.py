"""Point-list sections: spline outline, O-grid, input errors."""
import numpy as np
import pytest

from meshing import contour_area, mesh_quality, section_mesh
from meshing.naca import naca4_surface, naca4_thickness
from meshing.quality import face_points
from meshing.section import SectionSpline, validate_section_points
from scipy.integrate import quad


def _write(path, P, header="# test section\n"):
    with open(path, "w") as fh:
        fh.write(header)
        for x, y in P:
            fh.write(f"{float(x)!r} {float(y)!r}  # point\n")
    return str(path)


def _circle(n, R=1.0, start=0.0):
    th = start + 2 * np.pi * np.arange(n) / n
    return np.c_[R * np.cos(th), R * np.sin(th)]


@pytest.mark.parametrize("n", [16, 32, 64])
def test_circle_area_within_spline_error(tmp_path, n):
    # Cubic-spline interpolation error <= (5/384) h^4 max|f''''| (Hall 1968; de Boor 1978, from memory);
    # for a unit circle sampled every h ~ 2 pi / n that bounds the radial error, so the area error is
    # at most 2 pi (5/384) h^4.  The mesh adds its own geometry error, far smaller at q = 4, 64 elements.
    m = section_mesh(path=_write(tmp_path / "c.dat", _circle(n)), n_around=64, n_radial=4, q=4)
    h = 2 * np.sin(np.pi / n)
    bound = 2 * np.pi * 5 / 384 * h**4
    err = abs(-contour_area(m, "wall") - np.pi)
    assert err < bound
    assert err > bound / 100  # and it is the spline error that is measured, not noise


def test_circle_spline_error_converges_fourth_order(tmp_path):
    errs = []
    for n in (16, 32):
        m = section_mesh(path=_write(tmp_path / f"c{n}.dat", _circle(n)), n_around=64, n_radial=4, q=4)
        errs.append(abs(-contour_area(m, "wall") - np.pi))
    assert abs(np.log2(errs[0] / errs[1]) - 4) < 0.3


def test_wall_nodes_on_spline(tmp_path):
    P = _circle(24, 2.0) * np.array([1.0, 0.5])  # an ellipse
    m = section_mesh(path=_write(tmp_path / "e.dat", P), n_around=32, n_radial=4, q=3)
    sp = SectionSpline(validate_section_points(P))
    spl, d1, d2, arc = sp.pieces[0]
    tt = np.linspace(0, arc.knots[-1], 20001)
    dense = spl(tt)
    X, _ = face_points(m, m.boundary_faces["wall"], np.linspace(-1, 1, 4))
    X = X.reshape(-1, 2)
    from scipy.spatial import cKDTree
    _, k = cKDTree(dense).query(X)
    t = tt[k]
    for _ in range(20):  # Newton on (S(t) - X) . S'(t) = 0: foot of the perpendicular on the spline
        r, a, b = spl(t) - X, d1(t), d2(t)
        t = t - np.sum(r * a, axis=1) / (np.sum(a * a, axis=1) + np.sum(r * b, axis=1))
    assert np.linalg.norm(spl(t) - X, axis=1).max() < 1e-12
    assert mesh_quality(m)["inverted"] == []
    # scaled Jacobian 1 at the wall means orthogonal first cells; check the first-layer face
    assert mesh_quality(m)["scaled_jacobian_min"] > 0.5


def test_sharp_trailing_edge_from_points(tmp_path):
    # NACA 0012 (closed trailing edge) as 161 points; the corner is kept, the area matches the analytic one
    u = np.sqrt((1 - np.cos(np.linspace(0, np.pi, 81))) / 2)
    up = np.real(naca4_surface(u[::-1], 0, 0, 0.12, 1))
    lo = np.real(naca4_surface(u[1:-1], 0, 0, 0.12, -1))
    m = section_mesh(path=_write(tmp_path / "n.dat", np.r_[up, lo]), n_radial=12)
    ref, _ = quad(lambda x: 2 * naca4_thickness(x, 0.12), 0, 1, epsabs=1e-14, limit=200)
    assert abs(-contour_area(m, "wall") - ref) < 1e-6  # spline error of 80 cosine-spaced points per side
    X, _ = face_points(m, m.boundary_faces["wall"], np.array([-1.0, 1.0]))
    assert np.min(np.linalg.norm(X.reshape(-1, 2) - [1.0, 0.0], axis=1)) < 1e-15  # the corner is a vertex
    assert mesh_quality(m)["inverted"] == []


def test_clockwise_input_is_reversed(tmp_path):
    P = _circle(20)[::-1]
    with pytest.warns(UserWarning, match="clockwise"):
        m = section_mesh(path=_write(tmp_path / "cw.dat", P), n_around=16, n_radial=3, q=2)
    assert -contour_area(m, "wall") > 3.0


def test_closing_point_dropped(tmp_path):
    P = _circle(20)
    m = section_mesh(path=_write(tmp_path / "cl.dat", np.r_[P, P[:1]]), n_around=16, n_radial=3, q=2)
    assert mesh_quality(m)["inverted"] == []


def test_too_few_points(tmp_path):
    with pytest.raises(ValueError, match=r"few\.dat: a section needs at least 4 distinct points, got 3"):
        section_mesh(path=_write(tmp_path / "few.dat", _circle(3)))


def test_duplicate_consecutive_points(tmp_path):
    P = _circle(12)
    P = np.insert(P, 5, P[4], axis=0)
    with pytest.raises(ValueError, match="points 5 and 6 coincide"):
        section_mesh(path=_write(tmp_path / "dup.dat", P))


def test_self_intersecting(tmp_path):
    P = np.array([[0, 0], [1, 1], [1, 0], [0, 1], [-.5, .5]], float)  # a bow tie
    with pytest.raises(ValueError, match="crosses itself"):
        section_mesh(path=_write(tmp_path / "bow.dat", P))


def test_bad_line(tmp_path):
    p = tmp_path / "bad.dat"
    p.write_text("# x y\n0 0\n1 0\n1 1 1\n")
    with pytest.raises(ValueError, match=r"bad\.dat:4: expected two numbers"):
        section_mesh(path=str(p))


def test_missing_file_and_path(tmp_path):
    with pytest.raises(FileNotFoundError, match="nope.dat"):
        section_mesh(path=str(tmp_path / "nope.dat"))
    with pytest.raises(ValueError, match="'path'"):
        section_mesh()


def test_far_radius_too_small(tmp_path):
    with pytest.raises(ValueError, match="far_radius"):
        section_mesh(path=_write(tmp_path / "c.dat", _circle(16)), far_radius=1.5)
