"""Interface fluxes: consistency, upwinding, rotational invariance, and an
independent numpy implementation (tests/reference_fr.py)."""
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numba import njit

from reference_fr import euler_flux_np, roe_np, rusanov_np
from solver.fluxes import INTERFACE_FLUXES
from solver.kernels.riemann import interface_flux, normal_flux

G = 1.4


@njit(cache=True)
def _flux(code, UL, UR, n, gamma, efix):
    out = np.empty(4)
    f = interface_flux(code, UL[0], UL[1], UL[2], UL[3], UR[0], UR[1], UR[2], UR[3], n[0], n[1], gamma, efix)
    for k in range(4):
        out[k] = f[k]
    return out


def state(rho, u, v, p):
    return np.array([rho, rho * u, rho * v, p / (G - 1) + 0.5 * rho * (u * u + v * v)])


states = st.builds(state, st.floats(0.2, 5.0), st.floats(-3, 3), st.floats(-3, 3), st.floats(0.2, 5.0))
angles = st.floats(0, 2 * math.pi)
CODES = [INTERFACE_FLUXES[n].code for n in ("rusanov", "roe")]


@settings(max_examples=60, deadline=None)
@given(states, angles)
def test_consistency(U, th):
    # F*(U, U) = F(U) . n: the defining property of a consistent numerical flux (LeVeque 2002, sec. 12.1)
    n = np.array([math.cos(th), math.sin(th)])
    F, Gf = euler_flux_np(U, G)
    for code in CODES:
        np.testing.assert_allclose(_flux(code, U, U, n, G, 0.1), F * n[0] + Gf * n[1], rtol=1e-13, atol=1e-13)


@settings(max_examples=60, deadline=None)
@given(states, states, angles)
def test_agrees_with_numpy(UL, UR, th):
    # numba wave-strength Roe vs numpy full |A| = R|Lambda|R^-1 matrix form (independent derivations)
    n = np.array([math.cos(th), math.sin(th)])
    np.testing.assert_allclose(_flux(INTERFACE_FLUXES["roe"].code, UL, UR, n, G, 0.1),
                               roe_np(UL, UR, n, G, 0.1), rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(_flux(INTERFACE_FLUXES["rusanov"].code, UL, UR, n, G, 0.1),
                               rusanov_np(UL, UR, n, G), rtol=1e-12, atol=1e-12)


@settings(max_examples=40, deadline=None)
@given(states, states, angles, angles)
def test_rotational_invariance(UL, UR, th, phi):
    # F*(T^-1 UL, T^-1 UR; T^-1 n) = T^-1 F*(UL, UR; n) for a rotation T (Toro 2009, sec. 3.2.2)
    def rot(U, a):
        c, s = math.cos(a), math.sin(a)
        return np.array([U[0], c * U[1] - s * U[2], s * U[1] + c * U[2], U[3]])

    n = np.array([math.cos(th), math.sin(th)])
    nr = np.array([math.cos(th + phi), math.sin(th + phi)])
    for code in CODES:
        a = _flux(code, rot(UL, phi), rot(UR, phi), nr, G, 0.1)
        b = rot(_flux(code, UL, UR, n, G, 0.1), phi)
        np.testing.assert_allclose(a, b, rtol=1e-11, atol=1e-11)


@pytest.mark.parametrize("sign", [1, -1])
def test_roe_upwind_when_supersonic(sign):
    # for u_n - a > 0 every Roe wave runs one way, so F* = F(UL) exactly (Roe 1981); mirrored for u_n + a < 0
    rng = np.random.default_rng(3)
    for _ in range(20):
        UL = state(rng.uniform(0.5, 2), sign * rng.uniform(3.0, 4.0), rng.uniform(-0.5, 0.5), rng.uniform(0.5, 1.0))
        UR = state(rng.uniform(0.5, 2), sign * rng.uniform(3.0, 4.0), rng.uniform(-0.5, 0.5), rng.uniform(0.5, 1.0))
        n = np.array([1.0, 0.0])
        up = UL if sign > 0 else UR
        F = np.array(normal_flux(*up, 1.0, 0.0, G))
        np.testing.assert_allclose(_flux(INTERFACE_FLUXES["roe"].code, UL, UR, n, G, 0.1), F, rtol=1e-12)


def test_unknown_flux_lists_valid_names():
    with pytest.raises(KeyError) as exc:
        INTERFACE_FLUXES["roee"]
    msg = str(exc.value)
    assert "did you mean 'roe'" in msg and "rusanov" in msg
