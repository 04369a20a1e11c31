"""FR Euler operator: free-stream preservation, conservation, numba vs numpy reference."""
import numpy as np
import pytest

from meshing.box import box_mesh
from meshing.mesh import MeshError
from reference_fr import residual_np
from solver.basis import make_basis
from solver.initial import conserved, isentropic_vortex
from solver.kernels.bcstate import ghost_state
from solver.operator import FROperator
from solver.stepper import ExplicitStepper

G = 1.4
M = 0.5
REF = dict(rho=1.0, u=0.8, v=0.6, p=1.0 / (G * M * M), gamma=G)


def uniform(op):
    return conserved(np.full(op.shape[:-1], REF["rho"]), REF["u"], REF["v"], REF["p"], G)


def flux_scale(op, U):
    """|F| / h: the size of one term of the residual, to normalise round-off."""
    h = np.sqrt(op.metrics.J.min()) * 2
    return np.abs(U).max() * (1 + 1.0 / M) / h


@pytest.mark.parametrize("q", [1, 2, 3, 4])
@pytest.mark.parametrize("p", [1, 2, 3, 4, 5])
def test_free_stream_preservation(q, p):
    # a uniform flow is an exact solution; with the metric terms of solver/metrics.py (Kopriva 2006) the
    # discrete residual must vanish to round-off on curved elements. Normalised by |F|/h (one residual term).
    mesh = box_mesh(5, 4, extent=(0, 1.3, 0, 1), q=q, warp=0.08)
    for flux in ("roe", "rusanov"):
        op = FROperator(mesh, make_basis(p), G, flux=flux, ref=REF)
        U = uniform(op)
        R = np.empty_like(U)
        op.rhs(0.0, U, R)
        assert np.abs(R).max() / flux_scale(op, U) <= 1e-12


@pytest.mark.parametrize("q", [2, 4])
def test_free_stream_with_slip_walls_and_state(q):
    # slip walls aligned with the flow and a free-stream exterior state leave a uniform flow untouched
    mesh = box_mesh(4, 4, q=q, warp=0.05, periodic=(True, False))
    ref = dict(REF, u=1.0, v=0.0)
    op = FROperator(mesh, make_basis(3), G, ref=ref,
                    boundaries={"bottom": ("slip-wall", {}), "top": ("fixed-state", {})})
    U = conserved(np.ones(op.shape[:-1]), 1.0, 0.0, ref["p"], G)
    R = np.empty_like(U)
    op.rhs(0.0, U, R)
    assert np.abs(R).max() / flux_scale(op, U) <= 1e-12


def test_conservation_100_steps():
    # with periodic faces the FR residual integrates to zero for Gauss points (Huynh 2007), so the
    # integral of every conserved variable is constant up to round-off
    mesh = box_mesh(6, 5, extent=(-10, 10, -10, 10), q=3, warp=0.05)
    op = FROperator(mesh, make_basis(3), G, flux="roe", ref=REF)
    U = isentropic_vortex(op.metrics.xy, REF, 5.0, 1.0, (0.0, 0.0), 0.0, (20.0, 20.0))
    I0 = op.integrate(U)
    st = ExplicitStepper(op, "ssp-rk33", cfl=0.8)
    dt = st.stable_dt(U)
    for k in range(100):
        st.step(U, k * dt, dt)
    I1 = op.integrate(U)
    assert np.all(np.abs(I1 - I0) <= 1e-12 * np.abs(I0).max())


@pytest.mark.parametrize("points", ["gauss-legendre", "gauss-lobatto"])
@pytest.mark.parametrize("flux", ["rusanov", "roe"])
@pytest.mark.parametrize("p,q", [(1, 2), (3, 3), (4, 2)])
def test_numba_equals_numpy_reference(points, flux, p, q):
    # the same maths written twice: numba kernels vs tests/reference_fr.py, random state, random warp
    rng = np.random.default_rng(p * 10 + q)
    mesh = box_mesh(4, 3, extent=(0, 2, 0, 1), q=q, warp=rng.uniform(0.02, 0.08), periodic=(True, False))
    bcs = {"bottom": ("slip-wall", {}), "top": ("fixed-state", {})}
    op = FROperator(mesh, make_basis(p, points, "hu"), G, flux=flux, ref=REF, boundaries=bcs)
    U = uniform(op) * (1 + 0.1 * rng.standard_normal(op.shape))
    R = np.empty_like(U)
    op.rhs(0.0, U, R)

    def ghost(e, f, UL, nrm):
        tag = next(t for t in mesh.tags if any((mesh.boundary_faces[t] == [e, f]).all(1)))
        g = op.bc_tags.index(tag)
        return np.array([ghost_state(op.bcode[g], op.bprm[g], *UL[k], *nrm[k], G) for k in range(len(UL))])

    Rref = residual_np(U, op.metrics, op.basis, mesh, G, flux, 0.1, ghost)
    assert np.abs(R - Rref).max() <= 1e-12 * np.abs(Rref).max()


def test_inverted_element_is_refused_with_id():
    mesh = box_mesh(3, 3, q=2, periodic=False)
    # fold element 4 (the centre) over itself by pulling its interior node far outside
    mesh.geom[4, 1, 1] = [5.0, 5.0]
    with pytest.raises(MeshError) as exc:
        FROperator(mesh, make_basis(2), G, ref=REF,
                   boundaries={t: ("fixed-state", {}) for t in mesh.tags})
    assert "element 4" in str(exc.value)


def test_boundary_tag_mismatch_lists_both():
    mesh = box_mesh(2, 2, periodic=(True, False))
    with pytest.raises(ValueError) as exc:
        FROperator(mesh, make_basis(1), G, ref=REF, boundaries={"bottom": ("slip-wall", {})})
    assert "top" in str(exc.value) and "bottom" in str(exc.value)


def test_unknown_boundary_condition_lists_valid():
    mesh = box_mesh(2, 2, periodic=(True, False))
    with pytest.raises(KeyError) as exc:
        FROperator(mesh, make_basis(1), G, ref=REF,
                   boundaries={"bottom": ("slip-wal", {}), "top": ("fixed-state", {})})
    assert "slip-wall" in str(exc.value) and "fixed-state" in str(exc.value)
