"""The mesh object every generator and reader produces.

A :class:`Mesh` is a conforming mesh of curved quadrilaterals.  Generators and
readers only have to supply the per-element geometry nodes, the corner vertex
ids, boundary edges tagged by name and (optionally) periodic tag pairs; the
face connectivity is derived here by :func:`build_mesh`, once, in one place.

Arrays (``ne`` elements, geometry degree ``q``):

* ``geom``      (ne, q+1, q+1, 2) float: geometry nodes, see :mod:`meshing.geometry`;
* ``corners``   (ne, 4) int: vertex ids of corners 0..3 (counter-clockwise);
* ``vertices``  (nv, 2) float;
* ``interior_faces`` (nif, 4) int: ``eL, fL, eR, fR``.  The two sides traverse
  the face in opposite directions (both counter-clockwise), so point ``k`` of
  the left side meets point ``n-1-k`` of the right side for a symmetric point
  set;
* ``boundary_faces`` dict tag -> (nb, 2) int: ``e, f``;
* ``periodic``  list of ``(tag_a, tag_b, (dx, dy))``: pairs already folded into
  ``interior_faces``; kept for the record and for output.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .geometry import FACE_CORNERS

__all__ = ["Mesh", "MeshError", "build_mesh"]


class MeshError(ValueError):
    """A mesh is malformed; the message names the element, edge or tag."""


@dataclass
class Mesh:
    geom: np.ndarray
    corners: np.ndarray
    vertices: np.ndarray
    interior_faces: np.ndarray
    boundary_faces: dict[str, np.ndarray]
    periodic: list = field(default_factory=list)
    name: str = "mesh"

    @property
    def n_elements(self) -> int:
        return self.geom.shape[0]

    @property
    def q(self) -> int:
        """Geometry degree."""
        return self.geom.shape[1] - 1

    @property
    def tags(self) -> list[str]:
        return sorted(self.boundary_faces)

    def summary(self) -> str:
        parts = [f"{self.name}: {self.n_elements} quads, geometry degree {self.q}"]
        for t in self.tags:
            parts.append(f"  boundary '{t}': {len(self.boundary_faces[t])} edges")
        for a, b, v in self.periodic:
            parts.append(f"  periodic '{a}' <-> '{b}' by ({v[0]:g}, {v[1]:g})")
        return "\n".join(parts)


def _face_node_coords(geom_e: np.ndarray, f: int) -> np.ndarray:
    """Geometry nodes along face ``f`` of one element, counter-clockwise, (q+1, 2)."""
    if f == 0:
        return geom_e[:, 0]
    if f == 1:
        return geom_e[-1, :]
    if f == 2:
        return geom_e[::-1, -1]
    return geom_e[0, ::-1]


def build_mesh(
    geom: np.ndarray,
    corners: np.ndarray,
    vertices: np.ndarray,
    edge_tags: dict[tuple[int, int], str],
    periodic: list | tuple = (),
    name: str = "mesh",
    tol: float = 1e-9,
) -> Mesh:
    """Derive face connectivity and build a :class:`Mesh`.

    Parameters
    ----------
    geom : (ne, q+1, q+1, 2) array
        Geometry nodes per element.
    corners : (ne, 4) int array
        Corner vertex ids, counter-clockwise.
    vertices : (nv, 2) array
    edge_tags : dict
        Maps a boundary edge, given by its two vertex ids (any order), to a tag.
    periodic : sequence of (tag_a, tag_b, (dx, dy))
        Faces of ``tag_a`` translated by ``(dx, dy)`` must land on faces of
        ``tag_b``; matched pairs become interior faces.
    tol : float
        Matching tolerance relative to the mesh extent.

    Raises
    ------
    MeshError
        Clockwise element, an edge shared by more than two elements, a
        boundary edge without a tag, a tag on an interior edge, or a periodic
        pair that does not match.
    """
    geom = np.ascontiguousarray(geom, dtype=float)
    corners = np.asarray(corners, dtype=np.int64)
    vertices = np.asarray(vertices, dtype=float)
    ne = geom.shape[0]
    if geom.ndim != 4 or geom.shape[1] != geom.shape[2] or geom.shape[3] != 2:
        raise MeshError(f"{name}: geometry array must have shape (ne, q+1, q+1, 2), got {geom.shape}")
    if corners.shape != (ne, 4):
        raise MeshError(f"{name}: corners must have shape ({ne}, 4), got {corners.shape}")

    owner: dict[tuple[int, int], list[tuple[int, int, int, int]]] = {}
    for e in range(ne):
        for f, (a, b) in enumerate(FACE_CORNERS):
            va, vb = int(corners[e, a]), int(corners[e, b])
            if va == vb:
                raise MeshError(f"{name}: element {e} face {f} is degenerate (both ends are vertex {va})")
            key = (min(va, vb), max(va, vb))
            owner.setdefault(key, []).append((e, f, va, vb))

    interior = []
    open_edges: dict[tuple[int, int], tuple[int, int]] = {}
    for key, sides in owner.items():
        if len(sides) > 2:
            els = ", ".join(str(s[0]) for s in sides)
            raise MeshError(f"{name}: edge between vertices {key} is shared by {len(sides)} elements ({els})")
        if len(sides) == 2:
            (e1, f1, a1, b1), (e2, f2, a2, b2) = sides
            if a1 == a2:
                x = vertices[a1]
                raise MeshError(
                    f"{name}: elements {e1} and {e2} traverse their shared edge in the same direction; "
                    f"one of them is clockwise (inverted) near ({x[0]:.6g}, {x[1]:.6g})"
                )
            if key in edge_tags:
                raise MeshError(f"{name}: boundary tag '{edge_tags[key]}' is given to interior edge {key} "
                                f"(elements {e1}, {e2})")
            interior.append((e1, f1, e2, f2))
        else:
            open_edges[key] = sides[0][:2]

    by_tag: dict[str, list[tuple[int, int]]] = {}
    for key, (e, f) in open_edges.items():
        tag = edge_tags.get(key, edge_tags.get((key[1], key[0])))
        if tag is None:
            x = 0.5 * (vertices[key[0]] + vertices[key[1]])
            raise MeshError(f"{name}: boundary edge of element {e} (face {f}) at ({x[0]:.6g}, {x[1]:.6g}) "
                            "has no boundary tag")
        by_tag.setdefault(tag, []).append((e, f))
    for key in edge_tags:
        k = (min(key), max(key))
        if k not in owner:
            raise MeshError(f"{name}: tagged edge {key} ('{edge_tags[key]}') is not an edge of any element")

    extent = float(np.ptp(vertices, axis=0).max()) if len(vertices) else 1.0
    periodic = list(periodic)
    for tag_a, tag_b, vec in periodic:
        for t in (tag_a, tag_b):
            if t not in by_tag:
                raise MeshError(f"{name}: periodic tag '{t}' has no edges; tags present: {sorted(by_tag)}")
        fa, fb = by_tag.pop(tag_a), by_tag.pop(tag_b)
        if len(fa) != len(fb):
            raise MeshError(f"{name}: periodic tags '{tag_a}' ({len(fa)} edges) and '{tag_b}' "
                            f"({len(fb)} edges) do not pair up")
        vec = np.asarray(vec, dtype=float)
        mids_b = np.array([_face_node_coords(geom[e], f).mean(axis=0) for e, f in fb])
        used = np.zeros(len(fb), dtype=bool)
        for e, f in fa:
            pts = _face_node_coords(geom[e], f) + vec
            d = np.linalg.norm(mids_b - pts.mean(axis=0), axis=1)
            d[used] = np.inf
            k = int(np.argmin(d))
            eb, fbk = fb[k]
            other = _face_node_coords(geom[eb], fbk)[::-1]
            if d[k] > tol * extent or np.abs(other - pts).max() > tol * extent:
                m = pts.mean(axis=0)
                raise MeshError(
                    f"{name}: periodic edge of element {e} (tag '{tag_a}', midpoint moved to "
                    f"({m[0]:.6g}, {m[1]:.6g})) matches no edge of tag '{tag_b}' under translation "
                    f"({vec[0]:g}, {vec[1]:g})"
                )
            used[k] = True
            interior.append((e, f, eb, fbk))

    interior_faces = np.array(interior, dtype=np.int64).reshape(-1, 4)
    boundary_faces = {t: np.array(v, dtype=np.int64).reshape(-1, 2) for t, v in sorted(by_tag.items())}
    return Mesh(geom=geom, corners=corners, vertices=vertices, interior_faces=interior_faces,
                boundary_faces=boundary_faces, periodic=[(a, b, tuple(map(float, v))) for a, b, v in periodic],
                name=name)
