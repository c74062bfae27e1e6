"""The modes of a part with waveguide ports: a non-linear eigenproblem solved by successive
linearisation.

With the ports terminated (ports.termination) the pencil is

    T(λ) x = (K + Σ_m j y_m(λ) w_m w_mᵀ − λ M) x = 0,    β_m(λ) = √(λ ε_r μ_r − k_c,m²),

non-linear in λ = k0² through the scaled wave admittances y_m (β_m/μ_r for TE and TEM modes,
λ ε_r/β_m for TM; ports.cross_section). Iteration: around the current complex λ_n, replace
y_m(λ) by its tangent y_m(λ_n) + y_m'(λ_n)(λ − λ_n) (β_m' = ε_r μ_r / (2 β_m)); the pencil is
then linear again,

    (K + Σ j(y_m − y_m' λ_n) D_m) x = λ (M − Σ j y_m' D_m) x,   D_m = w_m w_mᵀ,

complex symmetric, and its eigenvalue nearest λ_n (a shift-invert Arnoldi solve from the
core's "arnoldi" backend, shifted to λ_n, gradients deflated) is λ_{n+1}. At a fixed point
the linearised pencil and T agree, so the pair solves T exactly; the iteration is Newton's
method on the eigenvalue and converges quadratically near a simple root. It stops when
|λ_{n+1} − λ_n| < TOLERANCE |λ_{n+1}| (1e-10), or as soon as the new pair already solves the
non-linear pencil itself, ‖T(λ_{n+1}) x‖ < TOLERANCE ‖λ_{n+1} M x‖ (checked with matrix
products, no factorisation: a weakly radiating mode needs one linearised solve), and warns
after MAX_STEPS.

Start: without a target, the lowest modes of the real pencil (K, M) with the terminated
modes left open (no port term): the part with an open-circuited port, near its loaded modes
while Q_ext ≫ 1; and, always, the modes of the pencil linearised once at the target (or at
the highest open start), near which
a strongly coupled mode (Q_ext of a few tens) already lies close to its loaded place. More
starts than modes asked (EXTRA_STARTS, LINEARISED_STARTS); two starts that converge to one λ
give one mode, and the modes nearest the target (by real part) are kept. A root at λ ≈ 0
(a terminated TM or TEM mode's gradient field, ports.termination) is no resonance and is
dropped.
"""

from __future__ import annotations

import math
import time
from dataclasses import replace
from functools import partial

import numpy as np
from scipy.constants import c as C0

from ..eigen import backends
from ..eigen.factorization import describe, get_factorizer
from ..eigen.interface import STATIC_FRACTION, EigenRequest, EigenStats
from ..eigen.problem import EigenProblem
from ..errors import InputError
from ..fem.coefficients import isotropic_part
from ..fem.space import build_space
from ..post.checks import check_modes
from ..post.loss_validity import with_loss_warnings
from ..post.losses import has_losses, metal_faces, mode_losses
from ..post.resolution import edge_space_energy, edge_space_scales, mode_resolution
from ..progress import SILENT
from ..class_solve import select_modes
from ..solver import Mode, SolveResult, frequency_to_k0_squared, quality_factor
from ..walls import PORT
from .layered_face import LayeredFace
from .loading import port_loading
from .port_system import PortSystem, port_face

TOLERANCE = 1e-10
MAX_STEPS = 30
# eigenvalues asked of each linearised solve around λ_n (the nearest is taken)
NEAR_COUNT = 4
# two iterations that end this close (relative, in λ) have found one mode
SAME_ROOT = 1e-7
# a loaded mode this close to a terminated mode's cut-off (relative) is flagged: there the
# admittance changes fastest and the branch point of β lies, where the iteration can settle
# on the guide's cut-off rather than on a resonance
NEAR_CUTOFF = 0.05
# open-port modes beyond those asked for that start an iteration: a strongly coupled mode
# lies far from its open-port start, and another start may reach it first
EXTRA_STARTS = 3
# ... and from the pencil linearised at the target: more, since a high-permittivity region
# holds many weakly radiating modes next to a strongly coupled one (a 2 mm slab of ε_r 10
# in WR-90 put eight of them nearer 19.8 GHz than its Q = 17 resonance)
LINEARISED_STARTS = 10


