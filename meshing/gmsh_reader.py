"""Reader for Gmsh ``.msh`` files (formats 2.2 and 4.1, through meshio).

Supported cells: ``quad`` (4 nodes), ``quad8`` (serendipity; the missing
centre node is reconstructed, see :func:`read_gmsh`), ``quad9``, ``quad16``,
``quad25`` (Lagrange, geometry degree 2..4; higher ``quadN`` with ``N`` a
square are read the same way) and line boundary edges ``line``, ``line3``,
``line4``, ``line5`` whose physical-group names become boundary tags.  Point
cells are ignored.

Gmsh orders the nodes of a high-order quad as the four corners, then the
interior nodes of edge 0->1, 1->2, 2->3, 3->0 in traversal direction, then the
interior nodes recursively as a quad of degree ``q - 2`` in the same order
(Gmsh reference manual, "Node ordering"; checked against the reference
coordinates Gmsh 4.15 reports for element types 10, 36 and 37).
"""
from __future__ import annotations

import os
import re
import warnings

import numpy as np
from numpy.polynomial.legendre import leggauss

from .geometry import FACE_CORNERS, map_derivatives, map_points
from .mesh import Mesh, MeshError, build_mesh

__all__ = ["gmsh_quad_order", "read_gmsh"]

_LINE_TYPES = {"line", "line3", "line4", "line5", "line6"}
_TRIANGLES = re.compile(r"^triangle\d*$")
_VOLUME = re.compile(r"^(tetra|hexahedron|wedge|pyramid)\d*$")


def gmsh_quad_order(q: int) -> list[tuple[int, int]]:
    """Tensor indices ``(i, j)`` of Gmsh's local node ``k`` of a degree-``q`` quad.

    Node ``(i, j)`` of our layout sits at reference ``(-1 + 2i/q, -1 + 2j/q)``.
    """

    def rec(i0: int, n: int) -> list[tuple[int, int]]:
        if n == 0:
            return [(i0, i0)]
        a, b = i0, i0 + n
        out = [(a, a), (b, a), (b, b), (a, b)]
        out += [(a + k, a) for k in range(1, n)]
        out += [(b, a + k) for k in range(1, n)]
        out += [(b - k, b) for k in range(1, n)]
        out += [(a, b - k) for k in range(1, n)]
        if n >= 2:
            out += rec(i0 + 1, n - 2)
        return out

    return rec(0, q)


def _quad_degree(ctype: str) -> int | None:
    if ctype == "quad":
        return 1
    if ctype == "quad8":
        return 2
    m = re.fullmatch(r"quad(\d+)", ctype)
    if m:
        n = int(m.group(1))
        r = int(round(np.sqrt(n)))
        if r * r == n and r >= 2:
            return r - 1
    return None


