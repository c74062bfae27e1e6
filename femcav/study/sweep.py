"""Parameter sweeps: re-mesh and solve the case at every point, track the modes across.

The case file's [sweep] table names the first parameter (see parameters.parse_axis) and an
optional second one in [sweep.second]; the points are the grid of the two (at most
MAX_GRID_POINTS). Every point is a case of its own (its raw tables with the values written
in); all of them are validated before the first is solved, then each is solved and saved
at once into ``points/`` of the output folder (femcav.study.point_store). A sweep that is run
again with the same folder reuses a stored point only when its fingerprint (the point's
whole case, an imported mesh's contents, the solve options and femcav's results version:
femcav.study.fingerprint) is the current one, so an interrupted sweep resumes where it
stopped and a changed case is solved again. One run at a time works in a folder
(femcav.study.folder_lock); points can be solved in worker processes (``jobs``,
femcav.study.workers) or on a Dask cluster (``cluster``, femcav.study.cluster: a point that
fails there is listed in ``failed_points`` and left out of the tracks, the others go on).

Tracking runs along the first parameter (for each value of the second) over the modes of the
first point: femcav.study.tracking. Each point solves TRACKING_SPARE more modes than the case
asks for, so that a tracked mode that moves up the list is still found.

Outputs: sweep.json (the parameters, every point's modes, and the tracks), sweep.csv (one row
per point, one frequency and Q column per track), mode_chart.png (frequency against the first
parameter, one curve per track; Q on a second panel when the case has losses).
"""

from __future__ import annotations

import time
from concurrent.futures import as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ..axisymmetric.model import make_axisymmetric_model
from ..axisymmetric.space import build_order_space, skfem_mesh
from ..case import case_from_data, case_materials, case_model, in_case, read_case_data
from ..fem.space import build_space
from ..geometry.meridional import MeridionalMesh
from ..errors import InputError, ResourceError
from ..io import strict_json
from ..io.atomic import check_output_folder, remove_stale_temporaries, staged_output
from ..io.results import mode_rows
from ..progress import SILENT, Progress
from ..case_studies import SweepSpec, parse_sweep
from .fingerprint import point_fingerprint
from .folder_lock import folder_lock
from ..case_parameters import Axis, check_parameter_exists, format_value, with_value
from .point_store import PointResult, load_point, read_point, save_point
from .tracking import track
from .workers import stop_workers, submit_without_ctrl_c, usable_jobs, worker_pool

TRACKING_SPARE = 3
# What a study adds to the case's own [solve] options; part of every point's fingerprint.
POINT_OPTIONS = {"extra_modes": TRACKING_SPARE}
FORMAT_NAME = "femcav-sweep"


def sweep_trials(spec: SweepSpec) -> list[tuple[tuple[Axis, float, str], ...]]:
    """Every point of the grid as (axis, value, the key the value comes from) per axis."""
    per_axis = [list(zip([a] * len(a.values), a.values, a.origins)) for a in spec.axes]
    if len(per_axis) == 1:
        return [(t,) for t in per_axis[0]]
    return [(a, b) for b in per_axis[1] for a in per_axis[0]]


def study_case(data: dict, path: Path, *,
               sweep_keys=("sweep", "tune", "extract", "tolerances")):
    """The case of a study point: the tables without the studies' own (nor [tolerances],
    whose extra solves a study point does not need)."""
    return case_from_data({k: v for k, v in data.items() if k not in sweep_keys}, path)


def load_study(path: Path, parse, trials=lambda spec: ()):
    """(raw tables, the study's own table parsed by ``parse``, the base case), each
    mistake located in the file. Every trial point (``trials(spec)``: tuples of (axis,
    value, the key the value comes from)) is validated as a case of its own now, before
    anything is solved or written; a refused point is reported at the key of its value."""
    data = read_case_data(path)
    try:
        spec = parse(data)
        base = study_case(data, path)
        checked_for_tracking(base)
        for trial in trials(spec):
            for axis, _, _ in trial:
                check_parameter_exists(axis, base)
            point = data
            for axis, value, _ in trial:
                point = with_value(point, axis.path, value)
            try:
                checked_for_tracking(study_case(point, path))
            except InputError as exc:
                at = ", ".join(f"{a.path} = {format_value(a, v)}" for a, v, _ in trial)
                culprit = next((origin for axis, _, origin in trial if axis.path == exc.field),
                               trial[0][2])
                raise InputError(f"the point {at} is refused: {exc.field}: {exc.message}",
                                 field=culprit) from None
    except InputError as exc:
        raise in_case(exc, str(path)) from None
    return data, spec, base


