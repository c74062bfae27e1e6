"""Parameter sweeps: re-mesh and solve the case at every point, track the modes across.

The case file's [sweep] table names the first parameter (see parameters.parse_axis) and an
optional second one in [sweep.second]; the points are the grid of the two. Every point is
solved as a case of its own (its raw tables with the value written in, validated again) and
saved at once into ``points/`` of the output folder: a summary (JSON) and what tracking needs
(the mesh and the mode vectors, NPZ). A sweep that is run again with the same folder reuses
the points already there whose values match, so an interrupted sweep resumes where it
stopped; points can be solved in parallel processes (``jobs``).

Tracking runs along the first parameter (for each value of the second) over the modes of the
first point: femcav.study.tracking. Each point solves TRACKING_SPARE more modes than the case
asks for, so that a tracked mode that moves up the list is still found.

Outputs: sweep.json (the parameters, every point's modes, and the tracks), sweep.csv (one row
per point, one frequency and Q column per track), mode_chart.png (frequency against the first
parameter, one curve per track; Q on a second panel when the case has losses).
"""

from __future__ import annotations

import json
import multiprocessing
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ..case import case_from_data, case_model, read_case_data
from ..errors import InputError
from ..geometry.mesh import TaggedMesh
from ..io.atomic import (
    check_output_folder,
    remove_stale_temporaries,
    staged_output,
    write_file_atomically,
)
from ..io.results import mode_rows
from ..progress import SILENT, Progress
from .parameters import Axis, format_value, parse_axis, with_value
from .tracking import track

TRACKING_SPARE = 3
FORMAT_NAME = "femcav-sweep"


@dataclass(frozen=True)
class SweepSpec:
    axes: tuple[Axis, ...]          # one or two

    def points(self) -> list[tuple[float, ...]]:
        if len(self.axes) == 1:
            return [(v,) for v in self.axes[0].values]
        return [(a, b) for b in self.axes[1].values for a in self.axes[0].values]


def parse_sweep(data: dict) -> SweepSpec:
    spec = data.get("sweep")
    if not isinstance(spec, dict):
        raise InputError("the case has no [sweep] table (parameter and values, or from, to "
                         "and points)", field="sweep")
    first = {k: v for k, v in spec.items() if k != "second"}
    axes = [parse_axis(first, "sweep")]
    if "second" in spec:
        axes.append(parse_axis(spec["second"], "sweep.second"))
        if axes[1].path == axes[0].path:
            raise InputError("the second parameter is the first one again", field="sweep.second")
    return SweepSpec(axes=tuple(axes))


@dataclass(frozen=True)
class PointResult:
    """What a sweep keeps of one solved point."""

    values: tuple[float, ...]
    rows: list[dict]                # the mode rows of modes.json
    mesh: TaggedMesh
    dofs: np.ndarray                # (n_edges, n_modes)
    form: str
    order: int
    seconds: float


def study_case(data: dict, path: Path, *,
               sweep_keys=("sweep", "tune", "extract", "tolerances")):
    """The case of a study point: the tables without the studies' own (nor [tolerances],
    whose extra solves a study point does not need)."""
    return case_from_data({k: v for k, v in data.items() if k not in sweep_keys}, path)


def load_study(path: Path, parse):
    """(raw tables, the study's own table parsed by ``parse``, the base case), each
    mistake located in the file."""
    data = read_case_data(path)
    try:
        spec = parse(data)
        base = study_case(data, path)
        checked_for_tracking(base)
    except InputError as exc:
        raise exc.located(source=str(path)) from None
    return data, spec, base


def checked_for_tracking(case) -> None:
    """What tracking by field overlap needs of a case, refused with the reason."""
    if case.symmetry:
        raise InputError("studies track modes over the whole part; drop [symmetry] (each "
                         "symmetry class would be tracked apart: not yet available)",
                         field="symmetry")
    if case.solve.azimuthal_orders is not None:
        raise InputError("studies track modes of 3D solves; axisymmetric tracking is not yet "
                         "available (drop azimuthal_orders)", field="solve.azimuthal_orders")
    if case.solve.error_estimate:
        raise InputError("error bars at every study point are not yet available; drop "
                         "error_estimate / accuracy", field="solve.error_estimate")


