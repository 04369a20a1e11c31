"""Open boundary states (solver/kernels/bcstate.py, solver/boundaries.py).

The checks compare the boundary states with relations that hold independently
of the code: the isentropic total-state relations (Anderson, Modern
Compressible Flow, 3rd ed., ch. 3, from memory), the Riemann invariants of 1D
isentropic flow R+- = u_n +- 2a/(gamma-1) (Courant & Friedrichs 1948, from
memory) and free-stream preservation (Kopriva 2006 metric identities).
"""
import numpy as np
import pytest

from meshing.box import box_mesh
from solver.basis import make_basis
from solver.boundaries import BOUNDARY_CONDITIONS, boundary_parameters
from solver.initial import conserved, primitive
from solver.kernels.bcstate import ghost_state, viscous_state
from solver.operator import FROperator
from solver.registry import UnknownNameError

G = 1.4


def ref_state(mach, angle=0.0, gamma=G):
    """Our free stream: rho = 1, |u| = 1, p = 1/(gamma M^2)."""
    return dict(rho=1.0, u=np.cos(angle), v=np.sin(angle), p=1.0 / (gamma * mach ** 2), gamma=gamma, mach=mach)


def ghost(name, U, n, ref, given=None, gamma=G):
    code, row = boundary_parameters(name, given, ref)
    return np.array(ghost_state(code, row, *U, n[0], n[1], gamma))


def prim(U, gamma=G):
    r, u, v, p = primitive(np.asarray(U, dtype=float), gamma)
    return float(r), float(u), float(v), float(p)


def invariants(U, n, gamma=G):
    r, u, v, p = prim(U, gamma)
    a = np.sqrt(gamma * p / r)
    un = u * n[0] + v * n[1]
    return un + 2 * a / (gamma - 1), un - 2 * a / (gamma - 1), p / r ** gamma, un, a


def unit(theta):
    return np.array([np.cos(theta), np.sin(theta)])


RNG = np.random.default_rng(2024)


@pytest.mark.parametrize("mach", [0.05, 0.38, 0.8, 1.0, 1.5, 3.0])
def test_far_field_returns_free_stream_for_uniform_free_stream(mach):
    # a uniform interior equal to the free stream carries no outgoing wave: the boundary state must be the
    # free stream itself at every normal direction (subsonic and supersonic normal Mach numbers alike)
    for angle in RNG.uniform(0, 2 * np.pi, 4):
        ref = ref_state(mach, angle)
        Uinf = conserved(ref["rho"], ref["u"], ref["v"], ref["p"], G)
        for theta in np.linspace(0, 2 * np.pi, 37):
            Ub = ghost("far-field", Uinf, unit(theta), ref)
            assert np.abs(Ub - Uinf).max() <= 1e-14 * np.abs(Uinf).max()


def test_far_field_subsonic_outflow_keeps_interior_invariant_and_entropy():
    # subsonic outflow (0 < u_n < a): R+ and entropy and tangential velocity leave the domain, so they must be
    # the interior's; R- enters from the free stream (Riemann invariants of 1D isentropic flow)
    ref = ref_state(0.4)
    rinf, uinf, vinf, pinf = ref["rho"], ref["u"], ref["v"], ref["p"]
    for _ in range(200):
        n = unit(RNG.uniform(-1.2, 1.2))          # outflow side of a flow along +x
        r = rinf * RNG.uniform(0.8, 1.2)
        u, v = uinf + RNG.uniform(-0.3, 0.3), vinf + RNG.uniform(-0.3, 0.3)
        p = pinf * RNG.uniform(0.8, 1.2)
        Ui = conserved(r, u, v, p, G)
        Rp, _, s, un, a = invariants(Ui, n)
        if not 0 < un < a:
            continue
        Ub = ghost("far-field", Ui, n, ref)
        Rpb, Rmb, sb, unb, ab = invariants(Ub, n)
        _, Rminf, _, _, _ = invariants(conserved(rinf, uinf, vinf, pinf, G), n)
        if unb <= 0:
            continue
        assert abs(Rpb - Rp) <= 1e-13 * abs(Rp)
        assert abs(Rmb - Rminf) <= 1e-13 * abs(Rminf)
        assert abs(sb - s) <= 1e-13 * s
        t = np.array([-n[1], n[0]])
        assert abs(prim(Ub)[1] * t[0] + prim(Ub)[2] * t[1] - (u * t[0] + v * t[1])) <= 1e-13


