"""A case file from start to finish: load, mesh, solve, write the result files."""

from __future__ import annotations

import itertools
import math
from functools import partial
from dataclasses import replace
from pathlib import Path

from .case import Case, build_mesh, case_model, load_case
from .io.atomic import check_output_folder, staged_output
from .io.results import to_csv, to_json, to_table
from .io.vtk import write_vtu, write_wall_loss_vtu
from .progress import SILENT, Progress
from .errors import InputError
from .geometry import symmetry_wall_name
from .solver import SolveResult, merge_classes, solve_model
from .walls import METAL, Wall


def symmetry_classes(symmetry: dict[str, tuple[str, ...]]) -> list[dict[str, Wall]]:
    """The wall kinds of the cut faces for every class to solve (one class if no cut)."""
    axes = list(symmetry)
    return [{symmetry_wall_name(axis): Wall(kind) for axis, kind in zip(axes, kinds)}
            for kinds in itertools.product(*(symmetry[a] for a in axes))]


def symmetry_label(walls: dict[str, Wall]) -> str:
    """E.g. "x:PMC y:PEC": the kind of wall on each cut plane."""
    return " ".join(f"{name.rsplit('_', 1)[1]}:{wall.kind.upper()}"
                    for name, wall in walls.items())


def choose_form(case: Case, form: str | None, progress: Progress) -> str:
    """The field form: as asked, else H when the case has metal walls, else E.

    Wall Q needs H on the wall. The H form has it as its unknown and its wall Q converges like
    h²; in the E form H is the curl of E, one order less accurate at the wall, and the wall Q
    converges like h (pillbox TM010, copper: -7.7, -5.5, -4.1 % at 2, 1.4, 1 mm against
    -0.36, -0.15, -0.07 % in the H form).
    """
    has_metal = any(w.kind == METAL for w in case.walls.values())
    if form is None:
        form = "H" if has_metal else "E"
        if has_metal:
            progress.step("H form chosen: the case has metal walls (set [solve] form to change)")
    elif form == "E" and has_metal:
        progress.step("note: wall Q in the E form converges only like h; the H form is more "
                      "accurate for Q")
    return form


# Each coarser mesh of an error estimate is this much coarser than the next (sizes h r², h r,
# h): wide enough for the differences to stand out of mesh noise, close enough to stay in
# the same convergence regime.
REFINEMENT_RATIO = 1.35


def _solve_options(settings) -> dict:
    return dict(modes=settings.modes, near_hz=settings.near_hz, form=settings.form,
                order=settings.order, complex_check=settings.complex_check,
                factorization=settings.factorization, method=settings.method)


def solve_with_error_bars(case: Case, walls: dict[str, Wall], settings,
                          progress: Progress) -> SolveResult:
    """Solve three meshes of the part (the case's sizes and two coarser) and give every
    mode of the finest its error bar; with an accuracy target, refine by REFINEMENT_RATIO
    until every bar is within it or the next mesh would exceed max_dofs."""
    from .geometry import build_part, builder_layout
    from .post.error_estimate import estimate_errors
    from .post.singularity import bar_rate
    from .sizing import builder_sizing

    g = case.geometry
    base = builder_sizing(case, builder_layout(g.builder, g.parameters))

    def build_model(size: float):
        factor = size / base.size
        sizing = replace(base, size=size,
                         region_sizes={k: v * factor for k, v in base.region_sizes.items()})
        part = build_part(g.builder, sizing=sizing, symmetry=tuple(case.symmetry),
                          **g.parameters)
        return case_model(case, part, extra_walls=walls)

    r = REFINEMENT_RATIO
    sizes = [base.size * r**2, base.size * r, base.size]
    while True:
        estimated = estimate_errors(build_model, sizes, modes=settings.modes,
                                    near_hz=settings.near_hz, form=settings.form,
                                    order_rate=partial(bar_rate, order=settings.order),
                                    progress=progress,
                                    order=settings.order,
                                    complex_check=settings.complex_check,
                                    factorization=settings.factorization,
                                    method=settings.method)
        finest = estimated.finest
        modes = [replace(m, error_estimate_hz=e.error_estimate_hz,
                         extrapolated_hz=e.extrapolated_hz)
                 for m, e in zip(finest.modes, estimated.estimates)]
        result = replace(finest, modes=modes)
        if settings.accuracy is None or _worst_bar(result) <= settings.accuracy:
            return result
        if finest.dofs * r**3 > settings.max_dofs:
            progress.step(f"accuracy target not reached: the next mesh would exceed "
                          f"max_dofs = {settings.max_dofs}")
            return result
        sizes = sizes[1:] + [sizes[-1] / r]
        progress.step(f"largest error bar {_worst_bar(result):.1e} above the target "
                      f"{settings.accuracy:.1e}: refining to {sizes[-1] * 1e3:.3g} mm")


