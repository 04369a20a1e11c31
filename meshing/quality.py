"""Mesh check core: validity and shape measures of curved quadrilaterals.

All measures are evaluated at the Gauss-Legendre points of degree ``p``
(``p + 1`` points per direction, the solution points of a degree-``p`` flux
reconstruction), where the solver will use the metric terms.

Definitions (``x_r``, ``x_s`` the columns of the map's Jacobian matrix,
``J = x_r y_s - x_s y_r``):

* scaled Jacobian ``J / (|x_r| |x_s|)``: the sine of the angle between the two
  coordinate lines; 1 for a rectangle, <= 0 for an inverted point;
* Jacobian ratio of an element: ``min J / max J`` over its points (1 for an
  affine element);
* skewness of an element: ``max |x_r . x_s| / (|x_r| |x_s|)``, the largest
  cosine of the angle between coordinate lines (0 orthogonal, -> 1 degenerate);
* aspect ratio of an element: ``max(L_r, L_s) / min(L_r, L_s)`` with
  ``L_r = int |x_r| ds dr / 2`` the mean length of the element along ``r``
  (likewise ``L_s``); 1 for a square;
* element size ``h_e = min 2 J / max(|x_r|, |x_s|)``: the thickness of the
  element across its longer direction (the shorter side of a rectangle).
"""
from __future__ import annotations

import numpy as np
from numpy.polynomial.legendre import leggauss

from .geometry import map_derivatives, map_points
from .mesh import Mesh, MeshError

__all__ = ["mesh_quality", "check_mesh", "element_sizes", "min_length_scale", "mesh_area",
           "face_points", "contour_area", "format_quality"]


def _metrics(mesh: Mesh, p: int):
    x, w = leggauss(p + 1)
    dr, ds, jac = map_derivatives(mesh.geom, x, x)
    lr = np.linalg.norm(dr, axis=-1)
    ls = np.linalg.norm(ds, axis=-1)
    return x, w, dr, ds, jac, lr, ls


def _degree(mesh: Mesh, p) -> int:
    p = mesh.q if p is None else int(p)
    if p < 0:
        raise ValueError(f"solution degree p must be >= 0, got {p}")
    return p


def element_sizes(mesh: Mesh, p: int | None = None) -> np.ndarray:
    """Element sizes ``h_e`` (see module docstring), shape (ne,)."""
    p = _degree(mesh, p)
    *_, jac, lr, ls = _metrics(mesh, p)
    return (2.0 * jac / np.maximum(lr, ls)).reshape(mesh.n_elements, -1).min(axis=1)


def min_length_scale(mesh: Mesh, p: int | None = None) -> float:
    """Smallest solution-point length scale ``min_e h_e / (p + 1)``.

    ``h_e`` is the element size of the module docstring at the degree-``p``
    Gauss points; dividing by ``p + 1`` shares the element among its solution
    points.  An explicit step estimate is ``dt = CFL * L / (|u| + c)`` with
    this ``L`` (the CFL number then depends on ``p`` and the time scheme).
    """
    p = _degree(mesh, p)
    return float(element_sizes(mesh, p).min() / (p + 1))


def mesh_area(mesh: Mesh, n: int | None = None) -> float:
    """Area ``sum_e int J dr ds`` by ``n``-point Gauss-Legendre per direction.

    The default ``n = q + 1`` integrates ``J`` (degree ``2q - 1`` per direction)
    exactly, so the result is the exact area of the polynomial geometry.
    """
    n = mesh.q + 1 if n is None else n
    x, w = leggauss(n)
    _, _, jac = map_derivatives(mesh.geom, x, x)
    return float(np.einsum("eab,a,b->", jac, w, w))


def face_points(mesh: Mesh, faces: np.ndarray, t: np.ndarray):
    """Points and tangents ``dX/dt`` on element faces, traversed counter-clockwise.

    Parameters
    ----------
    faces : (nf, 2) int array of ``(e, f)``
    t : (m,) array in [-1, 1], the face parameter in traversal direction

    Returns
    -------
    X, dX : (nf, m, 2) arrays
    """
    faces = np.asarray(faces, dtype=np.int64).reshape(-1, 2)
    t = np.asarray(t, dtype=float)
    one = np.ones(1)
    X = np.empty((len(faces), t.size, 2))
    dX = np.empty_like(X)
    # r, s along each face and the sign of dr/dt, ds/dt (counter-clockwise)
    spec = {0: (t, -one, 1.0, 0), 1: (one, t, 1.0, 1), 2: (-t, one, -1.0, 0), 3: (-one, -t, -1.0, 1)}
    for f, (r, s, sign, along) in spec.items():
        sel = np.nonzero(faces[:, 1] == f)[0]
        if sel.size == 0:
            continue
        g = mesh.geom[faces[sel, 0]]
        pts = map_points(g, r, s).reshape(sel.size, t.size, 2)
        dr, ds, _ = map_derivatives(g, r, s)
        d = (dr if along == 0 else ds).reshape(sel.size, t.size, 2)
        X[sel] = pts
        dX[sel] = sign * d
    return X, dX


def contour_area(mesh: Mesh, tags, n: int | None = None) -> float:
    """``int x dy`` over the faces of the given boundary tags (Green's theorem).

    Faces are traversed with the domain on their left, so the enclosed area
    of a hole (a body) comes out negative; for a body with tag ``wall``,
    ``-contour_area(mesh, 'wall')`` is the area inside the polynomial wall.
    With ``n = q + 1`` Gauss points (default) the integral is exact.
    """
    if isinstance(tags, str):
        tags = [tags]
    n = mesh.q + 1 if n is None else n
    x, w = leggauss(n)
    total = 0.0
    for tag in tags:
        if tag not in mesh.boundary_faces:
            raise MeshError(f"{mesh.name}: no boundary tag '{tag}'; tags present: {mesh.tags}")
        X, dX = face_points(mesh, mesh.boundary_faces[tag], x)
        total += float(np.einsum("fm,fm,m->", X[..., 0], dX[..., 1], w))
    return total


