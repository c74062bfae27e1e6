"""femcav solve: a case file in, its result folder out (table, CSV, modes.json, fields).

The command layer: it may use the studies (a Monte-Carlo draw of the tolerances, a Dask
cluster) around the driver's solve_case.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from .anisotropy import material_summary
from .case import Case, load_case
from .io.atomic import check_output_folder, staged_output
from .io.results import to_csv, to_far_field_csv, to_json, to_table
from .io.vtk import write_vtu, write_wall_loss_vtu
from .progress import SILENT, Progress
from .runner import default_output_folder, solve_case
from .solver import SolveResult
from .study.cluster import optional_cluster_pool
from .study.monte_carlo import with_monte_carlo


def run_case(path: str | Path | Case, *, out: str | Path | None = None, modes: int | None = None,
             near_hz: float | None = None, form: str | None = None, order: int | None = None,
             factorization: str | None = None, method: str | None = None,
             cluster: str | None = None, write: bool = True,
             progress: Progress = SILENT) -> tuple[Case, SolveResult, Path]:
    """Solve a case file and write table.txt, modes.csv, modes.json and fields.vtu (and
    wall_loss.vtu when the case has metal walls; with method "distributed" fields.pvtu and
    its pieces instead of fields.vtu, one written by each process).

    Command-line values (modes, near_hz, form, order, factorization, method) override the
    case file's [solve] table. ``path`` may also be a case already loaded (load_case).
    ``cluster``: where the samples of a Monte-Carlo tolerance draw are solved (a Dask
    scheduler's address or local:N; femcav.study.cluster). ``write=False``: solve only (the
    processes other than rank 0 of a distributed solve).
    """
    case = path if isinstance(path, Case) else load_case(path)
    if order is not None and case.accuracy_plan is not None:
        from .accuracy_plan import with_order
        case = with_order(case, order)
    overrides = dict(modes=modes, near_hz=near_hz, form=form, order=order,
                     factorization=factorization, method=method)
    settings = replace(case.solve, **{k: v for k, v in overrides.items() if v is not None})
    progress.step(f"case {case.path}: {case.title}")
    for warning in case.geometry.warnings:
        progress.warn(warning)
    folder = check_output_folder(Path(out) if out is not None
                                 else default_output_folder(case.path))
    with optional_cluster_pool(cluster, progress) as pool:      # None without --cluster
        result = solve_case(case, settings, progress, pool=pool)
        if case.tolerance_samples is not None:
            result = with_monte_carlo(case, result, settings, pool=pool, progress=progress)
    partitioned = settings.method == "distributed"   # fields.pvtu, a piece per process
    if not write:
        if partitioned:
            from .io.partitioned_vtk import write_own_piece
            write_own_piece(result, folder)
        return case, result, folder
    from contextlib import nullcontext
    if partitioned:
        from .io.partitioned_vtk import partitioned_fields
    with (partitioned_fields(result) if partitioned else nullcontext()) as pieces, \
            staged_output(folder, kind="solve", replaces=("solve", "pictures")) as files:
        _write_tables(files, case, result)
        if settings.azimuthal_orders is not None:
            from .axisymmetric.revolve import write_revolved_vtu
            files.write_with("fields.vtu", lambda p: write_revolved_vtu(result, p),
                             suffix=".vtu")
        elif partitioned:
            pieces.write(files)
        else:
            files.write_with("fields.vtu", lambda p: write_vtu(result, p), suffix=".vtu")
        if any(getattr(m.losses, "wall_loss_density", None) is not None for m in result.modes):
            files.write_with("wall_loss.vtu", lambda p: write_wall_loss_vtu(result, p),
                             suffix=".vtu")
    progress.step(f"results written to {folder}")
    return case, result, folder


def _write_tables(files, case: Case, result) -> None:
    files.write_text("table.txt", to_table(result) + "\n")
    files.write_text("modes.csv", to_csv(result))
    files.write_text("modes.json", to_json(result, title=case.title, case=str(case.path),
                                           model=model_summary(case, result)))
    if case.probes:
        from .io.probe_table import to_probes_csv
        files.write_text("probes.csv", to_probes_csv(result))
    from .io.port_table import to_response_csv
    response = to_response_csv(result)
    if response is not None:    # ports: the single-pole response of each loaded mode
        files.write_text("response.csv", response)
    if case.temperature_range is not None:
        files.write_text("temperature.csv", temperature_csv(result))
    pattern = to_far_field_csv(result)
    if pattern is not None:     # open problems: every mode's radiation pattern
        files.write_text("far_field.csv", pattern)


def temperature_csv(result) -> str:
    """mode, temperature_k, frequency_hz: every mode over the [temperature] range."""
    lines = ["mode,temperature_k,frequency_hz"]
    for mode in result.modes:
        drift = mode.temperature
        lines += [f"{mode.index},{t!r},{'' if f != f else repr(f)}"
                  for t, f in zip(drift.temperatures_k, drift.frequency_over_range_hz)]
    return "\n".join(lines) + "\n"


def _plain(value):
    """A builder parameter as JSON data: a composite's solids (dataclasses in tuples) become
    {"shape": ..., fields} inside lists."""
    from dataclasses import asdict, is_dataclass

    if is_dataclass(value):
        return {"shape": type(value).__name__.lower(), **_plain(asdict(value))}
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (tuple, list)):
        return [_plain(v) for v in value]
    return value


def model_summary(case: Case, result) -> dict:
    """What the part is, for the report: geometry, regions with their materials, walls."""
    g = case.geometry
    geometry = ({"builder": g.builder, "parameters": {k: _plain(v)
                                                      for k, v in g.parameters.items()}}
                if g.builder else {"mesh": str(g.mesh_path), "unit_m": g.mesh_unit_m})
    if settings_orders := case.solve.azimuthal_orders:
        geometry["section"] = f"meridional, azimuthal orders {list(settings_orders)}"
    regions = {name: material_summary(material) for name, material in case.regions.items()}
    walls = {name: {"kind": w.kind, "conductivity_s_per_m": w.conductivity,
                    "metal": w.metal, "roughness_m": w.roughness,
                    "surface_resistance_ohm": w.surface_resistance,
                    "temperature_k": w.temperature,
                    "residual_resistance_ohm": w.residual_resistance}
             for name, w in case.walls.items()}
    summary = {"geometry": geometry, "regions": regions, "walls": walls,
               "symmetry": {axis: list(kinds) for axis, kinds in case.symmetry.items()}}
    if case.periodic:     # a periodic cell: its face pairs and phases
        summary["periodic"] = [{"pair": [p.wall_a, p.wall_b], "phase_rad": p.phase_rad}
                               for p in case.periodic]
    return summary
