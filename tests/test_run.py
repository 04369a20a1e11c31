"""The run driver (solver/run.py): histories, resume bit for bit, SIGINT checkpoint, blow-up guard.

The references are the driver's own uninterrupted run (resume must reproduce
it bit for bit) and the definitions of the recorded quantities (probe values
against the exact polynomial of a linear field, history schedule).
"""
from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from solver.case import CaseError, load_case
from solver.guard import SolutionBlowUp
from solver.history import read_history
from solver.output import list_snapshots, read_snapshot
from solver.run import run_case

ROOT = Path(__file__).resolve().parents[1]

CASE = """
title = "small cylinder for driver tests"
[flow]
mach = 0.2
reynolds = 40.0
[mesh]
generator = "cylinder"
n_radial = 4
n_around = 8
far_radius = 6.0
q = 2
[scheme]
degree = 2
[time]
scheme = "ssp-rk54"
{time}
progress_every = 7
[boundaries]
wall = "noslip-wall"
far = "far-field"
[output]
directory = "{dir}"
history_every = 3
snapshot_every = 0.05
checkpoint_minutes = 0.0
[monitor]
probes = [[1.0, 0.0], [2.0, 0.4]]
average_from = 0.02
[kick]
speed = 0.5
duration = 0.04
"""


def _case(tmp_path, name="c", time_keys="steps = 40", directory=None, extra=""):
    path = tmp_path / f"{name}.toml"
    path.write_text(CASE.format(time=time_keys, dir=directory or f"runs/{name}") + extra)
    return load_case(path)


def _quiet(*a, **k):
    pass


def test_resume_is_bit_exact(tmp_path):
    a = run_case(_case(tmp_path, "a"), printer=_quiet)
    cb = _case(tmp_path, "b")
    r1 = run_case(cb, printer=_quiet, stop_after=17)  # 17: not a multiple of the dt recomputation interval
    assert r1["status"] == "stopped" and r1["step"] == 17
    b = run_case(cb, resume=True, printer=_quiet)
    assert a["step"] == b["step"] == 40 and a["time"] == b["time"]
    sa, sb = read_snapshot(a["snapshot"]), read_snapshot(b["snapshot"])
    assert np.array_equal(sa.U, sb.U)  # bit for bit
    for k in ("average_sum", "average_sum_sq", "average_time", "dt"):
        assert np.array_equal(sa.extra[k], sb.extra[k]), k
    ha, hb = read_history(a["run_dir"]), read_history(b["run_dir"])
    assert list(hb["data"]["step"]) == list(range(0, 41, 3))  # no duplicate rows, none missing
    for c in ha["columns"]:
        if c != "wall_time":
            assert np.array_equal(ha["data"][c], hb["data"][c]), c
    lines = (Path(b["run_dir"]) / "history.csv").read_text().splitlines()
    assert len(lines) == 1 + 14 and lines[0].split(",") == ha["columns"]
    # the CSV copy is lossless
    cd = np.array([float(x.split(",")[ha["columns"].index("forces/total/cd")]) for x in lines[1:]])
    assert np.array_equal(cd, ha["data"]["forces/total/cd"])
    # the same schedule of snapshots (every 0.05 in time) plus the checkpoint at step 17
    steps_a = [read_snapshot(p).step for p in list_snapshots(a["run_dir"])]
    steps_b = [read_snapshot(p).step for p in list_snapshots(b["run_dir"])]
    assert sorted(set(steps_b) - set(steps_a)) == [17]


def test_resume_after_rows_written_past_the_snapshot(tmp_path):
    # a crash after the last snapshot leaves history rows beyond it: resume drops them
    c = _case(tmp_path, "c")
    run_case(c, printer=_quiet, stop_after=20)
    snaps = list_snapshots(c.output_dir)
    for p in snaps:
        if read_snapshot(p).step == 20:
            p.unlink()  # as if the process died after writing rows 0..18 and before this checkpoint
    last = read_snapshot(list_snapshots(c.output_dir)[-1])
    assert last.step < 20
    run_case(c, resume=True, printer=_quiet)
    h = read_history(c.output_dir)
    assert list(h["data"]["step"]) == list(range(0, 41, 3))


def test_history_contents(tmp_path):
    c = _case(tmp_path, "h", time_keys="steps = 12")
    r = run_case(c, printer=_quiet)
    h = read_history(r["run_dir"])
    d = h["data"]
    assert h["attrs"]["walls"] == ["wall"] and h["attrs"]["reference_length"] == 1.0
    assert np.array_equal(h["attrs"]["probe_points"], [[1.0, 0.0], [2.0, 0.4]])
    # pressure + viscous = total, wind axes = body axes at zero angle
    for a in ("cd", "cl", "cm"):
        s = d[f"forces/total/{a}_pressure"] + d[f"forces/total/{a}_viscous"]
        assert np.allclose(d[f"forces/total/{a}"], s, rtol=1e-14, atol=1e-14)
    assert np.array_equal(d["forces/total/cd"], d["forces/total/cx"])
    # the first row is the free stream: probes read it exactly, bounds are the free-stream values
    assert d["probes/0/rho"][0] == pytest.approx(1.0, abs=1e-13)
    assert d["probes/1/u"][0] == pytest.approx(1.0, abs=1e-13)
    assert d["bounds/p_min"][0] == pytest.approx(1.0 / (1.4 * 0.04), rel=1e-13)
    assert np.all(d["bounds/rho_min"] <= d["bounds/rho_max"])
    assert np.all(np.diff(d["time"]) > 0) and np.all(np.diff(d["wall_time"]) >= 0)
    # the running average of the final snapshot has the time after average_from
    s = read_snapshot(r["snapshot"])
    assert s.extra["average_time"] == pytest.approx(s.time - 0.02, rel=1e-12)
    mean = s.extra["average_sum"] / s.extra["average_time"]
    assert np.all(mean[..., 0] > 0) and np.all(np.isfinite(mean))


