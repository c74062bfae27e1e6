"""femcav dispersion: a periodic cell solved at a row of phase advances, on one mesh.

The case's [periodic] pair (the one [dispersion] names, the first by default) takes each
phase of [dispersion] in turn; the mesh is made once, so every phase solves the same
discrete cell and the bands are followed from phase to phase by field overlap (the M-inner
product of the full DOF vectors: one mesh, no interpolation). Per band and phase the file
gives the frequency, the phase velocity ωL/φ and the group velocity twice: from the band's
slope, L dω/dφ (central differences), and from the mode's own fields, energy flux over
stored energy (post.group_velocity). The cell length L is the length of the pair's
translation.

Every solved phase is kept in the output folder (``points/NNN.json`` and ``.npz``, NNN the
phase in millidegrees from -360°, as a sweep keeps its points, with the mesh), and a run reuses the phases solved for the same case
on the mesh they were solved on, so an interrupted dispersion resumes and a finer row of
phases solves only the new ones; ``jobs`` solves phases in parallel worker processes.
"""

from __future__ import annotations

import math
import time
from concurrent.futures import as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ..axisymmetric.model import AxisymmetricModel
from ..axisymmetric.periodic import pair_lines
from ..axisymmetric.runner import case_section, case_section_model
from ..axisymmetric.solve import solve_axisymmetric
from ..case_studies import DispersionSpec, parse_dispersion
from ..case import build_mesh, case_model, in_case, load_case, read_case_data
from ..errors import InputError, ResourceError
from ..fem.assembly import assemble_mass
from ..fem.constraints import Constraint
from ..fem.periodic import FacePairing
from ..fem.space import build_space
from ..io.atomic import check_output_folder, remove_stale_temporaries
from ..post.field_overlap import Overlaps
from ..post.group_velocity import energy_velocity
from ..post.mode_matching import clusters, match_modes
from ..merit import with_figures_of_merit
from ..progress import SILENT, Progress
from ..runner import choose_form, symmetry_classes
from ..solver import solve_model
from .fingerprint import point_fingerprint
from .folder_lock import folder_lock
from .point_store import PointResult, load_point, save_point
from .sweep import full_vectors, write_study_files
from .tracking import track
from .workers import stop_workers, submit_without_ctrl_c, usable_jobs, worker_pool

WHERE = "dispersion"


def run_dispersion(path: str | Path, *, out: str | Path | None = None, jobs: int = 1,
                   progress: Progress = SILENT) -> tuple[dict, Path]:
    """Solve the case's cell at every phase of [dispersion] (reusing the phases already in
    the output folder), follow the bands, and write dispersion.json, dispersion.csv and
    dispersion.png."""
    path = Path(path)
    case = load_case(path)
    data = read_case_data(path)
    try:
        spec = parse_dispersion(data.get("dispersion"))
        if not case.periodic:
            raise InputError('a dispersion needs a periodic cell: add [periodic] with pair = '
                             '["FIRST_FACE", "SECOND_FACE"]', field="periodic")
        if spec.pair >= len(case.periodic):
            raise InputError(f"the case has {len(case.periodic)} periodic pair(s)",
                             field=f"{WHERE}.pair")
        cut_walls(case)
    except InputError as exc:
        raise in_case(exc, str(path)) from None
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"must be a whole number >= 1, got {jobs!r}", field="--jobs")
    folder = check_output_folder(Path(out) if out is not None
                                 else path.parent / f"{path.stem}-dispersion")
    phases = spec.phases_rad
    tables = {k: v for k, v in data.items() if k != WHERE}
    # rounded: the same phase from two rows of phases may differ in its last bit
    fingerprints = [point_fingerprint(tables, path, {"dispersion_pair": spec.pair,
                                                     "phase_rad": round(phase, 12)})
                    for phase in phases]
    with folder_lock(folder):
        remove_stale_temporaries(folder / "points")   # left by a run that was stopped
        done = _reusable_phases(folder, phases, fingerprints)
        # one mesh for every phase: the stored phases' own, else a new one
        mesh = (next(iter(done.values())).mesh if done
                else case_section(case, progress) if _on_section(case) else build_mesh(case))
        todo = [i for i in range(len(phases)) if i not in done]
        progress.step(f"dispersion over {len(phases)} phases: {len(done)} already solved in "
                      f"{folder}, {len(todo)} to solve")
        tasks = [(path, mesh, spec.pair, phases[i], fingerprints[i], i) for i in todo]
        for point, index in _solve_phases(tasks, jobs, progress):
            save_point(folder, _phase_file(phases[index]), point)
            done[index] = point
            lowest = ", ".join(f"{row['frequency_hz'] / 1e9:.6g}" for row in point.rows[:4])
            progress.step(f"phase {index + 1}/{len(phases)}: "
                          f"{math.degrees(phases[index]):.6g} deg: {lowest} GHz ... "
                          f"({point.seconds:.2f} s)")
        model = (case_section_model(case, mesh) if _on_section(case)
                 else case_model(case, mesh, extra_walls=cut_walls(case)))
        document = dispersion_document(case, model, spec, [done[i] for i in range(len(phases))])
        from ..viz.dispersion_chart import write_dispersion_chart
        write_study_files(folder, "dispersion", document, dispersion_csv(document),
                          ("dispersion.png", write_dispersion_chart))
    progress.step(f"dispersion written to {folder}")
    return document, folder


