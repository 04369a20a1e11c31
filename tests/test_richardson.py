"""Richardson extrapolation, apparent order and GCI (tools/richardson.py)."""
import math

import pytest

from tools.richardson import (apparent_order, convergence_kind, representative_spacing, richardson,
                              two_level_gci)


def test_celik_2008_table1_reattachment_length():
    # Celik, Ghia, Roache, Freitas, Coleman & Raad (2008), ASME J. Fluids Eng. 130, 078001, Table 1, first
    # column (dimensionless reattachment length, monotonic convergence) (from memory):
    # N1, N2, N3 = 18000, 8000, 4500 cells (2D), phi = 6.063, 5.972, 5.863 ->
    # r21 = 1.5, r32 = 1.333, p = 1.53, phi_ext21 = 6.1685, e_a21 = 1.5 %, e_ext21 = 1.7 %, GCI_fine21 = 2.2 %.
    h = [representative_spacing(n, dim=2) for n in (18000, 8000, 4500)]
    r = richardson(h, [6.063, 5.972, 5.863])
    assert round(r.r21, 3) == 1.5 and round(r.r32, 3) == 1.333
    assert round(r.order, 2) == 1.53
    assert round(r.extrapolated, 4) == 6.1685
    assert round(100 * r.rel_change, 1) == 1.5
    assert round(100 * r.rel_extrapolated_error, 1) == 1.7
    assert round(100 * r.gci, 1) == 2.2
    assert r.kind == "monotonic"


@pytest.mark.parametrize("a,b,k,h", [
    (2.5, -3.0, 2.7, (0.1, 0.17, 0.33)),       # non-uniform ratios 1.7, 1.94
    (-1.0, 0.4, 1.0, (0.02, 0.03, 0.08)),      # first order, ratios 1.5, 2.67
    (0.3, 5.0, 4.2, (0.05, 0.1, 0.2)),         # constant ratio: q(p) = 0
    (10.0, -2.0, 0.6, (0.01, 0.013, 0.04)),    # low order, ratios 1.3, 3.08
])
def test_analytic_sequence_recovers_order_and_limit(a, b, k, h):
    # phi(h) = a + b h^k exactly: the three-level procedure must return k and a to round-off
    phi = [a + b * x ** k for x in h]
    r = richardson(h, phi)
    assert r.order == pytest.approx(k, rel=1e-10)
    assert r.extrapolated == pytest.approx(a, rel=1e-11, abs=1e-12)
    assert r.extrapolated32 == pytest.approx(a, rel=1e-11, abs=1e-12)
    # the exact error of the fine level is bounded by its GCI band (Fs = 1.25 > 1)
    assert abs(phi[0] - a) <= r.gci_abs


def test_oscillatory_sequence_order():
    # phi_i = a + b (-1)^(i+1) h_i^k: Celik's s = -1 branch of q(p) gives k exactly for any ratios
    a, b, k, h = 1.0, 0.5, 2.0, (0.1, 0.15, 0.3)
    phi = [a + b * h[0] ** k, a - b * h[1] ** k, a + b * h[2] ** k]
    p, s, _, _ = apparent_order(h, phi)
    assert s == -1
    assert p == pytest.approx(k, rel=1e-10)
    assert convergence_kind(*phi) == "oscillatory"


def test_kinds_and_degenerate_input():
    assert convergence_kind(1.0, 1.1, 1.3) == "monotonic"
    assert convergence_kind(1.0, 1.5, 1.7) == "divergent"
    assert math.isnan(apparent_order((0.1, 0.2, 0.4), (1.0, 1.0, 2.0))[0])   # eps21 = 0
    r = richardson((0.1, 0.2, 0.4), (1.0, 1.0, 2.0))
    assert r.kind == "converged" and r.extrapolated == 1.0
    with pytest.raises(ValueError, match="increasing"):
        apparent_order((0.2, 0.1, 0.4), (1.0, 2.0, 3.0))
    with pytest.raises(ValueError, match="three levels"):
        richardson((0.1, 0.2), (1.0, 2.0))


def test_two_level_gci_with_known_order():
    # phi = a + b h^2 on two grids: with the right order the extrapolation is exact (Roache 1998, Fs = 3)
    a, b, h = 4.0, 1.5, (0.1, 0.2)
    phi = [a + b * x * x for x in h]
    g = two_level_gci(h, phi, order=2.0)
    assert g["extrapolated"] == pytest.approx(a, rel=1e-13)
    assert g["gci_abs"] == pytest.approx(3.0 * abs(phi[0] - phi[1]) / 3.0, rel=1e-13)
