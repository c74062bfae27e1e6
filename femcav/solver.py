"""From a model to a checked list of modes: space, assembly, deflated eigen solve, checks."""

from __future__ import annotations

import math
import time
from dataclasses import asdict, dataclass, field, replace
from functools import partial

import numpy as np
from scipy.constants import c as C0

from .class_solve import ClassPencil, select_modes, select_union, solve_class
from .eigen.complex_shift_invert import with_complex_frequencies
from .eigen.interface import EigenRequest, EigenStats
from .errors import InputError
from .fem.assembly import assemble
from .fem.coefficients import GENERAL, isotropic_part
from .fem.auxiliary import auxiliary_space
from .fem.gradient import kernel_basis
from .fem.space import EdgeSpace, build_space
from .model import Model
from .fem.absorber import has_absorber, with_stronger_layers   # open problems (issue 19)
from .fem.open_target import open_problem_target
from .post.checks import ModeChecks
from .post.radiation import (STRENGTH_CHANGE, moved_modes, split_layer_modes,
                             warn_layer_modes)
from .post.loss_validity import with_complex_warnings, with_loss_warnings
from .post.losses import LossReport, has_losses, metal_faces, mode_losses
from .post.resolution import Resolution, edge_space_energy, edge_space_scales, mode_resolution
from .progress import SILENT, Progress
from .walls import PORT


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
    # complex frequency (Hz) when the pencil is complex symmetric (losses inside the solve),
    # or from the complex check's partner ([solve] complex_check); Q = Re f / (2 |Im f|)
    complex_frequency_hz: complex | None = None
    q_eigenvalue: float | None = None          # the Q of every loss inside the operator
    q_dielectric_complex: float | None = None  # the complex check's Q (dielectric loss)
    error_estimate_hz: float | None = None   # from a mesh sequence ([solve] error_estimate)
    extrapolated_hz: float | None = None
    # with error bars: LossReport field ("q_wall", ...) -> post.q_bars.QEstimate
    q_estimates: dict | None = None
    # df/dε_r and df/dμ_r per region, Hz ([solve] sensitivities; post.sensitivity)
    sensitivity: object = None    # post.sensitivity.MaterialSensitivity
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
    loading: object | None = None   # ports.loading.PortLoading: Q_ext per port, loaded Q
    temperature: object | None = None   # femcav.temperature.TemperatureDrift (df/dT, τf)
    # open problems (absorbing regions; post.radiation)
    q_radiation: float | None = None
    absorber_energy_share: float | None = None
    far_field: object | None = None   # post.far_field.FarField (3D open problems)

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
    eigen_stats: EigenStats = field(default_factory=EigenStats)
    request: EigenRequest | None = None
    near_hz: float | None = None
    classes: list[dict] = field(default_factory=list)   # per symmetry class: label, dofs, modes
    eigen_stats_by_class: dict[str, EigenStats] = field(default_factory=dict)
    accuracy: AccuracyReport | None = None     # with a [solve] accuracy target
    # the documented accuracy a solve without element sizes aims at (femcav.accuracy_plan)
    expected_accuracy: float | None = None
    # the complex check's own solve (losses inside): its modes, with complex fields
    complex_check: "SolveResult | None" = None
    coupling: tuple = ()    # post.coupling.CouplingCoefficient: symmetry classes, named pair
    # an open problem's modes that live in its absorbing layer (post.radiation)
    layer_modes: list[Mode] = field(default_factory=list)

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
                complex_check: bool = False, losses_inside: bool = False,
                layer_check: bool = False, progress: Progress = SILENT) -> SolveResult:
    """The ``modes`` lowest modes of ``model`` (or those nearest ``near_hz``).

    A lossless model with real or Hermitian materials is a Hermitian pencil: real
    frequencies, and Q from perturbation formulas. With ``losses_inside`` (the loss tangents
    in the operator) or complex-symmetric material tensors the pencil is complex symmetric:
    every mode gets a complex frequency, its Q (``q_eigenvalue``) from the imaginary part,
    and a complex field. ``complex_check`` is that second solve run beside the first one,
    each real mode paired with its complex partner. With absorbing regions (an open
    problem, fem.absorber) the solve looks near ``near_hz`` or a default target, and the
    modes that live in the layer go to ``layer_modes`` (post.radiation; ``layer_check``
    solves again with stronger layers to find them)."""
    check_request(modes, near_hz)
    if any(wall.kind == PORT for wall in model.walls.values()):    # non-linear in k0
        raise ValueError("a model with ports is solved by ports.loaded_solve.solve_with_ports")
    t0 = time.perf_counter()
    if has_absorber(model):
        near_hz = open_problem_target(model, near_hz, progress)
    space = build_space(model, form, order, losses_inside=losses_inside)
    lossy_space = (build_space(model, form, order, losses_inside=True)
                   if complex_check and space.hermitian else None)
    if GENERAL in (space.pencil_kind, getattr(lossy_space, "pencil_kind", None)):
        raise InputError("the problem is neither Hermitian (lossless, gyrotropic) nor complex "
                         "symmetric (lossy or absorbing, reciprocal): losses inside the solve or "
                         "an absorbing layer in a periodic cell at a phase other than 0 or 180 "
                         "deg, or material tensors that are neither; for a periodic cell use "
                         "the perturbation Q (drop losses_inside and complex_check)",
                         field="regions")
    result = solve_space(space, modes=modes, near_hz=near_hz, factorization=factorization,
                         method=method, progress=progress, started=t0)
    if lossy_space is not None:
        t0 = time.perf_counter()
        lossy = solve_space(lossy_space,
                            modes=len(result.modes) + max(4, len(result.modes) // 2),
                            near_hz=None, shift=(result.eigen_stats.shift
                                                 if result.eigen_stats.shift is not None
                                                 else -result.eigen_stats.lowest_scale),
                            factorization=factorization, method="auto", progress=SILENT,
                            started=t0, post=False)
        paired = with_complex_warnings(with_complex_frequencies(
            result.modes, np.array([frequency_to_k0_squared(m.complex_frequency_hz)
                                    for m in lossy.modes])))
        result.timings["complex_check_s"] = time.perf_counter() - t0
        progress.step(f"complex check done in {result.timings['complex_check_s']:.2f} s")
        result = replace(result, modes=paired, complex_check=lossy)
    if has_absorber(model):
        result = _without_layer_modes(result, losses_inside, layer_check, progress,
                                      factorization=factorization, method=method)
    return result


def _without_layer_modes(result: SolveResult, losses_inside: bool, layer_check: bool,
                         progress: Progress, **solve_options) -> SolveResult:
    """An open problem's result with its modes split (post.radiation): the part's stay,
    the layer's go to ``layer_modes``; with ``layer_check`` after a second solve with
    stronger layers."""
    moved = set()
    if layer_check:
        space = result.space
        stronger = solve_space(build_space(with_stronger_layers(space.model, STRENGTH_CHANGE),
                                           space.form, space.order,
                                           losses_inside=losses_inside),
                               modes=result.request.count, near_hz=result.near_hz,
                               post=False, **solve_options)
        moved = moved_modes(result.modes, stronger.modes)
        progress.step(f"layer check: {len(moved)} of {len(result.modes)} modes move when the "
                      f"layers are {STRENGTH_CHANGE:g} times stronger")
    kept, layer = split_layer_modes(result.space, result.modes, losses_inside=losses_inside,
                                    moved=moved)
    warn_layer_modes(progress, len(layer), len(result.modes), bool(moved))
    return replace(result, modes=kept, layer_modes=layer)


def solve_space(space: EdgeSpace, *, modes: int, near_hz: float | None,
                factorization: str = "auto", method: str = "auto",
                progress: Progress = SILENT, started: float | None = None,
                shift: float | None = None, post: bool = True) -> SolveResult:
    """Assemble ``space``'s pencil, solve it with the backend that suits it, check every
    pair and make the modes; ``shift`` (k0², 1/m²) overrides the target of a
    complex-symmetric solve; without ``post`` the modes carry checks and fields only."""
    model, form, order = space.model, space.form, space.order
    timings = {}
    t0 = time.perf_counter() if started is None else started
    if method == "distributed":   # each MPI process assembles its share into PETSc matrices
        from .fem.distributed_assembly import assemble_distributed
        K, M, G = assemble_distributed(space)
    else:
        K, M = assemble(space)
        G = kernel_basis(space)
    timings["assembly_s"] = time.perf_counter() - t0
    progress.step(f"assembled {form} form, order {order}: {space.n_dofs} DOFs, "
                  f"{space.mesh.nelements} tetrahedra, {G.shape[1]} gradient DOFs"
                  + ("" if space.hermitian else "; complex symmetric (losses inside)"))
    if space.n_dofs < modes + 2:
        raise InputError(f"the mesh has only {space.n_dofs} free DOFs, too few for {modes} "
                         "modes; refine the mesh", option="modes")

    target = (shift if shift is not None
              else None if near_hz is None else frequency_to_k0_squared(near_hz))
    # In either form mass / stiffness is eps * mu: its largest value bounds the spectrum.
    scale = ((math.pi / model.mesh.bounding_size()) ** 2
             / (isotropic_part(space.mass_coef).max()
                / isotropic_part(space.stiffness_coef).min()))
    pencil = ClassPencil(K, M, G, lowest_scale=scale, order=order, hermitian=space.hermitian,
                         auxiliary=partial(auxiliary_space, space))
    t0 = time.perf_counter()
    # room for a periodic cell's constant fields (one per pair at phase 0; dropped as static)
    pairs = solve_class(pencil, count=modes + len(model.periodic), target=target,
                        method=method, factorization=factorization, progress=progress)
    timings["eigen_s"] = time.perf_counter() - t0
    chosen = select_union({None: pairs}, modes, target)
    values = np.array([c.value for c in chosen])
    vectors = np.column_stack([c.vector for c in chosen]) if chosen else pairs.vectors[:, :0]
    checks = [c.checks for c in chosen]

    full = space.constraint.expand(vectors)
    derived = _PostInputs.of(space, method) if post else None
    result_modes = [_mode(space, i, value, full[:, i], check, derived)
                    for i, (value, check) in enumerate(zip(values, checks))]
    if post:
        result_modes = with_loss_warnings(result_modes, model.walls)
    if model.periodic:    # a periodic cell's modes: the phase advance of its first pair
        result_modes = [replace(m, phase_advance_rad=model.periodic[0].phase_rad)
                        for m in result_modes]
    progress.step(f"eigen solve done: {len(result_modes)} modes in {timings['eigen_s']:.2f} s")
    return SolveResult(modes=result_modes, space=space, dofs=space.n_dofs,
                       elements=int(space.mesh.nelements),
                       static_fields_dropped=pairs.static_dropped, timings=timings,
                       eigen_stats=pairs.stats, request=EigenRequest(modes, target),
                       near_hz=near_hz)


@dataclass(frozen=True)
class _PostInputs:
    """What every mode's post-processing reads of the space, computed once per solve."""

    faces: object          # post.losses.MetalFaces or None
    lossy: bool
    sizes: np.ndarray      # per element: mean edge length and refractive index
    index: np.ndarray

    @classmethod
    def of(cls, space: EdgeSpace, method: str = "auto"):
        """These inputs; for a distributed solve, each process's share of the integrals
        (post.distributed_post.OwnElementsPost, the same methods)."""
        if method == "distributed":
            from .post.distributed_post import OwnElementsPost
            return OwnElementsPost.of(space)
        lossy = has_losses(space)
        return cls(metal_faces(space) if lossy else None, lossy, *edge_space_scales(space))

    def losses(self, space: EdgeSpace, dofs: np.ndarray, frequency_hz: float) -> LossReport:
        return mode_losses(space, dofs, frequency_hz, self.faces)

    def resolution(self, space: EdgeSpace, dofs: np.ndarray, frequency_hz: float,
                   k0_squared: float) -> Resolution:
        return mode_resolution(frequency_hz, space.order, self.sizes, self.index,
                               edge_space_energy(space, dofs, k0_squared))


def _mode(space: EdgeSpace, i: int, value, dofs: np.ndarray, check: ModeChecks,
          derived: _PostInputs | None) -> Mode:
    """Mode i (0-based) from its eigenvalue k0² (real, or complex when the pencil is complex
    symmetric) and its field over all edges; losses and resolution with ``derived``."""
    frequency = C0 * np.sqrt(complex(value) if np.iscomplexobj(value)
                             else max(float(value), 0.0)) / (2 * math.pi)
    lossy_values = {}
    if np.iscomplexobj(value):
        lossy_values = dict(complex_frequency_hz=complex(frequency),
                            q_eigenvalue=quality_factor(complex(frequency)))
    f = float(np.real(frequency))
    k0_squared = float(np.real(value))
    if derived is None:
        return Mode(index=i + 1, frequency_hz=f, k0_squared=k0_squared, checks=check,
                    dofs=dofs, **lossy_values)
    return Mode(index=i + 1, frequency_hz=f, k0_squared=k0_squared, checks=check, dofs=dofs,
                losses=derived.losses(space, dofs, f) if derived.lossy else None,
                resolution=derived.resolution(space, dofs, f, k0_squared),
                **lossy_values)


def quality_factor(frequency: complex) -> float:
    """Q = Re f / (2 |Im f|) of a complex frequency (infinite for a real one)."""
    return frequency.real / (2 * abs(frequency.imag)) if frequency.imag else math.inf


def complex_modes(K, M, G, *, shift: float, count: int, order: int,
                  factorization: str = "auto", **labels) -> list[Mode]:
    """The modes of the complex-symmetric pencil K x = k0² M x nearest the real ``shift``,
    a few more than ``count`` so that every real mode finds its partner, the kernel range(G)
    deflated: complex frequency, Q from it, checks and field (``labels``: e.g. m = 1); the
    sections' complex check."""
    pencil = ClassPencil(K, M, G, lowest_scale=abs(shift), order=order, hermitian=False)
    pairs = solve_class(pencil, count=count + max(4, count // 2), target=shift,
                        factorization=factorization)
    out = []
    checks = pairs.checks(range(pairs.values.size))
    for i, (value, check) in enumerate(zip(pairs.values, checks)):
        f = complex(C0 * np.sqrt(complex(value)) / (2 * math.pi))
        out.append(Mode(index=i + 1, frequency_hz=f.real, k0_squared=float(value.real),
                        checks=check, dofs=pairs.vectors[:, i], complex_frequency_hz=f,
                        q_eigenvalue=quality_factor(f), **labels))
    return out


def merge_classes(labelled: list[tuple[str, SolveResult]], count: int,
                  near_hz: float | None) -> SolveResult:
    """One spectrum from the solves of each symmetry class of a cut model.

    Every class was asked for ``count`` modes, so the lowest (or nearest) ``count`` of the
    union are the lowest (or nearest) of the full model.
    """
    tagged = [replace(m, symmetry=label) for label, r in labelled for m in r.modes]
    if near_hz is None:     # an open problem's classes looked near its default target
        near_hz = labelled[0][1].near_hz
    tagged.sort(key=lambda m: m.frequency_hz)
    keep = select_modes(np.array([m.frequency_hz for m in tagged]), count, near_hz)
    modes = [replace(tagged[j], index=i + 1) for i, j in enumerate(keep)]
    results = [r for _, r in labelled]
    timings = {key: sum(r.timings[key] for r in results) for key in results[0].timings}
    return SolveResult(
        modes=modes, space=results[0].space, dofs=max(r.dofs for r in results),
        elements=results[0].elements,
        static_fields_dropped=sum(r.static_fields_dropped for r in results), timings=timings,
        eigen_stats=results[0].eigen_stats,
        eigen_stats_by_class={label: r.eigen_stats for label, r in labelled},
        request=results[0].request, near_hz=near_hz,
        layer_modes=[m for r in results for m in r.layer_modes],
        classes=[{"symmetry": label, "dofs": r.dofs,
                  "modes": sum(m.symmetry == label for m in modes)} for label, r in labelled])