def _worst_bar(result: SolveResult) -> float:
    bars = [m.error_estimate_hz / m.frequency_hz for m in result.modes
            if m.error_estimate_hz is not None]
    return max(bars) if len(bars) == len(result.modes) else math.inf


def _accuracy_summary(result: SolveResult, target: float) -> dict:
    worst = _worst_bar(result)
    return {"target": target, "largest_relative_bar": worst if math.isfinite(worst) else None,
            "reached": worst <= target}


def default_output_folder(case_path: Path) -> Path:
    return case_path.parent / f"{case_path.stem}-results"


def run_case(path: str | Path | Case, *, out: str | Path | None = None, modes: int | None = None,
             near_hz: float | None = None, form: str | None = None, order: int | None = None,
             factorization: str | None = None, method: str | None = None,
             cluster: str | None = None,
             progress: Progress = SILENT) -> tuple[Case, SolveResult, Path]:
    """Solve a case file and write table.txt, modes.csv, modes.json and fields.vtu (and
    wall_loss.vtu when the case has metal walls).

    Command-line values (modes, near_hz, form, order, factorization, method) override the
    case file's [solve] table. ``path`` may also be a case already loaded (load_case).
    ``cluster``: where the samples of a Monte-Carlo tolerance draw are solved (a Dask
    scheduler's address or local:N; femcav.study.cluster).
    """
    case = path if isinstance(path, Case) else load_case(path)
    overrides = dict(modes=modes, near_hz=near_hz, form=form, order=order,
                     factorization=factorization, method=method)
    settings = replace(case.solve, **{k: v for k, v in overrides.items() if v is not None})
    progress.step(f"case {case.path}: {case.title}")
    folder = check_output_folder(Path(out) if out is not None
                                 else default_output_folder(case.path))
    from .study.cluster import optional_cluster_pool
    with optional_cluster_pool(cluster, progress) as pool:      # None without --cluster
        result = solve_case(case, settings, progress, pool=pool)
        if case.tolerance_samples is not None:
            from .study.monte_carlo import with_monte_carlo
            result = with_monte_carlo(case, result, settings, pool=pool, progress=progress)
    with staged_output(folder, kind="solve", replaces=("solve", "pictures")) as files:
        _write_tables(files, case, result)
        if settings.azimuthal_orders is not None:
            from .axisymmetric.revolve import write_revolved_vtu
            files.write_with("fields.vtu", lambda p: write_revolved_vtu(result, p),
                             suffix=".vtu")
        else:
            files.write_with("fields.vtu", lambda p: write_vtu(result, p), suffix=".vtu")
        if any(getattr(m.losses, "wall_loss_density", None) is not None for m in result.modes):
            files.write_with("wall_loss.vtu", lambda p: write_wall_loss_vtu(result, p),
                             suffix=".vtu")
    progress.step(f"results written to {folder}")
    return case, result, folder


def solve_case(case: Case, settings, progress: Progress = SILENT, pool=None):
    """The modes of a loaded case with ``settings`` (its [solve] table, perhaps overridden):
    a SolveResult, or an AxisymmetricResult with azimuthal orders; nothing is written.
    ``pool``: a femcav.study.cluster.ClusterPool for the morphed solves of [tolerances]."""
    if settings.azimuthal_orders is not None:
        return _solve_axisymmetric(case, settings, progress)
    # With error bars every mesh, the finest included, is built by solve_with_error_bars.
    mesh = None if settings.error_estimate else build_mesh(case)
    if mesh is not None:
        progress.step(f"mesh: {mesh.n_tets} tetrahedra, regions {', '.join(mesh.region_names)} "
                      f"({mesh.source}"
                      + (f", coordinates in units of {case.geometry.mesh_unit_m:g} m)"
                         if case.geometry.mesh_path else ")"))
    settings = replace(settings, form=choose_form(case, settings.form, progress))
    labelled = []
    for walls in symmetry_classes(case.symmetry):
        label = symmetry_label(walls)
        if label:
            progress.step(f"symmetry class {label}")
        try:
            if settings.error_estimate:
                labelled.append((label, solve_with_error_bars(case, walls, settings, progress)))
            else:
                model = case_model(case, mesh, extra_walls=walls)
                labelled.append((label, solve_model(model, **_solve_options(settings),
                                                    progress=progress)))
        except InputError as exc:
            raise exc.located(source=str(case.path)) from None
    if settings.sensitivities:
        labelled = [(label, _with_sensitivities(r)) for label, r in labelled]
    labelled = [(label, _with_labels(case, r)) for label, r in labelled]
    result = (labelled[0][1] if len(labelled) == 1 and not labelled[0][0]
              else merge_classes(labelled, settings.modes, settings.near_hz))
    if settings.accuracy is not None:
        result = replace(result, accuracy=_accuracy_summary(result, settings.accuracy))
    if case.tolerances and settings.azimuthal_orders is None:   # morphed 3D meshes only
        result = _with_tolerances(case, result, progress, pool)
    return result


