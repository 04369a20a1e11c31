"""Reading a mesh file by its extension."""
from __future__ import annotations

import os

from .mesh import Mesh, MeshError

__all__ = ["read_mesh", "MESH_EXTENSIONS"]

MESH_EXTENSIONS = {".msh": "Gmsh (formats 2.2, 4.1)", ".h5": "quadfr native (HDF5)"}


def read_mesh(path: str) -> Mesh:
    """Read ``.msh`` (Gmsh) or ``.h5`` (native) files.

    Raises
    ------
    MeshError
        Unknown extension (naming the file and the known ones) or any error
        of the reader.
    """
    ext = os.path.splitext(str(path))[1].lower()
    if ext == ".msh":
        from .gmsh_reader import read_gmsh

        return read_gmsh(path)
    if ext in (".h5", ".hdf5"):
        from .meshfile import read_mesh_file

        return read_mesh_file(path)
    known = ", ".join(f"'{k}' ({v})" for k, v in MESH_EXTENSIONS.items())
    raise MeshError(f"{path}: unknown mesh file extension '{ext}'; quadfr reads {known}")
