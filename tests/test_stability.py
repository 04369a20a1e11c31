"""Von Neumann analysis of 1D upwind FR: spectra and stable CFL numbers."""
import numpy as np
import pytest
from numpy.polynomial import Legendre
from numpy.polynomial.legendre import leggauss

from solver.basis import make_basis
from solver.corrections import c_hu, c_min, c_plus, c_sd, vcjh_right
from solver.registry import UnknownNameError
from solver.stability import fourier_matrix, fr_eigenvalues, stable_cfl
from solver.timeschemes import ShuOsherRK

# SSP-RK(2,2) (Heun), Shu & Osher 1988, as plain coefficient data
HEUN = ShuOsherRK("ssp-rk22", 2, alpha=[[1, 0], [0.5, 0.5]], beta=[[1, 0], [0, 0.5]])


def test_rkdg_cfl_cockburn_shu():
    # Cockburn & Shu 2001 (J. Sci. Comput. 16), table of RKDG CFL numbers:
    # P1 with second-order RK: 1/3; P2 with third-order RK: 0.209
    assert stable_cfl(1, "dg", HEUN) == pytest.approx(1.0 / 3.0, rel=0.02)
    assert stable_cfl(2, "dg", "ssp-rk33") == pytest.approx(0.209, rel=0.02)


@pytest.mark.parametrize("p, ref", [(1, 0.464), (2, 0.235), (3, 0.145)])
def test_rkdg_cfl_classical_rk4(p, ref):
    # classical RK4 with DG, p = 1..3 (from memory)
    assert stable_cfl(p, "dg", "rk4") == pytest.approx(ref, rel=0.02)


@pytest.mark.parametrize("p", [1, 2, 3, 5, 8])
def test_zero_eigenvalue_at_theta_zero(p):
    # a constant is an exact steady solution: 0 is in the spectrum at theta = 0
    for c in ("dg", "sd", "hu"):
        ev = fr_eigenvalues(p, c, thetas=[0.0])[0]
        assert np.min(np.abs(ev)) < 1e-10


@pytest.mark.parametrize("p", [1, 2, 3, 4, 6])
def test_energy_stable_range_has_no_growing_modes(p):
    # VCJH schemes are energy stable for every c > c_min (Vincent, Castonguay &
    # Jameson 2011), so no eigenvalue of the upwind operator has Re > 0
    for c in (0.0, c_sd(p), c_hu(p), 0.99 * c_min(p), 0.5 * c_min(p), 1e3 * c_hu(p)):
        assert np.max(fr_eigenvalues(p, c).real) < 1e-9


def modal_dg_symbol(p, theta):
    """Upwind DG for u_t + a u_x = 0 in the orthonormal Legendre basis, built directly
    from the weak form (Cockburn & Shu 2001): (h/2) du/dt =
    a [ Q u - phi(1) u_j(1) + e^{-i theta} phi(-1) u_j(1) ],  Q_mk = int phi_m' phi_k."""
    n = p + 1
    xq, wq = leggauss(n + 1)
    phi = [np.sqrt((2 * m + 1) / 2.0) * Legendre.basis(m) for m in range(n)]
    Q = np.array([[np.sum(wq * phi[m].deriv()(xq) * phi[k](xq)) for k in range(n)] for m in range(n)])
    r = np.array([f(1.0) for f in phi])
    left = np.array([f(-1.0) for f in phi])
    return 2.0 * (Q - np.outer(r, r) + np.exp(-1j * theta) * np.outer(left, r))


@pytest.mark.parametrize("p", [1, 2, 3, 4])
def test_dg_spectrum_equals_modal_dg(p):
    # FR with c = 0 is nodal DG (Huynh 2007): same spectrum as the modal DG operator
    for theta in (0.0, 0.7, 2.0, np.pi):
        fr = fr_eigenvalues(p, 0.0, thetas=[theta])[0]
        dg = np.linalg.eigvals(modal_dg_symbol(p, theta))
        d = np.abs(fr[:, None] - dg[None, :])
        assert np.max(d.min(axis=1)) < 1e-8 and np.max(d.min(axis=0)) < 1e-8


@pytest.mark.parametrize("p", [1, 2, 3])
def test_physical_mode_accuracy(p):
    # exact solution: u = e^{ikx} gives du/dt = -i a k u, i.e. eigenvalue -i theta.
    # DG: error O(theta^{2p+2}) (Ainsworth 2004, J. Comput. Phys.; from memory)
    def err(c, th):
        return np.min(np.abs(fr_eigenvalues(p, c, thetas=[th])[0] + 1j * th))

    rate = np.log2(err(0.0, 0.8) / err(0.0, 0.4))
    assert abs(rate - (2 * p + 2)) < 0.1
    for c in (c_sd(p), c_hu(p)):  # any consistent FR scheme: at least the design order
        assert np.log2(err(c, 0.4) / err(c, 0.2)) > p + 1.5


@pytest.mark.parametrize("p", [2, 3, 4])
@pytest.mark.parametrize("scheme", ["ssp-rk33", "lsrk45"])
def test_cfl_independent_of_point_set(p, scheme):
    # for a linear flux FR does not depend on where the solution is sampled
    for c in ("dg", "sd", "hu"):
        a = stable_cfl(p, c, scheme, "gauss-legendre")
        b = stable_cfl(p, c, scheme, "gauss-lobatto")
        assert a == pytest.approx(b, rel=1e-6)


def test_left_correction_by_symmetry():
    # S uses g_L'(x_i) = -dgR[n-1-i]; check it against g_L(x) = g_R(-x) evaluated directly
    for points in ("gauss-legendre", "gauss-lobatto"):
        b = make_basis(5, points, "hu")
        gR = vcjh_right(5, c_hu(5))
        np.testing.assert_allclose(b.dgL, -gR.deriv()(-b.x), atol=1e-12)


def test_fourier_matrix_shapes():
    b = make_basis(3)
    assert fourier_matrix(b, 0.5).shape == (4, 4)
    S = fourier_matrix(b, np.array([0.1, 0.2]))
    assert S.shape == (2, 4, 4)
    np.testing.assert_allclose(S[1], fourier_matrix(b, 0.2))


def test_stable_cfl_is_a_boundary():
    # just below the returned CFL every mode is damped; just above some mode grows
    from solver.timeschemes import get_scheme
    rk = get_scheme("ssp-rk33")
    lam = fr_eigenvalues(3, c_plus(3, "ssp-rk33")).ravel()
    cfl = stable_cfl(3, "c+", "ssp-rk33")
    assert np.max(np.abs(rk.stability_function(0.999 * cfl * lam))) <= 1.0 + 1e-10
    assert np.max(np.abs(rk.stability_function(1.001 * cfl * lam))) > 1.0 + 1e-10


def test_bad_inputs():
    with pytest.raises(UnknownNameError, match="lsrk45"):
        stable_cfl(2, "dg", "rk44")
    with pytest.raises(UnknownNameError, match="gauss-lobatto"):
        stable_cfl(2, "dg", "rk4", "lobatto")
    with pytest.raises(ValueError, match="stability bound"):
        stable_cfl(2, 2 * c_min(2), "rk4")