def checked_for_tracking(case) -> None:
    """What tracking by field overlap needs of a case, refused with the reason."""
    if case.symmetry:
        raise InputError("studies track modes over the whole part; drop [symmetry] (each "
                         "symmetry class would be tracked apart: not yet available)",
                         field="symmetry")
    if case.solve.error_estimate:
        raise InputError("error bars at every study point are not yet available; drop "
                         "error_estimate / accuracy", field="solve.error_estimate")


def point_data(data: dict, axes, values) -> dict:
    """The raw case tables with the point's values written in."""
    for axis, value in zip(axes, values):
        data = with_value(data, axis.path, value)
    return data


def plan_points(data: dict, path: Path, spec: SweepSpec) -> list[str]:
    """Every point's fingerprint (the points were validated by load_study)."""
    digests: dict = {}
    return [point_fingerprint(point_data(data, spec.axes, values), path, POINT_OPTIONS, digests)
            for values in spec.points()]


def solve_point(data: dict, path: Path, axes, values, fingerprint: str,
                spare: int = TRACKING_SPARE, progress: Progress = SILENT) -> PointResult:
    from ..runner import solve_case

    case = study_case(point_data(data, axes, values), path)
    checked_for_tracking(case)
    t0 = time.perf_counter()
    settings = replace(case.solve, modes=case.solve.modes + spare)
    result = solve_case(case, settings, progress)
    rows = mode_rows(result)
    for coupling in result.coupling:        # k of a named pair, kept with both of its modes
        for index in coupling.modes:
            rows[index - 1]["coupling_k"] = coupling.k
    return PointResult(values=tuple(values), rows=rows, mesh=result.mesh,
                       dofs=full_vectors(result),
                       form=result.form, order=result.order,
                       seconds=time.perf_counter() - t0, fingerprint=fingerprint,
                       peak_estimate_bytes=result.eigen_stats.peak_estimate_bytes)


def full_vectors(result) -> np.ndarray:
    """The modes' vectors over every DOF of the mesh, one column each (an axisymmetric
    result keeps its modes over the kept DOFs of each order's space)."""
    columns = [None] * len(result.modes)
    for _, space, positions in result.mode_spaces():
        for i in positions:
            columns[i] = space.full_vectors(result.modes[i].dofs)
    return np.column_stack(columns)


def solve_point_task(args) -> PointResult:
    """A cluster task: the point's case tables and fingerprint in, the solved point out. The
    fingerprint is computed again here, so that a worker whose femcav (or mesh file)
    differs from the client's refuses rather than return a point that does not match."""
    data, path, axes, values, fingerprint = args
    here = point_fingerprint(point_data(data, axes, values), path, POINT_OPTIONS)
    if here != fingerprint:
        raise RuntimeError("this worker computes another fingerprint for the point (another "
                           "femcav results version, or another mesh file at the case's path)")
    return solve_point(data, path, axes, values, fingerprint)


def _solve_and_save(args) -> int:
    data, path, axes, values, fingerprint, folder, index = args
    save_point(folder, index, solve_point(data, path, axes, values, fingerprint))
    return index


class _Tracked:
    """A point rebuilt for tracking: its spaces and modes (frequency and vector)."""

    def __init__(self, data, path, axes, point: PointResult):
        for axis, value in zip(axes, point.values):
            data = with_value(data, axis.path, value)
        case = study_case(data, path)
        self.form = point.form
        if isinstance(point.mesh, MeridionalMesh):
            spaces = _section_spaces(case, point)
            keys = [row["azimuthal_order"] for row in point.rows]
        else:
            spaces = {None: build_space(case_model(case, point.mesh), point.form, point.order)}
            keys = [None] * len(point.rows)
        self._spaces = [(key, space, [j for j, k in enumerate(keys) if k == key])
                        for key, space in spaces.items()]
        self.modes = [_Mode(row["frequency_hz"], spaces[key].stored_vectors(point.dofs[:, j]))
                      for j, (row, key) in enumerate(zip(point.rows, keys))]

    def mode_spaces(self) -> list[tuple]:
        return self._spaces


