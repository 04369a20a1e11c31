"""Cost forecasts (tools/estimate.py)."""
import math
import multiprocessing as mp
from pathlib import Path

import pytest

from tools.estimate import (calibrate, dof_2d, dof_3d, estimate, format_estimate, memory_estimate, peak_rss_bytes,
                            stable_dt_extruded)

ROOT = Path(__file__).resolve().parents[1]


def _box_case(tmp_path, name, n, p=3, steps=3, extra=""):
    text = (ROOT / "cases" / "vortex-accuracy.toml").read_text()
    text = text.replace("nx = 8", f"nx = {n}").replace("ny = 8", f"ny = {n}")
    text = text.replace("degree = 3", f"degree = {p}").replace("end = 2.0", f"steps = {steps}") + extra
    path = tmp_path / name
    path.write_text(text)
    return path


def test_dof_counts_exact():
    # 2D: elements (p+1)^2 x 4; 3D extrusion: elements x layers x (p+1)^3 x 5 (hand-counted values)
    from meshing.cylinder import cylinder_mesh
    from solver.basis import make_basis
    from solver.operator import FROperator

    mesh = cylinder_mesh(n_radial=6, n_around=12, far_radius=10.0)
    assert mesh.n_elements == 72
    op = FROperator(mesh, make_basis(3), boundaries={"wall": ("slip-wall", {}), "far": ("far-field", {})},
                    ref=dict(rho=1.0, u=1.0, v=0.0, p=1 / (1.4 * 0.04), gamma=1.4))
    assert op.ndof == dof_2d(72, 3) == 72 * 16 * 4 == 4608
    assert dof_3d(72, 8, 3) == 184320
    assert dof_2d(15, 2) == 540 and dof_3d(15, 1, 1) == 600


def test_extruded_time_step_on_uniform_flow():
    # uniform flow along x on an unwarped Cartesian box: lambda_r = (|u| + a) 2/hx, lambda_s = a 2/hy,
    # the extrusion adds a 2/dz, so dt = cfl 2 CFL_max / ((|u|+a) 2/hx + a 2/hy + a 2/dz) exactly
    import numpy as np

    from meshing.box import box_mesh
    from solver.basis import make_basis
    from solver.initial import uniform_state
    from solver.operator import FROperator
    from solver.stepper import ExplicitStepper

    M, g = 0.5, 1.4
    ref = dict(rho=1.0, u=1.0, v=0.0, p=1 / (g * M * M), gamma=g)
    mesh = box_mesh(4, 2, (0.0, 2.0, 0.0, 2.0), q=1)
    op = FROperator(mesh, make_basis(2), g, ref=ref)
    st = ExplicitStepper(op, "ssp-rk33", cfl=0.8)
    U = np.ascontiguousarray(uniform_state(op.metrics.xy, ref))
    a, hx, hy, dz = 1 / M, 0.5, 1.0, 0.25
    dt2, dt3 = stable_dt_extruded(op, st, U, dz)
    assert dt2 == pytest.approx(0.8 * 2 * st.cfl_max / ((1 + a) * 2 / hx + a * 2 / hy), rel=1e-12)
    assert dt3 == pytest.approx(0.8 * 2 * st.cfl_max / ((1 + a) * 2 / hx + a * 2 / hy + a * 2 / dz), rel=1e-12)
    assert math.isnan(stable_dt_extruded(op, st, U, None)[1])


def _real_run_peak(conn, case_path):
    from solver.case import load_case
    from solver.run import run_case

    run_case(load_case(case_path), printer=lambda *a: None)
    conn.send(peak_rss_bytes())
    conn.close()