def solve_with_ports(model, *, modes: int = 10, near_hz: float | None = None,
                     form: str | None = "E", order: int = 1, factorization: str = "auto",
                     losses_inside: bool = False, progress=SILENT) -> SolveResult:
    """The ``modes`` lowest loaded modes of ``model`` (or those nearest ``near_hz``), each
    with its complex frequency, Q_ext per port and loaded Q (Mode.loading)."""
    if form == "H":
        raise InputError("ports are terminated in the E form; drop form = \"H\"",
                         option="form")
    if losses_inside:
        raise InputError("with ports the loss tangents stay outside the solve (Q_0 by "
                         "perturbation); drop losses_inside", option="losses_inside")
    t0 = time.perf_counter()
    space = build_space(model, "E", order)
    faces = [port_face(space, name, wall.port_modes)
             for name, wall in model.walls.items() if wall.kind == PORT]
    for face in faces:
        progress.step(_describe(face))
    system = PortSystem(space, faces)
    scale = ((math.pi / model.mesh.bounding_size()) ** 2
             / (isotropic_part(space.mass_coef).max()
                / isotropic_part(space.stiffness_coef).min()))
    target = None if near_hz is None else frequency_to_k0_squared(near_hz)
    first = system.at(target if target is not None else scale)
    K, M, G, termination = first.K, first.M, first.G, first.termination
    tspace = termination.space
    timings = {"assembly_s": time.perf_counter() - t0}
    factorize = partial(get_factorizer(factorization), memory_limit=None)
    if tspace.n_dofs < modes + 2:
        raise InputError(f"the mesh has only {tspace.n_dofs} free DOFs, too few for {modes} "
                         "modes; refine the mesh", option="modes")

    t0 = time.perf_counter()
    starts = np.zeros(0)
    if target is None:
        open_problem = EigenProblem(K, M, G, lowest_scale=scale, hermitian=True)
        starts = backends.solve("direct", open_problem, EigenRequest(modes + EXTRA_STARTS),
                                backends.setting_for(open_problem, factorize)).values
        starts = starts[np.abs(starts) >= STATIC_FRACTION * scale]
    # and the modes of the pencil linearised at the target (or the highest open start),
    # where a strongly coupled mode lies near its loaded place
    reference = complex(target if target is not None
                        else starts.real.max() if starts.size else scale)
    near = system.at(reference)
    K, M, G, termination = near.K, near.M, near.G, near.termination
    Kt, Mt = _linearised(K, M, termination, reference)
    near_problem = EigenProblem(Kt, Mt, G, lowest_scale=scale, hermitian=False)
    starts = np.concatenate([starts, backends.solve(
        "arnoldi", near_problem, EigenRequest(modes + LINEARISED_STARTS, target=reference),
        backends.setting_for(near_problem, factorize)).values])
    starts = starts[np.abs(starts) >= STATIC_FRACTION * scale]
    solved, steps_taken, improper = [], [], 0
    for start in starts:
        if any(abs(start - v) < 1e-6 * abs(v) for v, *_ in solved):
            continue     # already reached from another start
        value, vector, linearised, steps = _converge(system, scale, complex(start),
                                                     factorize, progress)
        if (abs(value) < STATIC_FRACTION * scale
                or any(abs(value - v) < SAME_ROOT * abs(value) for v, *_ in solved)):
            continue
        steps_taken.append(steps)
        if value.imag < -SAME_ROOT * abs(value):
            improper += 1      # grows in time: a root on the other sheet of some β
            continue
        solved.append((value, vector, linearised, steps))
    solved.sort(key=lambda s: s[0].real)
    keep = select_modes(np.sqrt(np.array([s[0] for s in solved])).real, modes,
                        None if target is None else math.sqrt(target))
    solved = [solved[i] for i in keep]
    timings["eigen_s"] = time.perf_counter() - t0
    progress.step(f"ports: {len(solved)} loaded modes by successive linearisation "
                  f"({', '.join(map(str, steps_taken))} steps)"
                  + (f"; {improper} root(s) growing in time dropped (not resonances of a "
                     "passive part)" if improper else ""))
    walls = metal_faces(tspace) if has_losses(tspace) else None
    sizes = edge_space_scales(tspace)
    result_modes = []
    for i, (value, vector, (Kt, Mt, projector, termination), steps) in enumerate(solved):
        tspace = termination.space
        check = check_modes(Kt, Mt, projector, np.array([value]), vector[:, None],
                            hermitian=False)[0]
        mode = _mode(i, value, vector, check, tspace, termination, walls, sizes, progress)
        if steps >= MAX_STEPS:
            mode = replace(mode, loss_warnings=mode.loss_warnings + (
                f"the port iteration did not settle to {TOLERANCE:g} in {MAX_STEPS} steps",))
        result_modes.append(mode)
    port_warnings = [m.loss_warnings for m in result_modes]
    result_modes = [replace(m, loss_warnings=m.loss_warnings + w) for m, w in
                    zip(with_loss_warnings(result_modes, model.walls), port_warnings)]
    return SolveResult(modes=result_modes, space=tspace, dofs=tspace.n_dofs,
                       elements=int(tspace.mesh.nelements), static_fields_dropped=0,
                       timings=timings,
                       eigen_stats=EigenStats(method="arnoldi, successive linearisation",
                                              factorization=describe(factorization),
                                              lowest_scale=scale, iterations=steps_taken),
                       request=EigenRequest(modes, target), near_hz=near_hz)