def _section_spaces(case, point: PointResult) -> dict:
    """The order spaces of a body of revolution's stored section, for its solved orders."""
    model = make_axisymmetric_model(point.mesh, case_materials(case, point.mesh.region_names),
                                    case.walls, source=str(case.path), periodic=case.periodic)
    mesh = skfem_mesh(model)
    return {m: build_order_space(model, m, point.order, mesh, point.form)
            for m in sorted({row["azimuthal_order"] for row in point.rows})}


@dataclass(frozen=True)
class _Mode:
    frequency_hz: float
    dofs: np.ndarray


def run_sweep(path: str | Path, *, out: str | Path | None = None, jobs: int = 1,
              cluster: str | None = None, progress: Progress = SILENT) -> tuple[dict, Path]:
    """Solve every point of the case's [sweep] (reusing the points already in the output
    folder that were solved for the same case), track the modes, and write sweep.json,
    sweep.csv and mode_chart.png. ``cluster``: a Dask scheduler's address or ``local:N``
    (femcav.study.cluster) instead of ``jobs``."""
    path = Path(path)
    data, spec, base = load_study(path, parse_sweep, sweep_trials)
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"must be a whole number >= 1, got {jobs!r}", field="--jobs")
    if cluster is not None:
        from .cluster import parse_cluster_address
        cluster = parse_cluster_address(cluster)
        if jobs != 1:
            raise InputError("give --jobs or --cluster, not both", field="--cluster")
    folder = check_output_folder(Path(out) if out is not None
                                 else path.parent / f"{path.stem}-sweep")
    points = spec.points()
    fingerprints = plan_points(data, path, spec)
    with folder_lock(folder):
        remove_stale_temporaries(folder / "points")   # left by a run that was stopped
        done = _reusable_points(folder, fingerprints, progress)
        todo = [i for i in range(len(points)) if i not in done]
        progress.step(f"sweep of {' x '.join(a.path for a in spec.axes)}: {len(points)} "
                      f"points, {len(done)} already solved in {folder}, {len(todo)} to solve")
        try:
            failed = (_solve_on_cluster(data, path, spec, fingerprints, todo, folder, cluster,
                                        progress) if cluster is not None else
                      _solve_points(data, path, spec, fingerprints, todo, folder, jobs,
                                    progress) or {})
        except InputError as exc:
            raise in_case(exc, str(path)) from None
        results = [done[i] if i in done else None if i in failed else read_point(folder, i)
                   for i in range(len(points))]
        document = _tracked_document(data, path, spec, base, results, progress)
        document["failed_points"] = [{"index": i + 1, "values": list(points[i]),
                                      "error": failed[i]} for i in sorted(failed)]
        from .chart import write_mode_chart
        write_study_files(folder, "sweep", document, sweep_csv(document),
                          ("mode_chart.png", write_mode_chart))
    progress.step(f"sweep written to {folder}")
    return document, folder


def write_study_files(folder: Path, kind: str, document: dict, csv_text: str, chart) -> None:
    """KIND.json, KIND.csv and the chart (name, writer(document, path)) in one staged
    output: all of them, or none and the previous ones kept."""
    name, writer = chart
    with staged_output(folder, kind=kind) as files:
        files.write_text(f"{kind}.json", strict_json.dumps(document, indent=1))
        files.write_text(f"{kind}.csv", csv_text)
        files.write_with(name, lambda p: writer(document, p), suffix=".png")