def mesh_quality(mesh: Mesh, p: int | None = None) -> dict:
    """Counts and shape measures of a mesh (definitions in the module docstring).

    Parameters
    ----------
    mesh : Mesh
    p : int, optional
        Solution degree whose ``p + 1`` Gauss-Legendre points per direction are
        used (default ``p = q``).

    Returns
    -------
    dict with keys ``name, n_elements, n_vertices, n_geometry_nodes, q, p,
    tags`` (tag -> edge count), ``periodic``, ``area``,
    ``scaled_jacobian_min/max``, ``jacobian_ratio_min``, ``skewness_max``,
    ``aspect_ratio_max``, ``element_size_min/max``, ``length_scale_min``
    (:func:`min_length_scale`) and ``inverted``: list of
    ``(element id, (x, y) of its centre)`` for elements with ``J <= 0`` at
    some point.
    """
    p = _degree(mesh, p)
    x, w, dr, ds, jac, lr, ls = _metrics(mesh, p)
    ne = mesh.n_elements
    with np.errstate(divide="ignore", invalid="ignore"):
        scaled = jac / (lr * ls)
        skew = np.abs(np.sum(dr * ds, axis=-1)) / (lr * ls)
        jmin = jac.reshape(ne, -1).min(axis=1)
        jmax = jac.reshape(ne, -1).max(axis=1)
        ratio = jmin / jmax
    Lr = 0.5 * np.einsum("eab,a,b->e", lr, w, w)
    Ls = 0.5 * np.einsum("eab,a,b->e", ls, w, w)
    aspect = np.maximum(Lr, Ls) / np.minimum(Lr, Ls)
    size = (2.0 * jac / np.maximum(lr, ls)).reshape(ne, -1).min(axis=1)
    bad = np.nonzero(jmin <= 0.0)[0]
    centres = map_points(mesh.geom[bad], np.zeros(1), np.zeros(1))[:, 0, 0] if bad.size else np.zeros((0, 2))
    qg = mesh.q
    allnodes = mesh.geom.reshape(-1, 2)
    scale = float(np.ptp(allnodes, axis=0).max()) or 1.0
    n_nodes = int(np.unique(np.round(allnodes / (1e-9 * scale)), axis=0).shape[0])
    return {
        "name": mesh.name,
        "n_elements": ne,
        "n_vertices": int(len(mesh.vertices)),
        "n_geometry_nodes": n_nodes,
        "q": qg,
        "p": p,
        "tags": {t: int(len(f)) for t, f in sorted(mesh.boundary_faces.items())},
        "periodic": list(mesh.periodic),
        "area": float(np.einsum("eab,a,b->", jac, w, w)),
        "scaled_jacobian_min": float(np.nanmin(scaled)),
        "scaled_jacobian_max": float(np.nanmax(scaled)),
        "jacobian_ratio_min": float(np.nanmin(ratio)),
        "skewness_max": float(np.nanmax(skew)),
        "aspect_ratio_max": float(np.nanmax(aspect)),
        "element_size_min": float(size.min()),
        "element_size_max": float(size.max()),
        "length_scale_min": float(size.min() / (p + 1)),
        "inverted": [(int(e), (float(c[0]), float(c[1]))) for e, c in zip(bad, centres)],
    }


def check_mesh(mesh: Mesh, p: int | None = None) -> dict:
    """:func:`mesh_quality`, raising :class:`MeshError` if any element is inverted.

    The message names up to ten inverted element ids with their centre
    coordinates.
    """
    qd = mesh_quality(mesh, p)
    inv = qd["inverted"]
    if inv:
        shown = ", ".join(f"{e} at ({x:.6g}, {y:.6g})" for e, (x, y) in inv[:10])
        more = f" and {len(inv) - 10} more" if len(inv) > 10 else ""
        raise MeshError(f"{mesh.name}: {len(inv)} inverted element(s) (Jacobian <= 0 at a degree-{qd['p']} "
                        f"solution point): {shown}{more}")
    return qd


def format_quality(qd: dict) -> str:
    """Human-readable summary of a :func:`mesh_quality` dict."""
    lines = [f"{qd['name']}: {qd['n_elements']} quads, {qd['n_vertices']} vertices, "
             f"{qd['n_geometry_nodes']} geometry nodes, geometry degree q={qd['q']}, checked at p={qd['p']}"]
    for t, n in qd["tags"].items():
        lines.append(f"  boundary '{t}': {n} edges")
    for a, b, v in qd["periodic"]:
        lines.append(f"  periodic '{a}' <-> '{b}' by ({v[0]:g}, {v[1]:g})")
    lines += [
        f"  area                  {qd['area']:.10g}",
        f"  scaled Jacobian       min {qd['scaled_jacobian_min']:.4f}  max {qd['scaled_jacobian_max']:.4f}",
        f"  Jacobian ratio        min {qd['jacobian_ratio_min']:.4f}",
        f"  skewness              max {qd['skewness_max']:.4f}",
        f"  aspect ratio          max {qd['aspect_ratio_max']:.4g}",
        f"  element size          min {qd['element_size_min']:.4g}  max {qd['element_size_max']:.4g}",
        f"  inverted elements     {len(qd['inverted'])}",
    ]
    for e, (x, y) in qd["inverted"][:10]:
        lines.append(f"    element {e} at ({x:.6g}, {y:.6g})")
    return "\n".join(lines)
