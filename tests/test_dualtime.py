"""Dual time stepping: BDF weights, modal transfers, the pseudo-time iteration, p-multigrid, checkpoints.

The temporal-order checks march the same semi-discrete FR system (isentropic
vortex, p = 3, 8 x 8 elements) with BDF-k and with SSP-RK(5,4) at a quarter
of its stable step.  The RK(5,4) run is the reference: its own time error is
O(dt^4) with dt about 4e-3, far below the BDF errors measured (>= 1e-6), and
because both runs share the spatial discretisation the difference is the BDF
time error alone (against the exact vortex the spatial error, about 5e-4 here,
would mask it).
"""
from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from solver.dualtime import (PHYSICAL_SCHEMES, DualTimeStepper, DualTimeWarning, bdf_weights, build_dual_stepper,
                             dual_settings)
from solver.pmultigrid import modal_transfer
from solver.pseudotime import PseudoTimeLevel
from tools.dual_bench import vortex_setup


@pytest.fixture(scope="module")
def vortex3():
    return vortex_setup(3, 8)


def _reference(fac, U0, p, t_end):
    from solver.stepper import ExplicitStepper

    U = U0.copy()
    ExplicitStepper(fac(p), "ssp-rk54", cfl=0.25).advance(U, 0.0, t_end)
    return U


def _rms_rho(a, b):
    return float(np.sqrt(np.mean((a[..., 0] - b[..., 0]) ** 2)))


# ---------------------------------------------------------------------------
# BDF weights
# ---------------------------------------------------------------------------
def test_constant_step_weights_are_the_published_ones():
    # BDF1..3 with equal steps (Curtiss & Hirschfelder 1952; Hairer & Wanner, Solving ODEs II, Table V.1.1,
    # from memory): (1, -1), (3/2, -2, 1/2), (11/6, -3, 3/2, -1/3)
    published = {1: [1, -1], 2: [1.5, -2, 0.5], 3: [11 / 6, -3, 1.5, -1 / 3]}
    for k, w in published.items():
        assert np.allclose(PHYSICAL_SCHEMES[f"bdf{k}"].obj.weights, w, rtol=0, atol=1e-15)
        assert np.allclose(bdf_weights([0.37] * k), w, rtol=0, atol=1e-13)


def test_variable_step_weights_differentiate_polynomials_exactly():
    # BDF-k is exact for polynomials of degree <= k; derivative from numpy.polynomial
    rng = np.random.default_rng(4)
    for k in (1, 2, 3):
        steps = rng.uniform(0.5, 1.5, k) * 0.1
        a = bdf_weights(steps)
        t = np.concatenate(([0.0], -np.cumsum(steps)))  # t^{n+1} = 0, t^n, t^{n-1}, ...
        for deg in range(k + 1):
            c = rng.normal(size=deg + 1)
            poly = np.polynomial.Polynomial(c)
            approx = np.dot(a, poly(t)) / steps[0]
            assert approx == pytest.approx(poly.deriv()(0.0), abs=1e-10)
        # and not for degree k + 1 (the formula has order k, not more)
        poly = np.polynomial.Polynomial([0.0] * (k + 1) + [1.0])
        assert abs(np.dot(a, poly(t)) / steps[0] - poly.deriv()(0.0)) > 1e-6


def test_variable_step_bdf2_closed_form():
    # omega = dt_{n+1}/dt_n: a = ((1+2w)/(1+w), -(1+w), w^2/(1+w))
    # (Hairer, Norsett & Wanner, Solving ODEs I, Sec. III.5; from memory)
    for w in (0.5, 1.3, 2.0):
        a = bdf_weights([w, 1.0])
        assert np.allclose(a, [(1 + 2 * w) / (1 + w), -(1 + w), w * w / (1 + w)], rtol=1e-14)


