"""From a model to a checked list of modes: space, assembly, deflated eigen solve, checks."""

from __future__ import annotations

import math
import time
from dataclasses import asdict, dataclass, field, replace
from functools import partial

import numpy as np
from scipy.constants import c as C0

from .eigen import backends, selection
from .eigen.complex_shift_invert import with_complex_frequencies
from .eigen.factorization import describe, get_factorizer, library
from .eigen.interface import STATIC_FRACTION, EigenRequest
from .memory_room import format_bytes
from .eigen.pardiso import TooLarge
from .eigen.problem import EigenProblem
from .errors import InputError
from .fem.assembly import assemble, assemble_mass, assemble_stiffness
from .fem.auxiliary import auxiliary_space
from .fem.gradient import kernel_basis
from .fem.space import EdgeSpace, build_space
from .materials import tan_delta_by_cell
from .model import Model
from .post.checks import ModeChecks, check_modes
from .post.loss_validity import with_complex_warnings, with_loss_warnings
from .post.losses import LossReport, has_losses, metal_faces, mode_losses
from .post.resolution import Resolution, edge_space_energy, edge_space_scales, mode_resolution
from .progress import SILENT, Progress


@dataclass(frozen=True)
class Mode:
    index: int              # 1-based, in frequency order
    frequency_hz: float
    k0_squared: float       # 1/m²
    checks: ModeChecks
    # M-normalised, as its space stores modes: over all edges of a 3D mesh, over the kept
    # DOFs of an azimuthal order's space (space.full_vectors gives every DOF)
    dofs: np.ndarray
    symmetry: str | None = None   # the symmetry class, e.g. "x:PMC y:PEC", when cut
    losses: LossReport | None = None   # Q factors by perturbation, when the case has losses
    # from the direct complex solve with lossy permittivity ([solve] complex_check)
    complex_frequency_hz: float | None = None
    q_dielectric_complex: float | None = None
    error_estimate_hz: float | None = None   # from a mesh sequence ([solve] error_estimate)
    extrapolated_hz: float | None = None
    # df/dε_r and df/dμ_r per region, Hz ([solve] sensitivities; post.sensitivity)
    sensitivity: dict | None = None
    # per builder length: df/dp (Hz/m) and the frequency tolerance it implies ([tolerances])
    tolerance: ToleranceSpread | None = None
    label: str | None = None      # from the field (post.classify), e.g. "TE101"
    # elements per local wavelength where the mode's energy is (post.resolution)
    resolution: Resolution | None = None
    # where the perturbation estimates of Q are not valid (post.loss_validity)
    loss_warnings: tuple[str, ...] = ()
    magnetic_filling: object = None   # post.filling.MagneticFilling
    probes: tuple = ()                # post.probes.ProbeValues, one per [probes.NAME]
    geometry_factor_ohm: float | None = None   # Q_wall R_s (post.geometry_factor)
    beam: object | None = None                 # post.beam.BeamFigures, with [beam]
    # a body of revolution's mode (axisymmetric.solve): its azimuthal order m and field
    # class (TE-like, TM-like, TEM-like or hybrid: axisymmetric.losses.field_class)
    m: int | None = None
    field_class: str | None = None
    phase_advance_rad: float | None = None   # a chain of cells' passband (passband.py)

    @property
    def multiplicity(self) -> int:
        """Modes of the full part: the cos mφ and sin mφ pair of an order m >= 1."""
        return 2 if self.m else 1


@dataclass(frozen=True)
class ToleranceSpread:
    """What the [tolerances] imply for one mode: df/dp per builder length (Hz/m), the
    tolerances (m), each one's frequency change alone, their sum (worst case) and
    root-sum-square (independent errors); and, with ``samples``, the Monte-Carlo spread
    (study.monte_carlo). Fields a study did not compute are None."""

    df_dp_hz_per_m: dict[str, float] | None = None
    tolerance_m: dict[str, float] | None = None
    delta_f_hz: dict[str, float] | None = None
    worst_case_hz: float | None = None
    rss_hz: float | None = None
    monte_carlo: dict | None = None

    def as_dict(self) -> dict:
        """The fields that were computed, for modes.json."""
        return {k: v for k, v in asdict(self).items() if v is not None}


@dataclass(frozen=True)
class AccuracyReport:
    """Whether a solve met its accuracy target ([solve] accuracy): the target and the
    largest error bar relative to its frequency (None when a mode has no bar)."""

    target: float
    largest_relative_bar: float | None
    reached: bool


class ModeVerdicts:
    """What a result's modes say together (a SolveResult or an AxisymmetricResult)."""

    modes: list[Mode]

    @property
    def passed(self) -> bool:
        return all(m.checks.passed for m in self.modes)

    @property
    def resolved(self) -> bool:
        return all(m.resolution is None or m.resolution.resolved for m in self.modes)


