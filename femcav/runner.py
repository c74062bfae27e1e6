"""The driver of a loaded case: mesh, model, solve (symmetry classes, error bars, sections),
labels, sensitivities, tolerances and field figures; nothing is written here
(femcav.solve_command writes the result folder)."""

from __future__ import annotations

import itertools
import time
import math
from functools import partial
from dataclasses import replace
from pathlib import Path

from .case import (
    Case,
    build_mesh,
    case_from_data,
    case_model,
    in_case,
    read_case_data,
)
from .progress import SILENT, Progress
from .errors import InputError
from .geometry import symmetry_wall_name
from .post.coupling import with_coupling
from .post.error_estimate import estimate_over_meshes, mesh_dimension
from .post.singularity import bar_rate
from .solver import AccuracyReport, SolveResult, ToleranceSpread, merge_classes, solve_model
from .walls import METAL, PORT, Wall


def solve_part(model, **options):
    """solve_model, or the port iteration (femcav.ports) when the model has ports."""
    if any(wall.kind == PORT for wall in model.walls.values()):
        from .ports.loaded_solve import solve_with_ports
        for unused in ("complex_check", "method", "layer_check"):   # not with ports (yet)
            options.pop(unused, None)
        return solve_with_ports(model, **options)
    return solve_model(model, **options)


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
    if any(w.kind == PORT for w in case.walls.values()):
        has_metal = False     # ports are terminated in the E form (femcav.ports)
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
                losses_inside=settings.losses_inside,
                factorization=settings.factorization, method=settings.method,
                layer_check=settings.layer_check)


def solve_with_error_bars(case: Case, walls: dict[str, Wall], settings,
                          progress: Progress, pool=None):
    """Solve three meshes of the part (the case's sizes and two coarser) and give every
    mode of the finest its error bar; with an accuracy target, refine by REFINEMENT_RATIO
    until every bar is within it or the next mesh would exceed max_dofs. A 3D part or a body
    of revolution (its section meshed at each size): one path. With ``pool`` (a
    femcav.study.cluster.ClusterPool) the meshes of each round are solved at once on the
    cluster."""
    base_size, measure, solve_at = _mesh_sequence(case, walls, settings)
    order_rate = partial(bar_rate, order=settings.order)
    solve_many = None
    if pool is not None:
        solve_many, order_rate = _cluster_sequence(pool, case, walls, settings), float
    r = REFINEMENT_RATIO
    sizes = [base_size * r**2, base_size * r, base_size]
    while True:
        estimated = estimate_over_meshes(solve_at, sizes, modes=settings.modes,
                                         near_hz=settings.near_hz, order_rate=order_rate,
                                         size_measure=measure, solve_many=solve_many,
                                         progress=progress)
        finest = estimated.finest
        modes = [replace(m, error_estimate_hz=e.error_estimate_hz,
                         extrapolated_hz=e.extrapolated_hz, q_estimates=e.q_bars or None)
                 for m, e in zip(finest.modes, estimated.estimates)]
        result = replace(finest, modes=modes)
        if settings.accuracy is None or _worst_bar(result) <= settings.accuracy:
            return result
        if finest.dofs * r**mesh_dimension(result) > settings.max_dofs:
            progress.step(f"accuracy target not reached: the next mesh would exceed "
                          f"max_dofs = {settings.max_dofs}")
            return result
        sizes = sizes[1:] + [sizes[-1] / r]
        progress.step(f"largest error bar {_worst_bar(result):.1e} above the target "
                      f"{settings.accuracy:.1e}: refining to {sizes[-1] * 1e3:.3g} mm")