# ---------------------------------------------------------------------------
# modal transfers
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("points", ["gauss-legendre", "gauss-lobatto"])
def test_modal_restriction_is_the_l2_projection(points):
    from solver.basis import make_basis

    hi, lo = make_basis(4, points), make_basis(2, points)
    R, P = modal_transfer(hi, lo), modal_transfer(lo, hi)
    assert R.shape == (3, 5) and P.shape == (5, 3)
    assert np.allclose(R @ P, np.eye(3), atol=1e-13)
    # L2 projection of f onto degree 2 by Gauss quadrature with numpy's Legendre series
    x, w = np.polynomial.legendre.leggauss(12)
    f = lambda s: np.exp(0.7 * s) * np.sin(2 * s)  # noqa: E731
    # the degree-4 interpolant of f, restricted, equals the projection of that interpolant
    interp = np.polynomial.Legendre.fit(hi.x, f(hi.x), 4, domain=[-1, 1])
    proj_i = np.polynomial.Legendre(
        [(2 * m + 1) / 2 * np.sum(w * interp(x) * np.polynomial.Legendre.basis(m)(x)) for m in range(3)])
    assert np.allclose(R @ f(hi.x), proj_i(lo.x), atol=1e-12)
    # a degree-2 polynomial passes through restriction and prolongation unchanged
    g = np.polynomial.Polynomial([0.3, -1.2, 0.8])
    assert np.allclose(R @ g(hi.x), g(lo.x), atol=1e-13)
    assert np.allclose(P @ g(lo.x), g(hi.x), atol=1e-13)


# ---------------------------------------------------------------------------
# the pseudo-time level
# ---------------------------------------------------------------------------
def test_unsteady_residual_is_jameson_bdf2(vortex3):
    # R*(U) = R(U) - (3U - 4U^n + U^{n-1}) / (2 dt)  (Jameson 1991, our sign convention dU/dt = R)
    fac, U0, exact = vortex3
    op = fac(3)
    lv = PseudoTimeLevel(op)
    dt = 0.07
    Un, Unm1 = exact(0.1), U0
    U = exact(0.17)
    lv.use_s = True
    lv.S[...] = (-2.0 * Un + 0.5 * Unm1) / dt
    lv.set_physical(0.17, 1.5 / dt)
    out = np.empty_like(U)
    norm = lv.residual(U, out)
    R = np.empty_like(U)
    op.rhs(0.17, U, R)
    want = R - (3 * U - 4 * Un + Unm1) / (2 * dt)
    assert np.allclose(out, want, rtol=1e-12, atol=1e-12)
    assert norm == pytest.approx(np.sqrt(np.mean((want * lv.scale) ** 2)), rel=1e-12)


def test_point_implicit_term_keeps_tiny_physical_steps_stable(vortex3):
    # dt = 1/100 of the explicit step: a0 dtau / dt ~ 100 is far outside the reach (2.5) of ssp-rk33 on the
    # real axis, so without the factor 1/(1 + a0 dtau/dt) (Melson, Sanetrik & Atkins 1993) the iteration
    # diverges; with it, it converges, and backward Euler over a tiny step is U + dt R(U) + O(dt^2).
    fac, U0, _ = vortex3
    op = fac(3)
    st = build_dual_stepper(fac, dict(scheme="bdf1", dt=1e-4, tolerance=1e-10, multigrid=False), op=op)
    R = np.empty_like(U0)
    op.rhs(0.0, U0, R)
    U = U0.copy()
    st.step(U, 0.0, 1e-4)
    s = st.last_stats
    # with r = a0 dtau/dt >> 1 every mode is multiplied by about R_rk(-r/(1+r)) ~ R_rk(-1) = 1/3 per RK step
    rate = abs(st.fine.rk.stability_function(-1.0))
    assert rate == pytest.approx(1.0 / 3.0)
    assert s["converged"] and s["iterations"] <= math.ceil(math.log(1e-10 / s["residual0"]) / math.log(rate)) + 2
    # backward Euler: U1 - U0 - dt R(U0) = dt (R(U1) - R(U0)) ~ dt^2 J R, |J| <= max spectral radius
    lc, _ = op.spectral_radii(U0)
    dR = 1e-4 * np.max(np.abs(R))
    assert np.max(np.abs(U - (U0 + 1e-4 * R))) <= 1e-4 * np.max(lc) * dR


