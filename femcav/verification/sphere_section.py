"""The meridional section of a sphere as a gmsh file, for an imported-section case: no
builder makes a sphere, so the catalogue meshes its half disc itself."""

from __future__ import annotations

from pathlib import Path

from ..geometry.gmsh_session import gmsh_model


def half_disc_msh(path: Path, radius: float, size: float, curved: bool = True) -> Path:
    """The half disc r >= 0 of ``radius`` in the plane z = 0 (x as r, y as z), region
    "inside", its arc named "shell" (the axis segment left unnamed), triangles of ``size``
    (6-node ones on the arc when ``curved``), written as gmsh 4.1."""
    with gmsh_model("sphere_section") as gmsh:
        occ = gmsh.model.occ
        disc = occ.addDisk(0, 0, 0, radius, radius)
        half = occ.addRectangle(0, -radius, 0, radius, 2 * radius)
        (piece,), _ = occ.intersect([(2, disc)], [(2, half)])
        occ.synchronize()
        arc = [c for _, c in gmsh.model.getBoundary([piece], oriented=False)
               if abs(occ.getCenterOfMass(1, c)[0]) > 1e-9]
        gmsh.model.addPhysicalGroup(2, [piece[1]], name="inside")
        gmsh.model.addPhysicalGroup(1, arc, name="shell")
        gmsh.option.setNumber("Mesh.MeshSizeMax", size)
        gmsh.model.mesh.generate(2)
        if curved:
            gmsh.model.mesh.setOrder(2)
        gmsh.option.setNumber("Mesh.MshFileVersion", 4.1)
        gmsh.write(str(path))
    return Path(path)
