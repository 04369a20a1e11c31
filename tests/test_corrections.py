"""VCJH correction functions against their published special cases."""
import math
from fractions import Fraction

import numpy as np
import pytest
from numpy.polynomial import Legendre
from numpy.polynomial.legendre import leggauss

from solver.corrections import (CORRECTIONS, c_hu, c_min, c_plus, c_sd, correction_parameter,
                                vcjh_right)
from solver.registry import UnknownNameError
from solver.stability import stable_cfl

XS = np.linspace(-1.0, 1.0, 201)
P = Legendre.basis


def right_radau(k):
    """Huynh's (2007) right Radau polynomial R_{R,k} = (-1)^k/2 (P_k - P_{k-1}):
    1 at x = -1, 0 at x = +1 (it is his left correction g_DG of degree k)."""
    return (-1) ** k / 2.0 * (P(k) - P(k - 1))


@pytest.mark.parametrize("p", range(1, 9))
def test_dg_is_right_radau(p):
    # c = 0: g_R = (L_p + L_{p+1})/2 (Huynh 2007, g_DG; Vincent et al. 2011)
    g = vcjh_right(p, 0.0)
    np.testing.assert_allclose(g(XS), 0.5 * (P(p)(XS) + P(p + 1)(XS)), atol=1e-14)
    # and it is the mirror image of Huynh's R_{R,p+1}
    np.testing.assert_allclose(g(XS), right_radau(p + 1)(-XS), atol=1e-14)


@pytest.mark.parametrize("p", range(1, 9))
@pytest.mark.parametrize("which", ["dg", "sd", "hu", 0.3, -0.9])
def test_end_values_and_degree(p, which):
    c = correction_parameter(which, p) if isinstance(which, str) else which * abs(c_min(p))
    g = vcjh_right(p, c)
    assert g.degree() == p + 1
    assert g(-1.0) == pytest.approx(0.0, abs=1e-14)
    assert g(1.0) == pytest.approx(1.0, abs=1e-14)


@pytest.mark.parametrize("p", range(1, 9))
def test_sd_recovered(p):
    # c_sd: g_R vanishes at the p Gauss-Legendre points (roots of L_p) and at -1,
    # the SD flux points (Jameson 2010, J. Sci. Comput.; Vincent et al. 2011)
    g = vcjh_right(p, c_sd(p))
    xg, _ = leggauss(p)
    np.testing.assert_allclose(g(np.concatenate(([-1.0], xg))), 0.0, atol=1e-13)
    # these p+1 roots and g(1) = 1 fix the degree-(p+1) polynomial
    roots = np.concatenate(([-1.0], xg))
    ref = np.prod(XS[:, None] - roots, axis=1) / np.prod(1.0 - roots)
    np.testing.assert_allclose(g(XS), ref, atol=1e-12)


@pytest.mark.parametrize("p", range(1, 9))
def test_hu_is_huynh_g2(p):
    # Huynh (2007), g_2 = (k-1)/(2k-1) R_{R,k} + k/(2k-1) R_{R,k-1} with k = p+1 (from memory),
    # i.e. weight p/(2p+1) on R_{R,p+1} and (p+1)/(2p+1) on R_{R,p}.  It is a left
    # correction, so compare with g_L(x) = g_R(-x).
    g2 = p / (2 * p + 1) * right_radau(p + 1) + (p + 1) / (2 * p + 1) * right_radau(p)
    gL = vcjh_right(p, c_hu(p))(-XS)
    np.testing.assert_allclose(gL, g2(XS), atol=1e-13)
    swapped = (p + 1) / (2 * p + 1) * right_radau(p + 1) + p / (2 * p + 1) * right_radau(p)
    assert np.max(np.abs(gL - swapped(XS))) > 1e-2  # the weights are not interchangeable


def closed_form(p):
    # independent evaluation with exact rationals and math.factorial:
    # a_p = (2p)!/(2^p (p!)^2), c_sd = 2p/((2p+1)(p+1)(a_p p!)^2), c_hu = 2(p+1)/((2p+1)p(a_p p!)^2)
    ap = Fraction(math.factorial(2 * p), 2 ** p * math.factorial(p) ** 2)
    s = (ap * math.factorial(p)) ** 2
    return Fraction(2 * p) / ((2 * p + 1) * (p + 1) * s), Fraction(2 * (p + 1)) / ((2 * p + 1) * p * s)


@pytest.mark.parametrize("p", [2, 3, 4, 5])
def test_c_sd_c_hu_values(p):
    # checked against the closed forms of Vincent et al. 2011 evaluated independently
    # (exact rationals), not against their printed table
    sd, hu = closed_form(p)
    assert c_sd(p) == pytest.approx(float(sd), rel=1e-14)
    assert c_hu(p) == pytest.approx(float(hu), rel=1e-14)


def test_c_sd_c_hu_p2_by_hand():
    # p = 2: a_2 = 3/2, (a_2 2!)^2 = 9, c_sd = 4/135, c_hu = 6/90 = 1/15
    assert c_sd(2) == pytest.approx(4 / 135, rel=1e-15)
    assert c_hu(2) == pytest.approx(1 / 15, rel=1e-15)


@pytest.mark.parametrize("scheme", ["ssp-rk33", "rk4"])
@pytest.mark.parametrize("p", [2, 3, 4])
def test_c_plus_beats_named_corrections(scheme, p):
    cp = c_plus(p, scheme)
    best = stable_cfl(p, cp, scheme)
    for name in ("dg", "sd", "hu"):
        assert best >= stable_cfl(p, name, scheme)
    assert best > 1.1 * stable_cfl(p, "hu", scheme)  # a real gain, not a tie
    assert correction_parameter("c+", p, scheme) == cp


@pytest.mark.parametrize("p, ref", [(2, 1.86e-1), (3, 3.67e-3), (4, 4.79e-5), (5, 4.24e-7)])
def test_c_plus_rk4_vs_vincent_2011(p, ref):
    # c+ tabulated by Vincent, Castonguay & Jameson 2011 (from memory, values and the
    # classical RK4 scheme they were computed with both recalled, not looked up)
    assert c_plus(p, "rk4") == pytest.approx(ref, rel=0.03)


def test_c_plus_depends_on_scheme():
    assert abs(c_plus(3, "ssp-rk54") / c_plus(3, "ssp-rk33") - 1.0) > 1e-3


def test_correction_parameter_inputs():
    assert correction_parameter(0.125, 3) == 0.125
    assert correction_parameter("sd", 3) == c_sd(3)
    assert correction_parameter("dg", 3) == 0.0
    bound = -2.0 / (7 * (2.5 * 6) ** 2)  # -2/((2p+1)(a_p p!)^2) at p = 3, a_3 = 5/2
    assert c_min(3) == pytest.approx(bound, rel=1e-15)
    assert correction_parameter(0.99 * bound, 3) == 0.99 * bound
    with pytest.raises(ValueError, match=f"{bound:.6e}"):
        correction_parameter(1.01 * bound, 3)
    with pytest.raises(ValueError, match="stability bound"):
        correction_parameter(bound, 3)
    with pytest.raises(UnknownNameError, match="dg, sd, hu, c\\+"):
        correction_parameter("gd", 3)
    with pytest.raises(TypeError):
        correction_parameter(None, 3)
    with pytest.raises(ValueError, match="p must be"):
        vcjh_right(0, 0.0)
    assert [CORRECTIONS[n].code for n in ("dg", "sd", "hu", "c+")] == [0, 1, 2, 3]