def test_positivity_safeguard_halves_only_offending_elements():
    from solver.initial import conserved, primitive
    from solver.kernels.pseudotime import limit_update

    g = 1.4
    rho = np.ones((3, 2, 2))
    base = conserved(rho, 0.5 * rho, 0 * rho, rho, g)
    target = conserved(rho, 0.5 * rho, 0 * rho, rho, g)
    target[0, 0, 0, 0] = -1.0                      # element 0: density would change sign
    target[1] = conserved(1.0, 0.5, 0.0, 0.5, g)   # element 1: a legal change (pressure halves)
    target[2] = conserved(1.0, 0.5, 0.0, -3.0, g)  # element 2: pressure would change sign
    out = base.copy()
    n = limit_update(base, target, out, False, g, 0.1, 10)
    assert n == 2
    # element 0: rho = 1 + theta (-2) > 0.1 needs theta < 0.45 -> the largest power of 1/2 is 1/4
    assert out[0, 0, 0, 0] == pytest.approx(1.0 - 0.25 * 2.0)
    assert np.array_equal(out[1], target[1])
    # element 2: p is linear in theta here (rho and momentum unchanged): 1 - 4 theta > 0.1 -> theta = 1/8
    _, _, _, p2 = primitive(out[2], g)
    assert np.allclose(p2, 1.0 - 4.0 * 0.125)
    # increment form gives the same result, in place
    inc = target - base
    n2 = limit_update(base, inc, inc, True, g, 0.1, 10)
    assert n2 == 2 and np.allclose(inc, out)


# ---------------------------------------------------------------------------
# temporal order
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("scheme, expected, dts, tol", [
    ("bdf1", 2.0, (0.025, 0.0125), 1e-9),
    ("bdf2", 4.0, (0.025, 0.0125), 1e-9),
])
def test_temporal_order_on_the_vortex(vortex3, scheme, expected, dts, tol):
    # error ratio when dt halves: 2^k for order k, within 15 %.  Measured: bdf1 1.99, bdf2 3.92.
    fac, U0, _ = vortex3
    t_end = 0.5
    ref = _reference(fac, U0, 3, t_end)
    errs = []
    for dt in dts:
        st = build_dual_stepper(fac, dict(scheme=scheme, dt=dt, tolerance=tol, max_iterations=3000), op=fac(3))
        U = U0.copy()
        t, steps = st.advance(U, 0.0, t_end)
        assert t == pytest.approx(t_end, abs=1e-12) and steps == round(t_end / dt)
        assert st.totals["unconverged"] == 0
        errs.append(_rms_rho(U, ref))
    ratio = errs[0] / errs[1]
    assert ratio == pytest.approx(expected, rel=0.15), f"{scheme}: errors {errs}, ratio {ratio:.3f}"


def test_bdf3_order_with_richardson_start(vortex3):
    # third order including the start-up (Richardson-extrapolated backward Euler, then BDF2):
    # ratio 8 within 15 %; measured 8.29 (about 2 s)
    fac, U0, _ = vortex3
    ref = _reference(fac, U0, 3, 0.5)
    errs = []
    for dt in (0.025, 0.0125):
        st = build_dual_stepper(fac, dict(scheme="bdf3", dt=dt, tolerance=1e-11, max_iterations=3000), op=fac(3))
        U = U0.copy()
        st.advance(U, 0.0, 0.5)
        errs.append(_rms_rho(U, ref))
    assert errs[0] / errs[1] == pytest.approx(8.0, rel=0.15)


# ---------------------------------------------------------------------------
# p-multigrid
# ---------------------------------------------------------------------------
def test_pmultigrid_halves_the_fine_level_residual_evaluations():
    # p = 4 (levels 4-3-2-1), Mach 0.5, physical step 0.5 = about 35 explicit steps (0.0145 for ssp-rk33 at
    # cfl 0.9): the regime dual time is used in.  Two BDF2 steps (the BDF1 start and one BDF2 step) to
    # tolerance 1e-6.  Measured factor about 2.6 (V(1,1), 2 coarse sweeps).
    fac, U0, _ = vortex_setup(4, 8)
    res = {}
    for mg in (False, True):
        st = build_dual_stepper(fac, dict(scheme="bdf2", dt=0.5, tolerance=1e-6, max_iterations=2000,
                                          multigrid=mg), op=fac(4))
        U = U0.copy()
        st.advance(U, 0.0, 1.0)
        assert st.totals["unconverged"] == 0
        res[mg] = (st.totals["rhs"], U)
    factor = res[False][0] / res[True][0]
    assert factor >= 2.0, f"fine-level RHS: plain {res[False][0]}, multigrid {res[True][0]} (factor {factor:.2f})"
    # both converge to the same BDF2 solution: the difference is at the level the tolerance leaves
    assert _rms_rho(res[False][1], res[True][1]) < 1e-5


