"""The modes of a body of revolution: one deflated shift-invert solve per azimuthal order.

Each order m is asked for ``modes`` modes (the lowest, or the nearest to a target), so the
lowest (or nearest) ``modes`` of their union are those of the whole part. A mode with
m >= 1 stands for a degenerate pair in 3D (cos mφ and sin mφ); it is listed once, with
m, and counts once.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import c as C0

from ..eigen import backends
from ..eigen.complex_shift_invert import with_complex_frequencies
from ..eigen.factorization import describe, get_factorizer
from ..eigen.interface import STATIC_FRACTION, EigenRequest
from ..errors import InputError
from ..eigen.problem import EigenProblem
from ..materials import tan_delta_by_cell
from ..post.checks import check_modes
from ..post.loss_validity import with_complex_warnings, with_loss_warnings
from ..post.resolution import mode_resolution
from ..progress import SILENT, Progress
from ..solver import (
    AccuracyReport,
    Mode,
    ModeVerdicts,
    check_request,
    complex_eigenvalues,
    frequency_to_k0_squared,
    select_modes,
)
from .losses import cell_energy, cell_scales, field_class, has_losses, mode_losses
from .model import AxisymmetricModel
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
    eigen_stats: dict = field(default_factory=dict)
    form: str = "E"
    element_kind = "triangles (meridional section)"
    accuracy: AccuracyReport | None = None     # with a [solve] accuracy target
    static_fields_dropped = 0
    classes = ()

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
                       form: str = "E", progress: Progress = SILENT) -> AxisymmetricResult:
    """The lowest ``modes`` modes over the azimuthal ``orders`` (or those nearest
    ``near_hz``), Nédélec/Lagrange elements of ``order``, in the E or H ``form``; with
    ``complex_check``, every mode also gets its complex frequency from a solve with
    ε_r (1 - j tan δ)."""
    orders = _checked_orders(orders)
    check_request(modes, near_hz)
    factorize = get_factorizer(factorization)
    mesh = skfem_mesh(model)
    eps_mu = max(float(np.max(m.eps_at(*_probe(model)) * m.mu_r))
                 for m in model.materials.values())
    scale = (math.pi / model.section.bounding_size()) ** 2 / eps_mu
    target = None if near_hz is None else frequency_to_k0_squared(near_hz)
    timings = {"assembly_s": 0.0, "eigen_s": 0.0}
    found, spaces, dofs, stats, matrices = [], {}, {}, {}, {}
    for m in orders:
        t0 = time.perf_counter()
        space = build_order_space(model, m, order, mesh, form)
        K, M = assemble_order(space)
        G = kernel_basis(space)
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
        problem = EigenProblem(K, M, G, lowest_scale=scale)
        setting = backends.setting_for(problem, factorize, progress)
        pairs = backends.solve("direct", problem, EigenRequest(count, target), setting)
        timings["eigen_s"] += time.perf_counter() - t0
        stats[m] = {**pairs.stats, "factorization": describe(factorization)}
        keep = pairs.values >= STATIC_FRACTION * scale
        values, vectors = pairs.values[keep], pairs.vectors[:, keep]
        checks = check_modes(K, M, setting.projector, values, vectors)
        for value, vector, check in zip(values, vectors.T, checks):
            found.append((m, float(value), vector, check))
    found.sort(key=lambda item: item[1])
    keep = select_modes(np.sqrt([item[1] for item in found]), modes,
                        None if target is None else math.sqrt(target))
    found = [found[i] for i in keep]
    lossy = has_losses(next(iter(spaces.values())))
    scales = cell_scales(next(iter(spaces.values())))
    result_modes = []
    for index, (m, value, vector, check) in enumerate(found, start=1):
        frequency = C0 * math.sqrt(value) / (2 * math.pi)
        space = spaces[m]
        result_modes.append(Mode(
            index=index, m=m, frequency_hz=frequency, k0_squared=value,
            field_class=field_class(space, vector), checks=check, dofs=vector,
            losses=mode_losses(space, vector, frequency) if lossy else None,
            resolution=mode_resolution(frequency, order, *scales,
                                       cell_energy(space, vector, value))))
    result_modes = with_loss_warnings(result_modes, model.walls)
    if complex_check:
        t0 = time.perf_counter()
        result_modes = with_complex_warnings(
            _complex_check(spaces, matrices, result_modes, factorize, scale))
        timings["complex_check_s"] = time.perf_counter() - t0
    progress.step(f"{len(result_modes)} modes over m = {', '.join(map(str, orders))} in "
                  f"{timings['eigen_s']:.2f} s ({describe(factorization)})")
    return AxisymmetricResult(modes=result_modes, spaces=spaces, dofs_by_order=dofs,
                              order=order, elements=model.section.n_triangles,
                              timings=timings, request=EigenRequest(modes, target),
                              near_hz=near_hz, eigen_stats=stats, form=form)


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
                   factorize, scale: float) -> list[Mode]:
    """Per order m: the complex k0² of K x = k0² (M - j M_tanδ) x (``matrices[m]`` = K, M, G
    of the real solve), paired one-to-one with the real modes of that m by nearest frequency;
    Q_d = Re ω / (2 Im ω)."""
    out = {}
    for m, space in spaces.items():
        own = [mode for mode in modes if mode.m == m]
        if not own:
            continue
        K, M, G = matrices[m]
        tan_delta = _tan_delta_at_quadrature(space)
        # a region uniaxial about z: its tan δ⊥ in ``tan_delta``, its tan δ∥ (the z
        # direction, with space.eps_z) in ``axial``
        axial = _axial_tan_delta(space, tan_delta)
        if space.form == "E":   # M becomes ∫ ε_r (1 - j tan δ) ...
            K_c = K.astype(complex)
            M_c = M - 1j * assemble_mass(space, space.eps * tan_delta,
                                         None if axial is None else space.eps_z * axial)
        else:                   # 1/(ε_r (1 - j t)) = (1/ε_r)(1 + j t)/(1 + t²)
            coef = space.stiffness_coef / (1 + tan_delta**2)
            coef_z = None if axial is None else 1 / (space.eps_z * (1 + axial**2))
            K_c = (assemble_stiffness(space, coef, coef_z)
                   + 1j * assemble_stiffness(space, coef * tan_delta,
                                             None if axial is None else coef_z * axial))
            M_c = M.astype(complex)
        values = complex_eigenvalues(K_c, M_c, G, factorize, shift=-scale, count=len(own))
        out.update({mode.index: mode for mode in with_complex_frequencies(own, values)})
    return [out.get(mode.index, mode) for mode in modes]


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
