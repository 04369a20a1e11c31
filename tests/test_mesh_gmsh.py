"""Gmsh reader: node ordering, tags, curved geometry and the errors of malformed files."""
import os
import warnings

import meshio
import numpy as np
import pytest

from meshing import MeshError, mesh_area, mesh_quality, read_mesh
from meshing.geometry import map_points
from meshing.gmsh_reader import gmsh_quad_order
from meshing.quality import face_points

DATA = os.path.join(os.path.dirname(__file__), "data")

# Reference coordinates of the nodes of Gmsh element types 3, 10, 36, 37 (quad4, quad9, quad16,
# quad25), as reported by gmsh.model.mesh.getElementProperties in Gmsh 4.15.2 (Geuzaine & Remacle
# 2009); 1/3 written exactly.
T = 1.0 / 3.0
GMSH_REF = {
    1: [(-1, -1), (1, -1), (1, 1), (-1, 1)],
    2: [(-1, -1), (1, -1), (1, 1), (-1, 1), (0, -1), (1, 0), (0, 1), (-1, 0), (0, 0)],
    3: [(-1, -1), (1, -1), (1, 1), (-1, 1), (-T, -1), (T, -1), (1, -T), (1, T), (T, 1), (-T, 1), (-1, T),
        (-1, -T), (-T, -T), (T, -T), (T, T), (-T, T)],
    4: [(-1, -1), (1, -1), (1, 1), (-1, 1), (-.5, -1), (0, -1), (.5, -1), (1, -.5), (1, 0), (1, .5), (.5, 1),
        (0, 1), (-.5, 1), (-1, .5), (-1, 0), (-1, -.5), (-.5, -.5), (.5, -.5), (.5, .5), (-.5, .5), (0, -.5),
        (.5, 0), (0, .5), (-.5, 0), (0, 0)],
}
QUAD = {1: "quad", 2: "quad9", 3: "quad16", 4: "quad25"}
LINE = {1: "line", 2: "line3", 3: "line4", 4: "line5"}


@pytest.mark.parametrize("q", [1, 2, 3, 4])
def test_order_matches_gmsh_reference(q):
    ours = [(-1 + 2 * i / q, -1 + 2 * j / q) for i, j in gmsh_quad_order(q)]
    assert np.allclose(ours, GMSH_REF[q], atol=1e-15)

GMSH_TYPE = {"line": 1, "line3": 8, "line4": 26, "line5": 27, "quad": 3, "quad9": 10, "quad16": 36, "quad25": 37,
             "triangle": 2, "quad8": 16}  # Gmsh reference manual, element types


def _write_msh41(path, P, cells, phys, field):
    """Minimal ASCII MSH 4.1 writer (Gmsh reference manual, section "MSH file format").

    meshio 5.3 writes 4.1 files without physical groups on the entities, so the 4.1 tests use
    this writer: one curve entity per line physical group, one surface entity per surface group,
    all nodes in one block.
    """
    names = {int(v[0]): (int(v[1]), k) for k, v in field.items()}
    blocks = []
    for (ctype, conn), pid in zip(cells, phys):
        dim = 1 if ctype.startswith("line") else 2
        for tag in np.unique(pid):
            blocks.append((dim, int(tag), GMSH_TYPE[ctype], conn[pid == tag]))
    curves = sorted({b[1] for b in blocks if b[0] == 1})
    surfs = sorted({b[1] for b in blocks if b[0] == 2})
    out = ["$MeshFormat", "4.1 0 8", "$EndMeshFormat", "$PhysicalNames", str(len(names))]
    out += [f'{d} {t} "{n}"' for t, (d, n) in sorted(names.items())]
    out += ["$EndPhysicalNames", "$Entities", f"0 {len(curves)} {len(surfs)} 0"]
    lo, hi = P.min(axis=0), P.max(axis=0)
    box = f"{lo[0]} {lo[1]} 0 {hi[0]} {hi[1]} 0"
    for c in curves:
        out.append(f"{c} {box} {1 if c in names else 0}{' ' + str(c) if c in names else ''} 0")
    for sfc in surfs:
        out.append(f"{sfc} {box} {1 if sfc in names else 0}{' ' + str(sfc) if sfc in names else ''} 0")
    out += ["$EndEntities", "$Nodes", f"1 {len(P)} 1 {len(P)}", f"2 {surfs[0]} 0 {len(P)}"]
    out += [str(k + 1) for k in range(len(P))]
    out += [f"{float(x)!r} {float(y)!r} 0" for x, y in P]
    out += ["$EndNodes", "$Elements"]
    ntot = sum(len(b[3]) for b in blocks)
    out.append(f"{len(blocks)} {ntot} 1 {ntot}")
    k = 1
    for dim, tag, gtype, conn in blocks:
        out.append(f"{dim} {tag} {gtype} {len(conn)}")
        for row in conn:
            out.append(" ".join([str(k)] + [str(int(v) + 1) for v in row]))
            k += 1
    out.append("$EndElements")
    with open(path, "w") as fh:
        fh.write("\n".join(out) + "\n")


