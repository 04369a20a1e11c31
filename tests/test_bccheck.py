"""Reflection of boundary setups (tools/bccheck.py) and of plane waves against theory.

References: the reflection of a plane acoustic wave at a boundary that fixes
the incoming 1D characteristic, amplitude -(1 - cos t)/(1 + cos t) at
incidence t (Engquist & Majda 1977, from memory); a rigid wall reflects a
normally incident wave completely with amplitude +1, a pressure-release
surface with -1 (Kinsler et al., Fundamentals of Acoustics, from memory).
"""
import json

import pytest

from solver.registry import UnknownNameError
from tools.bccheck import SETUPS, bccheck, main, plane_wave_reflection


@pytest.fixture(scope="module")
def quick(tmp_path_factory):
    path = tmp_path_factory.mktemp("bccheck") / "bccheck.json"
    res = bccheck(quick=True, json_path=str(path), printer=lambda *a: None)
    return res, path


def row(res, setup, problem):
    return next(r for r in res["rows"] if r["setup"] == setup and r["problem"] == problem)


def test_quick_setups_pass_their_thresholds(quick):
    res, path = quick
    assert {r["setup"] for r in res["rows"]} == {"fixed-state", "far-field", "far-field+sponge"}
    for r in res["rows"]:
        lim = SETUPS[r["setup"]].limits[r["problem"]]
        assert r["reflected"] <= lim[0] and r["crossing"] <= lim[1], r
    assert res["passed"]
    assert json.loads(path.read_text())["passed"] is True


def test_far_field_reflects_no_more_than_fixed_state_and_sponge_less(quick):
    # with the Roe flux the imposed free stream is already a linearised characteristic condition, so the
    # far field cannot be much better (measured equal to 3 digits); it must never be worse. The sponge must
    # cut the reflection at least 3x in both problems (measured 4x pulse, 8x vortex).
    res, _ = quick
    for prob in ("pulse", "vortex"):
        fs, ff, sp = (row(res, s, prob) for s in ("fixed-state", "far-field", "far-field+sponge"))
        for key in ("reflected", "crossing"):
            assert ff[key] <= 1.02 * fs[key]
            assert 3 * sp[key] < ff[key]
        # something is reflected at all (the check can fail): oblique incidence at corners, vortex exit
        assert ff["reflected"] > 1e-3


def test_pulse_reflection_is_of_oblique_incidence_size(quick):
    # a 2D pulse meets the sides at every angle; the 1D characteristic energy reflection is 0 at normal
    # incidence and ((1-cos t)/(1+cos t))^2 = 2.9 % at 45 degrees, so the total lies between 0 and 3 %
    res, _ = quick
    r = row(res, "far-field", "pulse")
    assert 0.0 < r["reflected"] < 0.03


@pytest.mark.parametrize("condition,expected", [("far-field", 0.0), ("fixed-state", 0.0), ("slip-wall", 1.0),
                                                ("static-outflow", 1.0)])
def test_normal_incidence_plane_wave(condition, expected):
    # characteristic conditions absorb a normally incident wave (reflection second order in the amplitude
    # 1e-4); a rigid wall and a fixed pressure reflect all of it
    r = plane_wave_reflection(0.0, condition)
    assert abs(r["measured"] - expected) <= (1e-8 if expected == 0 else 1e-3)


@pytest.mark.parametrize("theta", [30.0, 45.0])
@pytest.mark.parametrize("condition", ["far-field", "fixed-state"])
def test_oblique_plane_wave_matches_characteristic_theory(theta, condition):
    # Engquist & Majda (1977) reflection integrated over the packet's spectrum; measured 0.1-0.8 % off
    r = plane_wave_reflection(theta, condition)
    assert r["measured"] == pytest.approx(r["predicted"], rel=0.02)


def test_unknown_setup_lists_valid():
    with pytest.raises(UnknownNameError) as exc:
        bccheck(["far-feild"], quick=True, printer=lambda *a: None)
    msg = str(exc.value)
    assert "far-field" in msg and "fixed-state" in msg and "did you mean" in msg
    with pytest.raises(UnknownNameError):
        main(["--quick", "nonsense"])
