"""The modes of a body of revolution: one deflated shift-invert solve per azimuthal order.

Each order m is asked for ``modes`` modes (the lowest, or the nearest to a target), so the
lowest (or nearest) ``modes`` of their union are those of the whole part. A mode with
m >= 1 stands for a degenerate pair in 3D (cos mφ and sin mφ); it is listed once, with
m, and counts once.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field, replace
from functools import partial

import numpy as np
from scipy.constants import c as C0

from ..class_solve import ClassPencil, select_union, solve_class
from ..eigen.complex_shift_invert import with_complex_frequencies
from ..eigen.factorization import describe
from ..eigen.interface import EigenRequest, EigenStats
from ..errors import InputError
from ..fem.absorber import has_absorber
from ..materials import tan_delta_by_cell
from ..post.fields import most_real_phase
from ..post.loss_validity import with_complex_warnings, with_loss_warnings
from ..post.resolution import mode_resolution
from ..progress import SILENT, Progress
from ..solver import (
    AccuracyReport,
    Mode,
    ModeVerdicts,
    check_request,
    complex_modes,
    frequency_to_k0_squared,
    quality_factor,
)
from .losses import cell_energy, cell_scales, field_class, has_losses, mode_losses
from .model import AxisymmetricModel
from .open_section import (section_absorber_share, section_open_target,
                           without_section_layer_modes)
from .space import (
    OrderSpace,
    assemble_mass,
    assemble_order,
    assemble_stiffness,
    build_order_space,
    kernel_basis,
    skfem_mesh,
)


@dataclass(frozen=True)
class AxisymmetricResult(ModeVerdicts):
    modes: list[Mode]
    spaces: dict[int, OrderSpace]
    dofs_by_order: dict[int, int]
    order: int
    elements: int               # triangles of the section
    timings: dict[str, float]
    request: EigenRequest
    near_hz: float | None = None
    eigen_stats: EigenStats = field(default_factory=EigenStats)   # of the first order solved
    eigen_stats_by_class: dict[int, EigenStats] = field(default_factory=dict)   # per order m
    # the complex check's own modes (losses inside), with their complex fields
    complex_check: "AxisymmetricResult | None" = None
    form: str = "E"
    element_kind = "triangles (meridional section)"
    accuracy: AccuracyReport | None = None     # with a [solve] accuracy target
    # an open part's modes that live in its absorbing layer (axisymmetric.open_section)
    layer_modes: list[Mode] = field(default_factory=list)
    static_fields_dropped = 0
    classes = ()
    coupling = ()    # coupling coefficients are found in 3D (post.coupling)

    @property
    def dofs(self) -> int:
        return sum(self.dofs_by_order.values())

    @property
    def mesh(self):
        """The meridional section the modes were solved on (geometry.meridional)."""
        return next(iter(self.spaces.values())).model.section

    def mode_spaces(self) -> list[tuple]:
        """(m, the order-m space, positions of its modes) for every solved order."""
        return [(m, space, [i for i, mode in enumerate(self.modes) if mode.m == m])
                for m, space in self.spaces.items()]


def solve_axisymmetric(model: AxisymmetricModel, *, orders=(0, 1, 2), modes: int = 10,
                       near_hz: float | None = None, order: int = 3,
                       factorization: str = "auto", complex_check: bool = False,
                       losses_inside: bool = False, form: str = "E",
                       layer_check: bool = False,
                       progress: Progress = SILENT) -> AxisymmetricResult:
    """The lowest ``modes`` modes over the azimuthal ``orders`` (or those nearest
    ``near_hz``), Nédélec/Lagrange elements of ``order``, in the E or H ``form``; with
    ``complex_check``, every mode also gets its complex frequency from a solve with
    ε_r (1 - j tan δ). With ``losses_inside`` that complex solve is the only one: each mode
    has a complex frequency and its Q (``q_eigenvalue``); its stored field is the real part
    at the phase where the field is most nearly real (the imaginary part there is of order
    tan δ), which the post-processing (losses, class, pictures) reads. With absorbing
    regions (an open part, axisymmetric.absorber) the pencil is complex too, the solve
    looks near ``near_hz`` or a default target, and the layer's modes go to
    ``layer_modes`` (axisymmetric.open_section; ``layer_check`` solves again with stronger
    layers)."""
    orders = _checked_orders(orders)
    check_request(modes, near_hz)
    open_part = has_absorber(model)
    if open_part:
        near_hz = section_open_target(model, near_hz, progress)
    complex_pencil = losses_inside or open_part
    complex_check = complex_check and not complex_pencil   # the one solve is that check
    mesh = skfem_mesh(model)
    eps_mu = max(float(np.max(m.eps_at(*_probe(model)) * m.mu_r))
                 for m in model.materials.values())
    scale = (math.pi / model.section.bounding_size()) ** 2 / eps_mu
    target = None if near_hz is None else frequency_to_k0_squared(near_hz)
    timings = {"assembly_s": 0.0, "eigen_s": 0.0}
    classes, spaces, dofs, matrices = {}, {}, {}, {}
    for m in orders:
        t0 = time.perf_counter()
        space = build_order_space(model, m, order, mesh, form)
        K, M = assemble_order(space)
        G = kernel_basis(space)
        if (complex_pencil or complex_check) and space.constraint.dtype.kind == "c":
            raise InputError("losses inside the solve (and the complex check, or an "
                             "absorbing layer) of a periodic cell at a phase other than 0 or "
                             "180 deg give a pencil that is neither Hermitian nor complex "
                             "symmetric: not available; use the perturbation Q",
                             option="losses_inside")
        if losses_inside:
            K, M = _lossy_pencil(space, K, M)
        timings["assembly_s"] += time.perf_counter() - t0
        spaces[m], dofs[m] = space, space.n_dofs
        if complex_check:
            matrices[m] = (K, M, G)
        progress.step(f"m = {m}: {space.n_dofs} DOFs (order {order}), "
                      f"{G.shape[1]} kernel fields")
        count = min(modes, max(space.n_dofs - G.shape[1] - 2, 0))
        if count < 1:
            continue
        t0 = time.perf_counter()
        # the sections are small: shift-invert (Lanczos, or Arnoldi with losses inside)
        pencil = ClassPencil(K, M, G, lowest_scale=scale, order=order,
                             hermitian=not complex_pencil)
        classes[m] = solve_class(pencil, count=count, target=target, method="direct",
                                 factorization=factorization, progress=progress)
        timings["eigen_s"] += time.perf_counter() - t0
    lossy = has_losses(next(iter(spaces.values())))
    scales = cell_scales(next(iter(spaces.values())))
    result_modes = []
    for index, chosen in enumerate(select_union(classes, modes, target), start=1):
        m, value, vector, check = chosen.key, chosen.value, chosen.vector, chosen.checks
        lossy_values = {}
        if np.iscomplexobj(value):
            f = complex(C0 * np.sqrt(complex(value)) / (2 * math.pi))
            lossy_values = dict(complex_frequency_hz=f, q_eigenvalue=quality_factor(f))
            if open_part:   # from the complex field: an outgoing wave is not real anywhere
                lossy_values["absorber_energy_share"] = section_absorber_share(spaces[m],
                                                                               vector)
            vector, value = most_real_phase(vector).real, float(value.real)
        # Re f, not the frequency of Re k0²: they differ by 1/(8 Q²) (6.7e-5 at Q = 43)
        frequency = (lossy_values["complex_frequency_hz"].real if lossy_values
                     else C0 * math.sqrt(value) / (2 * math.pi))
        space = spaces[m]
        result_modes.append(Mode(
            index=index, m=m, frequency_hz=frequency, k0_squared=float(value),
            field_class=field_class(space, vector), checks=check, dofs=vector,
            losses=mode_losses(space, vector, frequency) if lossy else None,
            resolution=mode_resolution(frequency, order, *scales,
                                       cell_energy(space, vector,
                                                   frequency_to_k0_squared(frequency))),
            **lossy_values))
    result_modes = with_loss_warnings(result_modes, model.walls)
    if model.periodic:    # a periodic cell's modes: the phase advance per cell
        result_modes = [replace(m, phase_advance_rad=model.periodic[0].phase_rad)
                        for m in result_modes]
    lossy_modes = None
    if complex_check:
        t0 = time.perf_counter()
        result_modes, lossy_modes = _complex_check(spaces, matrices, result_modes,
                                                   factorization, scale, order)
        result_modes = with_complex_warnings(result_modes)
        timings["complex_check_s"] = time.perf_counter() - t0
    progress.step(f"{len(result_modes)} modes over m = {', '.join(map(str, orders))} in "
                  f"{timings['eigen_s']:.2f} s ({describe(factorization)})")
    result = AxisymmetricResult(modes=result_modes, spaces=spaces, dofs_by_order=dofs,
                              order=order, elements=model.section.n_triangles,
                              timings=timings, request=EigenRequest(modes, target),
                              near_hz=near_hz, form=form,
                              eigen_stats=next((c.stats for c in classes.values()),
                                               EigenStats()),
                              eigen_stats_by_class={m: c.stats for m, c in classes.items()})
    if lossy_modes is not None:   # the complex solve's modes, on the same spaces
        result = replace(result, complex_check=replace(result, modes=lossy_modes))
    if open_part:
        resolve = partial(solve_axisymmetric, orders=orders, modes=modes, near_hz=near_hz,
                          order=order, factorization=factorization,
                          losses_inside=losses_inside, form=form)
        result = without_section_layer_modes(result, model, resolve,
                                             losses_inside=losses_inside,
                                             layer_check=layer_check, progress=progress)
    return result


def _checked_orders(orders) -> tuple[int, ...]:
    try:
        out = tuple(dict.fromkeys(orders))
    except TypeError:
        out = (orders,)
    if not out or not all(isinstance(m, int) and not isinstance(m, bool) and m >= 0
                          for m in out):
        raise InputError(f"azimuthal_orders must be a list of whole numbers >= 0, got "
                         f"{orders!r}", option="azimuthal_orders")
    return out


def _probe(model: AxisymmetricModel):
    rz = model.section.points
    return rz[:, 0], np.zeros(len(rz)), rz[:, 1]


def _complex_check(spaces: dict[int, OrderSpace], matrices: dict, modes: list[Mode],
                   factorization: str, scale: float, order: int) -> list[Mode]:
    """Per order m: the complex k0² of K x = k0² (M - j M_tanδ) x (``matrices[m]`` = K, M, G
    of the real solve), paired one-to-one with the real modes of that m by nearest frequency;
    Q_d = Re ω / (2 Im ω). Returns the paired modes and the complex solve's own modes (with
    their complex fields), in frequency order."""
    out, lossy = {}, []
    for m, space in spaces.items():
        own = [mode for mode in modes if mode.m == m]
        if not own:
            continue
        K, M, G = matrices[m]
        K_c, M_c = _lossy_pencil(space, K, M)
        found = complex_modes(K_c, M_c, G, shift=-scale, count=len(own), order=order,
                              factorization=factorization, m=m)
        lossy += found
        values = np.array([frequency_to_k0_squared(f.complex_frequency_hz) for f in found])
        out.update({mode.index: mode for mode in with_complex_frequencies(own, values)})
    lossy.sort(key=lambda mode: mode.frequency_hz)
    return ([out.get(mode.index, mode) for mode in modes],
            [replace(mode, index=i + 1) for i, mode in enumerate(lossy)])


def _lossy_pencil(space: OrderSpace, K, M):
    """(K, M) of the real pencil with the loss tangents put in: ε_r (1 - j tan δ); a region
    uniaxial about z has its tan δ⊥ in ``tan_delta`` and its tan δ∥ (the z direction, with
    space.eps_z) in ``axial``."""
    tan_delta = _tan_delta_at_quadrature(space)
    axial = _axial_tan_delta(space, tan_delta)
    if space.form == "E":   # M becomes ∫ ε_r (1 - j tan δ) ...
        return K.astype(complex), M - 1j * assemble_mass(
            space, space.eps * tan_delta, None if axial is None else space.eps_z * axial)
    # 1/(ε_r (1 - j t)) = (1/ε_r)(1 + j t)/(1 + t²)
    coef = space.stiffness_coef / (1 + tan_delta**2)
    coef_z = None if axial is None else 1 / (space.eps_z * (1 + axial**2))
    return (assemble_stiffness(space, coef, coef_z)
            + 1j * assemble_stiffness(space, coef * tan_delta,
                                      None if axial is None else coef_z * axial),
            M.astype(complex))


def _tan_delta_at_quadrature(space: OrderSpace) -> np.ndarray:
    """tan δ at the quadrature points; tan δ⊥ in a region uniaxial about z."""
    section = space.model.section
    out = tan_delta_by_cell(space.model.materials, section.region_names, section.tri_region,
                            space.eps)
    for name, rid in section.region_names.items():
        uniaxial = space.model.materials[name].uniaxial
        if uniaxial is not None:
            out[section.tri_region == rid] = uniaxial.tan_delta_perpendicular
    return out


def _axial_tan_delta(space: OrderSpace, tan_delta: np.ndarray) -> np.ndarray | None:
    """tan δ of the z direction (tan δ∥ in a region uniaxial about z, ``tan_delta``
    elsewhere); None when no region is uniaxial."""
    if space.eps_z is None:
        return None
    section = space.model.section
    out = tan_delta.copy()
    for name, rid in section.region_names.items():
        uniaxial = space.model.materials[name].uniaxial
        if uniaxial is not None:
            out[section.tri_region == rid] = uniaxial.tan_delta_parallel
    return out