# ---------------------------------------------------------------------------
# checkpoints and convergence control
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("scheme", ["bdf2", "bdf3"])
def test_state_round_trip_is_bit_exact(vortex3, scheme):
    fac, U0, _ = vortex3
    cfg = dict(scheme=scheme, dt=0.1, tolerance=1e-6)
    dt, n = 0.1, 3
    a = build_dual_stepper(fac, cfg, op=fac(3))
    Ua = U0.copy()
    for k in range(2 * n):
        a.step(Ua, k * dt, dt)
    b = build_dual_stepper(fac, cfg, op=fac(3))
    Ub = U0.copy()
    for k in range(n):
        b.step(Ub, k * dt, dt)
    state = {k: (v.copy() if isinstance(v, np.ndarray) else v) for k, v in b.get_state().items()}
    Ub_saved = Ub.copy()
    c = build_dual_stepper(fac, cfg, op=fac(3))  # a fresh process would build everything anew
    c.set_state(state)
    Uc = Ub_saved.copy()
    for k in range(n, 2 * n):
        c.step(Uc, k * dt, dt)
    assert np.array_equal(Ua, Uc)
    assert c.last_stats["order"] == a.last_stats["order"] == PHYSICAL_SCHEMES[scheme].obj.order


def test_set_state_rejects_a_foreign_state(vortex3):
    fac, U0, _ = vortex3
    st = build_dual_stepper(fac, dict(scheme="bdf2", dt=0.1), op=fac(3))
    good = st.get_state()
    with pytest.raises(ValueError, match="scheme 'bdf3'"):
        st.set_state(dict(good, scheme="bdf3"))
    with pytest.raises(ValueError, match="does not fit"):
        st.set_state(dict(good, previous=good["previous"][:, :3]))
    with pytest.raises(ValueError, match="lacks 'steps'"):
        st.set_state({k: v for k, v in good.items() if k != "steps"})


def test_unconverged_step_warns_and_is_reported(vortex3):
    fac, U0, _ = vortex3
    st = build_dual_stepper(fac, dict(scheme="bdf2", dt=0.2, tolerance=1e-14, max_iterations=3), op=fac(3))
    U = U0.copy()
    with pytest.warns(DualTimeWarning, match="max_iterations = 3"):
        st.step(U, 0.0, 0.2)
    s = st.last_stats
    assert not s["converged"] and s["iterations"] == 3 and s["residual"] > 1e-14
    got = []
    st.on_warning = got.append
    st.step(U, 0.2, 0.2)
    assert len(got) == 1 and "t = 0.4" in got[0] and st.totals["unconverged"] == 2


def test_relative_drop_stops_the_iteration(vortex3):
    fac, U0, _ = vortex3
    st = build_dual_stepper(fac, dict(scheme="bdf2", dt=0.2, tolerance=1e-14, drop=1e-2, multigrid=False),
                            op=fac(3))
    U = U0.copy()
    with warnings.catch_warnings():
        warnings.simplefilter("error", DualTimeWarning)
        st.step(U, 0.0, 0.2)
    s = st.last_stats
    assert s["converged"] and s["residual"] <= 1e-2 * s["residual0"]
    # and not a single RK step more than needed: one step fewer had not reached the drop
    st2 = build_dual_stepper(fac, dict(scheme="bdf2", dt=0.2, tolerance=1e-14, max_iterations=s["iterations"] - 1,
                                       multigrid=False), op=fac(3))
    U2 = U0.copy()
    with pytest.warns(DualTimeWarning):
        st2.step(U2, 0.0, 0.2)
    assert st2.last_stats["residual"] > 1e-2 * s["residual0"]


