"""Subsonic inviscid cylinder (Bassi & Rebay 1997, J. Comput. Phys. 138): entropy-error orders."""
import math

import numpy as np
import pytest

from solver.initial import primitive
from tools.verify.inviscid_cylinder import GAMMA, MACH, _reference, potential_flow_state, \
    verify_inviscid_cylinder


def test_potential_flow_initial_state():
    # potential flow past a cylinder (Milne-Thomson, from memory): tangent to the wall, speed 2U at the
    # shoulders, free stream far away; thermodynamics isentropic with the free-stream total enthalpy
    ref = _reference()
    th = np.linspace(0, 2 * np.pi, 41)
    wall = np.stack([0.5 * np.cos(th), 0.5 * np.sin(th)], axis=-1)
    rho, u, v, p = primitive(potential_flow_state(wall, ref), GAMMA)
    assert np.abs(u * np.cos(th) + v * np.sin(th)).max() <= 1e-14
    assert np.hypot(u, v)[10] == pytest.approx(2.0, rel=1e-14)
    assert np.abs(p / ref["p"] * rho ** -GAMMA - 1).max() <= 1e-13
    h0 = GAMMA / (GAMMA - 1) * p / rho + 0.5 * (u * u + v * v)
    assert np.abs(h0 - (1 / (GAMMA - 1) / MACH ** 2 + 0.5)).max() <= 1e-12
    far = potential_flow_state(np.array([[1e4, 3e3]]), ref)
    assert np.abs(np.array(primitive(far, GAMMA)).ravel() - [1.0, 1.0, 0.0, ref["p"]]).max() <= 1e-7


def test_quick_orders_curved_and_straight():
    # curved wall (q = 3): order >= p + 0.5 for p = 2, 3 (the acceptance rule; measured 3.00 and 3.79)
    # and every run steady; straight-sided wall (q = 1): at least 10x the curved error (measured 300x at p = 2,
    # divergence at p = 3)
    out = verify_inviscid_cylinder(quick=True, printer=lambda *a: None)
    curved = {p: [r for r in out["rows"] if r["q"] == 3 and r["p"] == p] for p in (1, 2, 3)}
    for p in (2, 3):
        assert all(r["steady"] for r in curved[p])
        assert curved[p][-1]["order"] >= p + 0.5, (p, curved[p][-1]["order"])
        straight = [r for r in out["rows"] if r["q"] == 1 and r["p"] == p][-1]
        same = next(r for r in curved[p] if r["mesh"] == straight["mesh"])
        assert straight["error"] >= 10 * same["error"]
    # p = 1 is straight-sided whatever q (metrics of degree min(q, p)); it still converges, at about first order
    assert 0.8 <= curved[1][-1]["order"] < 1.5
    assert out["passed"]


@pytest.mark.slow
def test_full_orders():
    out = verify_inviscid_cylinder(quick=False, printer=lambda *a: None)
    assert out["passed"]
    p3 = [r for r in out["rows"] if r["q"] == 3 and r["p"] == 3]
    assert len(p3) == 4 and math.isfinite(p3[-1]["order"])