def _mesh_sequence(case: Case, walls: dict[str, Wall], settings):
    """(the case's element size, the size measure of the extrapolation, solve_at) where
    solve_at(size, count) meshes the part (or its section) at ``size`` and returns (model,
    result) with ``count`` modes."""
    if settings.azimuthal_orders is not None:
        from .axisymmetric.runner import section_model_builder
        from .axisymmetric.solve import solve_axisymmetric

        base_size, build_model = section_model_builder(case)
        # the section mesher answers a size change in steps (two nominal sizes can give one
        # mesh): extrapolate in the DOF count, h ~ N^(-1/2)
        measure = "dofs"
        solve, options = solve_axisymmetric, dict(
            orders=settings.azimuthal_orders, order=settings.order,
            form=settings.form or "E", complex_check=settings.complex_check,
            losses_inside=settings.losses_inside, factorization=settings.factorization)
    else:
        base_size, build_model = _part_model_builder(case, walls)
        measure = "nominal"
        solve, options = solve_part, dict(
            form=settings.form, order=settings.order, complex_check=settings.complex_check,
            losses_inside=settings.losses_inside,
            factorization=settings.factorization, method=settings.method)

    def solve_at(size: float, count: int):
        model = build_model(size)
        return model, solve(model, modes=count, near_hz=settings.near_hz, **options)

    return base_size, measure, solve_at


def _cluster_sequence(pool, case: Case, walls: dict[str, Wall], settings):
    """solve_many(sizes, count) -> [(rate, result)]: every mesh a task on the cluster of
    ``pool``, each task the case's tables, the extra walls, the settings and a size; the
    worker returns the bar rate of its model (post.singularity) with the result."""
    data = read_case_data(case.path)

    def solve_many(sizes, count):
        return pool.gather(solve_mesh_task, [(data, str(case.path), walls, settings, size,
                                              count) for size in sizes])
    return solve_many


def solve_mesh_task(task):
    """A cluster task of an error-bar sequence (see _cluster_sequence)."""
    data, path, walls, settings, size, count = task
    case = case_from_data({k: v for k, v in data.items()
                           if k not in ("sweep", "tune", "extract", "tolerances")},
                          Path(path))
    model, result = _mesh_sequence(case, walls, settings)[2](size, count)
    return bar_rate(model, settings.order), result


def _part_model_builder(case: Case, walls: dict[str, Wall]):
    """The case's element size and a function size -> model of the part meshed at it (the
    region sizes scaled alike)."""
    from .geometry import build_part, builder_layout
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

    return base.size, build_model


def _worst_bar(result: SolveResult) -> float:
    bars = [m.error_estimate_hz / m.frequency_hz for m in result.modes
            if m.error_estimate_hz is not None]
    return max(bars) if len(bars) == len(result.modes) else math.inf


def _accuracy_summary(result: SolveResult, target: float) -> AccuracyReport:
    worst = _worst_bar(result)
    return AccuracyReport(target=target,
                          largest_relative_bar=worst if math.isfinite(worst) else None,
                          reached=worst <= target)


def default_output_folder(case_path: Path) -> Path:
    return case_path.parent / f"{case_path.stem}-results"


def solve_case(case: Case, settings, progress: Progress = SILENT, pool=None):
    """The modes of a loaded case with ``settings`` (its [solve] table, perhaps overridden):
    a SolveResult, or an AxisymmetricResult with azimuthal orders, with their figures of
    merit (femcav.merit); nothing is written. ``pool``: a femcav.study.cluster.ClusterPool
    for the morphed solves of [tolerances]."""
    from .merit import with_figures_of_merit

    try:
        return with_figures_of_merit(_solve_modes(case, settings, progress, pool), case.beam)
    except InputError as exc:
        raise in_case(exc, str(case.path)) from None


