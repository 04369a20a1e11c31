"""``quadfr verify blasius`` (tools/verify/blasius.py): laminar flat plate against Blasius.

References: Blasius 1908; Howarth 1938 for the digits f''(0) = 0.33206 and
delta* sqrt(Re_x)/x = 1.7208 (Schlichting, Boundary-Layer Theory, ch. 7; from
memory); the momentum-integral identity theta = 2 f''(0) x / sqrt(Re_x) (von
Kármán 1921); the Crocco-Busemann result that an adiabatic wall recovers the
total temperature exactly when Pr = 1, and the laminar recovery factor
r ~ sqrt(Pr) (White, Viscous Fluid Flow, sec. 7-3, from memory).
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from solver.initial import conserved
from tools.verify.blasius import (FULL, PUBLISHED, QUICK, TOLERANCES, blasius_solution, compressible_similarity,
                                  plate_problem, verify_blasius, wall_profiles)


@pytest.fixture(scope="module")
def blasius():
    return blasius_solution()


def test_blasius_constants(blasius):
    # Howarth (1938), from memory: f''(0) = 0.33206, eta - f -> 1.72079
    assert blasius["fpp0"] == pytest.approx(0.33206, abs=1e-5)
    assert blasius["dstar"] == pytest.approx(1.72079, abs=1e-5)
    assert blasius["cf"] == pytest.approx(PUBLISHED["cf"], abs=2e-4)
    assert blasius["dstar"] == pytest.approx(PUBLISHED["dstar"], abs=1e-4)
    # momentum integral of the zero-pressure-gradient layer: theta sqrt(Re_x)/x = cf sqrt(Re_x) = 2 f''(0)
    assert blasius["theta"] == pytest.approx(2 * blasius["fpp0"], rel=1e-8)
    f, fp, fpp = blasius["profile"](np.array([0.0, 12.0, 20.0]))
    assert fp[0] == 0 and f[0] == 0 and fp[1] == pytest.approx(1.0, abs=1e-10) and fp[2] == fp[1]


def test_compressible_similarity_limits(blasius):
    low = compressible_similarity(1e-4)
    assert low["cf"] == pytest.approx(blasius["cf"], rel=1e-6)
    assert low["dstar"] == pytest.approx(blasius["dstar"], rel=1e-6)
    # Crocco-Busemann: Pr = 1 and an adiabatic wall recover the total temperature, r = 1
    assert compressible_similarity(0.5, prandtl=1.0)["recovery"] == pytest.approx(1.0, abs=1e-6)
    # laminar recovery factor about sqrt(Pr)
    m = compressible_similarity(0.2)
    assert m["recovery"] == pytest.approx(math.sqrt(0.72), abs=0.01)
    # at Mach 0.2 compressibility moves the constants by less than 1 %, well inside the check's tolerances
    assert abs(m["cf"] / blasius["cf"] - 1) < 0.01 and abs(m["dstar"] / blasius["dstar"] - 1) < 0.01


@pytest.mark.parametrize("cfg", [QUICK, FULL], ids=["quick", "full"])
def test_wall_profiles_of_the_exact_blasius_field(blasius, cfg):
    # the post-processing alone: the Blasius field (u = U f', v = (eta f' - f) sqrt(nu U / x)/2, uniform
    # pressure and density) put on the check's mesh must give back the Blasius constants, up to the
    # interpolation error of the degree-3 element polynomials (measured below 0.3 %)
    mesh, ref, fac = plate_problem(cfg["reynolds"], cfg["mesh"])
    op = fac(cfg["degree"])
    x, y = op.metrics.xy[..., 0], op.metrics.xy[..., 1]
    xp = np.maximum(x, 1e-12)
    eta = y / np.sqrt(op.mu * xp)
    f, fp, _ = blasius["profile"](eta)
    u = np.where(x > 0, fp, 1.0)
    v = np.where(x > 0, 0.5 * np.sqrt(op.mu / xp) * (eta * fp - f), 0.0)
    U = conserved(np.ones_like(u), u, v, np.full_like(u, ref["p"]), ref["gamma"])
    w = wall_profiles(op, U)
    assert w["x"].min() >= 0.25 and w["x"].max() <= 0.75 and w["x"].size >= 10
    assert np.abs(w["dstar_sqrt_re"] / blasius["dstar"] - 1).max() <= 0.003
    assert np.abs(w["cf_sqrt_re"] / blasius["cf"] - 1).max() <= 0.005
    assert np.abs(w["cf_sqrt_re_gradient"] / blasius["cf"] - 1).max() <= 0.005
    assert np.allclose(w["re_x"], w["x"] * w["rho_e"] * w["u_e"] / op.mu)
    with pytest.raises(ValueError, match="no flux point"):
        wall_profiles(op, U, x_range=(2.0, 3.0))
    with pytest.raises(ValueError, match="does not reach"):
        wall_profiles(op, U, eta_edge=1e4)


def test_quick_blasius_verification(capsys, tmp_path):
    out = verify_blasius(quick=True, json_path=str(tmp_path / "b.json"))
    text = capsys.readouterr().out
    assert "Blasius 1908" in text and "0.332057" in text and "1.720788" in text
    assert out["run"]["converged"] and out["steady_passed"]
    # the tolerances, also in the quick form (measured: +1.0 % and +0.4 %)
    assert abs(out["cf_deviation"]) <= TOLERANCES["cf"]
    assert abs(out["dstar_deviation"]) <= TOLERANCES["dstar"]
    assert out["passed"], text
    saved = json.loads((tmp_path / "b.json").read_text())
    assert saved["passed"] and len(saved["run"]["stations"]["x"]) == len(out["run"]["stations"]["x"])


@pytest.mark.slow
def test_full_blasius_verification(capsys):
    out = verify_blasius(quick=False)
    assert out["run"]["reynolds"] == 1e5
    assert out["passed"], capsys.readouterr().out
