"""Make the geometry files the problem-stage bad cases point at (run once; files are kept).

Each file is wrong in one way: a STEP file holding only a surface, a BREP box drawn in
millimetres, a 3D mesh for a planar case, a planar mesh in millimetres. The hand-written files
beside them (``corrupt.step``, ``corrupt.msh``, the outlines, the CSV) need no script.
"""

from pathlib import Path

import gmsh

HERE = Path(__file__).parent


def _fresh() -> None:
    gmsh.clear()
    gmsh.model.add("bad")


def main() -> None:
    gmsh.initialize(interruptible=False)
    gmsh.option.setNumber("General.Terminal", 0)
    try:
        _fresh()  # a surface, no solid
        gmsh.model.occ.addRectangle(0, 0, 0, 0.1, 0.05)
        gmsh.model.occ.synchronize()
        gmsh.write(str(HERE / "surface_only.step"))

        _fresh()  # a 200 x 100 x 50 box whose numbers are millimetres (BREP has no unit)
        gmsh.model.occ.addBox(0, 0, 0, 200, 100, 50)
        gmsh.model.occ.synchronize()
        gmsh.write(str(HERE / "box_in_mm.brep"))

        _fresh()  # a tetrahedral mesh (for a planar case)
        gmsh.model.occ.addBox(0, 0, 0, 0.1, 0.05, 0.05)
        gmsh.model.occ.synchronize()
        gmsh.option.setNumber("Mesh.MeshSizeMax", 0.05)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(HERE / "solid.msh"))

        _fresh()  # a planar 60 x 30 mesh whose numbers are millimetres
        gmsh.model.occ.addRectangle(0, 0, 0, 60, 30)
        gmsh.model.occ.synchronize()
        gmsh.option.setNumber("Mesh.MeshSizeMax", 10)
        gmsh.model.mesh.generate(2)
        gmsh.write(str(HERE / "plate_in_mm.msh"))
    finally:
        gmsh.finalize()


if __name__ == "__main__":
    main()
