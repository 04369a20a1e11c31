"""``quadfr report`` (tools/report.py) on a history with a known answer.

The history is written with the run's own writer (solver/history.py) from
synthetic force signals: a lift sine of known frequency and amplitude that
grows in and then settles, a drag with a known mean and a second harmonic.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from solver.forces import COEFFICIENTS
from solver.history import HistoryFile
from tools import report

F, AMP, CD = 0.1643, 0.33, 1.34


def _write_history(run_dir, t, cl, cd):
    cols = ["step", "time", "wall_time", "dt"] + [f"forces/total/{c}" for c in COEFFICIENTS] + \
        [f"residual/{v}" for v in ("rho", "rhou", "rhov", "rhoE")]
    h = HistoryFile(run_dir, cols, {"reference_length": 1.0, "walls": ["wall"]})
    h.create()
    for k, (tk, a, b) in enumerate(zip(t, cl, cd)):
        vals = dict.fromkeys(COEFFICIENTS, 0.0)
        vals.update(cd=b, cl=a, cx=b, cy=a, cd_pressure=0.8 * b, cd_viscous=0.2 * b)
        row = [10 * k, tk, 0.01 * k, 0.1] + [vals[c] for c in COEFFICIENTS] + [1e-3 * math.exp(-tk / 50)] * 4
        h.append(row)
    h.flush()


def _shedding(t_end=120.0):
    t = np.arange(0.0, t_end, 0.05)
    env = np.where(t < 30, np.exp((t - 30) / 6.0), 1.0)  # grows in, settled after t = 30
    cl = AMP * env * np.sin(2 * np.pi * F * t)
    cd = CD + 0.01 * env * np.sin(4 * np.pi * F * t + 0.3)
    return t, cl, cd


def test_report_on_shedding_history(tmp_path, capsys):
    t, cl, cd = _shedding()
    _write_history(tmp_path, t, cl, cd)
    res = report.analyse(tmp_path)
    t0, t1, n = res["window"]
    assert t0 >= 28.0 and n >= 10  # the automatic window starts after the growth
    assert res["strouhal"]["spectral"] == pytest.approx(F, rel=1e-3)
    assert res["strouhal"]["crossings"] == pytest.approx(F, rel=1e-3)
    c = res["coefficients"]
    assert c["cd"]["mean"] == pytest.approx(CD, abs=2e-4)
    assert c["cl"]["amplitude"] == pytest.approx(AMP, rel=2e-3)
    assert c["cl"]["rms"] == pytest.approx(AMP / math.sqrt(2), rel=2e-3)
    assert res["periodicity"]["period_variation"] < 1e-3
    written = report.write_report(tmp_path, res, plots=True)
    md = (tmp_path / "report.md").read_text()
    assert "Strouhal number" in md and "prototypes" in md
    pytest.importorskip("matplotlib")
    for k in ("forces", "spectrum"):
        assert written[k].is_file() and written[k].stat().st_size > 1000


def test_report_from_a_given_time_and_without_matplotlib(tmp_path, monkeypatch, capsys):
    t, cl, cd = _shedding()
    _write_history(tmp_path, t, cl, cd)
    res = report.analyse(tmp_path, t_from=60.0)
    assert res["window"][0] >= 60.0
    monkeypatch.setattr(report, "_pyplot", lambda: None)
    written = report.write_report(tmp_path, res, plots=True)
    assert set(written) == {"markdown"}
    assert report.PLOT_NOTE in capsys.readouterr().out
    assert report.PLOT_NOTE in (tmp_path / "report.md").read_text()


def test_report_on_a_steady_history(tmp_path):
    t = np.arange(0.0, 40.0, 0.05)
    cd = 1.5 + 0.5 * np.exp(-t / 5.0)
    _write_history(tmp_path, t, 1e-9 * np.sin(t), cd)
    res = report.analyse(tmp_path)
    assert res["steady"] and res["strouhal"] is None
    assert res["coefficients"]["cd"]["mean"] == pytest.approx(1.5, abs=5e-3)
    text = "\n".join(report.summary_lines(res))
    assert "no lift oscillation" in text


def test_report_errors(tmp_path):
    with pytest.raises(FileNotFoundError, match="history file"):
        report.analyse(tmp_path)
    t, cl, cd = _shedding(20.0)
    _write_history(tmp_path, t, cl, cd)
    with pytest.raises(ValueError, match="no force history for group 'body'; groups: total"):
        report.analyse(tmp_path, group="body")


def test_cli_report(tmp_path, capsys):
    from tools.cli import main

    t, cl, cd = _shedding()
    _write_history(tmp_path, t, cl, cd)
    assert main(["report", str(tmp_path), "--no-plots"]) == 0
    out = capsys.readouterr().out
    assert "spectral peak 0.164" in out and "zero crossings 0.164" in out and "periodic" in out
    assert main(["report", str(tmp_path / "nope")]) == 2


def test_summarize_gives_plain_numbers(tmp_path):
    t, cl, cd = _shedding()
    _write_history(tmp_path, t, cl, cd)
    s = report.summarize(tmp_path)
    assert s["St"] == pytest.approx(F, rel=1e-3) and s["mean_cd"] == pytest.approx(CD, abs=2e-4)
    assert s["cl_amplitude"] == pytest.approx(AMP, rel=2e-3)
    assert all(isinstance(v, float) for v in s.values())