def _polar(r, s):
    """Quarter annulus 1 <= rad <= 2, 0 <= theta <= pi/2 from reference coordinates in [-1, 1]."""
    rad = 1.5 + 0.5 * r
    th = np.pi / 4 * (1 + s)
    return np.stack([rad * np.cos(th), rad * np.sin(th)], axis=-1)


def _write_grid(path, q, nr=2, nt=3, fmt="gmsh22", mapping=_polar, drop_tag=None, name_ids=True,
                tri=False, clockwise=None):
    """A grid of curved quads written with meshio, nodes placed at Gmsh's reference coordinates."""
    ref = np.array(GMSH_REF[q], dtype=float)
    pts, index, conn = [], {}, []

    def node(x):
        key = tuple(np.round(x, 12))
        if key not in index:
            index[key] = len(pts)
            pts.append(x)
        return index[key]

    for i in range(nr):
        for j in range(nt):
            r = -1 + 2 * (i + (ref[:, 0] + 1) / 2) / nr
            s = -1 + 2 * (j + (ref[:, 1] + 1) / 2) / nt
            X = mapping(r, s)
            conn.append([node(x) for x in X])
    conn = np.array(conn)
    if clockwise is not None:  # reverse the r direction of one element: corners 1,0,3,2 ...
        perm = gmsh_quad_order(q)
        pos = {ij: k for k, ij in enumerate(perm)}
        conn[clockwise] = [conn[clockwise][pos[(q - i, j)]] for i, j in perm]
    # boundary lines: side -> reference-coordinate curve
    lines, lphys = [], []
    tags = {"inner": 1, "outer": 2, "side0": 3, "side1": 4}
    t = np.concatenate([[-1.0, 1.0], np.linspace(-1, 1, q + 1)[1:-1]])  # Gmsh line order: ends first
    for side, pid in tags.items():
        if side == drop_tag:
            continue
        n = nt if side in ("inner", "outer") else nr
        for k in range(n):
            u = -1 + 2 * (k + (t + 1) / 2) / n
            if side == "inner":
                X = mapping(-np.ones_like(u), u)
            elif side == "outer":
                X = mapping(np.ones_like(u), u)
            elif side == "side0":
                X = mapping(u, -np.ones_like(u))
            else:
                X = mapping(u, np.ones_like(u))
            lines.append([node(x) for x in X])
            lphys.append(pid)
    P = np.array(pts)
    P3 = np.c_[P, np.zeros(len(P))]
    cells = [(QUAD[q], conn), (LINE[q], np.array(lines))]
    phys = [np.full(len(conn), 5), np.array(lphys)]
    if tri:
        cells.append(("triangle", np.array([[conn[0, 0], conn[0, 1], conn[0, 2]]])))
        phys.append(np.array([5]))
    field = {name: np.array([pid, 1]) for name, pid in tags.items()} if name_ids else {}
    field["fluid"] = np.array([5, 2])
    if fmt == "msh41":
        _write_msh41(path, P, cells, phys, field)
        return path
    m = meshio.Mesh(P3, cells, cell_data={"gmsh:physical": phys, "gmsh:geometrical": [p.copy() for p in phys]},
                    field_data=field)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        meshio.write(path, m, file_format=fmt, binary=False)
    return path