def solve_point(data: dict, path: Path, axes, values, spare: int = TRACKING_SPARE,
                progress: Progress = SILENT) -> PointResult:
    from ..runner import solve_case

    for axis, value in zip(axes, values):
        data = with_value(data, axis.path, value)
    case = study_case(data, path)
    checked_for_tracking(case)
    t0 = time.perf_counter()
    settings = replace(case.solve, modes=case.solve.modes + spare)
    result = solve_case(case, settings, progress)
    return PointResult(values=tuple(values), rows=mode_rows(result), mesh=result.space.model.mesh,
                       dofs=np.column_stack([m.dofs for m in result.modes]),
                       form=result.form, order=result.order,
                       seconds=time.perf_counter() - t0)


def _point_files(folder: Path, index: int) -> tuple[Path, Path]:
    return folder / "points" / f"{index:03d}.json", folder / "points" / f"{index:03d}.npz"


def save_point(folder: Path, index: int, point: PointResult) -> None:
    summary, arrays = _point_files(folder, index)
    summary.parent.mkdir(parents=True, exist_ok=True)
    m = point.mesh
    extra = {} if m.tets10 is None else {"tets10": m.tets10}
    write_file_atomically(arrays, lambda tmp: np.savez_compressed(
        tmp, points=m.points, tets=m.tets, tet_region=m.tet_region, faces=m.faces,
        face_tag=m.face_tag, dofs=point.dofs, **extra), suffix=".npz")
    document = {"values": list(point.values), "form": point.form, "order": point.order,
                "seconds": point.seconds, "region_names": m.region_names,
                "wall_names": m.wall_names, "modes": point.rows}
    # the summary last: it marks the point as done
    write_file_atomically(summary, lambda tmp: tmp.write_text(json.dumps(document, indent=1)
                                                              + "\n"))


def load_point(folder: Path, index: int, values) -> PointResult | None:
    summary, arrays = _point_files(folder, index)
    if not (summary.is_file() and arrays.is_file()):
        return None
    document = json.loads(summary.read_text())
    if not np.allclose(document["values"], values, rtol=1e-12, atol=0):
        return None                # a different sweep used this folder: solve again
    with np.load(arrays) as z:
        mesh = TaggedMesh(points=z["points"], tets=z["tets"], tet_region=z["tet_region"],
                          region_names=document["region_names"], faces=z["faces"],
                          face_tag=z["face_tag"], wall_names=document["wall_names"],
                          tets10=z.get("tets10"))
        dofs = z["dofs"]
    return PointResult(values=tuple(values), rows=document["modes"], mesh=mesh, dofs=dofs,
                       form=document["form"], order=document["order"],
                       seconds=document["seconds"])


def _submit_without_ctrl_c(pool: ProcessPoolExecutor, tasks) -> list:
    """Submit every point, the workers started with Ctrl-C ignored: it is the parent's to
    handle (it stops the workers), and a worker that took it too would print its own
    traceback. Submitting starts the workers; they inherit the ignored signal through exec,
    so it holds from their first line (imports included). (Not pool.map: on Ctrl-C it
    cancels the futures, and Python 3.11's executor then raises in its own thread when the
    stopped workers break the pool.)"""
    import signal

    previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        return [pool.submit(_solve_and_save, task) for task in tasks]
    finally:
        signal.signal(signal.SIGINT, previous)


def _stop_workers(pool: ProcessPoolExecutor) -> None:
    """End the workers now (the executor has no public way to end a running task): the
    executor then sees a broken pool and fails the points not done, so leaving the ``with``
    block does not wait for them. Their temporaries are removed by the next run."""
    for process in list((getattr(pool, "_processes", None) or {}).values()):
        process.terminate()


def _solve_and_save(args) -> int:
    data, path, axes, values, folder, index = args
    save_point(folder, index, solve_point(data, path, axes, values))
    return index


class _Tracked:
    """A point rebuilt for tracking: its space and modes (frequency and vector)."""

    def __init__(self, data, path, axes, point: PointResult):
        from ..fem.space import build_space

        for axis, value in zip(axes, point.values):
            data = with_value(data, axis.path, value)
        model = case_model(study_case(data, path), point.mesh)
        self.space = build_space(model, point.form, point.order)
        self.form = point.form
        self.modes = [_Mode(row["frequency_hz"], point.dofs[:, j])
                      for j, row in enumerate(point.rows)]


@dataclass(frozen=True)
class _Mode:
    frequency_hz: float
    dofs: np.ndarray