def cut_walls(case) -> dict:
    """The kinds of the symmetry cut faces: one class only (the bands of two classes are
    two dispersions)."""
    classes = symmetry_classes(case.symmetry)
    if len(classes) > 1:
        raise InputError('a dispersion takes one symmetry class: give each [symmetry] axis '
                         '"pec" or "pmc", not "both"', field="symmetry")
    return classes[0]


def _on_section(case) -> bool:
    """A body of revolution periodic along z: solved on its meridional section."""
    return case.solve.azimuthal_orders is not None


def solve_phase(task) -> tuple[PointResult, int]:
    """One phase on the given mesh (in this process or a worker): the case is read and
    checked again, so a task carries only the case's path and the mesh."""
    path, mesh, pair_index, phase, fingerprint, index = task
    case = load_case(path)
    if _on_section(case):
        return _solve_section_phase(case, path, mesh, phase, fingerprint), index
    model = case_model(case, mesh, extra_walls=cut_walls(case))
    pairs = list(model.periodic)
    pairs[pair_index] = replace(pairs[pair_index], phase_rad=phase)
    solve = case.solve
    t0 = time.perf_counter()
    try:
        result = solve_model(replace(model, periodic=tuple(pairs)), modes=solve.modes,
                             near_hz=solve.near_hz, form=choose_form(case, solve.form, SILENT),
                             order=solve.order, factorization=solve.factorization,
                             method=solve.method)
        result = _with_beam(case, result)
    except InputError as exc:
        raise in_case(exc, str(path)) from None
    shift = FacePairing(result.space.mesh, result.space.facet_wall, pairs[pair_index]).shift
    rows = [{"frequency_hz": m.frequency_hz, "passed": m.checks.passed,
             "group_velocity_energy_m_per_s": energy_velocity(
                 result.space, m.dofs, 2 * math.pi * m.frequency_hz, shift),
             "r_over_q_ohm": m.beam.r_over_q_ohm if m.beam else None}
            for m in result.modes]
    return PointResult(values=(phase,), rows=rows, mesh=mesh,
                       dofs=np.column_stack([m.dofs for m in result.modes]),
                       form=result.form, order=result.order,
                       seconds=time.perf_counter() - t0, fingerprint=fingerprint,
                       peak_estimate_bytes=result.eigen_stats.peak_estimate_bytes
                       ), index


def _solve_section_phase(case, path, section, phase: float, fingerprint) -> PointResult:
    """One phase of a body of revolution's cell, every azimuthal order of the case; the
    energy-flux group velocity is not computed on sections (the slope's is)."""
    model = case_section_model(case, section,
                               periodic=(replace(case.periodic[0], phase_rad=phase),))
    solve = case.solve
    t0 = time.perf_counter()
    try:
        result = solve_axisymmetric(model, orders=solve.azimuthal_orders, modes=solve.modes,
                                    near_hz=solve.near_hz, order=solve.order,
                                    factorization=solve.factorization, form=solve.form or "E")
        result = _with_beam(case, result)
    except InputError as exc:
        raise in_case(exc, str(path)) from None
    rows = [{"frequency_hz": m.frequency_hz, "passed": m.checks.passed, "azimuthal_order": m.m,
             "group_velocity_energy_m_per_s": None,
             "r_over_q_ohm": m.beam.r_over_q_ohm if m.beam else None} for m in result.modes]
    return PointResult(values=(phase,), rows=rows, mesh=section, dofs=full_vectors(result),
                       form=result.form, order=result.order,
                       seconds=time.perf_counter() - t0, fingerprint=fingerprint,
                       peak_estimate_bytes=result.eigen_stats.peak_estimate_bytes)


