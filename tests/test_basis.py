"""Solution points and 1D FR operators."""
import numpy as np
import pytest
from numpy.polynomial import Legendre
from numpy.polynomial.legendre import leggauss
from scipy.special import eval_legendre

from solver.basis import POINT_SETS, make_basis, solution_points
from solver.corrections import c_plus, vcjh_right
from solver.registry import UnknownNameError

KINDS = ["gauss-legendre", "gauss-lobatto"]


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("p", range(1, 9))
def test_points_symmetric_ascending(kind, p):
    x, w = solution_points(p, kind)
    assert x.shape == w.shape == (p + 1,)
    assert np.all(np.diff(x) > 0)
    assert np.array_equal(x[::-1], -x)  # exact, not to round-off
    assert np.array_equal(w[::-1], w)
    if kind == "gauss-lobatto":
        assert x[0] == -1.0 and x[-1] == 1.0


@pytest.mark.parametrize("p", range(1, 9))
def test_gauss_legendre_matches_numpy(p):
    x, w = solution_points(p, "gauss-legendre")
    xr, wr = leggauss(p + 1)  # numpy reference
    np.testing.assert_allclose(x, xr, atol=1e-15)
    np.testing.assert_allclose(w, wr, atol=1e-15)


def test_gauss_lobatto_table_values():
    # Abramowitz & Stegun 25.4.32 (closed forms, from memory):
    # n = 4: +-1/sqrt(5), weights 1/6, 5/6; n = 5: 0, +-sqrt(3/7), weights 1/10, 49/90, 32/45
    x, w = solution_points(3, "gauss-lobatto")
    np.testing.assert_allclose(x, [-1, -1 / np.sqrt(5), 1 / np.sqrt(5), 1], atol=1e-15)
    np.testing.assert_allclose(w, [1 / 6, 5 / 6, 5 / 6, 1 / 6], atol=1e-15)
    x, w = solution_points(4, "gauss-lobatto")
    np.testing.assert_allclose(x, [-1, -np.sqrt(3 / 7), 0, np.sqrt(3 / 7), 1], atol=1e-15)
    np.testing.assert_allclose(w, [1 / 10, 49 / 90, 32 / 45, 49 / 90, 1 / 10], atol=1e-15)


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("p", range(1, 9))
def test_quadrature_exactness(kind, p):
    # n-point Gauss exact to degree 2n-1, Gauss-Lobatto to 2n-3 (exact integrals of x^k)
    x, w = solution_points(p, kind)
    n = p + 1
    top = 2 * n - 1 if kind == "gauss-legendre" else 2 * n - 3
    for k in range(top + 1):
        exact = 0.0 if k % 2 else 2.0 / (k + 1)
        assert np.dot(w, x ** k) == pytest.approx(exact, abs=1e-14)
    # one degree higher (even) is no longer exact
    k = top + 1 if (top + 1) % 2 == 0 else top + 2
    assert abs(np.dot(w, x ** k) - 2.0 / (k + 1)) > 1e-6


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("p", [1, 2, 4, 8])
def test_operators_exact_on_polynomials(kind, p):
    b = make_basis(p, kind)
    rng = np.random.default_rng(p)
    f = Legendre(rng.normal(size=p + 1))  # degree p: represented exactly
    np.testing.assert_allclose(b.D @ f(b.x), f.deriv()(b.x), atol=1e-11 * (1 + p ** 2))
    np.testing.assert_allclose(b.Lf @ f(b.x), [f(-1.0), f(1.0)], atol=1e-12)


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("p", [1, 3, 6])
def test_correction_derivative(kind, p):
    b = make_basis(p, kind, "dg")
    # c = 0: g_R' = (L_p' + L_{p+1}')/2, built here from numpy Legendre directly
    ref = 0.5 * (Legendre.basis(p).deriv()(b.x) + Legendre.basis(p + 1).deriv()(b.x))
    np.testing.assert_allclose(b.dgR, ref, atol=1e-12)
    # any c: int g_R' = g_R(1) - g_R(-1) = 1; with Gauss-Legendre the quadrature is exact (deg p <= 2p+1)
    b = make_basis(p, kind, 0.05)
    if kind == "gauss-legendre":
        assert np.dot(b.w, b.dgR) == pytest.approx(1.0, abs=1e-13)
    np.testing.assert_allclose(b.dgR, vcjh_right(p, 0.05).deriv()(b.x), atol=1e-12)


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("p", [1, 4, 8])
def test_modal_matrices(kind, p):
    b = make_basis(p, kind)
    n = p + 1
    ref = np.array([[np.sqrt((2 * m + 1) / 2) * eval_legendre(m, xi) for m in range(n)] for xi in b.x])
    np.testing.assert_allclose(b.modal, ref, atol=1e-14)  # scipy.special reference
    np.testing.assert_allclose(b.modal_inv @ b.modal, np.eye(n), atol=1e-12)
    if kind == "gauss-legendre":  # orthonormality, quadrature exact to degree 2p+1 >= 2p
        np.testing.assert_allclose(b.modal.T @ np.diag(b.w) @ b.modal, np.eye(n), atol=1e-13)


def test_basis_metadata_and_readonly():
    b = make_basis(3, "gauss-lobatto", "sd")
    assert (b.p, b.n, b.points, b.correction) == (3, 4, "gauss-lobatto", "sd")
    assert make_basis(3, correction=0.01).correction == "value"
    assert make_basis(3, correction=0.01).c == 0.01
    assert make_basis(3, correction="c+", scheme="rk4").c == c_plus(3, "rk4")
    for a in (b.x, b.w, b.D, b.Lf, b.dgR, b.modal, b.modal_inv):
        with pytest.raises(ValueError):
            a[0] = 1.0
    assert [POINT_SETS[k].code for k in KINDS] == [0, 1]


def test_bad_inputs():
    for p in (0, 9, 2.0, True):
        with pytest.raises(ValueError, match="1..8"):
            solution_points(p)
    with pytest.raises(UnknownNameError, match="gauss-legendre, gauss-lobatto"):
        solution_points(2, "gauss-lobato")
    with pytest.raises(UnknownNameError, match="correction function"):
        make_basis(2, correction="spectral")
    with pytest.raises(ValueError, match="stability bound"):
        make_basis(2, correction=-1.0)
