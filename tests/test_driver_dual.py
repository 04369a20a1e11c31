"""The driver with dual time stepping and sponge zones: resume bit-exactness, case errors."""
import numpy as np
import pytest

from solver.case import CaseError, load_case
from solver.output import latest_snapshot, read_snapshot
from solver.run import run_case
from vortex_box import write_vortex_box

DUAL = 'scheme = "bdf2"\ndt = 0.2\nsteps = 6\n[pseudo]\ntolerance = 1e-6'


def _case(tmp_path, name, time=DUAL, extra="", mesh_extra=""):
    return load_case(write_vortex_box(tmp_path / f"{name}.toml", time, extra=extra, mesh_extra=mesh_extra))


def _quiet(*a):
    pass


def test_dual_time_resume_is_bit_exact(tmp_path):
    # 2N steps in one go equal N steps, a resume from the checkpoint (which holds U^(n-1)), and N more
    run_case(_case(tmp_path, "whole"), printer=_quiet)
    split = _case(tmp_path, "split")
    run_case(split, printer=_quiet, stop_after=3)
    run_case(split, resume=True, printer=_quiet)
    a = read_snapshot(latest_snapshot(tmp_path / "runs" / "whole"))
    b = read_snapshot(latest_snapshot(tmp_path / "runs" / "split"))
    assert a.step == b.step == 6
    assert np.array_equal(a.U, b.U)


def test_sponge_case_runs_and_caps_the_step(tmp_path):
    bcs = '[boundaries]\nleft = "far-field"\nright = "far-field"\nbottom = "far-field"\ntop = "far-field"\n'
    sp = '[[sponge]]\ntags = ["right"]\nwidth = 2.0\nstrength = 200.0\n'
    case = _case(tmp_path, "sponge", time='steps = 3', extra=bcs + sp,
                 mesh_extra="periodic_x = false\nperiodic_y = false")
    from solver.run import build_problem
    prob = build_problem(case)
    sponge = prob.op.sources[0]
    assert 0 < prob.stepper.rate_cap == sponge.max_rate <= 200.0
    # sigma dt within the scheme's real-axis reach (SSP-RK(3,3): 2.51, Shu & Osher 1988 stability region)
    assert prob.stepper.stable_dt(prob.U0) * sponge.max_rate <= prob.stepper.reach
    out = run_case(case, printer=_quiet)
    assert out["step"] == 3


def test_sponge_unknown_tag_is_named(tmp_path):
    bcs = '[boundaries]\nleft = "far-field"\nright = "far-field"\nbottom = "far-field"\ntop = "far-field"\n'
    sp = '[[sponge]]\ntags = ["rigth"]\nwidth = 2.0\n'
    with pytest.raises(CaseError) as exc:
        _case(tmp_path, "bad", time='steps = 3', extra=bcs + sp, mesh_extra="periodic_x = false\nperiodic_y = false")
    msg = str(exc.value)
    assert "[sponge]" in msg and "rigth" in msg and "did you mean 'right'" in msg
    assert not (tmp_path / "runs").exists()


def test_unknown_viscous_scheme_lists_valid(tmp_path):
    path = write_vortex_box(tmp_path / "v.toml", 'steps = 1')
    path.write_text(path.read_text().replace("degree = 2", 'degree = 2\nviscous = "br3"'))
    with pytest.raises(CaseError) as exc:
        load_case(path)
    assert "br2" in str(exc.value) and "ldg" in str(exc.value)


def test_history_records_the_inner_iteration_of_every_step(tmp_path):
    from solver.history import read_history

    r = run_case(_case(tmp_path, "inner", extra="[output]\nhistory_every = 1"), printer=_quiet)
    d = read_history(tmp_path / "runs" / "inner")["data"]
    it, res, res0 = d["inner/iterations"], d["inner/residual"], d["inner/residual0"]
    assert np.isnan(it[0])                      # the initial state: no step yet
    assert len(it) == 7 and np.all(it[1:] >= 1)
    assert np.all(res[1:] <= 1e-6) and np.all(res0[1:] >= res[1:])  # [pseudo] tolerance = 1e-6
    assert np.all(d["inner/converged"][1:] == 1.0)
    # per-step counts add up to the stepper's totals that the driver returns
    tot = r["inner_totals"]
    assert tot["steps"] == 6 and int(np.sum(it[1:])) == tot["iterations"]
    assert int(np.sum(d["inner/rhs"][1:])) == tot["rhs"] and int(np.sum(d["inner/coarse_rhs"][1:])) == tot["coarse_rhs"]


@pytest.mark.parametrize("time", ['scheme = "ssp-rk33"\ndt = 0.1\nend = 1.0', DUAL.replace("steps = 6", "end = 1.0")
                                  .replace("dt = 0.2", "dt = 0.1")])
def test_steps_that_add_up_to_the_end_land_on_it(tmp_path, time):
    # ten steps of 0.1 sum to 0.9999999999999999 in floating point: the tenth step is stretched to end at
    # t = 1 instead of a further step of 1e-16 (a whole inner solve in dual time)
    assert sum([0.1] * 10) < 1.0
    r = run_case(_case(tmp_path, "land", time=time), printer=_quiet)
    assert r["step"] == 10 and r["time"] == 1.0


def test_step_to_cuts_and_stretches_only_at_the_end():
    from solver.stepper import END_SNAP, step_to

    assert step_to(0.3, 0.1, None) == 0.1
    assert step_to(0.3, 0.1, 1.0) == 0.1                       # far from the end
    assert step_to(0.95, 0.1, 1.0) == pytest.approx(0.05)      # cut to land on the end
    t = sum([0.1] * 9)                                         # 0.8999999999999999
    assert step_to(t, 0.1, 1.0) == 1.0 - t > 0.1               # stretched by round-off only
    assert step_to(0.0, 0.1, 0.1 * (1 + 2 * END_SNAP)) == 0.1  # a real remainder is not absorbed