def _with_beam(case, result):
    """With [beam], each mode's figures along the beam line over one cell (merit): its R/Q
    per cell, the travelling wave's synchronous voltage with the particle's velocity."""
    if case.beam is None:
        return result
    if case.symmetry:
        raise InputError("the figures per cell need the whole cell's stored energy: drop "
                         "[symmetry] for a dispersion with [beam]", field="beam")
    return with_figures_of_merit(result, case.beam)


def _solve_phases(tasks: list, jobs: int, progress: Progress):
    """(point, index) of every task as it is solved: here, or after the first in up to
    ``jobs`` worker processes (the first one's memory estimate sizes them)."""
    if not tasks:
        return
    first = solve_phase(tasks[0])
    yield first
    usable, why = usable_jobs(jobs, len(tasks) - 1, first[0].peak_estimate_bytes)
    if why is not None and jobs > 1:
        progress.warn(f"--jobs {jobs} lowered to {usable}: {usable} {why}")
    if usable == 1:
        for task in tasks[1:]:
            yield solve_phase(task)
        return
    progress.step(f"solving the other {len(tasks) - 1} phases in {usable} processes")
    try:
        with worker_pool(usable) as pool:
            futures = submit_without_ctrl_c(pool, solve_phase, tasks[1:])
            try:
                for finished in as_completed(futures):
                    yield finished.result()
            except BaseException:
                stop_workers(pool)
                raise
    except BrokenProcessPool:
        raise ResourceError("a worker process ended abruptly (killed, perhaps by the system "
                            "for lack of memory); the phases solved so far are kept: run the "
                            "dispersion again to go on, perhaps with fewer --jobs") from None


def _phase_file(phase: float) -> int:
    """The number of a phase's files in points/: its phase in millidegrees from -360°, so
    that a later run with other phases finds the ones it shares."""
    return int(round((math.degrees(phase) + 360.0) * 1000))


def _reusable_phases(folder: Path, phases, fingerprints: list[str]) -> dict[int, PointResult]:
    """index -> stored phase solved for the same fingerprint, all on one mesh (the first
    one found's)."""
    done = {}
    for index, (phase, fingerprint) in enumerate(zip(phases, fingerprints)):
        point, _ = load_point(folder, _phase_file(phase), fingerprint)
        if point is not None and (not done or _same_mesh(point.mesh,
                                                         next(iter(done.values())).mesh)):
            done[index] = point
    return done


def _same_mesh(a, b) -> bool:
    cells_a, cells_b = (getattr(m, "tets", None) if hasattr(m, "tets") else m.triangles
                        for m in (a, b))
    return (type(a) is type(b) and a.points.shape == b.points.shape
            and cells_a.shape == cells_b.shape and np.array_equal(a.points, b.points)
            and np.array_equal(cells_a, cells_b))