def _with_tolerances(case: Case, result: SolveResult, progress: Progress,
                     pool=None) -> SolveResult:
    """Each mode's df/dp for the toleranced lengths and the spread they imply: each
    |df/dp| tol alone, their sum (worst case) and root-sum-square (independent errors)."""
    import math

    from .study.morph import dimension_derivatives

    derivatives = dimension_derivatives(case, result, list(case.tolerances), progress, pool)
    modes = []
    for k, mode in enumerate(result.modes):
        spread = {n: abs(derivatives[n][k]) * tol for n, tol in case.tolerances.items()}
        modes.append(replace(mode, tolerance={
            "df_dp_hz_per_m": {n: derivatives[n][k] for n in case.tolerances},
            "tolerance_m": dict(case.tolerances), "delta_f_hz": spread,
            "worst_case_hz": sum(spread.values()),
            "rss_hz": math.sqrt(sum(v * v for v in spread.values()))}))
    return replace(result, modes=modes)


def _with_labels(case: Case, result: SolveResult) -> SolveResult:
    """Mode labels from the fields (post.classify) for boxes and uncut bodies of revolution;
    other parts keep none."""
    import numpy as np

    from .geometry import builder_layout
    from .geometry.section import axisymmetric_layout_check
    from .post import classify
    from .post.fields import centroid_basis, centroid_materials, mode_fields

    g = case.geometry
    if g.builder is None:
        return result
    if g.builder == "box" and not case.symmetry:
        def label(points, w, f):
            return classify.box_label(points, w, f.E, f.H, (g.parameters["width"],
                                                            g.parameters["height"],
                                                            g.parameters["length"]))
    elif not case.symmetry:
        try:
            axisymmetric_layout_check(builder_layout(g.builder, g.parameters))
        except InputError:
            return result

        def label(points, w, f):
            return classify.azimuthal_label(points, w, f.E, f.H)
    else:
        return result
    space = result.space
    mesh = space.model.mesh
    points = mesh.points[mesh.tets].mean(axis=1)
    w = np.abs(mesh.tet_volumes())
    materials, basis = centroid_materials(space), centroid_basis(space)
    modes = []
    for mode in result.modes:
        fields = mode_fields(space, mode.dofs, 2 * math.pi * mode.frequency_hz, materials,
                             basis)
        modes.append(replace(mode, label=label(points, w, fields)))
    return replace(result, modes=modes)


def _with_sensitivities(result: SolveResult) -> SolveResult:
    from .post.sensitivity import material_sensitivities

    return replace(result, modes=[
        replace(m, sensitivity=material_sensitivities(result.space, m.dofs, m.frequency_hz))
        for m in result.modes])


def _write_tables(files, case: Case, result) -> None:
    files.write_text("table.txt", to_table(result) + "\n")
    files.write_text("modes.csv", to_csv(result))
    files.write_text("modes.json", to_json(result, title=case.title, case=str(case.path),
                                           model=model_summary(case, result)))


def model_summary(case: Case, result) -> dict:
    """What the part is, for the report: geometry, regions with their materials, walls."""
    g = case.geometry
    geometry = ({"builder": g.builder, "parameters": {k: (list(v) if isinstance(v, tuple) else v)
                                                      for k, v in g.parameters.items()}}
                if g.builder else {"mesh": str(g.mesh_path), "unit_m": g.mesh_unit_m})
    if settings_orders := case.solve.azimuthal_orders:
        geometry["section"] = f"meridional, azimuthal orders {list(settings_orders)}"
    regions = {}
    for name, material in case.regions.items():
        regions[name] = {"eps_r": "expression" if callable(material.eps_r)
                         else material.eps_r, "mu_r": material.mu_r,
                         "tan_delta": material.tan_delta}
    walls = {name: {"kind": w.kind, "conductivity_s_per_m": w.conductivity,
                    "metal": w.metal, "roughness_m": w.roughness}
             for name, w in case.walls.items()}
    return {"geometry": geometry, "regions": regions, "walls": walls,
            "symmetry": {axis: list(kinds) for axis, kinds in case.symmetry.items()}}


def _solve_axisymmetric(case: Case, settings, progress: Progress):
    from .axisymmetric.runner import solve_axisymmetric_case

    if settings.method == "iterative":
        raise InputError("the axisymmetric solver uses the direct shift-invert path",
                         source=str(case.path), field="--method")
    return solve_axisymmetric_case(case, settings, progress)
