"""ParaView export: snapshots to VTU files (via meshio) and run folders to a PVD series.

Each element is sampled on an ``m x m`` equispaced grid of the reference
square including its edges (``m = p + 2`` by default) and written as
``(m-1)^2`` linear quadrilaterals; neighbouring elements do not share points,
so the discontinuities of the discrete solution stay visible.  The solution
polynomial and the geometry map are evaluated exactly at those points
(Lagrange matrices of :mod:`meshing.geometry`); derived quantities are
computed pointwise from the values and the exact polynomial derivatives.

Point fields (solver units: free-stream density 1, speed 1):

* ``density``, ``velocity`` (3-vector, z = 0), ``pressure``;
* ``temperature``  T/T_inf = (p/rho) / (p_inf/rho_inf) = gamma M^2 p / rho;
* ``mach``  |u| / sqrt(gamma p / rho);
* ``vorticity``  dv/dx - du/dy;
* ``entropy``  (p / rho^gamma) / (p_inf / rho_inf^gamma) - 1;
* ``pressure_coefficient``  (p - p_inf) / (0.5 rho_inf |u_inf|^2).

Cell field ``element``: the element id of each sub-quad.
"""
from __future__ import annotations

import os
from pathlib import Path
from xml.sax.saxutils import quoteattr

import numpy as np

__all__ = ["sample_fields", "snapshot_to_vtu", "run_to_pvd", "export", "write_pvd", "FIELDS"]

FIELDS = ("density", "velocity", "pressure", "temperature", "mach", "vorticity", "entropy",
          "pressure_coefficient")


def _free_stream(snap) -> dict:
    a = snap.attrs
    if "gamma" in a and "mach" in a:
        return {k: float(a[k]) for k in ("gamma", "mach", "rho", "u", "v", "p") if k in a}
    from solver.case import reference_from_text

    return reference_from_text(snap.case_text, name=f"{snap.path}: case text")


def sample_fields(snap, m: int | None = None):
    """Evaluate the solution and derived fields on an equispaced grid per element.

    Parameters
    ----------
    snap : solver.output.Snapshot
    m : int, optional
        Points per direction and element, >= 2; default ``degree + 2``.

    Returns
    -------
    xy : (ne, m, m, 2) array
        Physical coordinates of the sample points.
    fields : dict
        Name -> (ne, m, m) array, ``velocity`` -> (ne, m, m, 2).

    Notes
    -----
    With ``U = sum_ij U_ij l_i(r) l_j(s)`` the reference derivatives are
    ``U_r = sum U_ij l_i'(r) l_j(s)`` etc.; velocity derivatives follow from
    the quotient rule ``u_r = ((rho u)_r - u rho_r) / rho``, and physical ones
    from the inverse map ``f_x = (y_s f_r - y_r f_s) / J``,
    ``f_y = (-x_s f_r + x_r f_s) / J`` with ``J = x_r y_s - x_s y_r``.
    """
    from meshing.geometry import lagrange_derivative_matrix, lagrange_matrix, map_derivatives, map_points

    n = snap.degree + 1
    m = n + 1 if m is None else int(m)
    if m < 2:
        raise ValueError(f"need at least 2 sample points per direction, got {m}")
    t = np.linspace(-1.0, 1.0, m)
    L = lagrange_matrix(snap.nodes, t)
    D = lagrange_derivative_matrix(snap.nodes, t)
    U = snap.U
    W = np.einsum("ai,bj,eijv->eabv", L, L, U, optimize=True)
    Wr = np.einsum("ai,bj,eijv->eabv", D, L, U, optimize=True)
    Ws = np.einsum("ai,bj,eijv->eabv", L, D, U, optimize=True)
    geom = snap.mesh.geom
    xy = map_points(geom, t, t)
    dr, ds, J = map_derivatives(geom, t, t)

    ref = _free_stream(snap)
    g, M = ref["gamma"], ref["mach"]
    rho_inf = ref.get("rho", 1.0)
    p_inf = ref.get("p", 1.0 / (g * M * M))
    q_inf = 0.5 * rho_inf * (ref.get("u", 1.0) ** 2 + ref.get("v", 0.0) ** 2)

    rho = W[..., 0]
    u = W[..., 1] / rho
    v = W[..., 2] / rho
    p = (g - 1.0) * (W[..., 3] - 0.5 * rho * (u * u + v * v))
    u_r = (Wr[..., 1] - u * Wr[..., 0]) / rho
    u_s = (Ws[..., 1] - u * Ws[..., 0]) / rho
    v_r = (Wr[..., 2] - v * Wr[..., 0]) / rho
    v_s = (Ws[..., 2] - v * Ws[..., 0]) / rho
    x_r, y_r, x_s, y_s = dr[..., 0], dr[..., 1], ds[..., 0], ds[..., 1]
    v_x = (y_s * v_r - y_r * v_s) / J
    u_y = (-x_s * u_r + x_r * u_s) / J
    with np.errstate(invalid="ignore", divide="ignore"):  # a non-physical state shows as nan, not a crash
        fields = {
            "density": rho,
            "velocity": np.stack([u, v], axis=-1),
            "pressure": p,
            "temperature": (p / rho) / (p_inf / rho_inf),
            "mach": np.sqrt(u * u + v * v) / np.sqrt(g * p / rho),
            "vorticity": v_x - u_y,
            "entropy": (p / rho**g) / (p_inf / rho_inf**g) - 1.0,
            "pressure_coefficient": (p - p_inf) / q_inf,
        }
    return xy, fields


