"""A case file meshed but not solved: the mesh, its quality, and its files for inspection."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .case import Case, build_mesh, case_model, load_case
from .geometry.mesh import TaggedMesh
from .io.atomic import check_output_folder, staged_output
from .io.mesh_files import write_mesh_vtu, write_msh
from .post.mesh_quality import MeshQuality, mesh_quality
from .progress import SILENT, Progress
from .runner import default_output_folder

MESH_FILES = ("mesh.msh", "mesh.vtu", "mesh.png")


@dataclass(frozen=True)
class MeshRun:
    case: Case
    mesh: TaggedMesh
    quality: MeshQuality
    folder: Path


def mesh_case(path: str | Path, *, out: str | Path | None = None,
              progress: Progress = SILENT) -> MeshRun:
    """Mesh a case file and write mesh.msh, mesh.vtu and mesh.png; nothing is solved."""
    from .viz.mesh_picture import draw_mesh_picture

    case = load_case(path)
    progress.step(f"case {case.path}: {case.title}")
    for warning in case.geometry.warnings:
        progress.warn(warning)
    folder = check_output_folder(Path(out) if out is not None
                                 else default_output_folder(case.path))
    mesh = build_mesh(case)
    progress.step(f"mesh: {mesh.n_tets} tetrahedra, regions {', '.join(mesh.region_names)} "
                  f"({mesh.source})")
    # The same checks as a solve (regions, walls, permittivity), so that a case which meshes
    # here without complaint is one the solver accepts, and a mistake writes nothing.
    case_model(case, mesh)
    quality = mesh_quality(mesh)

    with staged_output(folder, kind="mesh") as files:
        files.write_with("mesh.msh", lambda p: write_msh(mesh, p), suffix=".msh")
        files.write_with("mesh.vtu", lambda p: write_mesh_vtu(mesh, p, quality.quality),
                         suffix=".vtu")
        progress.step("drawing mesh.png")
        files.write_with("mesh.png", lambda p: draw_mesh_picture(mesh, p, title=case.title),
                         suffix=".png")
    progress.step(f"mesh files written to {folder}")
    return MeshRun(case=case, mesh=mesh, quality=quality, folder=folder)
