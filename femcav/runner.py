"""A case file from start to finish: load, mesh, solve, write the result files."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from .case import Case, build_mesh, case_model, load_case
from .io.atomic import staged_output
from .io.results import to_csv, to_json, to_table
from .io.vtk import write_vtu
from .progress import SILENT, Progress
from .solver import SolveResult, solve_model


def default_output_folder(case_path: Path) -> Path:
    return case_path.parent / f"{case_path.stem}-results"


def run_case(path: str | Path, *, out: str | Path | None = None, modes: int | None = None,
             near_hz: float | None = None, form: str | None = None,
             progress: Progress = SILENT) -> tuple[Case, SolveResult, Path]:
    """Solve a case file and write table.txt, modes.csv, modes.json and fields.vtu.

    Command-line values (modes, near_hz, form) override the case file's [solve] table.
    """
    case = load_case(path)
    settings = case.solve
    if modes is not None:
        settings = replace(settings, modes=modes)
    if near_hz is not None:
        settings = replace(settings, near_hz=near_hz)
    if form is not None:
        settings = replace(settings, form=form)

    progress.step(f"case {case.path}: {case.title}")
    mesh = build_mesh(case)
    progress.step(f"mesh: {mesh.n_tets} tetrahedra, regions {', '.join(mesh.region_names)} "
                  f"({mesh.source}"
                  + (f", coordinates in units of {case.geometry.mesh_unit_m:g} m)"
                     if case.geometry.mesh_path else ")"))
    model = case_model(case, mesh)
    result = solve_model(model, modes=settings.modes, near_hz=settings.near_hz,
                         form=settings.form, progress=progress)

    folder = Path(out) if out is not None else default_output_folder(case.path)
    with staged_output(folder) as files:
        files.write_text("table.txt", to_table(result) + "\n")
        files.write_text("modes.csv", to_csv(result))
        files.write_text("modes.json", to_json(result, title=case.title, case=str(case.path)))
        files.write_with("fields.vtu", lambda p: write_vtu(result, p), suffix=".vtu")
    progress.step(f"results written to {folder}")
    return case, result, folder
