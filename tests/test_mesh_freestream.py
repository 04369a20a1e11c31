"""Every generated mesh preserves a uniform flow (free-stream preservation, Kopriva 2006).

A uniform state is an exact solution; with all boundaries imposing that same
state the FR residual must vanish to round-off, normalised by one residual
term |F|/h.  Meshes are the generators' own, at reduced counts for speed.
"""
import math

import numpy as np
import pytest

from meshing.generators import make_mesh
from solver.basis import make_basis
from solver.initial import uniform_state
from solver.operator import FROperator

G = 1.4
M = 0.3
REF = dict(rho=1.0, u=math.cos(0.3), v=math.sin(0.3), p=1.0 / (G * M * M), gamma=G, mach=M)

MESHES = {
    "box": dict(nx=4, ny=3, q=3, warp=0.05),
    "cylinder": dict(n_radial=6, n_around=16, far_radius=10.0, q=4),
    "naca": dict(n_around=32, n_radial=8, far_chords=10.0, q=3),
    "plate": dict(nx_plate=8, nx_upstream=4, ny=6, q=2),
    "blocks": dict(x0=-3, x1=5, y0=-3, y1=3, wall_spacing=0.2, max_spacing=1.0, q=2),
    "towers": dict(upstream=3, downstream=5, half_width=4, wall_spacing=0.25, max_spacing=1.0, q=2),
}


def _section_points(tmp_path):
    t = np.linspace(0, 2 * np.pi, 48, endpoint=False)
    path = tmp_path / "ellipse.txt"
    np.savetxt(path, np.column_stack([0.5 * np.cos(t), 0.25 * np.sin(t)]))
    return str(path)


@pytest.mark.parametrize("kind", [*MESHES, "section"])
@pytest.mark.parametrize("p", [2, 4])
def test_generated_mesh_preserves_free_stream(kind, p, tmp_path):
    params = dict(MESHES.get(kind, {}))
    if kind == "section":
        params = dict(path=_section_points(tmp_path), n_radial=6, n_around=24, far_radius=8.0, q=3)
    mesh = make_mesh(kind, **params)
    op = FROperator(mesh, make_basis(p), G, flux="roe", ref=REF,
                    boundaries={t: ("fixed-state", {}) for t in mesh.tags})
    U = uniform_state(op.metrics.xy, REF)
    R = np.empty_like(U)
    op.rhs(0.0, U, R)
    h = 2 * math.sqrt(op.metrics.J.min())
    scale = np.abs(U).max() * (1 + 1 / M) / h
    assert np.abs(R).max() / scale <= 1e-12


@pytest.mark.parametrize("name", ["annulus_q3_v22.msh", "annulus_q3_v41.msh"])
def test_gmsh_mesh_preserves_free_stream(name):
    # curved quad16 meshes written by Gmsh itself (tests/data), read through meshing.read_mesh
    from pathlib import Path

    from meshing import read_mesh
    mesh = read_mesh(Path(__file__).parent / "data" / name)
    op = FROperator(mesh, make_basis(3), G, ref=REF, boundaries={t: ("fixed-state", {}) for t in mesh.tags})
    U = uniform_state(op.metrics.xy, REF)
    R = np.empty_like(U)
    op.rhs(0.0, U, R)
    h = 2 * math.sqrt(op.metrics.J.min())
    assert np.abs(R).max() / (np.abs(U).max() * (1 + 1 / M) / h) <= 1e-12