def test_far_field_subsonic_inflow_takes_free_stream_entropy():
    ref = ref_state(0.4)
    Uinf = conserved(ref["rho"], ref["u"], ref["v"], ref["p"], G)
    n = np.array([-1.0, 0.0])                     # inflow face of a flow along +x
    Ui = Uinf * np.array([1.05, 1.0, 1.0, 1.02])
    Ub = ghost("far-field", Ui, n, ref)
    Rp, _, _, _, _ = invariants(Ui, n)
    Rpb, _, sb, _, _ = invariants(Ub, n)
    _, _, sinf, _, _ = invariants(Uinf, n)
    assert abs(sb - sinf) <= 1e-13 * sinf and abs(Rpb - Rp) <= 1e-13 * abs(Rp)
    assert abs(prim(Ub)[2] - ref["v"]) <= 1e-14


def test_far_field_supersonic_branches():
    ref = ref_state(2.0)
    Uinf = conserved(ref["rho"], ref["u"], ref["v"], ref["p"], G)
    Ui = Uinf * np.array([1.1, 1.05, 1.0, 1.2])
    # supersonic inflow (face normal against the flow): full free stream
    assert np.abs(ghost("far-field", Ui, np.array([-1.0, 0.0]), ref) - Uinf).max() <= 1e-14 * Uinf.max()
    # supersonic outflow: the interior state
    assert np.array_equal(ghost("far-field", Ui, np.array([1.0, 0.0]), ref), Ui)


def total_state(U, gamma=G):
    """p0 and R T0 of a state from the isentropic relations (Anderson)."""
    r, u, v, p = prim(U, gamma)
    m2 = (u * u + v * v) * r / (gamma * p)
    f = 1 + 0.5 * (gamma - 1) * m2
    return p * f ** (gamma / (gamma - 1)), p / r * f


@pytest.mark.parametrize("mach", [0.1, 0.38, 0.7])
def test_total_inflow_has_imposed_totals(mach):
    # p0 = p (1 + (g-1)/2 M^2)^(g/(g-1)), T0 = T (1 + (g-1)/2 M^2) of the boundary state must be the imposed ones
    ref = ref_state(mach, 0.2)
    p0_inf, rt0_inf = total_state(conserved(ref["rho"], ref["u"], ref["v"], ref["p"], G))
    for _ in range(100):
        # perturbations of the order of the dynamic pressure 1/2 (our units), so that the inflow is subsonic
        given = {"total_pressure": p0_inf + 0.5 * RNG.uniform(-0.2, 0.3),
                 "total_temperature": (1 + 0.2 * mach ** 2) * (1 + mach ** 2 * RNG.uniform(-0.05, 0.05)),
                 "angle": RNG.uniform(-30, 30)}
        n = unit(np.pi + RNG.uniform(-1.0, 1.0))   # inflow face (d . n < 0)
        Ui = conserved(1 + mach ** 2 * RNG.uniform(-0.1, 0.1), RNG.uniform(0.5, 1.2), RNG.uniform(-0.2, 0.2),
                       ref["p"] + 0.5 * RNG.uniform(-0.2, 0.2), G)
        Ub = ghost("total-inflow", Ui, n, ref, given)
        p0, rt0 = total_state(Ub)
        assert abs(p0 - given["total_pressure"]) <= 1e-13 * p0
        # R T0 = T0 * (R T_inf) with R T_inf = p_inf / rho_inf in our units
        assert abs(rt0 - given["total_temperature"] * ref["p"]) <= 1e-13 * rt0
        r, u, v, p = prim(Ub)
        d = unit(np.radians(given["angle"]))
        assert abs(u * d[1] - v * d[0]) <= 1e-13 and u * d[0] + v * d[1] > 0     # along the given direction
        assert abs(invariants(Ub, n)[0] - invariants(Ui, n)[0]) <= 1e-12          # R+ from the interior


def test_total_inflow_defaults_are_free_stream_totals():
    ref = ref_state(0.5, 0.3)
    Uinf = conserved(ref["rho"], ref["u"], ref["v"], ref["p"], G)
    for theta in np.linspace(0, 2 * np.pi, 25):
        Ub = ghost("total-inflow", Uinf, unit(theta), ref)
        assert np.abs(Ub - Uinf).max() <= 1e-13 * np.abs(Uinf).max()


def test_static_outflow_pressure_and_supersonic_fallback():
    ref = ref_state(0.5)
    pb = ref["p"] * 0.97
    for _ in range(100):
        n = unit(RNG.uniform(-0.8, 0.8))
        Ui = conserved(RNG.uniform(0.9, 1.1), RNG.uniform(0.5, 1.2), RNG.uniform(-0.3, 0.3),
                       ref["p"] * RNG.uniform(0.9, 1.1), G)
        Rp, _, s, un, a = invariants(Ui, n)
        Ub = ghost("static-outflow", Ui, n, ref, {"pressure": pb})
        assert un < a
        assert abs(prim(Ub)[3] - pb) <= 1e-14 * pb
        Rpb, _, sb, _, _ = invariants(Ub, n)
        assert abs(Rpb - Rp) <= 1e-13 * abs(Rp) and abs(sb - s) <= 1e-13 * s
    # supersonic normal outflow: the interior state, the imposed pressure is ignored
    Ui = conserved(1.0, 2.5, 0.3, ref["p"], G)           # a = 2, u_n = 2.5
    assert np.array_equal(ghost("static-outflow", Ui, np.array([1.0, 0.0]), ref, {"pressure": pb}), Ui)