def read_gmsh(path: str, tol: float = 1e-10) -> Mesh:
    """Read a 2D quad mesh from a Gmsh file.

    Parameters
    ----------
    path : str
    tol : float
        Coincidence tolerance relative to the mesh extent (duplicate nodes,
        matching of curved shared edges).

    Returns
    -------
    Mesh
        Named by the file stem; boundary tags are the physical names of the
        line elements.

    Notes
    -----
    * ``quad8`` (serendipity) cells get the centre node
      ``X(0, 0) = -1/4 sum(corners) + 1/2 sum(edge midpoints)``, the value of
      the serendipity map at the centre; the resulting Lagrange ``quad9`` has
      the same (quadratic) edges, so the mesh stays conforming.
    * A cell whose signed area is negative (clockwise) is reoriented by
      reversing its ``r`` direction, with a warning; a cell whose Jacobian is
      still not positive at the Gauss points is refused.
    * Quad numbers in messages count the file's quad cells from 0 in the
      order read; node numbers count nodes from 1 in file order.

    Raises
    ------
    MeshError
        Missing or unreadable file, triangles (quadfr is quad-only) or other
        unsupported cells, mixed geometry degrees, non-planar nodes, duplicate
        nodes, boundary lines without a physical name, lines that match no
        quad edge, non-conforming edges, a boundary edge with no line.
        Every message starts with the file name.
    """
    try:
        import meshio
        import meshio.gmsh
    except ImportError:  # pragma: no cover - meshio is a dependency
        raise MeshError(f"{path}: reading Gmsh files needs meshio (pip install meshio)") from None
    if not os.path.isfile(path):
        raise MeshError(f"{path}: mesh file does not exist")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            msh = meshio.gmsh.read(path)  # the format reader itself: raises instead of printing and exiting
    except (Exception, SystemExit) as err:  # meshio raises many types; report them uniformly
        raise MeshError(f"{path}: not a readable Gmsh file ({type(err).__name__}: {err})") from None

    pts = np.asarray(msh.points, dtype=float)
    if pts.shape[0] == 0:
        raise MeshError(f"{path}: the file has no nodes")
    extent = float(np.ptp(pts[:, :2], axis=0).max()) or 1.0
    if pts.shape[1] > 2 and np.abs(pts[:, 2]).max() > tol * extent:
        k = int(np.argmax(np.abs(pts[:, 2])))
        raise MeshError(f"{path}: node {k + 1} has z = {pts[k, 2]:.6g}; quadfr reads planar meshes in the "
                        "z = 0 plane")
    xy = pts[:, :2]

    phys_names = {}
    for name, data in (msh.field_data or {}).items():
        data = np.asarray(data).ravel()
        if data.size >= 2 and int(data[1]) == 1:
            phys_names[int(data[0])] = name
    phys = msh.cell_data.get("gmsh:physical") if msh.cell_data else None

    quads, qdeg, qtype = [], None, None
    lines = []  # (first node, last node, line number, physical id)
    nline = 0
    for b, block in enumerate(msh.cells):
        ctype, data = block.type, np.asarray(block.data, dtype=np.int64)
        if ctype == "vertex":
            continue
        if _TRIANGLES.match(ctype):
            raise MeshError(f"{path}: has {len(data)} '{ctype}' cells; quadfr is quad-only "
                            "(recombine the mesh into quadrilaterals)")
        if _VOLUME.match(ctype):
            raise MeshError(f"{path}: has 3D '{ctype}' cells; quadfr reads 2D quad meshes")
        if ctype in _LINE_TYPES:
            ids = np.asarray(phys[b]) if phys is not None else np.zeros(len(data), dtype=int)
            for k in range(len(data)):
                lines.append((int(data[k, 0]), int(data[k, 1]), nline + k, int(ids[k])))
            nline += len(data)
            continue
        deg = _quad_degree(ctype)
        if deg is None:
            raise MeshError(f"{path}: unsupported cell type '{ctype}' (quadfr reads quad, quad8, quad9, "
                            "quad16, quad25 and line boundary edges)")
        if qtype is not None and ctype != qtype:
            raise MeshError(f"{path}: mixes '{qtype}' and '{ctype}' cells; all quads must have one geometry degree")
        qtype, qdeg = ctype, deg
        quads.append(data)
    if not quads:
        raise MeshError(f"{path}: the file has no quad cells")
    conn = np.concatenate(quads)
    ne, q = len(conn), qdeg

    # duplicate nodes: coincident coordinates under different ids
    used = np.unique(conn)
    from scipy.spatial import cKDTree

    pairs = cKDTree(xy[used]).query_pairs(r=tol * extent, output_type="ndarray")
    if len(pairs):
        a, b = used[pairs[0, 0]], used[pairs[0, 1]]
        raise MeshError(f"{path}: {len(pairs)} pair(s) of duplicate nodes, e.g. nodes {a + 1} and {b + 1} "
                        f"both at ({xy[a, 0]:.6g}, {xy[a, 1]:.6g}); merge coincident nodes")

    geom = np.empty((ne, q + 1, q + 1, 2))
    if qtype == "quad8":
        order = gmsh_quad_order(2)[:8]
        for k, (i, j) in enumerate(order):
            geom[:, i, j] = xy[conn[:, k]]
        geom[:, 1, 1] = -0.25 * xy[conn[:, :4]].sum(axis=1) + 0.5 * xy[conn[:, 4:8]].sum(axis=1)
    else:
        order = gmsh_quad_order(q)
        if conn.shape[1] != len(order):
            raise MeshError(f"{path}: '{qtype}' cells have {conn.shape[1]} nodes, expected {len(order)}")
        for k, (i, j) in enumerate(order):
            geom[:, i, j] = xy[conn[:, k]]
    corner_nodes = conn[:, :4].copy()

    # orientation: signed area by Gauss quadrature of the Jacobian
    gx, gw = leggauss(q + 1)
    _, _, jac = map_derivatives(geom, gx, gx)
    area = np.einsum("eab,a,b->e", jac, gw, gw)
    flip = area < 0
    if flip.any():
        geom[flip] = geom[flip, ::-1]
        corner_nodes[flip] = corner_nodes[flip][:, [1, 0, 3, 2]]
        warnings.warn(f"{path}: reoriented {int(flip.sum())} clockwise quad(s) to counter-clockwise "
                      f"(first: quad {int(np.argmax(flip))})", stacklevel=2)
        _, _, jac = map_derivatives(geom, gx, gx)
    jmin = jac.reshape(ne, -1).min(axis=1)
    bad = np.nonzero(jmin <= 0.0)[0]
    if bad.size:
        c = map_points(geom[bad[:1]], np.zeros(1), np.zeros(1))[0, 0, 0]
        raise MeshError(f"{path}: quad {int(bad[0])} at ({c[0]:.6g}, {c[1]:.6g}) has a non-positive Jacobian "
                        f"(folded or degenerate){'' if bad.size == 1 else f' ({bad.size} such quads)'}")

    # vertices: the corner nodes, renumbered
    vnodes, corners = np.unique(corner_nodes, return_inverse=True)
    corners = corners.reshape(ne, 4)
    vindex = {int(n): k for k, n in enumerate(vnodes)}
    vertices = xy[vnodes]

    edge_owner: dict[tuple[int, int], int] = {}
    for e in range(ne):
        for a, b in FACE_CORNERS:
            key = tuple(sorted((int(corners[e, a]), int(corners[e, b]))))
            edge_owner[key] = edge_owner.get(key, 0) + 1

    edge_tags: dict[tuple[int, int], str] = {}
    for n0, n1, k, pid in lines:
        if pid not in phys_names:
            what = "no physical group" if pid == 0 else f"physical group {pid} without a name"
            x = 0.5 * (xy[n0] + xy[n1])
            raise MeshError(f"{path}: boundary line {k} at ({x[0]:.6g}, {x[1]:.6g}) has {what}; give every "
                            "boundary curve a named physical group (its name is the boundary tag)")
        tag = phys_names[pid]
        if n0 not in vindex or n1 not in vindex:
            x = 0.5 * (xy[n0] + xy[n1])
            raise MeshError(f"{path}: boundary line {k} ('{tag}') at ({x[0]:.6g}, {x[1]:.6g}) matches no "
                            "quad edge (its end nodes are not quad corners)")
        key = tuple(sorted((vindex[n0], vindex[n1])))
        if key not in edge_owner:
            x = 0.5 * (xy[n0] + xy[n1])
            raise MeshError(f"{path}: boundary line {k} ('{tag}') at ({x[0]:.6g}, {x[1]:.6g}) matches no quad edge")
        if edge_owner[key] == 2:
            continue  # a physical line inside the domain (e.g. a probe line) is not a boundary
        if key in edge_tags and edge_tags[key] != tag:
            raise MeshError(f"{path}: edge {key} is in two physical groups, '{edge_tags[key]}' and '{tag}'")
        edge_tags[key] = tag

    _check_hanging(path, geom, corners, vertices, edge_owner, tol * extent)
    name = os.path.splitext(os.path.basename(path))[0]
    try:
        mesh = build_mesh(geom, corners, vertices, edge_tags, name=name)
    except MeshError as err:
        msg = str(err)
        if "has no boundary tag" in msg:
            msg += " (no boundary line in a named physical group covers it)"
        raise MeshError(f"{path}: {msg}") from None
    _check_conforming(path, mesh, tol * extent)
    return mesh


