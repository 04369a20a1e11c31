"""Snapshots (solver/output.py): exact round trip, atomic writes, clear read errors, run log."""
from __future__ import annotations

import os
import subprocess
import sys
import textwrap
from pathlib import Path

import h5py
import numpy as np
import pytest

from meshing.box import box_mesh
from solver import output
from solver.output import (RunLog, SnapshotError, latest_snapshot, list_snapshots, read_snapshot, snapshot_name,
                           write_snapshot)

ROOT = Path(__file__).resolve().parents[1]
CASE_TEXT = 'title = "t"\n[gas]\ngamma = 1.3\n[flow]\nmach = 0.4\nreynolds = 100.0\n'


def _mesh():
    return box_mesh(3, 2, extent=(0.0, 2.0, -1.0, 1.0), q=3, warp=0.05, periodic=(True, False), name="snapbox")


def _state(mesh, p, seed=0):
    return np.random.default_rng(seed).random((mesh.n_elements, p + 1, p + 1, 4))


def _write(path, mesh, U, p=2, **kw):
    args = dict(U=U, time=0.125, step=7, degree=p, points="gauss-legendre", correction="dg", mesh=mesh,
                case_text=CASE_TEXT)
    args.update(kw)
    return write_snapshot(path, **args)


def test_round_trip_exact(tmp_path):
    mesh, p = _mesh(), 2
    U = _state(mesh, p)
    path = _write(tmp_path / snapshot_name(7), mesh, U, p, extra={"residual": 1.5e-3, "history": np.arange(5.0)})
    assert path.name == "state-00000007.h5"
    s = read_snapshot(path)
    assert s.U.dtype == np.float64 and np.array_equal(s.U, U)  # bit-exact
    assert (s.time, s.step, s.degree, s.points, s.correction) == (0.125, 7, 2, "gauss-legendre", "dg")
    assert s.case_text == CASE_TEXT
    # solution points: Gauss-Legendre of numpy's leggauss (3 points for p = 2)
    assert np.allclose(s.nodes, np.polynomial.legendre.leggauss(3)[0], rtol=0, atol=1e-15)
    # the rebuilt mesh is the same object field by field
    m = s.mesh
    assert np.array_equal(m.geom, mesh.geom) and np.array_equal(m.corners, mesh.corners)
    assert np.array_equal(m.vertices, mesh.vertices) and np.array_equal(m.interior_faces, mesh.interior_faces)
    assert m.tags == mesh.tags
    for t in mesh.tags:
        assert np.array_equal(m.boundary_faces[t], mesh.boundary_faces[t])
    assert m.periodic == mesh.periodic and m.name == "snapbox"
    # free stream from the case text: p = 1/(gamma M^2), mu = 1/Re
    assert s.gamma == 1.3 and s.mach == 0.4
    assert s.attrs["p"] == pytest.approx(1.0 / (1.3 * 0.16), rel=1e-15)
    assert s.attrs["mu"] == pytest.approx(0.01, rel=1e-15)
    assert s.attrs["format"] == "quadfr-snapshot" and s.attrs["format_version"] == 1
    assert s.extra["residual"] == 1.5e-3 and np.array_equal(s.extra["history"], np.arange(5.0))


def test_numeric_correction_and_given_reference(tmp_path):
    mesh = _mesh()
    U = _state(mesh, 1)
    ref = {"gamma": 1.4, "mach": 0.2, "p": 1 / (1.4 * 0.04)}
    s = read_snapshot(_write(tmp_path / "a.h5", mesh, U, 1, correction=0.25, reference=ref, case_text=""))
    assert s.correction == 0.25 and s.mach == 0.2 and "reynolds" not in s.attrs


def test_shape_checked_before_writing(tmp_path):
    mesh = _mesh()
    with pytest.raises(ValueError, match=r"solution must have shape \(6, 3, 3, 4\)"):
        _write(tmp_path / "a.h5", mesh, np.zeros((6, 2, 2, 4)), 2)
    assert list(tmp_path.iterdir()) == []


def test_failed_write_leaves_nothing(tmp_path, monkeypatch):
    mesh, p = _mesh(), 2
    final = tmp_path / snapshot_name(3)
    real = output._write_body

    def crash(f, **kw):
        real(f, **kw)  # the temp file is open and filled ...
        assert (tmp_path / (final.name + ".tmp")).exists()
        raise RuntimeError("simulated crash inside the writer")  # ... and the writer dies before the rename

    monkeypatch.setattr(output, "_write_body", crash)
    with pytest.raises(RuntimeError, match="simulated crash"):
        _write(final, mesh, _state(mesh, p), p)
    assert list(tmp_path.iterdir()) == []  # no final file, no partial file


