"""quadfr meshing: conforming curved-quadrilateral meshes for 2D sections.

Never imports the solver.  Main entry points:

* :func:`make_mesh` / :data:`GENERATORS` - built-in generators (box, cylinder,
  naca, section, plate, blocks, towers);
* :func:`read_mesh` - ``.msh`` (Gmsh) or ``.h5`` (native) files;
* :func:`write_mesh` - native HDF5 file;
* :func:`mesh_quality`, :func:`check_mesh`, :func:`min_length_scale` - mesh check.
"""
from .blocks import blocks_mesh, towers_mesh
from .box import box_mesh
from .channel import plate_mesh
from .cylinder import cylinder_mesh
from .generators import GENERATORS, generator_names, make_mesh
from .geometry import lagrange_matrix, map_derivatives, map_points
from .gmsh_reader import read_gmsh
from .mesh import Mesh, MeshError, build_mesh
from .mesh_io import read_mesh
from .meshfile import read_mesh_file, write_mesh
from .naca import naca_mesh
from .quality import check_mesh, contour_area, format_quality, mesh_area, mesh_quality, min_length_scale
from .section import read_section_points, section_mesh, section_points_mesh

__all__ = [
    "Mesh", "MeshError", "build_mesh", "map_points", "map_derivatives", "lagrange_matrix",
    "GENERATORS", "generator_names", "make_mesh",
    "box_mesh", "cylinder_mesh", "naca_mesh", "section_mesh", "section_points_mesh", "read_section_points",
    "plate_mesh", "blocks_mesh", "towers_mesh",
    "read_mesh", "read_gmsh", "read_mesh_file", "write_mesh",
    "mesh_quality", "check_mesh", "min_length_scale", "mesh_area", "contour_area", "format_quality",
]