def _atomic_meshio_write(path: Path, mesh) -> None:
    import meshio

    tmp = path.with_name(path.name + ".tmp")
    try:
        meshio.write(str(tmp), mesh, file_format="vtu")
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def snapshot_to_vtu(snapshot, out=None, m: int | None = None) -> Path:
    """Write one snapshot as a VTU file of linear sub-quads.

    Parameters
    ----------
    snapshot : path or solver.output.Snapshot
    out : path, optional
        Output file; default: the snapshot's name with suffix ``.vtu``.
    m : int, optional
        Sample points per direction and element (default degree + 2).

    Returns
    -------
    Path of the VTU file.
    """
    import meshio

    from solver.output import Snapshot, read_snapshot

    snap = snapshot if isinstance(snapshot, Snapshot) else read_snapshot(snapshot)
    out = Path(out) if out is not None else snap.path.with_suffix(".vtu")
    xy, fields = sample_fields(snap, m)
    ne, m = xy.shape[0], xy.shape[1]
    pts = np.zeros((ne * m * m, 3))
    pts[:, :2] = xy.reshape(-1, 2)
    # counter-clockwise sub-quads: i runs along r, j along s, and the map keeps orientation
    a, b = np.meshgrid(np.arange(m - 1), np.arange(m - 1), indexing="ij")
    local = np.stack([a * m + b, (a + 1) * m + b, (a + 1) * m + b + 1, a * m + b + 1], axis=-1).reshape(-1, 4)
    conn = (np.arange(ne)[:, None, None] * m * m + local[None]).reshape(-1, 4)
    point_data = {}
    for name in FIELDS:
        f = fields[name]
        if name == "velocity":
            vel = np.zeros((ne * m * m, 3))
            vel[:, :2] = f.reshape(-1, 2)
            point_data[name] = vel
        else:
            point_data[name] = f.reshape(-1)
    element = np.repeat(np.arange(ne), (m - 1) ** 2)
    # the time goes into the .pvd collection (meshio 5 writes no VTU field data)
    mesh = meshio.Mesh(pts, [("quad", conn)], point_data=point_data, cell_data={"element": [element]})
    _atomic_meshio_write(out, mesh)
    return out


def write_pvd(path, entries) -> Path:
    """Write a ParaView collection file atomically.

    Parameters
    ----------
    path : path of the ``.pvd`` file
    entries : iterable of (time, file)
        Files are written relative to the folder of ``path``.
    """
    path = Path(path)
    lines = ['<?xml version="1.0"?>',
             '<VTKFile type="Collection" version="0.1" byte_order="LittleEndian">',
             "  <Collection>"]
    for time, file in entries:
        rel = os.path.relpath(Path(file).resolve(), path.resolve().parent)
        lines.append(f'    <DataSet timestep="{float(time):.17g}" group="" part="0" file={quoteattr(rel)}/>')
    lines += ["  </Collection>", "</VTKFile>", ""]
    tmp = path.with_name(path.name + ".tmp")
    try:
        tmp.write_text("\n".join(lines), encoding="utf-8")
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return path


def run_to_pvd(run_dir, out=None, m: int | None = None) -> Path:
    """Convert every snapshot of a run folder and write a PVD time series.

    Parameters
    ----------
    run_dir : path
    out : path, optional
        The ``.pvd`` file; default ``run_dir/solution.pvd``.  The VTU files go
        to the folder ``<pvd stem>-vtu`` beside it.

    Returns
    -------
    Path of the PVD file.
    """
    from solver.output import list_snapshots, read_snapshot

    run_dir = Path(run_dir)
    snaps = list_snapshots(run_dir)
    if not snaps:
        raise FileNotFoundError(f"no snapshots (state-*.h5) in '{run_dir}'")
    out = Path(out) if out is not None else run_dir / "solution.pvd"
    vtu_dir = out.parent / f"{out.stem}-vtu"
    vtu_dir.mkdir(parents=True, exist_ok=True)
    entries = []
    for s in snaps:
        snap = read_snapshot(s)
        entries.append((snap.time, snapshot_to_vtu(snap, vtu_dir / s.with_suffix(".vtu").name, m)))
    return write_pvd(out, entries)


def export(path, out=None, m: int | None = None) -> Path:
    """A snapshot file -> VTU; a run folder -> VTU files plus a PVD series."""
    path = Path(path)
    if path.is_dir():
        return run_to_pvd(path, out, m)
    return snapshot_to_vtu(path, out, m)