@pytest.mark.parametrize("fmt", ["gmsh22", "msh41"])  # format 2.2 by meshio, 4.1 by _write_msh41
@pytest.mark.parametrize("q", [1, 2, 3, 4])
def test_polynomial_map_reproduced(tmp_path, fmt, q):
    # a map of degree q in each reference variable is reproduced exactly iff the node order is right
    def poly(r, s):
        return np.stack([r + 0.1 * s**2 * (q > 1) + 0.05 * r**q * s, s + 0.1 * r**2 * (q > 1) - 0.03 * s**q], axis=-1)

    path = _write_grid(str(tmp_path / "p.msh"), q, nr=1, nt=1, fmt=fmt, mapping=poly)
    m = read_mesh(path)
    rr = np.array([-0.83, -0.2, 0.37, 0.91])
    X = map_points(m.geom, rr, rr)[0]
    R, S = np.meshgrid(rr, rr, indexing="ij")
    assert np.abs(X - poly(R, S)).max() < 1e-12
    assert m.tags == ["inner", "outer", "side0", "side1"]


@pytest.mark.parametrize("fmt", ["gmsh22", "msh41"])
@pytest.mark.parametrize("q", [2, 3])
def test_curved_quarter_annulus(tmp_path, fmt, q):
    m = read_mesh(_write_grid(str(tmp_path / "a.msh"), q, nr=2, nt=6, fmt=fmt))
    assert m.n_elements == 12 and m.q == q
    assert {t: len(f) for t, f in m.boundary_faces.items()} == {"inner": 6, "outer": 6, "side0": 2, "side1": 2}
    X, _ = face_points(m, m.boundary_faces["inner"], np.linspace(-1, 1, q + 1))
    assert np.abs(np.linalg.norm(X, axis=-1) - 1.0).max() < 1e-12
    ex = np.pi / 4 * (4 - 1)  # quarter annulus, elementary geometry
    # six arcs of 15 degrees: interpolation error of the arcs ~ 1e-4 (q=2), 1e-6 (q=3)
    assert abs(mesh_area(m) - ex) / ex < {2: 1e-4, 3: 1e-5}[q]
    assert mesh_quality(m)["inverted"] == []


@pytest.mark.parametrize("name", ["annulus_q3_v41.msh", "annulus_q3_v22.msh"])
def test_file_made_by_gmsh(name):
    # Made by Gmsh 4.15.2: annulus r = 0.5..2, Physical Curve "inner"/"outer", recombined quads,
    # setOrder(3) (element type 36, quad16), written as MSH 4.1 and 2.2.
    m = read_mesh(os.path.join(DATA, name))
    assert m.n_elements == 118 and m.q == 3
    assert m.tags == ["inner", "outer"]
    for tag, rad in (("inner", 0.5), ("outer", 2.0)):
        X, _ = face_points(m, m.boundary_faces[tag], np.linspace(-1, 1, 4))
        assert np.abs(np.linalg.norm(X, axis=-1) - rad).max() < 1e-12
    ex = np.pi * (2.0**2 - 0.5**2)
    assert abs(mesh_area(m) - ex) / ex < 1e-5  # 10 cubic arcs on the inner circle
    assert mesh_quality(m)["inverted"] == []