def _reusable_points(folder: Path, fingerprints: list[str], progress: Progress) -> dict:
    """index -> PointResult for the stored points solved for the same fingerprint; says on
    stderr how many are solved again because the case changed or their files are damaged."""
    done, changed, unreadable = {}, 0, []
    for index, fingerprint in enumerate(fingerprints):
        point, status = load_point(folder, index, fingerprint)
        if point is not None:
            done[index] = point
        elif status == "changed":
            changed += 1
        elif status.startswith("unreadable"):
            unreadable.append(f"point {index + 1} ({status})")
    if changed:
        progress.warn(f"{changed} of {len(fingerprints)} points in {folder} were solved for "
                      "another case, other solve options or another femcav results version: "
                      "solving them again")
    if unreadable:
        progress.warn(f"{len(unreadable)} point files in {folder / 'points'} cannot be read, "
                      f"solving those points again: {'; '.join(unreadable[:3])}"
                      + (" ..." if len(unreadable) > 3 else ""))
    return done


def _solve_points(data, path, spec: SweepSpec, fingerprints, todo, folder, jobs,
                  progress) -> None:
    points = spec.points()
    t0 = time.perf_counter()

    def solve_here(k, index):
        label = ", ".join(f"{a.path} = {format_value(a, v)}"
                          for a, v in zip(spec.axes, points[index]))
        point = solve_point(data, path, spec.axes, points[index], fingerprints[index])
        save_point(folder, index, point)
        progress.step(f"point {index + 1} of {len(points)} ({label}): {len(point.rows)} modes "
                      f"in {point.seconds:.1f} s ({k} of {len(todo)} to solve)")
        return point

    if jobs == 1 or len(todo) < 2:
        for k, index in enumerate(todo, start=1):
            solve_here(k, index)
        return
    # The first point here alone: the solver's memory estimate for it sizes the workers.
    first = solve_here(1, todo[0])
    rest = todo[1:]
    usable, why = usable_jobs(jobs, len(rest), first.peak_estimate_bytes)
    if why is not None:
        progress.warn(f"--jobs {jobs} lowered to {usable}: {usable} {why}")
    if usable == 1:
        for k, index in enumerate(rest, start=2):
            solve_here(k, index)
        return
    progress.step(f"solving the other {len(rest)} points in {usable} processes")
    tasks = [(data, path, spec.axes, points[i], fingerprints[i], folder, i) for i in rest]
    try:
        with worker_pool(usable) as pool:
            futures = submit_without_ctrl_c(pool, _solve_and_save, tasks)
            try:
                for k, finished in enumerate(as_completed(futures), start=2):
                    index = finished.result()
                    progress.step(f"point {index + 1} of {len(points)} solved "
                                  f"({k} of {len(todo)}, {time.perf_counter() - t0:.1f} s)")
            except KeyboardInterrupt:
                stop_workers(pool)
                raise
            except BrokenProcessPool:
                raise
            except Exception:
                for future in futures:      # a point failed: start no more
                    future.cancel()
                raise
    except BrokenProcessPool:
        raise ResourceError("a worker process ended abruptly (killed, perhaps by the "
                            "system for lack of memory); the points solved so far are kept: "
                            "run the sweep again to go on, perhaps with fewer --jobs") from None


def _solve_on_cluster(data, path, spec: SweepSpec, fingerprints, todo, folder, cluster,
                      progress) -> dict[int, str]:
    """Every point to solve as a task on the cluster, saved here as it arrives; returns
    index -> error of the points that failed."""
    from .cluster import cluster_pool

    points = spec.points()
    tasks = {i: (data, path, spec.axes, points[i], fingerprints[i]) for i in todo}
    if not tasks:
        return {}
    with cluster_pool(cluster, progress) as pool:
        failed = pool.run(solve_point_task, tasks, lambda i, p: save_point(folder, i, p),
                          progress)
    for i in sorted(failed):
        progress.warn(f"point {i + 1} failed: {failed[i]}")
    return failed


# per-mode quantities a track follows when the modes have them: ports' loaded Q, an open
# problem's radiation Q, the coupling coefficient of a named pair ([coupling] modes)
TRACKED_IF_PRESENT = ("q_loaded", "q_radiation", "coupling_k")


