"""ParaView export (tools/vtu.py): fields on exact states, files read back with meshio, PVD series."""
from __future__ import annotations

import math
import xml.etree.ElementTree as ET

import meshio
import numpy as np
import pytest

from meshing.box import box_mesh
from meshing.geometry import map_points
from solver.basis import solution_points
from solver.output import snapshot_name, write_snapshot
from tools.vtu import FIELDS, export, snapshot_to_vtu

GAMMA, MACH = 1.4, 0.3


def _case_text(mach=MACH, angle=20.0):
    return f"[gas]\ngamma = {GAMMA}\n[flow]\nmach = {mach}\nangle = {angle}\n"


def _conserved(rho, u, v, p):
    return np.stack([rho, rho * u, rho * v, p / (GAMMA - 1) + 0.5 * rho * (u * u + v * v)], axis=-1)


def _snapshot(path, mesh, p, fn, time=0.0, step=0, angle=20.0):
    """Snapshot of the state fn(x, y) -> (rho, u, v, p) interpolated at the solution points."""
    x, _ = solution_points(p, "gauss-legendre")
    xy = map_points(mesh.geom, x, x)
    rho, u, v, pr = (np.broadcast_to(a, xy.shape[:-1]).astype(float) for a in fn(xy[..., 0], xy[..., 1]))
    U = _conserved(rho, u, v, pr)
    return write_snapshot(path, U=U, time=time, step=step, degree=p, points="gauss-legendre", correction="dg",
                          mesh=mesh, case_text=_case_text(angle=angle))


def _read(path):
    m = meshio.read(path)
    return m, m.points, m.point_data


def test_uniform_free_stream(tmp_path):
    mesh = box_mesh(3, 2, extent=(-1, 1, -1, 1), q=2, warp=0.05, periodic=False)
    a = math.radians(20.0)
    p_inf = 1 / (GAMMA * MACH**2)
    snap = _snapshot(tmp_path / "s.h5", mesh, 3, lambda x, y: (1.0, math.cos(a), math.sin(a), p_inf))
    out = snapshot_to_vtu(snap)
    assert out == tmp_path / "s.vtu"
    m, pts, d = _read(out)
    assert set(FIELDS) <= set(d)
    n = mesh.n_elements * 5 * 5  # (p+2)^2 points per element
    assert pts.shape == (n, 3) and m.cells_dict["quad"].shape == (mesh.n_elements * 16, 4)
    tol = 1e-12
    assert np.abs(d["density"] - 1).max() < tol
    assert np.abs(d["mach"] - MACH).max() < tol
    assert np.abs(d["pressure_coefficient"]).max() < tol
    assert np.abs(d["vorticity"]).max() < tol
    assert np.abs(d["entropy"]).max() < tol
    assert np.abs(d["temperature"] - 1).max() < tol
    assert np.abs(d["velocity"] - [math.cos(a), math.sin(a), 0.0]).max() < tol


@pytest.mark.parametrize("q,p", [(2, 2), (2, 4), (3, 3)])
def test_solid_body_rotation_vorticity(tmp_path, q, p):
    """u = -w y, v = w x has vorticity 2 w exactly; the state is a polynomial of degree q on a curved mesh."""
    w = 0.7
    mesh = box_mesh(3, 3, extent=(-1, 1, -1, 1), q=q, warp=0.06, periodic=False)
    assert np.ptp(mesh.geom[4, :, :, 0] - np.linspace(-1 / 3, 1 / 3, q + 1)[:, None]) > 1e-3  # really curved
    snap = _snapshot(tmp_path / "s.h5", mesh, p, lambda x, y: (1.0, -w * y, w * x, 10.0))
    _, pts, d = _read(snapshot_to_vtu(snap))
    assert np.abs(d["vorticity"] - 2 * w).max() < 1e-12
    assert np.abs(d["velocity"][:, 0] + w * pts[:, 1]).max() < 1e-12
    assert np.abs(d["velocity"][:, 1] - w * pts[:, 0]).max() < 1e-12


