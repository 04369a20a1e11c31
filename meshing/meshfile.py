"""quadfr's native mesh file (HDF5).

Layout (format version 1)::

    /                       attributes: format = "quadfr-mesh", version = 1,
                                        name (str), q (int, geometry degree)
    /geom                   float64 (ne, q+1, q+1, 2)  geometry nodes
    /corners                int64   (ne, 4)            corner vertex ids
    /vertices               float64 (nv, 2)
    /interior_faces         int64   (nif, 4)           eL, fL, eR, fR
    /boundary/<tag>         int64   (nb, 2)            e, f  (one dataset per tag)
    /periodic/<k>           float64 (2,)  translation, attributes tag_a, tag_b
                                          (k = 0, 1, ... in order)

Arrays and conventions as in :mod:`meshing.mesh` and :mod:`meshing.geometry`.
The file is written to a temporary name beside the target and renamed, so a
crash never leaves a half-written mesh.
"""
from __future__ import annotations

import os

import numpy as np

from .mesh import Mesh, MeshError

__all__ = ["FORMAT", "VERSION", "write_mesh", "read_mesh_file"]

FORMAT = "quadfr-mesh"
VERSION = 1


def write_mesh(mesh: Mesh, path: str) -> str:
    """Write ``mesh`` to ``path`` (HDF5, layout in the module docstring); returns ``path``."""
    import h5py

    tmp = f"{path}.tmp-{os.getpid()}"
    try:
        with h5py.File(tmp, "w") as f:
            f.attrs["format"] = FORMAT
            f.attrs["version"] = VERSION
            f.attrs["name"] = mesh.name
            f.attrs["q"] = mesh.q
            f.create_dataset("geom", data=np.asarray(mesh.geom, dtype=np.float64))
            f.create_dataset("corners", data=np.asarray(mesh.corners, dtype=np.int64))
            f.create_dataset("vertices", data=np.asarray(mesh.vertices, dtype=np.float64).reshape(-1, 2))
            f.create_dataset("interior_faces", data=np.asarray(mesh.interior_faces, dtype=np.int64).reshape(-1, 4))
            g = f.create_group("boundary")
            for tag, faces in mesh.boundary_faces.items():
                g.create_dataset(tag, data=np.asarray(faces, dtype=np.int64).reshape(-1, 2))
            p = f.create_group("periodic")
            for k, (a, b, vec) in enumerate(mesh.periodic):
                d = p.create_dataset(str(k), data=np.asarray(vec, dtype=np.float64))
                d.attrs["tag_a"] = a
                d.attrs["tag_b"] = b
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)
    return path


def read_mesh_file(path: str) -> Mesh:
    """Read a native mesh file.

    Raises
    ------
    MeshError
        Missing file, not HDF5 (or truncated), not a quadfr mesh, a newer
        format version, missing datasets, inconsistent shapes or ids out of
        range; the message names the file.
    """
    import h5py

    if not os.path.isfile(path):
        raise MeshError(f"{path}: mesh file does not exist")
    try:
        f = h5py.File(path, "r")
    except OSError as err:
        raise MeshError(f"{path}: not a readable HDF5 file (truncated or another format): {err}") from None
    try:
        with f:
            if f.attrs.get("format") != FORMAT:
                raise MeshError(f"{path}: not a quadfr mesh file (attribute 'format' is "
                                f"{f.attrs.get('format')!r}, expected '{FORMAT}')")
            ver = int(f.attrs.get("version", -1))
            if ver != VERSION:
                raise MeshError(f"{path}: mesh format version {ver}; this quadfr reads version {VERSION}")
            try:
                geom = f["geom"][()]
                corners = f["corners"][()]
                vertices = f["vertices"][()]
                interior = f["interior_faces"][()]
                boundary = {t: d[()] for t, d in f["boundary"].items()}
                periodic = [(str(d.attrs["tag_a"]), str(d.attrs["tag_b"]), tuple(map(float, d[()])))
                            for _, d in sorted(f["periodic"].items(), key=lambda kv: int(kv[0]))]
                name = str(f.attrs.get("name", os.path.splitext(os.path.basename(path))[0]))
            except KeyError as err:
                raise MeshError(f"{path}: missing dataset or attribute ({err})") from None
            except OSError as err:
                raise MeshError(f"{path}: damaged dataset ({err})") from None
    except OSError as err:
        raise MeshError(f"{path}: damaged HDF5 file ({err})") from None
    ne = geom.shape[0] if geom.ndim == 4 else -1
    if geom.ndim != 4 or geom.shape[1] != geom.shape[2] or geom.shape[3] != 2 or geom.shape[1] < 2:
        raise MeshError(f"{path}: 'geom' must have shape (ne, q+1, q+1, 2), got {geom.shape}")
    if corners.shape != (ne, 4):
        raise MeshError(f"{path}: 'corners' must have shape ({ne}, 4), got {corners.shape}")
    if vertices.ndim != 2 or vertices.shape[1] != 2:
        raise MeshError(f"{path}: 'vertices' must have shape (nv, 2), got {vertices.shape}")
    if corners.size and (corners.min() < 0 or corners.max() >= len(vertices)):
        raise MeshError(f"{path}: 'corners' refers to vertices outside 0..{len(vertices) - 1}")
    if interior.ndim != 2 or interior.shape[1] != 4:
        raise MeshError(f"{path}: 'interior_faces' must have shape (nif, 4), got {interior.shape}")
    for label, arr, cols in [("interior_faces", interior, (0, 2))] + [(f"boundary/{t}", b, (0,))
                                                                       for t, b in boundary.items()]:
        if arr.size == 0:
            continue
        if arr.ndim != 2 or (label.startswith("boundary") and arr.shape[1] != 2):
            raise MeshError(f"{path}: '{label}' has shape {arr.shape}")
        for c in cols:
            if arr[:, c].min() < 0 or arr[:, c].max() >= ne:
                raise MeshError(f"{path}: '{label}' refers to elements outside 0..{ne - 1}")
        for c in ([1, 3] if arr.shape[1] == 4 else [1]):
            if arr[:, c].min() < 0 or arr[:, c].max() > 3:
                raise MeshError(f"{path}: '{label}' has face numbers outside 0..3")
    return Mesh(geom=geom, corners=corners.astype(np.int64), vertices=vertices,
                interior_faces=interior.astype(np.int64).reshape(-1, 4),
                boundary_faces={t: b.astype(np.int64).reshape(-1, 2) for t, b in sorted(boundary.items())},
                periodic=periodic, name=name)