def _describe(face) -> str:
    if isinstance(face, LayeredFace):
        return (f"port {face.name}: layered filling; its hybrid modes are solved at each "
                f"iterate's frequency; the lowest {face.terminated} terminated, the others "
                "shorted")
    cutoffs = ", ".join(f"{kind} {f / 1e9:.6g} GHz"
                        for kind, f in zip(face.kinds, face.cutoff_hz()))
    return (f"port {face.name}: ε_r {face.eps_r:g}, μ_r {face.mu_r:g}; cut-offs {cutoffs}; "
            f"the lowest {face.terminated} terminated, the others shorted")


def _admittances(termination, value: complex) -> list[tuple]:
    """(terminated mode, its port, β, y, dy/dλ) at λ = ``value``; y = ωμ0 Y (cross_section)."""
    ports = {p.name: p for p in termination.ports}
    out = []
    for mode in termination.modes:
        port = ports[mode.port]
        out.append((mode, port, port.propagation_constant(value, mode.mode),
                    *port.admittance(value, mode.mode)))
    return out


def _linearised(K, M, termination, value: complex):
    """The pencil linearised around λ = ``value`` (see the module's docstring)."""
    Kt, Mt = K.astype(complex), M.astype(complex)
    for mode, _, _, y, slope in _admittances(termination, value):
        D = mode.matrix()
        Kt = Kt + 1j * (y - slope * value) * D
        Mt = Mt - 1j * slope * D
    return Kt.tocsr(), Mt.tocsr()


def _residual(K, M, termination, value: complex, x: np.ndarray) -> float:
    """‖T(λ) x‖ / ‖λ M x‖ of the non-linear pencil itself (matrix products only)."""
    Mx = M @ x
    r = K @ x - value * Mx
    for mode, _, _, y, _ in _admittances(termination, value):
        w = mode.weights
        r = r + 1j * y * (w @ (w.T @ x)).ravel()
    return float(np.linalg.norm(r) / max(np.linalg.norm(value * Mx), np.finfo(float).tiny))