def test_supersonic_conditions():
    ref = ref_state(2.0)
    Ui = conserved(1.2, 1.5, 0.1, ref["p"] * 1.1, G)
    given = {"density": 1.3, "u": 2.0, "v": 0.0, "pressure": 0.2}
    want = conserved(1.3, 2.0, 0.0, 0.2, G)
    assert np.abs(ghost("supersonic-inflow", Ui, np.array([-1.0, 0.0]), ref, given) - want).max() <= 1e-15
    assert np.array_equal(ghost("supersonic-outflow", Ui, np.array([1.0, 0.0]), ref), Ui)


@pytest.mark.parametrize("name", ["far-field", "total-inflow", "static-outflow", "supersonic-inflow",
                                  "supersonic-outflow"])
def test_viscous_state_of_open_boundaries_is_the_boundary_state(name):
    ref = ref_state(0.4)
    Ui = conserved(1.05, 0.9, 0.1, ref["p"] * 1.03, G)
    code, row = boundary_parameters(name, {}, ref)
    n = unit(0.4)
    vs = viscous_state(code, row, *Ui, n[0], n[1], G)
    assert np.array_equal(np.array(vs[:4]), np.array(ghost_state(code, row, *Ui, n[0], n[1], G)))
    assert vs[4] is False


def flux_scale(op, U, mach):
    """|F| / h: the size of one term of the residual (as in tests/test_operator.py)."""
    h = np.sqrt(op.metrics.J.min()) * 2
    return np.abs(U).max() * (1 + 1.0 / mach) / h


@pytest.mark.parametrize("name,mach", [("far-field", 0.5), ("far-field", 2.0), ("total-inflow", 0.5),
                                       ("static-outflow", 0.5), ("supersonic-inflow", 2.0),
                                       ("supersonic-outflow", 2.0)])
@pytest.mark.parametrize("q", [2, 3])
def test_free_stream_preservation_each_condition(name, mach, q):
    # every boundary of one type, a uniform free stream in, warped curved elements: the residual must
    # vanish to round-off (the boundary state is the free stream on every face)
    mesh = box_mesh(5, 4, extent=(0, 1.3, 0, 1), q=q, warp=0.08, periodic=False)
    ref = ref_state(mach, np.radians(37.0))
    op = FROperator(mesh, make_basis(3), G, flux="roe", ref=ref,
                    boundaries={t: (name, {}) for t in mesh.tags})
    U = conserved(np.full(op.shape[:-1], ref["rho"]), ref["u"], ref["v"], ref["p"], G)
    R = np.empty_like(U)
    op.rhs(0.0, U, R)
    assert np.abs(R).max() / flux_scale(op, U, mach) <= 1e-12


def test_unknown_boundary_type_lists_valid_types():
    mesh = box_mesh(2, 2, periodic=False)
    ref = ref_state(0.5)
    with pytest.raises(UnknownNameError) as exc:
        FROperator(mesh, make_basis(1), G, ref=ref,
                   boundaries={t: ("far-feild", {}) for t in mesh.tags})
    msg = str(exc.value)
    assert "far-feild" in msg and "did you mean 'far-field'" in msg
    for name in BOUNDARY_CONDITIONS.names():
        assert name in msg


def test_bad_parameters_name_the_boundary():
    ref = ref_state(0.5)
    with pytest.raises(ValueError, match="boundary 'right'.*total_presure"):
        boundary_parameters("total-inflow", {"total_presure": 3.0}, ref, where="boundary 'right'")
    with pytest.raises(ValueError, match="boundary 'right'.*positive"):
        boundary_parameters("static-outflow", {"pressure": -1.0}, ref, where="boundary 'right'")


# ---------------------------------------------------------------------------
# sponge (solver/sponge.py)
# ---------------------------------------------------------------------------
from solver.sponge import Sponge, sponge_profile  # noqa: E402


def sponge_operator(q=1, warp=0.0):
    mesh = box_mesh(8, 6, extent=(0, 2, 0, 1.5), q=q, warp=warp, periodic=False)
    ref = ref_state(0.5)
    op = FROperator(mesh, make_basis(3), G, ref=ref, boundaries={t: ("far-field", {}) for t in mesh.tags})
    return op, ref


