"""``[initial] kind = "snapshot"``: a run that starts from another run's snapshot.

Checks against exact properties rather than stored numbers: a one-step scheme with a fixed step continued
from a snapshot reproduces the uninterrupted run bit for bit; the transfer to a higher degree keeps the
polynomial (its modal restriction returns the original values to round-off, the truncation
property of an orthonormal Legendre expansion, e.g. Karniadakis & Sherwin 2005, from memory); bad input
names the file or key.
"""
from __future__ import annotations

import numpy as np
import pytest

from solver.case import CaseError, load_case
from solver.output import latest_snapshot, read_snapshot
from solver.run import build_problem, run_case
from vortex_box import write_vortex_box

VORTEX = 'kind = "vortex"'


def _case(tmp_path, name, p=2, stop="steps = 6", initial=VORTEX, nx=4):
    return load_case(write_vortex_box(tmp_path / f"{name}.toml", 'scheme = "ssp-rk33"\ndt = 0.05\n' + stop,
                                      p=p, initial=initial, nx=nx))


def _quiet(*a):
    pass


def _snap_initial(path):
    return f'kind = "snapshot"\nfile = "{path}"'


def test_continuing_from_a_snapshot_reproduces_the_whole_run(tmp_path):
    # fixed step counts, so that both runs take the same steps to the last bit (an end time would clip
    # the last step of each by a different round-off)
    run_case(_case(tmp_path, "whole", stop="steps = 6"), printer=_quiet)
    run_case(_case(tmp_path, "first", stop="steps = 3"), printer=_quiet)
    first = latest_snapshot(tmp_path / "runs" / "first")
    cont = _case(tmp_path, "cont", stop="steps = 3", initial=_snap_initial(first))
    prob = build_problem(cont)
    assert prob.t0 == pytest.approx(0.15, abs=1e-12)
    r = run_case(cont, printer=_quiet)
    assert r["step"] == 3  # the continuation counts its own steps from t = 0.15
    a = read_snapshot(latest_snapshot(tmp_path / "runs" / "whole"))
    b = read_snapshot(latest_snapshot(tmp_path / "runs" / "cont"))
    assert b.time == pytest.approx(a.time, abs=1e-12)
    assert np.array_equal(a.U, b.U)


def test_start_at_a_higher_degree_keeps_the_polynomial(tmp_path):
    from solver.pmultigrid import modal_transfer

    run_case(_case(tmp_path, "low", stop="steps = 2"), printer=_quiet)
    snap = read_snapshot(latest_snapshot(tmp_path / "runs" / "low"))
    high = build_problem(_case(tmp_path, "high", p=4, stop="end = 1.0", initial=_snap_initial(snap.path)))
    assert high.U0.shape == (16, 5, 5, 4)
    low = build_problem(_case(tmp_path, "low2", p=2, stop="end = 1.0", initial=_snap_initial(snap.path)))
    R = modal_transfer(high.op.basis, low.op.basis)
    back = np.einsum("ia,jb,eabv->eijv", R, R, high.U0)
    assert np.max(np.abs(back - snap.U)) < 1e-12
    assert np.array_equal(low.U0, snap.U)  # same degree and points: copied exactly


def test_snapshot_errors_name_the_file_or_key(tmp_path):
    run_case(_case(tmp_path, "src", stop="steps = 1"), printer=_quiet)
    snap = latest_snapshot(tmp_path / "runs" / "src")
    with pytest.raises(CaseError, match=r"\[initial\] kind = 'snapshot' needs 'file'"):
        _case(tmp_path, "nofile", initial='kind = "snapshot"')
    with pytest.raises(CaseError, match=r"\[initial\] file: snapshot .*missing.h5' not found"):
        _case(tmp_path, "missing", initial=_snap_initial(tmp_path / "missing.h5"))
    with pytest.raises(CaseError, match=r"file applies only to kind = 'snapshot'"):
        _case(tmp_path, "wrongkind", initial=f'kind = "uniform"\nfile = "{snap}"')
    other = _case(tmp_path, "othermesh", nx=5, initial=_snap_initial(snap))
    with pytest.raises(CaseError, match=r"state-.*\.h5: snapshot mesh has 16 elements"):
        build_problem(other)
    late = _case(tmp_path, "late", stop="end = 0.01", initial=_snap_initial(snap))
    with pytest.raises(CaseError, match=r"end = 0.01 is not after the start time 0.05"):
        build_problem(late)