def run_sweep(path: str | Path, *, out: str | Path | None = None, jobs: int = 1,
              progress: Progress = SILENT) -> tuple[dict, Path]:
    """Solve every point of the case's [sweep] (reusing points already in the output
    folder), track the modes, and write sweep.json, sweep.csv and mode_chart.png."""
    path = Path(path)
    data, spec, base = load_study(path, parse_sweep)
    folder = check_output_folder(Path(out) if out is not None
                                 else path.parent / f"{path.stem}-sweep")
    remove_stale_temporaries(folder / "points")
    points = spec.points()
    if not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"must be a whole number >= 1, got {jobs!r}", field="--jobs")
    done = {i: p for i, values in enumerate(points)
            if (p := load_point(folder, i, values)) is not None}
    todo = [i for i in range(len(points)) if i not in done]
    progress.step(f"sweep of {' x '.join(a.path for a in spec.axes)}: {len(points)} points, "
                  f"{len(done)} already solved in {folder}, {len(todo)} to solve"
                  + (f" in {jobs} processes" if jobs > 1 and todo else ""))
    t0 = time.perf_counter()
    try:
        if jobs > 1 and len(todo) > 1:
            tasks = [(data, path, spec.axes, points[i], folder, i) for i in todo]
            # "spawn", not fork: a forked child inherits the locks of the parent's BLAS,
            # OpenMP and gmsh threads and can hang on them (seen in a long test session)
            with ProcessPoolExecutor(max_workers=jobs,
                                     mp_context=multiprocessing.get_context("spawn")) as pool:
                futures = _submit_without_ctrl_c(pool, tasks)
                try:
                    for k, done in enumerate(as_completed(futures), start=1):
                        index = done.result()
                        progress.step(f"point {index + 1} of {len(points)} solved "
                                      f"({k} of {len(todo)}, {time.perf_counter() - t0:.1f} s)")
                except KeyboardInterrupt:
                    _stop_workers(pool)
                    raise
                except BrokenProcessPool:
                    raise MemoryError("a sweep worker process ended abruptly, most often "
                                      "killed for lack of memory; try fewer --jobs") from None
                except Exception:
                    for future in futures:      # a point failed: start no more
                        future.cancel()
                    raise
        else:
            for k, index in enumerate(todo, start=1):
                label = ", ".join(f"{a.path} = {format_value(a, v)}"
                                  for a, v in zip(spec.axes, points[index]))
                point = solve_point(data, path, spec.axes, points[index])
                save_point(folder, index, point)
                progress.step(f"point {index + 1} of {len(points)} ({label}): "
                              f"{len(point.rows)} modes in {point.seconds:.1f} s "
                              f"({k} of {len(todo)} to solve)")
    except InputError as exc:
        raise exc.located(source=str(path)) from None
    results = [load_point(folder, i, values) for i, values in enumerate(points)]
    document = _tracked_document(data, path, spec, base, results, progress)
    with staged_output(folder, kind="sweep") as files:
        files.write_text("sweep.json", json.dumps(document, indent=1) + "\n")
        files.write_text("sweep.csv", sweep_csv(document))
        from .chart import write_mode_chart
        files.write_with("mode_chart.png", lambda p: write_mode_chart(document, p),
                         suffix=".png")
    progress.step(f"sweep written to {folder}")
    return document, folder


def _tracked_document(data, path, spec: SweepSpec, base, results, progress) -> dict:
    first = spec.axes[0]
    n_first = len(first.values)
    rows_of_second = [results[k * n_first:(k + 1) * n_first]
                      for k in range(len(results) // n_first)]
    count = base.solve.modes
    tracks_out = []
    for r, row in enumerate(rows_of_second):
        t0 = time.perf_counter()
        rebuilt = [_Tracked(data, path, spec.axes, p) for p in row]
        tracks = track(rebuilt, count)
        progress.step(f"tracked {len(tracks)} modes over {len(row)} points in "
                      f"{time.perf_counter() - t0:.1f} s")
        for k, t in enumerate(tracks):
            entry = {"track": k + 1, "frequency_hz": [], "q_total": [], "q_wall": []}
            if len(spec.axes) == 2:
                entry["second_value"] = spec.axes[1].values[r]
            for point, j in zip(row, t):
                mode = None if j is None else point.rows[j]
                for key, name in (("frequency_hz", "frequency_hz"), ("q_total", "q_total"),
                                  ("q_wall", "q_wall")):
                    entry[key].append(None if mode is None else mode.get(name))
            tracks_out.append(entry)
    return {"format": FORMAT_NAME, "format_version": 1, "case": str(path),
            "parameters": [{"parameter": a.path, "unit": a.unit, "values": list(a.values)}
                           for a in spec.axes],
            "points": [{"values": list(p.values), "seconds": p.seconds,
                        "modes": p.rows[:count + TRACKING_SPARE]} for p in results],
            "tracks": tracks_out}


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