def test_quad8_centre_reconstructed(tmp_path):
    # serendipity square [0,2]x[0,1] with straight edges: the reconstructed centre is the centre
    P = np.array([[0, 0], [2, 0], [2, 1], [0, 1], [1, 0], [2, .5], [1, 1], [0, .5]], float)
    m = meshio.Mesh(np.c_[P, np.zeros(8)], [("quad8", np.arange(8)[None]),
                                            ("line3", np.array([[0, 1, 4], [1, 2, 5], [2, 3, 6], [3, 0, 7]]))],
                    cell_data={"gmsh:physical": [np.array([2]), np.array([1, 1, 1, 1])],
                               "gmsh:geometrical": [np.array([2]), np.array([1, 1, 1, 1])]},
                    field_data={"border": np.array([1, 1]), "fluid": np.array([2, 2])})
    path = str(tmp_path / "q8.msh")
    meshio.write(path, m, file_format="gmsh22", binary=False)
    mesh = read_mesh(path)
    assert np.allclose(mesh.geom[0, 1, 1], [1.0, 0.5], atol=1e-15)
    assert abs(mesh_area(mesh) - 2.0) < 1e-14


def test_clockwise_quad_reoriented(tmp_path):
    path = _write_grid(str(tmp_path / "cw.msh"), 2, clockwise=1)
    with pytest.warns(UserWarning, match="reoriented 1 clockwise"):
        m = read_mesh(path)
    assert mesh_quality(m)["inverted"] == []
    assert abs(mesh_area(m) - np.pi / 4 * 3) < 1e-3


def test_missing_file(tmp_path):
    with pytest.raises(MeshError, match="does not exist"):
        read_mesh(str(tmp_path / "nothere.msh"))


def test_unknown_extension(tmp_path):
    p = tmp_path / "m.vtk"
    p.write_text("x")
    with pytest.raises(MeshError, match=r"m\.vtk.*unknown mesh file extension"):
        read_mesh(str(p))


def test_garbage_file(tmp_path):
    p = tmp_path / "bad.msh"
    p.write_text("$MeshFormat\nthis is not gmsh\n")
    with pytest.raises(MeshError, match="bad.msh: not a readable Gmsh file"):
        read_mesh(str(p))


def test_triangles_refused(tmp_path):
    with pytest.raises(MeshError, match="quad-only"):
        read_mesh(_write_grid(str(tmp_path / "t.msh"), 1, tri=True))


def test_boundary_without_physical_name(tmp_path):
    with pytest.raises(MeshError, match="without a name"):
        read_mesh(_write_grid(str(tmp_path / "n.msh"), 2, name_ids=False))


def test_boundary_edge_without_line(tmp_path):
    with pytest.raises(MeshError, match="has no boundary tag"):
        read_mesh(_write_grid(str(tmp_path / "d.msh"), 2, drop_tag="side1"))


def _write_raw(path, points, cells, phys, field):
    m = meshio.Mesh(np.c_[points, np.zeros(len(points))], cells,
                    cell_data={"gmsh:physical": phys, "gmsh:geometrical": [p.copy() for p in phys]},
                    field_data=field)
    meshio.write(path, m, file_format="gmsh22", binary=False)
    return path


def _unit_square_lines(ids):
    return np.array([[ids[0], ids[1]], [ids[1], ids[2]], [ids[2], ids[3]], [ids[3], ids[0]]])


def test_duplicate_nodes(tmp_path):
    # two unit squares side by side, the shared corner (1,0) given twice
    P = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0], [2, 1], [1, 0]], float)
    quads = np.array([[0, 1, 2, 3], [6, 4, 5, 2]])
    lines = np.array([[0, 1], [6, 4], [4, 5], [5, 2], [2, 3], [3, 0]])
    path = _write_raw(str(tmp_path / "dup.msh"), P, [("quad", quads), ("line", lines)],
                      [np.array([9, 9]), np.ones(6, int)], {"wall": np.array([1, 1]), "f": np.array([9, 2])})
    with pytest.raises(MeshError, match=r"duplicate nodes, e.g. nodes 2 and 7 both at \(1, 0\)"):
        read_mesh(path)