def dispersion_document(case, model, spec: DispersionSpec, points: list) -> dict:
    """Bands, velocities and passbands of the solved phases ``points`` (PointResults, one
    per phase, on the mesh of ``model``)."""
    pair = model.periodic[spec.pair]
    if isinstance(model, AxisymmetricModel):
        shift, dofs, elements, masses = _section_cell(model, points)
    else:
        space = build_space(model, points[0].form, points[0].order)
        shift = FacePairing(space.mesh, space.facet_wall, pair).shift
        dofs, elements, masses = space.n_dofs, int(space.mesh.nelements), {
            None: _full_mass(space, assemble_mass)}
    length = float(np.linalg.norm(shift))
    phases = np.array(spec.phases_rad)
    solved = [_Solved(point) for point in points]
    tracks = track(solved, len(solved[0].modes), partners=_overlap_partners(masses))
    bands = []
    for k, t in enumerate(tracks):
        rows = [None if j is None else point.rows[j] for point, j in zip(points, t)]
        f = np.array([np.nan if row is None else row["frequency_hz"] for row in rows])
        omega = 2 * math.pi * f
        single = np.array([j is not None and len(_cluster_of(r, j)) == 1
                           for r, j in zip(solved, t)])
        bands.append({
            "band": k + 1,
            "frequency_hz": _listed(f),
            "phase_velocity_m_per_s": _listed(_phase_velocity(phases, omega, length)),
            "group_velocity_slope_m_per_s": _listed(_slope(phases, omega, single) * length),
            "group_velocity_energy_m_per_s": [
                None if row is None else row["group_velocity_energy_m_per_s"] for row in rows],
            "checks_passed": [None if row is None else row["passed"] for row in rows],
        })
        if any(row and row.get("r_over_q_ohm") is not None for row in rows):
            # [beam]: R/Q per unit length, the cell's R/Q over its length (linac convention)
            bands[-1]["r_over_q_ohm_per_m"] = [
                None if not row or row.get("r_over_q_ohm") is None
                else row["r_over_q_ohm"] / length for row in rows]
        orders = {row["azimuthal_order"] for row in rows if row and "azimuthal_order" in row}
        if orders:        # a body of revolution's band keeps its azimuthal order
            bands[-1]["azimuthal_order"] = orders.pop()
    return {
        "format": "femcav-dispersion", "format_version": 1,
        "title": case.title, "case": str(case.path),
        "pair": [pair.wall_a, pair.wall_b], "cell_length_m": length,
        "translation_m": [float(v) for v in shift],
        "other_pairs": [{"pair": [p.wall_a, p.wall_b], "phase_rad": p.phase_rad}
                        for i, p in enumerate(model.periodic) if i != spec.pair],
        "form": points[0].form, "order": points[0].order, "dofs": dofs,
        "elements": elements,
        "phases_rad": [float(p) for p in phases],
        "phases_deg": [math.degrees(p) for p in phases],
        "bands": bands,
        "passbands": [_passband(b) for b in bands],
        "seconds_per_phase": [point.seconds for point in points],
    }


@dataclass(frozen=True)
class _Mode:
    frequency_hz: float
    dofs: np.ndarray
    key: int | None = None      # the azimuthal order on a section


class _Solved:
    """A stored phase as tracking reads it: its modes' frequencies and full vectors."""

    def __init__(self, point: PointResult):
        self.modes = [_Mode(row["frequency_hz"], point.dofs[:, j], row.get("azimuthal_order"))
                      for j, row in enumerate(point.rows)]


def _full_mass(space, assemble):
    """The mass matrix over every DOF of ``space`` (no constraint): the modes of all phases
    are stored as full vectors on one mesh, so it compares them."""
    n = space.constraint.n_full
    full = replace(space, constraint=Constraint.keeping(n, np.arange(n)))
    return assemble(full, full.mass_coef)


def _section_cell(model, points) -> tuple:
    """A section cell's translation (along z), DOFs (all orders), triangles and the full
    mass matrix of each solved azimuthal order."""
    from ..axisymmetric.space import assemble_mass as section_mass
    from ..axisymmetric.space import build_order_space, facets_of, skfem_mesh

    mesh = skfem_mesh(model)
    dz = pair_lines(model, mesh, facets_of)[0][2]
    orders = sorted({row["azimuthal_order"] for row in points[0].rows})
    spaces = {m: build_order_space(model, m, points[0].order, mesh, points[0].form)
              for m in orders}
    return (np.array([0.0, 0.0, dz]), sum(s.n_dofs for s in spaces.values()),
            model.section.n_triangles,
            {m: _full_mass(space, section_mass) for m, space in spaces.items()})


def _overlap_partners(masses: dict):
    """Partners of modes solved on one mesh: overlaps are the M-inner products of the full
    DOF vectors (the modes are M-normalised), complex for a travelling wave; modes of
    different azimuthal orders (keys of ``masses``) overlap 0."""
    def partners(previous, current) -> np.ndarray:
        n_p, n_c = len(previous.modes), len(current.modes)
        inner = np.zeros((n_p, n_c), dtype=complex)
        gram = np.eye(n_p, dtype=complex)
        for key, mass in masses.items():
            rows = [i for i, m in enumerate(previous.modes) if m.key == key]
            cols = [j for j, m in enumerate(current.modes) if m.key == key]
            if not rows or not cols:
                continue
            X = np.column_stack([previous.modes[i].dofs for i in rows])
            Y = np.column_stack([current.modes[j].dofs for j in cols])
            block = X.conj().T @ (mass @ X)
            x_norm = np.sqrt(np.abs(np.diag(block)))
            y_norm = np.sqrt(np.abs(np.einsum("ij,ij->j", Y.conj(), mass @ Y)))
            inner[np.ix_(rows, cols)] = (X.conj().T @ (mass @ Y)) / np.outer(x_norm, y_norm)
            gram[np.ix_(rows, rows)] = block / np.outer(x_norm, x_norm)
        overlaps = Overlaps(matrix=np.minimum(np.abs(inner), 1.0), inner=inner,
                            coarse_gram=gram)
        return match_modes(overlaps, np.array([m.frequency_hz for m in previous.modes]),
                           np.array([m.frequency_hz for m in current.modes])).partner
    return partners


