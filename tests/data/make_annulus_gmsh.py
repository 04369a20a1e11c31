"""How tests/data/annulus_q3_v41.msh and annulus_q3_v22.msh were made (Gmsh 4.15.2 Python API).

Not part of the test run; needs the gmsh package: python tests/data/make_annulus_gmsh.py
"""
import gmsh  # noqa: E402
gmsh.initialize()
gmsh.option.setNumber("General.Terminal", 0)
gmsh.model.add("annulus")
occ = gmsh.model.occ
outer = occ.addCircle(0, 0, 0, 2.0)
inner = occ.addCircle(0, 0, 0, 0.5)
lo = occ.addCurveLoop([outer]); li = occ.addCurveLoop([inner])
s = occ.addPlaneSurface([lo, li])
occ.synchronize()
gmsh.model.addPhysicalGroup(1, [inner], name="inner")
gmsh.model.addPhysicalGroup(1, [outer], name="outer")
gmsh.model.addPhysicalGroup(2, [s], name="fluid")
gmsh.option.setNumber("Mesh.MeshSizeMax", 0.35)
gmsh.option.setNumber("Mesh.RecombineAll", 1)
gmsh.option.setNumber("Mesh.Algorithm", 8)
gmsh.option.setNumber("Mesh.RecombinationAlgorithm", 1)
gmsh.model.mesh.generate(2)
gmsh.model.mesh.setOrder(3)
gmsh.option.setNumber("Mesh.SecondOrderIncomplete", 0)
gmsh.option.setNumber("Mesh.MshFileVersion", 4.1)
gmsh.write("annulus_q3_v41.msh")
gmsh.option.setNumber("Mesh.MshFileVersion", 2.2)
gmsh.write("annulus_q3_v22.msh")
types, tags, _ = gmsh.model.mesh.getElements(2)
print(types, [len(t) for t in tags])
gmsh.finalize()