def test_sponge_profile_against_exact_distance():
    # straight sides: the distance to the 'right' and 'top' sides is exact (2 - x, 1.5 - y); the damping
    # rate is strength * (1 - d/width)^3 inside the layer (the largest of the two zones), zero outside
    op, ref = sponge_operator()
    sp = Sponge(op, ref, [dict(tags="right", width=0.4, strength=3.0),
                          dict(tags=["top"], width=0.3, strength=2.0, exponent=2.0)])
    x, y = op.metrics.xy[..., 0], op.metrics.xy[..., 1]
    want = np.maximum(sponge_profile(2.0 - x, 0.4, 3.0), sponge_profile(1.5 - y, 0.3, 2.0, 2.0))
    # straight faces are sampled as polylines, so the distance is exact to round-off
    assert np.abs(sp.sigma - want).max() <= 1e-12
    assert np.all(sp.sigma[(x < 1.6) & (y < 1.2)] == 0.0) and sp.max_rate <= 3.0


def test_sponge_distance_to_a_curved_boundary():
    # a curved right side x = 2 + 0.1 sin(pi y / 1.5) (geometry nodes moved, q = 3); compare with the
    # distance to the exact curve from scipy.optimize (minimise |x(s) - P| over the side parameter s)
    from scipy.optimize import minimize_scalar

    ref = ref_state(0.5)
    mesh = box_mesh(8, 6, extent=(0, 2, 0, 1.5), q=3, warp=0.0, periodic=False)
    g = mesh.geom
    g[..., 0] += 0.1 * np.sin(np.pi * g[..., 1] / 1.5) * (g[..., 0] / 2.0) ** 8
    op = FROperator(mesh, make_basis(3), G, ref=ref, boundaries={t: ("far-field", {}) for t in mesh.tags})
    sp = Sponge(op, ref, dict(tags="right", width=0.5, strength=1.0))
    side = lambda s: np.array([2 + 0.1 * np.sin(np.pi * s / 1.5), s])  # noqa: E731
    xy = op.metrics.xy.reshape(-1, 2)
    sig = sp.sigma.reshape(-1)
    pick = np.nonzero((sig > 0) & (sig < 1))[0][::7]
    assert pick.size > 20
    errs = []
    for k in pick:
        P = xy[k]
        d = minimize_scalar(lambda s: np.linalg.norm(side(s) - P), bounds=(0, 1.5), method="bounded",
                            options={"xatol": 1e-12}).fun
        errs.append(abs(sig[k] - sponge_profile(d, 0.5, 1.0)))
    # the mesh side is the degree-3 interpolant of the curve (position error ~1e-5 for faces of length 0.25)
    # and |d sigma / d d| <= 3 / 0.5
    assert max(errs) <= 6 * 3e-5


def test_sponge_source_is_minus_sigma_times_deviation():
    op, ref = sponge_operator(q=3, warp=0.05)
    rng = np.random.default_rng(7)
    uinf = conserved(ref["rho"], ref["u"], ref["v"], ref["p"], G)
    U = uinf * (1 + 0.05 * rng.standard_normal(op.shape))
    R0 = np.empty_like(U)
    op.rhs(0.0, U, R0)
    sp = Sponge(op, ref, [dict(tags=["left", "bottom"], width=0.5, strength=4.0)])
    op.sources.append(sp)
    R1 = np.empty_like(U)
    op.rhs(0.0, U, R1)
    assert np.abs(R1 - (R0 - sp.sigma[..., None] * (U - uinf))).max() <= 1e-13 * np.abs(R0).max()
    # a uniform free stream is left untouched (the flux part is zero to round-off, the sponge exactly)
    Uf = np.ascontiguousarray(np.broadcast_to(uinf, op.shape))
    op.rhs(0.0, Uf, R1)
    assert np.abs(R1).max() / flux_scale(op, Uf, 0.5) <= 1e-12


def test_sponge_bad_input_names_zone_and_tags():
    op, ref = sponge_operator()
    with pytest.raises(ValueError, match="sponge zone 0: unknown boundary tag 'rigth'; mesh tags: bottom, left"):
        Sponge(op, ref, [dict(tags="rigth", width=0.3, strength=1.0)])
    with pytest.raises(ValueError, match="sponge zone 1: width must be > 0"):
        Sponge(op, ref, [dict(tags="right", width=0.3, strength=1.0), dict(tags="top", width=0.0, strength=1.0)])
    with pytest.raises(ValueError, match="sponge zone 0: unknown key 'strenght'"):
        Sponge(op, ref, [dict(tags="right", width=0.3, strenght=1.0)])