def test_memory_estimate_within_20_percent_of_a_real_run(tmp_path):
    # calibrate on 65 536 DoF, predict a 9x larger run (589 824 DoF), then run it in a fresh process and
    # compare with its measured peak resident memory (Linux VmHWM)
    small = _box_case(tmp_path, "small.toml", 32)
    big = _box_case(tmp_path, "big.toml", 96)
    cal = calibrate(small, min_time=0.1)
    assert cal["dof"] == dof_2d(32 * 32, 3)
    predicted = memory_estimate(cal, dof_2d(96 * 96, 3))
    ctx = mp.get_context("spawn")
    a, b = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_real_run_peak, args=(b, str(big)))
    proc.start()
    b.close()
    measured = a.recv()
    proc.join()
    assert abs(predicted - measured) <= 0.2 * measured, (predicted / 1e6, measured / 1e6)
    # and the per-DoF part is really what grows: the big run is larger than the calibration by roughly
    # 9x the calibration's growth (loose: allocator effects), never by nothing
    assert measured - cal["baseline_rss"] > 3 * (cal["peak_rss"] - cal["baseline_rss"])


def test_estimate_report_and_bad_options(tmp_path):
    case = _box_case(tmp_path, "c.toml", 8, p=2, extra="")
    cal = calibrate(case, min_time=0.05)
    est = estimate(case, span=2.0, span_cells=4, throughputs=[1e9], per="device", units=2, calib=cal)
    pr = est["production"]
    assert pr["dof_3d"] == 64 * 4 * 27 * 5
    assert pr["steps_3d"] == 3                     # [time] steps = 3 fixes the count
    assert pr["cost"][0]["unit_hours"] == pytest.approx(pr["dof_3d"] * 3 * est["rhs_per_step"] / 1e9 / 3600)
    assert est["rhs_per_step"] == 5                # ssp-rk54: five RHS evaluations per step, counted
    text = format_estimate(est)
    assert "device-hours" in text and "Assumptions" in text
    with pytest.raises(ValueError, match="--span-cells"):
        estimate(case, span=2.0, calib=cal)
    with pytest.raises(ValueError, match="--throughput"):
        estimate(case, span=2.0, span_cells=2, throughputs=[-1.0], calib=cal)


def test_estimate_from_an_earlier_run(tmp_path):
    # the forecast takes the run's own numbers from its history: for dual time the mean fine + coarse
    # residual evaluations per step of the last half of the rows, for an explicit CFL run its mean step
    import numpy as np

    from solver.case import load_case
    from solver.history import read_history
    from solver.run import run_case

    from vortex_box import write_vortex_box

    def case(name, time, p=2):
        return write_vortex_box(tmp_path / f"{name}.toml", time, p=p, extra="[output]\nhistory_every = 1")

    dual = case("dual", 'scheme = "bdf2"\ndt = 0.2\nend = 2.0\n[pseudo]\ntolerance = 1e-6')
    run_case(load_case(dual), printer=lambda *a: None)
    run = tmp_path / "runs" / "dual"
    d = read_history(run)["data"]
    n = len(d["time"])
    k0 = max(1, int(n * 0.5))
    want = np.mean(d["inner/rhs"][k0:]) + np.mean(d["inner/coarse_rhs"][k0:])
    est = estimate(dual, from_run=run, min_time=0.05)
    assert est["rhs_per_step"] == pytest.approx(want, rel=1e-12)
    assert est["steps_2d"] == 10 and est["dt_2d"] == pytest.approx(0.2)
    assert any("inner iterations" in a for a in est["assumptions"])
    assert "RHS per step" in format_estimate(est)

    expl = case("expl", 'scheme = "ssp-rk33"\ncfl = 0.9\nend = 1.0')
    run_case(load_case(expl), printer=lambda *a: None)
    d = read_history(tmp_path / "runs" / "expl")["data"]
    n = len(d["time"])
    k0 = max(1, int(n * 0.5))
    est = estimate(expl, from_run=tmp_path / "runs" / "expl", min_time=0.05)
    assert est["dt_2d"] == pytest.approx((d["time"][-1] - d["time"][k0]) / (d["step"][-1] - d["step"][k0]), rel=1e-12)

    other = case("other", 'scheme = "ssp-rk33"\ncfl = 0.9\nend = 1.0', p=3)
    with pytest.raises(ValueError, match=r"--from-run .*expl: the run has 16 elements at degree 2, the case 16 at degree 3"):
        estimate(other, from_run=tmp_path / "runs" / "expl", min_time=0.05)
    with pytest.raises(ValueError, match=r"--from-run .*nowhere"):
        estimate(expl, from_run=tmp_path / "nowhere", min_time=0.05)