def _tracked_document(data, path, spec: SweepSpec, base, results, progress) -> dict:
    first = spec.axes[0]
    n_first = len(first.values)
    rows_of_second = [results[k * n_first:(k + 1) * n_first]
                      for k in range(len(results) // n_first)]
    count = base.solve.modes
    tracks_out = []
    for r, row in enumerate(rows_of_second):
        t0 = time.perf_counter()
        solved = [k for k, p in enumerate(row) if p is not None]    # failed points: None
        rebuilt = [_Tracked(data, path, spec.axes, row[k]) for k in solved]
        tracks = [_spread(t, solved, len(row)) for t in track(rebuilt, count)] if solved else []
        progress.step(f"tracked {len(tracks)} modes over {len(row)} points in "
                      f"{time.perf_counter() - t0:.1f} s")
        present = {key for point in row if point is not None for m in point.rows
                   for key in TRACKED_IF_PRESENT if m.get(key) is not None}
        ports = sorted({name for point in row if point is not None for m in point.rows
                        for name in (m.get("q_external") or {})})
        for k, t in enumerate(tracks):
            entry = {"track": k + 1, "frequency_hz": [], "q_total": [], "q_wall": [],
                     **{key: [] for key in TRACKED_IF_PRESENT if key in present}}
            if ports:
                entry["q_external"] = {name: [] for name in ports}
            if len(spec.axes) == 2:
                entry["second_value"] = spec.axes[1].values[r]
            for point, j in zip(row, t):
                mode = None if j is None else point.rows[j]
                for key in entry:
                    if isinstance(entry[key], list):
                        entry[key].append(None if mode is None else mode.get(key))
                for name in ports:
                    entry["q_external"][name].append(
                        None if mode is None else (mode.get("q_external") or {}).get(name))
            tracks_out.append(entry)
    return {"format": FORMAT_NAME, "format_version": 1, "case": str(path),
            "parameters": [{"parameter": a.path, "unit": a.unit, "values": list(a.values)}
                           for a in spec.axes],
            "points": [{"values": list(v), "seconds": None, "modes": [], "failed": True}
                       if p is None else
                       {"values": list(p.values), "seconds": p.seconds,
                        "modes": p.rows[:count + TRACKING_SPARE]}
                       for v, p in zip(spec.points(), results)],
            "tracks": tracks_out}


def _spread(track_over_solved: list, solved: list[int], size: int) -> list:
    """A track over the solved points of a row, with None at the points that failed."""
    out = [None] * size
    for k, j in zip(solved, track_over_solved):
        out[k] = j
    return out


def sweep_csv(document: dict) -> str:
    axes = document["parameters"]
    n_first = len(axes[0]["values"])
    head = [f"{a['parameter']}" + (f" ({a['unit']})" if a["unit"] else "") for a in axes]
    tracks = document["tracks"]
    per_row = len(tracks) // max(1, len(document["points"]) // n_first)
    lines = [",".join(head + [f"track{t + 1}_{key}" for t in range(per_row)
                              for key in ("frequency_hz", "q_total")])]
    for i, point in enumerate(document["points"]):
        row, k = divmod(i, n_first)
        cells = [repr(v) for v in point["values"]]
        for t in tracks[row * per_row:(row + 1) * per_row]:
            for key in ("frequency_hz", "q_total"):
                v = t[key][k]
                cells.append("" if v is None else (repr(v) if key == "frequency_hz"
                                                   else f"{v:.6g}"))
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"


def summary_lines(document: dict) -> list[str]:
    """What `femcav sweep` prints of a sweep document (sweep.json): the axes, the tracks'
    frequency spans and the failed points."""
    axes = " x ".join(f"{a['parameter']} ({len(a['values'])} values)"
                      for a in document["parameters"])
    lines = [f"sweep of {axes}: {len(document['points'])} points, "
             f"{len(document['tracks'])} tracks"]
    for t in document["tracks"][:12]:
        f = [v for v in t["frequency_hz"] if v is not None]
        span = f"{min(f) / 1e9:.6g} to {max(f) / 1e9:.6g} GHz" if f else "-"
        ended = "" if len(f) == len(t["frequency_hz"]) else " (lost before the end)"
        lines.append(f"  track {t['track']}: {span}{ended}")
    lines += [f"  point {failed['index']} FAILED: {failed['error']}"
              for failed in document.get("failed_points", [])]
    return lines