def test_hanging_node(tmp_path):
    P = np.array([[0, 0], [1, 0], [1, 2], [0, 2], [2, 0], [2, 1], [1, 1], [2, 2]], float)
    quads = np.array([[0, 1, 2, 3], [1, 4, 5, 6], [6, 5, 7, 2]])
    lines = np.array([[0, 1], [1, 4], [4, 5], [5, 7], [7, 2], [2, 3], [3, 0]])
    path = _write_raw(str(tmp_path / "hang.msh"), P, [("quad", quads), ("line", lines)],
                      [np.array([9, 9, 9]), np.ones(7, int)], {"wall": np.array([1, 1]), "f": np.array([9, 2])})
    with pytest.raises(MeshError, match=r"non-conforming mesh.*\(1, 1\).*hanging node"):
        read_mesh(path)


def test_line_matching_no_edge(tmp_path):
    P = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    lines = np.concatenate([_unit_square_lines([0, 1, 2, 3]), [[0, 2]]])  # a diagonal
    path = _write_raw(str(tmp_path / "diag.msh"), P, [("quad", np.array([[0, 1, 2, 3]])), ("line", lines)],
                      [np.array([9]), np.ones(5, int)], {"wall": np.array([1, 1]), "f": np.array([9, 2])})
    with pytest.raises(MeshError, match=r"boundary line 4 \('wall'\).*matches no quad edge"):
        read_mesh(path)


def test_folded_quad_refused(tmp_path):
    # corners in bow-tie order: positive and negative Jacobian inside one cell
    P = np.array([[0, 0], [1, 0], [0, 1], [1, 1]], float)
    lines = _unit_square_lines([0, 1, 2, 3])
    path = _write_raw(str(tmp_path / "bow.msh"), P, [("quad", np.array([[0, 1, 2, 3]])), ("line", lines)],
                      [np.array([9]), np.ones(4, int)], {"wall": np.array([1, 1]), "f": np.array([9, 2])})
    with pytest.raises(MeshError, match=r"quad 0 at \(0.5, 0.5\) has a non-positive Jacobian"):
        read_mesh(path)


def test_curved_edges_that_differ(tmp_path):
    # two quad9 share corners (1,0), (1,1) but each has its own mid-edge node there, one bulged
    P = [[0, 0], [1, 0], [1, 1], [0, 1], [.5, 0], [1.0, .5], [.5, 1], [0, .5], [.5, .5],
         [2, 0], [2, 1], [1.5, 0], [2, .5], [1.5, 1], [1.1, .5], [1.5, .5]]
    q9 = np.array([[0, 1, 2, 3, 4, 5, 6, 7, 8], [1, 9, 10, 2, 11, 12, 13, 14, 15]])
    l3 = np.array([[0, 1, 4], [1, 9, 11], [9, 10, 12], [10, 2, 13], [2, 3, 6], [3, 0, 7]])
    path = _write_raw(str(tmp_path / "nc.msh"), np.array(P, float), [("quad9", q9), ("line3", l3)],
                      [np.array([9, 9]), np.ones(6, int)], {"wall": np.array([1, 1]), "f": np.array([9, 2])})
    with pytest.raises(MeshError, match="non-conforming edge between quads 0 and 1"):
        read_mesh(path)


def test_mixed_degrees_refused(tmp_path):
    P = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0], [2, 1], [1.5, 0], [2, .5], [1.5, 1], [1, .5], [1.5, .5]],
                 float)
    path = _write_raw(str(tmp_path / "mix.msh"), P,
                      [("quad", np.array([[0, 1, 2, 3]])), ("quad9", np.array([[1, 4, 5, 2, 6, 7, 8, 9, 10]]))],
                      [np.array([9]), np.array([9])], {"f": np.array([9, 2])})
    with pytest.raises(MeshError, match="mixes 'quad' and 'quad9'"):
        read_mesh(path)
