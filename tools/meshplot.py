"""PNG picture of a mesh with curved element edges.

    python -m tools.meshplot MESHFILE OUT.png [--zoom X0 X1 Y0 Y1]

matplotlib is optional (the ``plot`` extra); without it :func:`plot_mesh`
raises a RuntimeError saying how to install it.
"""
from __future__ import annotations

import argparse
import os
import sys

import numpy as np

from meshing.mesh import Mesh
from meshing.quality import face_points

__all__ = ["plot_mesh", "main"]

_TAG_COLOURS = ["tab:red", "tab:blue", "tab:green", "tab:orange", "tab:purple", "tab:brown",
                "tab:pink", "tab:olive", "tab:cyan"]


def _pyplot():
    try:
        import matplotlib
    except ImportError:
        raise RuntimeError("plotting needs matplotlib; install the plot extra: pip install .[plot]") from None
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.collections import LineCollection
    return plt, LineCollection


def plot_mesh(mesh: Mesh, path: str, zoom: tuple[float, float, float, float] | None = None,
              title: str | None = None, samples: int = 10, dpi: int = 150) -> str:
    """Draw every element edge as the curve of the polynomial geometry.

    Parameters
    ----------
    mesh : Mesh
    path : str
        Output PNG (written to a temporary name, then renamed).
    zoom : (x0, x1, y0, y1), optional
        Window to show (default: the whole mesh); only faces reaching into it
        are drawn.
    samples : int
        Points per face (each face is the degree-q curve sampled at this many
        equispaced parameter values).

    Returns
    -------
    str : ``path``
    """
    plt, LineCollection = _pyplot()
    t = np.linspace(-1.0, 1.0, samples)
    inner = np.asarray(mesh.interior_faces)[:, :2]
    X, _ = face_points(mesh, inner, t)
    if zoom is not None:
        x0, x1, y0, y1 = map(float, zoom)
        if not (x1 > x0 and y1 > y0):
            raise ValueError(f"zoom must be (x0, x1, y0, y1) with x1 > x0, y1 > y0, got {zoom}")

    def visible(pts):
        if zoom is None:
            return pts
        lo, hi = pts.min(axis=1), pts.max(axis=1)
        ok = (hi[:, 0] >= x0) & (lo[:, 0] <= x1) & (hi[:, 1] >= y0) & (lo[:, 1] <= y1)
        return pts[ok]

    fig, ax = plt.subplots(figsize=(8, 8 if zoom is None else 8 * (y1 - y0) / (x1 - x0) + 0.6))
    ax.add_collection(LineCollection(visible(X), colors="0.25", linewidths=0.4))
    for k, tag in enumerate(mesh.tags):
        B, _ = face_points(mesh, mesh.boundary_faces[tag], t)
        lc = LineCollection(visible(B), colors=_TAG_COLOURS[k % len(_TAG_COLOURS)], linewidths=1.6, label=tag)
        ax.add_collection(lc)
    allpts = mesh.geom.reshape(-1, 2)
    if zoom is None:
        lo, hi = allpts.min(axis=0), allpts.max(axis=0)
        pad = 0.02 * (hi - lo).max()
        ax.set_xlim(lo[0] - pad, hi[0] + pad)
        ax.set_ylim(lo[1] - pad, hi[1] + pad)
    else:
        ax.set_xlim(x0, x1)
        ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.legend(loc="upper right", fontsize=8, framealpha=0.9)
    ax.set_title(title or f"{mesh.name}: {mesh.n_elements} quads, q = {mesh.q}", fontsize=10)
    ax.set_xlabel("x")
    ax.set_ylabel("y")
    fig.tight_layout()
    tmp = f"{path}.tmp-{os.getpid()}.png"
    try:
        fig.savefig(tmp, dpi=dpi)
        os.replace(tmp, path)
    finally:
        plt.close(fig)
        if os.path.exists(tmp):
            os.remove(tmp)
    return path


def main(argv=None) -> int:
    from meshing.mesh_io import read_mesh

    ap = argparse.ArgumentParser(prog="python -m tools.meshplot", description="PNG picture of a mesh file")
    ap.add_argument("mesh", help="mesh file (.msh Gmsh or .h5 native)")
    ap.add_argument("out", help="output PNG")
    ap.add_argument("--zoom", type=float, nargs=4, metavar=("X0", "X1", "Y0", "Y1"))
    a = ap.parse_args(argv)
    plot_mesh(read_mesh(a.mesh), a.out, zoom=a.zoom)
    print(f"wrote {a.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
