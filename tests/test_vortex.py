"""Design order on the isentropic vortex (Shu 1998; Yee, Sandham & Djomehri 1999)."""
import math

import pytest

from tools.verify.vortex import run_vortex_case, verify_vortex


def test_quick_vortex_orders():
    # observed L2 density order between the two finest meshes >= p + 1 - 0.3 (the acceptance rule)
    out = verify_vortex(quick=True, printer=lambda *a: None)
    orders = {r["p"]: r["order"] for r in out["rows"] if "order" in r}
    for p, o in orders.items():
        assert o >= p + 1 - 0.3, (p, o)
    assert out["passed"]


def test_error_falls_with_degree_at_equal_mesh():
    # on a mesh resolving the vortex, raising p lowers the error (spectral-type convergence in p)
    e = [run_vortex_case(p, 12, t_end=1.0)["error"] for p in (1, 2, 3)]
    assert e[0] > e[1] > e[2]


@pytest.mark.slow
def test_full_vortex_orders():
    out = verify_vortex(quick=False, printer=lambda *a: None)
    assert out["passed"]
    p4 = [r for r in out["rows"] if r["p"] == 4 and "order" in r]
    assert p4 and not math.isnan(p4[-1]["order"])
