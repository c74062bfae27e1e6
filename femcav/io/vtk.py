"""Fields of every mode on the tetrahedral mesh, as a VTK unstructured grid (.vtu).

Cell data (values at element centroids, 1 J stored energy per mode): ``region`` (region id),
and per mode K (two digits): ``mK_E`` (V/m), ``mK_H`` (A/m, in quadrature with E),
``mK_we`` and ``mK_wm`` (time-averaged electric and magnetic energy density, J/m³); a
complex mode (losses inside the solve, an open problem, a periodic cell's travelling wave) is
shown at the phase where its field is most nearly real, with ``mK_E_quarter`` and
``mK_H_quarter`` the fields a quarter period later (the imaginary parts); ``absorber`` (1 in
absorbing regions) marks an open problem's layer.
The metal walls go into a second file with the loss per area of every mode.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ..fem.absorber import absorbing_regions
from ..post.fields import centroid_basis, centroid_materials, mode_fields
from ..solver import SolveResult


def write_vtu(result: SolveResult, path: Path) -> None:
    import meshio

    tm = result.space.model.mesh
    meshio.write(str(path), meshio.Mesh(tm.points, [("tetra", tm.tets)],
                                        cell_data=mode_cell_data(result)), file_format="vtu")


def mode_cell_data(result: SolveResult, elements: np.ndarray | None = None) -> dict:
    """The cell data of fields.vtu (name -> [array]) on ``elements`` (indices into the
    tetrahedra, in that order; all of them by default)."""
    space = result.space
    tm = space.model.mesh
    rows = np.arange(tm.n_tets) if elements is None else np.asarray(elements)
    eps, mu = centroid_materials(space)
    materials = (eps[rows], mu[rows])
    basis = centroid_basis(space, None if elements is None else rows)
    data = {"region": [tm.tet_region[rows].astype("int32")]}
    for mode in result.modes:
        fields = mode_fields(space, mode.dofs, 2 * math.pi * mode.frequency_hz, materials,
                             basis)
        tag = f"m{mode.index:02d}"
        data[f"{tag}_E"] = [fields.E.real]
        data[f"{tag}_H"] = [fields.H.real]
        if np.iscomplexobj(fields.E):   # a periodic cell's travelling wave: a quarter period on
            data[f"{tag}_E_quarter"] = [fields.E.imag]
            data[f"{tag}_H_quarter"] = [fields.H.imag]
        data[f"{tag}_we"] = [fields.w_e]
        data[f"{tag}_wm"] = [fields.w_m]
    absorbing = [tm.region_names[name] for name in absorbing_regions(space.model)]
    if absorbing:
        data["absorber"] = [np.isin(tm.tet_region[rows], absorbing).astype("int32")]
    return data


def write_wall_loss_vtu(result: SolveResult, path: Path) -> None:
    """The metal-wall triangles with cell data ``wall`` (an index into the sorted wall names)
    and, per mode K, ``mK_loss``: time-averaged loss per area, W/m², for 1 J stored."""
    import meshio

    from ..post.losses import metal_faces

    faces = metal_faces(result.space)
    mesh = result.space.mesh
    names = sorted(set(faces.wall))
    data = {"wall": [np.array([names.index(w) for w in faces.wall], dtype="int32")]}
    for mode in result.modes:
        data[f"m{mode.index:02d}_loss"] = [mode.losses.wall_loss_density]
    meshio.write(str(path), meshio.Mesh(mesh.p.T, [("triangle", mesh.facets[:, faces.facets].T)],
                                        cell_data=data), file_format="vtu")