def _converge(system, scale, value: complex, factorize, progress):
    """(λ, x, (linearised K, M, projector, termination), steps) from the start ``value``.
    With a layered port the termination follows Re λ (ports.port_system), and the pair is
    checked by the change of λ alone (the residual would need the next iterate's space)."""
    for step in range(1, MAX_STEPS + 1):
        problem_at = system.at(value)
        K, M, G, termination = problem_at.K, problem_at.M, problem_at.G, problem_at.termination
        Kt, Mt = _linearised(K, M, termination, value)
        problem = EigenProblem(Kt, Mt, G, lowest_scale=scale, hermitian=False)
        setting = backends.setting_for(problem, factorize)
        pairs = backends.solve("arnoldi", problem, EigenRequest(NEAR_COUNT, target=value),
                               setting)
        j = int(np.argmin(np.abs(pairs.values - value)))
        new = complex(pairs.values[j])
        change = abs(new - value)
        value = new
        if (change < TOLERANCE * abs(new)
                or (not system.layered
                    and _residual(K, M, termination, new, pairs.vectors[:, j]) < TOLERANCE)):
            return value, pairs.vectors[:, j], (Kt, Mt, setting.projector, termination), step
    f_ghz = C0 * np.sqrt(value).real / (2 * math.pi) / 1e9
    progress.step(f"warning: the port iteration near {f_ghz:.6g} GHz did not settle to "
                  f"{TOLERANCE:g} in {MAX_STEPS} steps (last change {change / abs(value):.1e})")
    return value, pairs.vectors[:, j], (Kt, Mt, setting.projector, termination), MAX_STEPS


def _mode(i, value, vector, check, tspace, termination, faces, sizes, progress) -> Mode:
    frequency = complex(C0 * np.sqrt(complex(value)) / (2 * math.pi))
    f = frequency.real
    full = tspace.constraint.expand(vector)
    losses = mode_losses(tspace, full, f, faces) if has_losses(tspace) else None
    power, propagation = {}, {}
    for mode, port, beta, y, _ in _admittances(termination, value):
        amplitude = complex((mode.weights.T @ vector)[0])
        power[port.name] = power.get(port.name, 0.0) + abs(y.real) * abs(amplitude) ** 2
        propagation.setdefault(port.name, []).append(complex(beta))
    loading = port_loading(frequency, power, losses.q_total if losses else None, propagation)
    warnings = []
    for port in termination.ports:
        cutoff_hz = port.cutoff_hz()
        for m in range(port.terminated):
            if abs(f - cutoff_hz[m]) < NEAR_CUTOFF * cutoff_hz[m]:
                warnings.append(f"port {port.name}: {f / 1e9:.6g} GHz lies within "
                                f"{NEAR_CUTOFF:.0%} of its mode {port.label(m)}'s cut-off "
                                f"({cutoff_hz[m] / 1e9:.6g} GHz): possibly the guide's cut-off, "
                                "not a resonance")
        for m in range(port.terminated, len(cutoff_hz)):
            if port.propagates(float(np.real(value)), m):
                where = ("" if np.isnan(cutoff_hz[m])
                         else f" (cut-off {cutoff_hz[m] / 1e9:.6g} GHz)")
                warnings.append(f"port {port.name}: its mode {port.label(m)}{where} propagates "
                                f"at {f / 1e9:.6g} GHz but is shorted; set port_modes >= "
                                f"{m + 1}")
    for w in warnings:
        progress.step("warning: " + w)
    betas = "; ".join(f"port {p}: β " + ", ".join(f"{b.real:.6g}{b.imag:+.3g}j rad/m"
                                                  for b in bs)
                      for p, bs in propagation.items())
    progress.step(f"loaded mode {i + 1}: {f / 1e9:.9g} GHz, Q_ext "
                  + ", ".join(f"{p} {q:.6g}" for p, q in loading.q_external.items())
                  + f"; {betas}")
    resolution = mode_resolution(f, tspace.order, *sizes,
                                 edge_space_energy(tspace, full, float(np.real(value))))
    return Mode(index=i + 1, frequency_hz=f, k0_squared=float(np.real(value)), checks=check,
                dofs=full, losses=losses, complex_frequency_hz=frequency,
                q_eigenvalue=quality_factor(frequency), resolution=resolution,
                loading=loading, loss_warnings=tuple(warnings))