def _cluster_of(result, index: int) -> list[int]:
    """The modes of ``result`` degenerate with its mode ``index`` (itself included)."""
    groups = clusters(np.array([m.frequency_hz for m in result.modes]))
    return next(g for g in groups if index in g)


def _phase_velocity(phases: np.ndarray, omega: np.ndarray, length: float) -> np.ndarray:
    """ωL/φ; none at φ = 0 (a standing wave)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.abs(phases) > 1e-12, omega * length / phases, np.nan)


def _slope(phases: np.ndarray, omega: np.ndarray, single: np.ndarray) -> np.ndarray:
    """dω/dφ by central differences over each run of solved phases. A lossless cell is
    reciprocal, so the bands satisfy ω(-φ) = ω(φ) and ω(π + x) = ω(π - x): a run that starts
    at 0 or ends at π on a ``single`` (non-degenerate) mode is mirrored there, which makes
    the slope at that band edge zero instead of a one-sided difference. Where two bands
    meet (an empty guide's folded branches at π) the band goes on in the other branch and
    the one-sided difference is kept."""
    out = np.full(phases.shape, np.nan)
    known = np.isfinite(omega)
    edges = np.flatnonzero(np.diff(np.concatenate([[0], known.astype(int), [0]])))
    for start, stop in zip(edges[::2], edges[1::2]):
        if stop - start < 2:
            continue
        x, y = phases[start:stop], omega[start:stop]
        low = abs(x[0]) < 1e-9 and single[start]
        high = abs(x[-1] - math.pi) < 1e-9 and single[stop - 1]
        if low:
            x, y = np.concatenate([[-x[1]], x]), np.concatenate([[y[1]], y])
        if high:
            x, y = np.concatenate([x, [2 * math.pi - x[-2]]]), np.concatenate([y, [y[-2]]])
        slope = np.gradient(y, x)
        out[start:stop] = slope[int(low):len(slope) - int(high)]
    return out


def _passband(band: dict) -> dict:
    f = [v for v in band["frequency_hz"] if v is not None]
    return {"band": band["band"], "low_hz": min(f) if f else None,
            "high_hz": max(f) if f else None}


def _listed(values: np.ndarray) -> list:
    return [None if not np.isfinite(v) else float(v) for v in values]


CSV_COLUMNS = ("band", "phase_deg", "phase_rad", "frequency_hz", "phase_velocity_m_per_s",
               "group_velocity_slope_m_per_s", "group_velocity_energy_m_per_s")


def dispersion_csv(document: dict) -> str:
    lines = [",".join(CSV_COLUMNS)]
    for band in document["bands"]:
        for i, (deg, rad) in enumerate(zip(document["phases_deg"], document["phases_rad"])):
            row = [band["band"], deg, rad] + [band[key][i] for key in CSV_COLUMNS[3:]]
            lines.append(",".join("" if v is None else repr(v) if isinstance(v, float)
                                  else str(v) for v in row))
    return "\n".join(lines) + "\n"


def summary_lines(document: dict) -> list[str]:
    """What `femcav dispersion` prints of a dispersion document (dispersion.json)."""
    lines = [f"dispersion of {document['title']}: {len(document['phases_rad'])} phases, cell "
             f"{document['cell_length_m'] * 1e3:.6g} mm, {document['dofs']} DOFs"]
    lines += [f"  band {p['band']}: {p['low_hz'] / 1e9:.6g} to {p['high_hz'] / 1e9:.6g} GHz"
              for p in document["passbands"] if p["low_hz"] is not None]
    return lines


def checks_failed(document: dict) -> bool:
    return any(ok is False for b in document["bands"] for ok in b["checks_passed"])