@dataclass(frozen=True)
class SolveResult(ModeVerdicts):
    modes: list[Mode]
    space: EdgeSpace
    dofs: int
    elements: int
    static_fields_dropped: int
    timings: dict[str, float]
    eigen_stats: dict = field(default_factory=dict)
    request: EigenRequest | None = None
    near_hz: float | None = None
    classes: list[dict] = field(default_factory=list)   # per symmetry class: label, dofs, modes
    accuracy: AccuracyReport | None = None     # with a [solve] accuracy target

    @property
    def form(self) -> str:
        return self.space.form

    @property
    def order(self) -> int:
        return self.space.order

    @property
    def mesh(self):
        """The mesh the modes were solved on (a geometry.mesh.TaggedMesh)."""
        return self.space.model.mesh

    def mode_spaces(self) -> list[tuple]:
        """(key, space, positions of its modes): one space holds every mode's field (the
        stored vectors are over all edges, whichever symmetry class they came from)."""
        return [(None, self.space, list(range(len(self.modes))))]

    element_kind = "tetrahedra"


def check_request(modes, near_hz) -> None:
    """InputError unless ``modes`` is a count >= 1 and ``near_hz`` is None or positive."""
    if not isinstance(modes, int) or modes < 1:
        raise InputError(f"the number of modes must be a whole number >= 1, got {modes!r}",
                         option="modes")
    if near_hz is not None and not near_hz > 0:
        raise InputError(f"the target frequency must be positive, got {near_hz!r} Hz",
                         option="near")


def frequency_to_k0_squared(f_hz: float) -> float:
    return (2 * math.pi * f_hz / C0) ** 2


def solve_model(model: Model, *, modes: int = 10, near_hz: float | None = None, form: str = "E",
                order: int = 1, factorization: str = "auto", method: str = "auto",
                complex_check: bool = False, progress: Progress = SILENT) -> SolveResult:
    check_request(modes, near_hz)
    timings = {}
    t0 = time.perf_counter()
    space = build_space(model, form, order)
    if method == "distributed":   # each MPI process assembles its share into PETSc matrices
        from .fem.distributed_assembly import assemble_distributed
        K, M, G = assemble_distributed(space)
    else:
        K, M = assemble(space)
        G = kernel_basis(space)
    timings["assembly_s"] = time.perf_counter() - t0
    progress.step(f"assembled {form} form, order {order}: {space.n_dofs} DOFs, {space.mesh.nelements} "
                  f"tetrahedra, {G.shape[1]} gradient DOFs")
    if space.n_dofs < modes + 2:
        raise InputError(f"the mesh has only {space.n_dofs} free DOFs, too few for {modes} "
                         "modes; refine the mesh", option="modes")

    request = EigenRequest(count=modes,
                           target=None if near_hz is None else frequency_to_k0_squared(near_hz))
    choice = selection.choose(method, n=K.shape[0], nnz=K.nnz, request=request, order=order,
                              library=library(factorization))
    progress.step(choice.describe())
    factorize = partial(get_factorizer(factorization),
                        memory_limit=int(selection.MEMORY_SHARE * choice.free_bytes))
    progress.step(f"sparse direct solves: {describe(factorization)}")
    # In either form mass_coef.max() / stiffness_coef.min() is eps_max * mu_max.
    scale = ((math.pi / model.mesh.bounding_size()) ** 2
             / (space.mass_coef.max() / space.stiffness_coef.min()))
    problem = EigenProblem(K, M, G, lowest_scale=scale, auxiliary=partial(auxiliary_space, space))
    t0 = time.perf_counter()
    try:
        setting = backends.setting_for(problem, factorize, progress)
        pairs = backends.solve(choice.method, problem, request, setting)
    except TooLarge as error:
        raise InputError(f"the factorisation of {K.shape[0]} DOFs needs "
                         f"{format_bytes(error.needed)} but only {format_bytes(error.limit)} "
                         "can be spared; use a coarser mesh or symmetry planes",
                         field="solve") from None
    timings["eigen_s"] = time.perf_counter() - t0
    pairs.stats.setdefault("factorization", describe(factorization))   # a backend may say
    pairs.stats["method"] = choice.method
    pairs.stats["peak_estimate_bytes"] = choice.peak_bytes   # sizes a sweep's --jobs

    static = pairs.values < STATIC_FRACTION * scale
    values, vectors = pairs.values[~static], pairs.vectors[:, ~static]
    keep = select_modes(np.sqrt(np.maximum(values, 0)), modes,
                   None if request.target is None else math.sqrt(request.target))
    values, vectors = values[keep], vectors[:, keep]
    checks = check_modes(K, M, setting.projector, values, vectors)

    full = space.constraint.expand(vectors)
    frequencies = C0 * np.sqrt(np.maximum(values, 0.0)) / (2 * math.pi)
    lossy = has_losses(space)
    faces = metal_faces(space) if lossy else None
    sizes, index = edge_space_scales(space)
    result_modes = [Mode(index=i + 1, frequency_hz=float(f), k0_squared=float(v), checks=ch,
                         dofs=full[:, i],
                         losses=mode_losses(space, full[:, i], f, faces) if lossy else None,
                         resolution=mode_resolution(float(f), order, sizes, index,
                                                    edge_space_energy(space, full[:, i], v)))
                    for i, (f, v, ch) in enumerate(zip(frequencies, values, checks))]
    result_modes = with_loss_warnings(result_modes, model.walls)
    progress.step(f"eigen solve done: {len(result_modes)} modes in {timings['eigen_s']:.2f} s")
    if complex_check:
        t0 = time.perf_counter()
        result_modes = with_complex_warnings(
            _complex_check(space, K, M, G, factorize, result_modes,
                           pairs.stats.get("shift", -scale)))
        timings["complex_check_s"] = time.perf_counter() - t0
        progress.step(f"complex check done in {timings['complex_check_s']:.2f} s")
    return SolveResult(modes=result_modes, space=space, dofs=space.n_dofs,
                       elements=int(space.mesh.nelements), static_fields_dropped=int(static.sum()),
                       timings=timings, eigen_stats=pairs.stats, request=request,
                       near_hz=near_hz)