def _solve_modes(case: Case, settings, progress: Progress, pool=None):
    if case.accuracy_plan is not None:
        progress.step(case.accuracy_plan.describe())
    if settings.azimuthal_orders is not None:
        result = _solve_axisymmetric(case, settings, progress, pool)
        if settings.sensitivities:
            result = _with_sensitivities(result)
        if case.tolerances:         # re-meshed sections (axisymmetric.runner)
            result = _with_tolerances(case, result, settings, progress)
        if case.temperature is not None:
            result = _with_temperature(case, result, progress)
        if settings.accuracy is not None:
            result = replace(result, accuracy=_accuracy_summary(result, settings.accuracy))
        return _with_field_figures(case, result)
    # With error bars every mesh, the finest included, is built by solve_with_error_bars.
    mesh = None if settings.error_estimate else build_mesh(case)
    if mesh is not None:
        progress.step(f"mesh: {mesh.n_tets} tetrahedra, regions {', '.join(mesh.region_names)} "
                      f"({mesh.source}"
                      + (f", coordinates in units of {case.geometry.mesh_unit_m:g} m)"
                         if case.geometry.mesh_path else ")"))
        check_probes_inside(case, mesh)
    settings = replace(settings, form=choose_form(case, settings.form, progress))
    labelled = []
    for walls in symmetry_classes(case.symmetry):
        label = symmetry_label(walls)
        if label:
            progress.step(f"symmetry class {label}")
        try:
            if settings.error_estimate:
                labelled.append((label, solve_with_error_bars(case, walls, settings, progress,
                                                                pool)))
            else:
                model = case_model(case, mesh, extra_walls=walls)
                labelled.append((label, solve_part(model, **_solve_options(settings),
                                                   progress=progress)))
        except InputError as exc:
            raise in_case(exc, str(case.path)) from None
    if settings.sensitivities:
        labelled = [(label, _with_sensitivities(r)) for label, r in labelled]
    labelled = [(label, _with_labels(case, r)) for label, r in labelled]
    result = (labelled[0][1] if len(labelled) == 1 and not labelled[0][0]
              else merge_classes(labelled, settings.modes, settings.near_hz))
    result = with_coupling(result, case.coupling_modes)
    if settings.accuracy is not None:
        result = replace(result, accuracy=_accuracy_summary(result, settings.accuracy))
    if case.tolerances:
        result = _with_tolerances(case, result, settings, progress, pool)
    if case.temperature is not None:
        result = _with_temperature(case, result, progress, pool)
    if case.accuracy_plan is not None:
        result = replace(result, expected_accuracy=case.accuracy_plan.target)
    return _with_far_fields(case, _with_field_figures(case, result), progress)


def _with_temperature(case: Case, result, progress: Progress, pool=None):
    """Every mode's df/dT and τf from the case's tce and expansion, and with [temperature]
    its frequency over the range (femcav.temperature)."""
    from .temperature import with_temperature_drift, with_temperature_range
    result = with_temperature_drift(case, result, progress, pool)
    return (with_temperature_range(case, result, progress) if case.temperature_range
            else result)


def _mirror(case: Case):
    """The symmetry planes that cut the case's part (post.point_fields.Mirror)."""
    from .geometry import BUILDERS
    from .post.point_fields import Mirror

    if not case.symmetry:
        return Mirror({})
    builder = BUILDERS[case.geometry.builder]
    full = {k: p.default for k, p in builder.PARAMETERS.items() if not p.required}
    planes = builder.symmetry_planes(**{**full, **case.geometry.parameters})
    return Mirror({axis: planes[axis] for axis in case.symmetry})


def check_probes_inside(case: Case, mesh) -> None:
    """InputError naming the probe whose point lies outside the meshed part (before a
    solve: the mesh is all it needs)."""
    from .post.point_fields import points_outside, refuse_outside

    mirror = _mirror(case)
    for probe in case.probes:
        folded = mirror.fold(probe.points)
        try:
            refuse_outside(points_outside(mesh.points, mesh.tets, folded), probe.points,
                           f"probes.{probe.name}")
        except InputError as exc:
            raise in_case(exc, str(case.path)) from None


def _with_field_figures(case: Case, result):
    """Magnetic filling factors and probe values of every mode, 3D or axisymmetric."""
    from .post.mode_figures import with_field_figures

    axis = case.filling_axis
    if getattr(result, "spaces", None) is not None:
        from .axisymmetric import point_fields as section

        spaces = result.spaces
        check_probes_on_section(case, next(iter(spaces.values())).model.section)
        return with_field_figures(
            result, case.probes,
            lambda m, points: section.fields_at_points(spaces[m.m], m.dofs,
                                                       2 * math.pi * m.frequency_hz, points),
            lambda m: section.magnetic_filling(spaces[m.m], m.dofs, axis))
    from .post.filling import magnetic_filling
    from .post.point_fields import fields_at_points

    space, mirror = result.space, _mirror(case)
    if case.probes:
        check_probes_inside(case, space.model.mesh)
    return with_field_figures(
        result, case.probes,
        lambda m, points: fields_at_points(space, m.dofs, 2 * math.pi * m.frequency_hz, points,
                                           mirror=mirror, label=m.symmetry,
                                           cuts=len(mirror.planes)),
        lambda m: magnetic_filling(space, m.dofs, axis))


