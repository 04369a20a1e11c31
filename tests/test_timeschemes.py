"""Explicit RK schemes: order, stability functions, storage forms, allocation."""
import math
import tracemalloc

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.linalg import expm
from scipy.optimize import brentq

from solver.registry import UnknownNameError
from solver.timeschemes import TIME_SCHEMES, ExplicitRK, get_scheme

NAMES = ["ssp-rk33", "ssp-rk54", "lsrk45", "rk4"]
NOMINAL = {"ssp-rk33": 3, "ssp-rk54": 4, "lsrk45": 4, "rk4": 4}


def integrate(rk, rhs, y0, t0, T, nsteps):
    U = np.array(y0, dtype=float)
    work = rk.allocate(U)
    dt = (T - t0) / nsteps
    for k in range(nsteps):
        rk.step(rhs, t0 + k * dt, U, dt, work)
    return U


# y' = lambda y, lambda = -1 + 2i, written as a real 2-system
LAM = np.array([[-1.0, -2.0], [2.0, -1.0]])


def rhs_linear(t, U, out):
    np.dot(LAM, U, out=out)


def rhs_nonlinear(t, U, out):
    # y' = -y^2 + sin t (non-autonomous: checks the stage times c_i too)
    np.multiply(U, U, out=out)
    out *= -1.0
    out += math.sin(t)


def observed_order(errors):
    return math.log2(errors[-2] / errors[-1])


@pytest.mark.parametrize("name", NAMES)
def test_order_linear(name):
    rk = get_scheme(name)
    T, y0 = 2.0, np.array([1.0, 0.5])
    exact = expm(LAM * T) @ y0  # scipy.linalg.expm as the reference
    errs = [np.max(np.abs(integrate(rk, rhs_linear, y0, 0.0, T, n) - exact)) for n in (20, 40, 80)]
    assert abs(observed_order(errs) - NOMINAL[name]) < 0.2, errs


@pytest.mark.parametrize("name", NAMES)
def test_order_nonlinear(name):
    rk = get_scheme(name)
    T = 2.0
    ref = solve_ivp(lambda t, y: -y ** 2 + np.sin(t), (0.0, T), [1.0], method="DOP853",
                    rtol=1e-13, atol=1e-14).y[0, -1]  # scipy reference solution
    errs = [abs(integrate(rk, rhs_nonlinear, [1.0], 0.0, T, n)[0] - ref) for n in (16, 32, 64)]
    assert abs(observed_order(errs) - NOMINAL[name]) < 0.2, errs


@pytest.mark.parametrize("name", NAMES)
def test_stability_function_is_exp_taylor_to_order(name):
    rk = get_scheme(name)
    g = rk.stability_polynomial
    q = rk.order
    for k in range(q + 1):  # R(z) = exp(z) + O(z^{q+1}) for an order-q scheme
        assert g[k] == pytest.approx(1.0 / math.factorial(k), rel=1e-12, abs=1e-14)
    # ... and not beyond (otherwise the linear order test above would not measure q)
    if g.size > q + 1:
        assert abs(g[q + 1] - 1.0 / math.factorial(q + 1)) > 1e-4
    # small z: |R(z) - e^z| ~ |z|^{q+1}
    z = 1e-2 * np.exp(1j * np.linspace(0, 2 * np.pi, 7))
    assert np.max(np.abs(rk.stability_function(z) - np.exp(z))) < 1e-2 ** (q + 1)


@pytest.mark.parametrize("name", NAMES)
def test_stability_function_matches_resolvent(name):
    # R(z) = 1 + z b^T (I - zA)^{-1} 1 evaluated with numpy.linalg.solve
    rk = get_scheme(name)
    s = rk.stages
    z = np.array([0.3 - 1.2j, -2.0 + 0.1j, 1.5j, -0.7])
    direct = np.array([1 + zz * rk.b @ np.linalg.solve(np.eye(s) - zz * rk.A, np.ones(s)) for zz in z])
    got = rk.stability_function(z)
    assert got.shape == z.shape
    np.testing.assert_allclose(got, direct, rtol=1e-13, atol=1e-13)