def test_failed_write_keeps_previous_file(tmp_path, monkeypatch):
    mesh, p = _mesh(), 2
    final = tmp_path / "state.h5"
    U0 = _state(mesh, p, seed=1)
    _write(final, mesh, U0, p)
    monkeypatch.setattr(output, "_write_body", lambda f, **kw: (_ for _ in ()).throw(OSError("disk full")))
    with pytest.raises(OSError):
        _write(final, mesh, _state(mesh, p, seed=2), p)
    assert np.array_equal(read_snapshot(final).U, U0)
    assert sorted(x.name for x in tmp_path.iterdir()) == ["state.h5"]


def test_killed_writer_process(tmp_path):
    """A process killed (os._exit) mid-write leaves only the temp file, never the final name."""
    final = tmp_path / snapshot_name(1)
    code = textwrap.dedent(f"""
        import os, numpy as np
        from meshing.box import box_mesh
        from solver import output
        real = output._write_body
        def die(f, **kw):
            real(f, **kw)
            f.flush()
            os._exit(9)
        output._write_body = die
        m = box_mesh(2, 2, q=1)
        output.write_snapshot({str(final)!r}, U=np.ones((4, 2, 2, 4)), time=0.0, step=1, degree=1,
                              points="gauss-legendre", correction="dg", mesh=m, case_text="[flow]\\nmach = 0.5\\n")
    """)
    r = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, timeout=60)
    assert r.returncode == 9, r.stderr
    assert not final.exists()
    assert list_snapshots(tmp_path) == []  # the temp file is not taken for a snapshot
    assert latest_snapshot(tmp_path) is None


def test_read_errors_name_the_file(tmp_path):
    missing = tmp_path / "none.h5"
    with pytest.raises(FileNotFoundError, match="none.h5"):
        read_snapshot(missing)
    # truncated: the first half of a valid snapshot
    mesh = _mesh()
    good = _write(tmp_path / "good.h5", mesh, _state(mesh, 2))
    data = good.read_bytes()
    cut = tmp_path / "cut.h5"
    cut.write_bytes(data[: len(data) // 2])
    with pytest.raises(SnapshotError, match=r"cut\.h5: not a readable HDF5 file"):
        read_snapshot(cut)
    # not HDF5 at all
    txt = tmp_path / "notes.h5"
    txt.write_text("hello")
    with pytest.raises(SnapshotError, match=r"notes\.h5: not a readable HDF5 file"):
        read_snapshot(txt)
    # HDF5 but foreign
    foreign = tmp_path / "foreign.h5"
    with h5py.File(foreign, "w") as f:
        f["x"] = np.zeros(3)
    with pytest.raises(SnapshotError, match=r"foreign\.h5: not a quadfr snapshot"):
        read_snapshot(foreign)
    # ours but a part missing
    part = tmp_path / "part.h5"
    part.write_bytes(data)
    with h5py.File(part, "a") as f:
        del f["mesh/geom"]
    with pytest.raises(SnapshotError, match=r"part\.h5: incomplete snapshot, 'mesh/geom' is missing"):
        read_snapshot(part)


def test_snapshot_listing(tmp_path):
    mesh = _mesh()
    U = _state(mesh, 1)
    for step in (120, 5, 40):
        _write(tmp_path / snapshot_name(step), mesh, U, 1, step=step)
    (tmp_path / (snapshot_name(999) + ".tmp")).write_bytes(b"partial")
    (tmp_path / "other.h5").write_bytes(b"")
    assert [x.name for x in list_snapshots(tmp_path)] == [snapshot_name(s) for s in (5, 40, 120)]
    assert latest_snapshot(tmp_path).name == snapshot_name(120)
    assert read_snapshot(latest_snapshot(tmp_path)).step == 120
    with pytest.raises(FileNotFoundError, match="nothere"):
        list_snapshots(tmp_path / "nothere")


def test_run_log_appends(tmp_path):
    log = RunLog(tmp_path / "run.log")
    log.start(case_path="cases/x.toml", degree=3)
    log.progress(100, 0.5, dt=1e-3, rho_residual=2.5e-4)
    log.end("finished", steps=100)
    first = (tmp_path / "run.log").read_text()
    RunLog(tmp_path / "run.log").start(case_path="cases/x.toml", resume_from="state-00000100.h5")
    text = (tmp_path / "run.log").read_text()
    assert text.startswith(first)  # append-only: the first session is untouched
    assert text.count("=== run started") == 2 and "resumed from: state-00000100.h5" in text
    assert "case: cases/x.toml" in first and "degree: 3" in first and f"cpus: {os.cpu_count()}" in first
    assert "step      100  t 5.000000e-01  dt 1.000000e-03  rho_residual 2.500000e-04" in first
    assert "=== run finished" in first and "steps 100" in first