def _with_far_fields(case: Case, result, progress: Progress):
    """An open problem's modes with their far fields (post.far_field); others unchanged."""
    from .fem.absorber import has_absorber
    from .post.far_field import far_field

    if not has_absorber(result.space.model) or not result.modes:
        return result
    t0 = time.perf_counter()
    mirror = _mirror(case)
    modes = [replace(m, far_field=far_field(result.space, m, mirror=mirror))
             for m in result.modes]
    progress.step(f"far fields of {len(modes)} modes from the absorbing layer's inner "
                  f"surface in {time.perf_counter() - t0:.2f} s")
    return replace(result, modes=modes)


def check_probes_on_section(case: Case, section) -> None:
    """InputError naming the probe whose point, turned onto the (r, z) section, lies outside
    it."""
    import numpy as np

    from .axisymmetric.point_fields import section_outside
    from .post.point_fields import refuse_outside

    for probe in case.probes:
        p = probe.points
        rz = np.column_stack([np.hypot(p[:, 0], p[:, 1]), p[:, 2]])
        try:
            refuse_outside(section_outside(section, rz), p, f"probes.{probe.name}")
        except InputError as exc:
            raise in_case(exc, str(case.path)) from None


def _with_tolerances(case: Case, result, settings, progress: Progress, pool=None):
    """Each mode's df/dp for the toleranced lengths and the spread they imply: each
    |df/dp| tol alone, their sum (worst case) and root-sum-square (independent errors)."""
    import math

    from .morph import dimension_derivatives

    if settings.azimuthal_orders is not None:
        from .axisymmetric.runner import section_dimension_derivatives
        derivatives = section_dimension_derivatives(case, result, list(case.tolerances),
                                                    settings, progress)
    else:
        derivatives = dimension_derivatives(case, result, list(case.tolerances), progress,
                                            pool)
    modes = []
    for k, mode in enumerate(result.modes):
        spread = {n: abs(derivatives[n][k]) * tol for n, tol in case.tolerances.items()}
        modes.append(replace(mode, tolerance=ToleranceSpread(
            df_dp_hz_per_m={n: derivatives[n][k] for n in case.tolerances},
            tolerance_m=dict(case.tolerances), delta_f_hz=spread,
            worst_case_hz=sum(spread.values()),
            rss_hz=math.sqrt(sum(v * v for v in spread.values())))))
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
    if g.builder is None or case.periodic:   # the labels name standing waves, not a
        return result                         # periodic cell's travelling ones
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


def _with_sensitivities(result):
    """Every mode's df/dε_r and df/dμ_r per region, 3D or on a section."""
    from .axisymmetric.losses import material_sensitivities as on_section
    from .axisymmetric.solve import AxisymmetricResult
    from .post.sensitivity import material_sensitivities as in_3d

    sensitivities = on_section if isinstance(result, AxisymmetricResult) else in_3d
    modes = list(result.modes)
    for _, space, positions in result.mode_spaces():
        for i in positions:
            modes[i] = replace(modes[i], sensitivity=sensitivities(
                space, modes[i].dofs, modes[i].frequency_hz))
    return replace(result, modes=modes)


def _solve_axisymmetric(case: Case, settings, progress: Progress, pool=None):
    from .axisymmetric.runner import solve_axisymmetric_case

    if settings.method == "iterative":
        raise InputError("the axisymmetric solver uses the direct shift-invert path",
                         source=str(case.path), field="--method")
    if not settings.error_estimate:
        return solve_axisymmetric_case(case, settings, progress)
    try:
        return solve_with_error_bars(case, {}, settings, progress, pool)
    except InputError as exc:
        raise in_case(exc, str(case.path)) from None