def test_rotation_with_varying_density(tmp_path):
    """rho = 1 + 0.2 x: momentum is degree 2q, held exactly at p = 2q; the quotient rule gives 2 w again."""
    w, q = 0.7, 2
    mesh = box_mesh(2, 3, extent=(-1, 1, -1, 1), q=q, warp=0.05, periodic=False)
    snap = _snapshot(tmp_path / "s.h5", mesh, 2 * q, lambda x, y: (1 + 0.2 * x, -w * y, w * x, 10.0))
    _, pts, d = _read(snapshot_to_vtu(snap))
    assert np.abs(d["vorticity"] - 2 * w).max() < 1e-12
    assert np.abs(d["density"] - (1 + 0.2 * pts[:, 0])).max() < 1e-12


def test_pressure_fields_at_the_right_points(tmp_path):
    """p = p_inf + 0.1 x, rho = 1, uniform flow: Cp = 0.2 x, T = gamma M^2 p, s = p/p_inf - 1 at each point."""
    mesh = box_mesh(2, 2, extent=(-1, 1, -1, 1), q=2, warp=0.05, periodic=False)
    p_inf = 1 / (GAMMA * MACH**2)
    snap = _snapshot(tmp_path / "s.h5", mesh, 2, lambda x, y: (1.0, 1.0, 0.0, p_inf + 0.1 * x), angle=0.0)
    _, pts, d = _read(snapshot_to_vtu(snap, tmp_path / "named.vtu"))
    x = pts[:, 0]
    p = p_inf + 0.1 * x
    assert np.abs(d["pressure"] - p).max() < 1e-12
    assert np.abs(d["pressure_coefficient"] - 0.2 * x).max() < 1e-12
    assert np.abs(d["temperature"] - GAMMA * MACH**2 * p).max() < 1e-12
    assert np.abs(d["entropy"] - (p / p_inf - 1)).max() < 1e-12
    assert np.abs(d["mach"] - 1 / np.sqrt(GAMMA * p)).max() < 1e-12


def test_sub_quads_counter_clockwise_and_cover_the_box(tmp_path):
    mesh = box_mesh(3, 2, extent=(0, 2, 0, 1), q=1, periodic=False)
    snap = _snapshot(tmp_path / "s.h5", mesh, 2, lambda x, y: (1.0, 1.0, 0.0, 5.0))
    m, pts, _ = _read(snapshot_to_vtu(snap))
    c = m.cells_dict["quad"]
    x, y = pts[c, 0], pts[c, 1]
    area = 0.5 * np.sum(x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y, axis=1)  # shoelace
    assert area.min() > 0
    assert area.sum() == pytest.approx(2.0, rel=1e-13)
    assert np.array_equal(m.cell_data["element"][0], np.repeat(np.arange(6), 9))


def test_run_folder_to_pvd(tmp_path):
    mesh = box_mesh(2, 2, extent=(-1, 1, -1, 1), q=2, periodic=True)
    times = {0: 0.0, 10: 0.25, 20: 0.5}
    for step, t in times.items():
        _snapshot(tmp_path / snapshot_name(step), mesh, 2, lambda x, y: (1.0, 1.0, 0.0, 5.0 + t), time=t,
                  step=step)
    pvd = export(tmp_path)
    assert pvd == tmp_path / "solution.pvd"
    root = ET.parse(pvd).getroot()
    assert root.get("type") == "Collection"
    ds = root.findall("./Collection/DataSet")
    assert [float(e.get("timestep")) for e in ds] == list(times.values())
    for e, t in zip(ds, times.values()):
        f = tmp_path / e.get("file")
        assert f.is_file() and f.parent.name == "solution-vtu"
        assert np.abs(meshio.read(f).point_data["pressure"] - (5.0 + t)).max() < 1e-12
    assert not list(tmp_path.rglob("*.tmp"))


def test_empty_run_folder(tmp_path):
    with pytest.raises(FileNotFoundError, match="no snapshots"):
        export(tmp_path)