def real_axis_limit(rk):
    # first x < 0 where |R(x)| = 1 (scan then brentq on R(x) + 1)
    x = -np.linspace(1e-3, 6.0, 6001)
    bad = np.nonzero(np.abs(rk.stability_function(x).real) > 1.0)[0][0]
    return brentq(lambda v: abs(rk.stability_function(v).real) - 1.0, x[bad], x[bad - 1])


def test_real_axis_intervals():
    # SSP-RK(3,3): real stability interval [-2.51, 0] (from memory);
    # classical RK4: [-2.785, 0] (Hairer & Wanner, Solving ODEs II; from memory)
    assert real_axis_limit(get_scheme("ssp-rk33")) == pytest.approx(-2.51, rel=0.01)
    assert real_axis_limit(get_scheme("rk4")) == pytest.approx(-2.785, rel=0.01)


def test_published_stage_times():
    # 2N form: derived c = A 1 must reproduce Carpenter & Kennedy 1994's C column
    lsrk = get_scheme("lsrk45")
    np.testing.assert_allclose(lsrk.c, lsrk.C2, rtol=0, atol=1e-14)
    # SSP(5,4) abscissae printed with the Spiteri & Ruuth 2002 coefficients (from memory)
    np.testing.assert_allclose(get_scheme("ssp-rk54").c,
                               [0.0, 0.39175222700392, 0.58607968896780, 0.47454236302687, 0.93501063100924],
                               atol=1e-12)


def _vec_rhs(t, U, out):
    out[:] = -U ** 3 + np.cos(3 * t) * U[::-1]


@pytest.mark.parametrize("name", ["lsrk45", "ssp-rk33", "ssp-rk54"])
def test_storage_form_equals_butcher_form(name):
    rk = get_scheme(name)
    butcher = ExplicitRK(name + "-butcher", rk.order, rk.A, rk.b)
    rng = np.random.default_rng(3)
    U0 = rng.uniform(0.5, 1.5, size=(7, 3))
    U1, U2 = U0.copy(), U0.copy()
    rk.step(_vec_rhs, 0.3, U1, 0.1, rk.allocate(U1))
    butcher.step(_vec_rhs, 0.3, U2, 0.1, butcher.allocate(U2))
    assert np.max(np.abs(U1 - U2)) < 1e-14
    assert np.max(np.abs(U1 - U0)) > 1e-3  # the step did something


@pytest.mark.parametrize("name", NAMES)
def test_step_does_not_allocate(name):
    rk = get_scheme(name)
    U = np.ones((200, 5, 5, 4))
    work = rk.allocate(U)
    before = [id(a) for a in work.arrays()]
    buffers = [a.__array_interface__["data"][0] for a in work.arrays()]

    def rhs(t, V, out):
        np.multiply(V, -0.5, out=out)

    rk.step(rhs, 0.0, U, 0.01, work)  # compile / warm up
    tracemalloc.start()
    for _ in range(3):
        rk.step(rhs, 0.0, U, 0.01, work)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert [id(a) for a in work.arrays()] == before
    assert [a.__array_interface__["data"][0] for a in work.arrays()] == buffers
    assert peak < 0.01 * U.nbytes, peak  # far below one solution array
    np.testing.assert_allclose(U, np.exp(-0.5 * 0.04), rtol=1e-8)  # and it solved y' = -y/2


def test_bad_inputs():
    rk = get_scheme("rk4")
    U = np.ones((4, 3))
    work = rk.allocate(U)
    with pytest.raises(ValueError, match="shape"):
        rk.step(lambda t, V, out: None, 0.0, np.ones((3, 3)), 0.1, work)
    with pytest.raises(ValueError, match="another scheme"):
        rk.step(lambda t, V, out: None, 0.0, U, 0.1, get_scheme("lsrk45").allocate(U))
    with pytest.raises(ValueError, match="C-contiguous"):
        rk.allocate(np.ones((4, 6))[:, ::2])
    with pytest.raises(UnknownNameError, match="ssp-rk33"):
        get_scheme("ssp-rk3")
    assert [TIME_SCHEMES[n].code for n in NAMES] == [0, 1, 2, 3]
