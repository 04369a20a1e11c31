"""``quadfr verify cylinder-dual`` (tools/verify/cylinder_dual.py): dual time stepping on the Re = 100 cylinder.

Checked against the explicit SSP-RK(5,4) run on the same mesh and degree (St within 1 %) and against
Williamson's (1988, Phys. Fluids 31) Strouhal fit St = -3.3265/Re + 0.1816 + 1.600e-4 Re (within 2 % in
the full form, within the quick tolerance of ``verify cylinder`` on the coarse quick mesh), and the
p-multigrid inner iteration against the plain one (at least 2x fewer fine-level residual evaluations over
the same steps; the 2x is the issue's requirement).
"""
from __future__ import annotations

import math

import pytest

from tools.verify.cylinder_dual import FULL, QUICK, verify_cylinder_dual


def test_settings_are_consistent():
    for cfg in (QUICK, FULL):
        assert cfg["nominal"] in cfg["dts"] and cfg["plain_dt"] in cfg["dts"]
        assert cfg["develop"] + cfg["settle"] < cfg["end"]
    assert FULL["tol_explicit"] == 0.01 and FULL["tol_williamson"] == 0.02 and FULL["nominal"] >= 0.02


def test_quick_dual_time_cylinder(capsys, tmp_path):
    r = verify_cylinder_dual(quick=True, keep=str(tmp_path))
    out = capsys.readouterr().out
    assert r["passed"], out
    exp, dual = r["rows"][0], r["rows"][1]
    # the measured numbers are the analysis of real runs: finite, and the dual run really iterated
    assert math.isfinite(exp["st"]) and math.isfinite(dual["st"])
    assert dual["iterations"] > 1 and dual["fine_rhs"] > dual["iterations"]
    assert abs(dual["st"] / exp["st"] - 1.0) <= 0.01
    assert r["multigrid_factor"] >= 2.0
    # the dual run started at the explicit snapshot's time, not at 0
    assert dual["window"][0] >= QUICK["develop"]


@pytest.mark.slow
def test_full_dual_time_cylinder(capsys):
    r = verify_cylinder_dual(quick=False)
    assert r["passed"], capsys.readouterr().out
