"""A case file with [solve] azimuthal_orders: mesh the section (or read it: an imported
mesh is then a 2D section), solve every order m."""

from __future__ import annotations

from dataclasses import replace

from ..case import Case, case_materials, in_case
from ..errors import InputError
from ..geometry import BUILDERS, builder_layout
from ..geometry.params import moved_parameters
from ..geometry.section import mesh_section
from ..geometry.section_import import read_section
from ..post.mode_matching import result_partners
from ..progress import SILENT, Progress
from ..sizing import builder_sizing
from .model import make_axisymmetric_model
from .passband import with_passband_labels
from .solve import AxisymmetricResult, solve_axisymmetric

# Without [mesh] size or max_frequency: a section mesh this fraction of the part's extent
# (2D meshes are cheap; at order 3 this puts a pillbox's lowest modes within about 1e-9).
DEFAULT_SECTION_FRACTION = 0.025


def section_sizing(case: Case):
    layout = builder_layout(case.geometry.builder, case.geometry.parameters)
    sizing = builder_sizing(case, layout, section=True)
    if case.mesh.size is None and case.mesh.max_frequency_hz is None:
        sizing = replace(sizing, size=DEFAULT_SECTION_FRACTION * layout.extent())
    return layout, sizing


def section_model_builder(case: Case):
    """The case's section element size and a function size -> the axisymmetric model of
    the section meshed at that size (the region sizes scaled alike): for error bars."""
    layout, base = section_sizing(case)

    def build_model(size: float):
        factor = size / base.size
        sizing = replace(base, size=size,
                         region_sizes={k: v * factor for k, v in base.region_sizes.items()})
        return case_section_model(case, mesh_section(layout, sizing,
                                                     name=case.geometry.builder))

    return base.size, build_model


def case_section(case: Case, progress: Progress = SILENT):
    """The case's meridional section: read from its mesh file or meshed by its builder."""
    if case.geometry.mesh_path is not None:
        section = read_section(case.geometry.mesh_path, scale=case.geometry.mesh_unit_m)
        how = f"read from {case.geometry.mesh_path}"
    else:
        layout, sizing = section_sizing(case)
        section = mesh_section(layout, sizing, name=case.geometry.builder)
        how = f"{layout.description}; element size {sizing.size * 1e3:.3g} mm"
    kind = "curved " if section.triangles6 is not None else ""
    progress.step(f"meridional section: {section.n_triangles} {kind}triangles, regions "
                  f"{', '.join(section.region_names)} ({how})")
    return section


def case_section_model(case: Case, section, periodic=None):
    """The axisymmetric model of ``section`` with the case's materials and walls (and its
    periodic pairs, or ``periodic`` instead)."""
    return make_axisymmetric_model(section, case_materials(case, section.region_names),
                                   case.walls, source=str(case.path),
                                   periodic=case.periodic if periodic is None else periodic)


def solve_axisymmetric_case(case: Case, settings, progress: Progress) -> AxisymmetricResult:
    try:
        model = case_section_model(case, case_section(case, progress))
        result = solve_axisymmetric(model, orders=settings.azimuthal_orders,
                                    modes=settings.modes, near_hz=settings.near_hz,
                                    order=settings.order, factorization=settings.factorization,
                                    complex_check=settings.complex_check,
                                    losses_inside=settings.losses_inside,
                                    form=settings.form or "E",
                                    layer_check=settings.layer_check, progress=progress)
        return label_cells(case, result, progress)
    except InputError as exc:
        raise in_case(exc, str(case.path)) from None


def label_cells(case: Case, result: AxisymmetricResult, progress: Progress
                ) -> AxisymmetricResult:
    """The passband's phase advances, for a builder that makes a chain of cells."""
    chain = getattr(BUILDERS.get(case.geometry.builder), "cell_chain", None)
    if chain is None or case.periodic:     # a periodic cell's phase advance is given
        return result
    spans, electric_ends = chain({name: wall.kind for name, wall in case.walls.items()},
                                 **case.geometry.parameters)
    if electric_ends is None:
        return result
    result = with_passband_labels(result, spans, electric_ends)
    labelled = [f"mode {m.index} {m.label}" for m in result.modes if m.label]
    if labelled:
        progress.step(f"passband (from E_z on the axis): {', '.join(labelled)}")
    return result


# The relative step of the central differences on re-meshed sections (1e-3 of the part):
# its O(step²) truncation error is about 1e-6, and each side is a new mesh, so the
# re-meshing noise of a section solve enters divided by the change: about 1e-9 of f at order
# 3 (the derivative good to 1e-4 or better on a pillbox), about 1e-6 at order 2 (9e-4).
SECTION_STEP = 1e-3


def section_dimension_derivatives(case: Case, result: AxisymmetricResult, names, settings,
                                  progress: Progress | None = None) -> dict[str, list[float]]:
    """df/dp (Hz/m) of every mode of ``result`` for each builder length in ``names`` (e.g.
    "radius"), by central differences of the section re-meshed and solved at p ± δ; each
    mode is followed by field overlap (study.tracking), as 3D morphed meshes are."""
    g = case.geometry
    step = SECTION_STEP * builder_layout(g.builder, g.parameters).extent()
    out = {}
    for name in names:
        frequencies = []
        for sign in (+1, -1):
            params = moved_parameters(g.parameters, name, sign * step)
            moved_case = replace(case, geometry=replace(g, parameters=params))
            moved = solve_axisymmetric_case(moved_case, replace(
                settings, modes=len(result.modes) + 3), SILENT)
            partner = result_partners(result, moved)
            successor = {int(p): j for j, p in enumerate(partner) if p >= 0}
            frequencies.append([moved.modes[successor[k]].frequency_hz if k in successor
                                else float("nan") for k in range(len(result.modes))])
        out[name] = [(fp - fm) / (2 * step) for fp, fm in zip(*frequencies)]
        if progress:
            progress.step(f"tolerances: df/d{name} from two re-meshed sections (step "
                          f"{step * 1e6:.3g} µm)")
    return out