def test_stepper_checks_its_settings(vortex3):
    fac, _, _ = vortex3
    op = fac(3)
    with pytest.raises(ValueError, match="physical time step dt > 0"):
        build_dual_stepper(fac, dict(scheme="bdf2"), op=op)
    with pytest.raises(KeyError, match="unknown physical time scheme 'bdf4'.*bdf1, bdf2, bdf3"):
        build_dual_stepper(fac, dict(scheme="bdf4", dt=0.1), op=op)
    with pytest.raises(ValueError, match="coarsest multigrid degree must be in 1..3"):
        build_dual_stepper(fac, dict(scheme="bdf2", dt=0.1, coarsest=4), op=op)
    with pytest.raises(KeyError, match="unknown multigrid cycle 'x'"):
        build_dual_stepper(fac, dict(scheme="bdf2", dt=0.1, cycle="x"), op=op)
    with pytest.raises(ValueError, match="min_iterations <= max_iterations"):
        DualTimeStepper([PseudoTimeLevel(op)], "bdf2", 0.1, min_iterations=5, max_iterations=2)


def test_step_ratio_beyond_zero_stability_lowers_the_order(vortex3):
    # variable-step BDF2 is zero-stable for dt_{n+1}/dt_n < 1 + sqrt(2) (Grigorieff 1983; from memory)
    fac, U0, _ = vortex3
    st = build_dual_stepper(fac, dict(scheme="bdf2", dt=0.1, tolerance=1e-6), op=fac(3))
    U = U0.copy()
    st.step(U, 0.0, 0.1)
    st.step(U, 0.1, 0.02)
    assert st.last_stats["order"] == 2        # ratio 0.2
    st.step(U, 0.12, 0.1)
    assert st.last_stats["order"] == 1        # ratio 5 > 2.414
    st.step(U, 0.22, 0.1)
    assert st.last_stats["order"] == 2


# ---------------------------------------------------------------------------
# case file
# ---------------------------------------------------------------------------
CASE = """
[flow]
mach = 0.5
[mesh]
generator = "box"
nx = 2
ny = 2
[time]
{time}
end = 1.0
{pseudo}
"""


def _case(tmp_path, time, pseudo=""):
    from solver.case import load_case

    p = tmp_path / "case.toml"
    p.write_text(CASE.format(time=time, pseudo=pseudo))
    return load_case(p)


def test_case_selects_dual_time(tmp_path):
    from solver.dualtime import DEFAULTS

    case = _case(tmp_path, 'scheme = "bdf2"\ndt = 0.05', "[pseudo]\ntolerance = 1e-6\ncycle = \"w\"")
    cfg = dual_settings(case)
    assert cfg["scheme"] == "bdf2" and cfg["dt"] == 0.05 and cfg["degree"] == 3
    assert cfg["tolerance"] == 1e-6 and cfg["cycle"] == "w" and cfg["max_iterations"] == DEFAULTS["max_iterations"]
    assert dual_settings(_case(tmp_path, 'scheme = "ssp-rk33"')) is None


@pytest.mark.parametrize("time, pseudo, match", [
    ('scheme = "bdf2"', "", r"case.toml: \[time\] scheme 'bdf2' \(dual time stepping\) needs dt"),
    ('scheme = "bdf2"\ndt = 0.1\ncfl = 0.5', "", r"\[time\] give either cfl or dt, not both"),
    ('scheme = "lsrk45"', "[pseudo]\ntolerance = 1e-6", r"\[pseudo\] applies to dual time stepping"),
    ('scheme = "bdf2"\ndt = 0.1', "[pseudo]\ntolerence = 1e-6", r"\[pseudo\] unknown key 'tolerence' "
                                                               r"\(did you mean 'tolerance'\?\)"),
    ('scheme = "bdf2"\ndt = 0.1', "[pseudo]\nmax_iterations = 0", r"\[pseudo\] max_iterations must be an integer"),
    ('scheme = "bdf2"\ndt = 0.1', "[pseudo]\ncoarsest = 5", r"\[pseudo\] coarsest \(5\) exceeds the solution degree"),
])
def test_case_errors_name_the_key(tmp_path, time, pseudo, match):
    from solver.case import CaseError

    with pytest.raises(CaseError, match=match):
        dual_settings(_case(tmp_path, time, pseudo))  # load_case or dual_settings, whichever sees it first


def test_case_rejects_an_unknown_time_scheme(tmp_path):
    from solver.case import CaseError

    with pytest.raises(CaseError, match=r"\[time\] scheme: unknown time scheme 'bdf5'.*bdf2"):
        _case(tmp_path, 'scheme = "bdf5"\ndt = 0.1')