def _check_hanging(path, geom, corners, vertices, edge_owner, tol):
    """Refuse a vertex lying inside another element's open edge (hanging node)."""
    open_edges = [k for k, n in edge_owner.items() if n == 1]
    if not open_edges:
        return
    E = np.array(open_edges)
    onb = np.unique(E)
    A, B = vertices[E[:, 0]], vertices[E[:, 1]]
    d = B - A
    L2 = np.einsum("ij,ij->i", d, d)
    for v in onb:
        p = vertices[v]
        t = np.einsum("ij,ij->i", p - A, d) / L2
        foot = A + t[:, None] * d
        dist = np.linalg.norm(foot - p, axis=1)
        hit = (t > 1e-9) & (t < 1 - 1e-9) & (dist <= max(tol, 1e-9 * np.sqrt(L2.max())))
        hit &= (E[:, 0] != v) & (E[:, 1] != v)
        if hit.any():
            k = int(np.argmax(hit))
            raise MeshError(f"{path}: non-conforming mesh: a quad corner at ({p[0]:.6g}, {p[1]:.6g}) lies inside "
                            f"the edge from ({A[k, 0]:.6g}, {A[k, 1]:.6g}) to ({B[k, 0]:.6g}, {B[k, 1]:.6g}) "
                            "(hanging node); quadfr needs conforming meshes")


def _check_conforming(path, mesh: Mesh, tol):
    """Shared edges must carry the same curve from both sides."""
    from .mesh import _face_node_coords

    for eL, fL, eR, fR in mesh.interior_faces:
        a = _face_node_coords(mesh.geom[eL], fL)
        b = _face_node_coords(mesh.geom[eR], fR)[::-1]
        if np.abs(a - b).max() > tol:
            x = a.mean(axis=0)
            raise MeshError(f"{path}: non-conforming edge between quads {eL} and {eR} at ({x[0]:.6g}, {x[1]:.6g}): "
                            "their high-order edge nodes differ")