def test_time_interval_history(tmp_path):
    c = _case(tmp_path, "ti", time_keys="end = 0.1", extra="")
    text = c.path.read_text().replace("history_every = 3", "history_interval = 0.02")
    c.path.write_text(text)
    r = run_case(load_case(c.path), printer=_quiet)
    t = read_history(r["run_dir"])["data"]["time"]
    # one row at t = 0 and then the first step on or after each multiple of 0.02
    k = np.floor(t[1:] / 0.02 + 1e-9)
    assert t[0] == 0.0 and np.all(np.diff(k) >= 1) and len(t) >= 5


def test_blow_up_guard_writes_diagnostic_and_last_good_state(tmp_path, capsys):
    from tools.cli import main

    c = _case(tmp_path, "nan", time_keys="steps = 200\ndt = 0.2")  # far beyond the stable step (~4e-3)
    c.path.write_text(c.path.read_text().replace("snapshot_every = 0.05", "snapshot_every = 0.0"))
    with pytest.raises(SolutionBlowUp) as exc:
        run_case(load_case(c.path), printer=_quiet)
    diag = exc.value.diagnostic
    run_dir = load_case(c.path).output_dir
    saved = json.loads((run_dir / "failure.json").read_text())
    for k in ("step", "time", "element", "location", "variable", "problem", "last_good_snapshot"):
        assert k in saved, k
    assert saved["step"] == diag["step"] >= 1 and saved["time"] == pytest.approx(0.2 * saved["step"])
    assert 0 <= saved["element"] < 32 and saved["variable"] in ("density", "pressure", "x-momentum", "y-momentum",
                                                                 "total energy")
    snap = read_snapshot(saved["last_good_snapshot"])  # readable, and the state before the failing step
    assert snap.step == saved["step"] - 1 and np.all(np.isfinite(snap.U)) and np.all(snap.U[..., 0] > 0)
    # the command line: a clear message and a non-zero status
    capsys.readouterr()
    assert main(["solve", str(c.path)]) == 1
    err = capsys.readouterr().err
    assert "quadfr: error: solution" in err and "element" in err and "failure.json" in err


def test_sigint_writes_a_checkpoint(tmp_path):
    c = _case(tmp_path, "sig", time_keys="steps = 1000000")
    c.path.write_text(c.path.read_text().replace("snapshot_every = 0.05", "snapshot_every = 0.0"))
    env = dict(os.environ, NUMBA_NUM_THREADS="1", PYTHONPATH=str(ROOT))
    proc = subprocess.Popen([sys.executable, "-m", "tools.cli", "solve", str(c.path)], cwd=str(ROOT), env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    log = c.output_dir / "run.log"
    t0 = time.time()
    try:
        while time.time() - t0 < 120:
            if log.is_file() and " step " in log.read_text():
                break
            if proc.poll() is not None:
                break
            time.sleep(0.2)
        assert proc.poll() is None, proc.communicate()
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130, (out, err)
    assert "interrupted at t =" in out and "--resume" in out
    snaps = list_snapshots(c.output_dir)
    s = read_snapshot(snaps[-1])
    assert s.step > 0 and s.extra["reason"] == "interrupted" and np.all(np.isfinite(s.U))
    assert "run interrupted" in log.read_text()
    # and it resumes from there
    r = run_case(load_case(c.path), resume=True, printer=_quiet, stop_after=3)
    assert r["step"] == s.step + 3


def test_bad_monitor_and_kick_keys(tmp_path):
    with pytest.raises(CaseError, match=r"\[monitor\] unknown key 'probe' \(did you mean 'probes'\?\)"):
        _case(tmp_path, "k1", extra="")  # valid first
        p = tmp_path / "k1.toml"
        p.write_text(p.read_text().replace("probes =", "probe ="))
        load_case(p)
    p = tmp_path / "k2.toml"
    p.write_text(CASE.format(time="steps = 1", dir="r") .replace('[monitor]', '[monitor]\nwalls = ["far"]'))
    with pytest.raises(CaseError, match=r"\[monitor\] walls: tag 'far' has condition 'far-field'"):
        load_case(p)
    p.write_text(CASE.format(time="steps = 1", dir="r").replace("speed = 0.5", 'tags = ["wal"]'))
    with pytest.raises(CaseError, match=r"\[kick\] speed is required"):
        load_case(p)
    p.write_text(CASE.format(time="steps = 1", dir="r").replace("duration = 0.04", 'duration = 0.04\ntags = ["wal"]'))
    with pytest.raises(CaseError, match=r"\[kick\] tags: 'wal' is not a tag of \[boundaries\] \(did you mean 'wall'"):
        load_case(p)
    p.write_text(CASE.format(time="steps = 1", dir="r").replace("probes = [[1.0, 0.0], [2.0, 0.4]]",
                                                                  "probes = [[1.0, 0.0, 3.0]]"))
    with pytest.raises(CaseError, match=r"\[monitor\] probes must be an array of \[x, y\] points"):
        load_case(p)


def test_probe_outside_the_domain(tmp_path):
    c = _case(tmp_path, "po", time_keys="steps = 1")
    c.path.write_text(c.path.read_text().replace("[2.0, 0.4]]", "[0.1, 0.0]]"))  # inside the cylinder
    with pytest.raises(ValueError, match=r"probe 1 at \(0.1, 0\) lies in no element"):
        run_case(load_case(c.path), printer=_quiet)