def _complex_check(space: EdgeSpace, K, M, G, factorize, modes: list[Mode], shift: float
                   ) -> list[Mode]:
    """Solve again with eps_r (1 - j tan δ) and give each mode its complex frequency and the
    Q it implies, Q = Re ω / (2 Im ω); modes and eigenvalues are paired one-to-one by
    nearest real frequency."""
    tan_delta = _tan_delta_at_quadrature(space)
    if space.form == "E":   # M becomes ∫ eps_r (1 - j tan δ) u·v
        M_loss = assemble_mass(space, space.mass_coef * tan_delta)
        K_c, M_c = K.astype(complex), M - 1j * M_loss
    else:                   # 1/(eps_r (1 - j t)) = (1/eps_r)(1 + j t)/(1 + t²)
        K_re = assemble_stiffness(space, space.stiffness_coef / (1 + tan_delta**2))
        K_im = assemble_stiffness(space, space.stiffness_coef * tan_delta / (1 + tan_delta**2))
        K_c, M_c = K_re + 1j * K_im, M.astype(complex)
    return with_complex_frequencies(modes, complex_eigenvalues(K_c, M_c, G, factorize,
                                                               shift=shift, count=len(modes)))


def complex_eigenvalues(K, M, G, factorize, *, shift: float, count: int) -> np.ndarray:
    """The complex k0² of the complex-symmetric pencil K x = k0² M x nearest the real
    ``shift`` (the real solve's), a few more than ``count`` so that every real mode finds
    its partner; the kernel range(G) deflated."""
    problem = EigenProblem(K, M, G, lowest_scale=abs(shift), hermitian=False)
    request = EigenRequest(count + max(4, count // 2), target=shift)
    return backends.solve("arnoldi", problem, request,
                          backends.setting_for(problem, factorize)).values


def _tan_delta_at_quadrature(space: EdgeSpace) -> np.ndarray:
    tm = space.model.mesh
    return tan_delta_by_cell(space.model.materials, tm.region_names, tm.tet_region,
                             space.mass_coef)


def select_modes(ascending: np.ndarray, count: int, target: float | None) -> np.ndarray:
    """Indices (ascending) of the ``count`` lowest values, or of those nearest ``target``
    (ties to the lower): the one mode selection of every solver path and of the merge of
    symmetry classes."""
    if target is None:
        return np.arange(min(count, ascending.size))
    return np.sort(np.argsort(np.abs(ascending - target), kind="stable")[:count])


def merge_classes(labelled: list[tuple[str, SolveResult]], count: int,
                  near_hz: float | None) -> SolveResult:
    """One spectrum from the solves of each symmetry class of a cut model.

    Every class was asked for ``count`` modes, so the lowest (or nearest) ``count`` of the
    union are the lowest (or nearest) of the full model.
    """
    tagged = [replace(m, symmetry=label) for label, r in labelled for m in r.modes]
    tagged.sort(key=lambda m: m.frequency_hz)
    keep = select_modes(np.array([m.frequency_hz for m in tagged]), count, near_hz)
    modes = [replace(tagged[j], index=i + 1) for i, j in enumerate(keep)]
    results = [r for _, r in labelled]
    timings = {key: sum(r.timings[key] for r in results) for key in results[0].timings}
    return SolveResult(
        modes=modes, space=results[0].space, dofs=max(r.dofs for r in results),
        elements=results[0].elements,
        static_fields_dropped=sum(r.static_fields_dropped for r in results), timings=timings,
        eigen_stats={label: r.eigen_stats for label, r in labelled},
        request=results[0].request, near_hz=near_hz,
        classes=[{"symmetry": label, "dofs": r.dofs,
                  "modes": sum(m.symmetry == label for m in modes)} for label, r in labelled])
