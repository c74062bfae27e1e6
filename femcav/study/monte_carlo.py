"""A Monte-Carlo tolerance study: the part's lengths drawn from their tolerances, every
sample solved, and each mode's spread.

``[tolerances] samples = N`` (with ``seed``, default 0) draws every toleranced builder
length N times, independently: from a normal distribution whose standard deviation is the
tolerance (the default), or, for an entry ``{tolerance = "...", distribution = "uniform"}``,
uniformly within ± the tolerance. Each sample is the case with its lengths written in,
validated before the first solve and solved as the case is (3D or on the meridional
section), here one after the other or as tasks on a Dask cluster (femcav.study.cluster,
the sweep's machinery: the task is the sample's case tables and fingerprint).

Each mode of the nominal solve is found in a sample by its place in the list: by
azimuthal order and rank within that order for a body of revolution, by rank for a 3D
solve (so a 3D spread is meaningful only while the tolerances move no two modes across
each other; the linear estimate beside it says how far they move). The spread is the mean,
the standard deviation (n - 1 in the denominator) and the 1st and 99th percentiles over the
samples that solved. Beside it, where the derivatives exist (3D, femcav.morph), the
linear estimate of the standard deviation: sqrt(Σ (df/dp σ_p)²) with σ_p the tolerance
(normal) or tolerance/√3 (uniform). The sample solves are not stored: a stopped study
starts again.
"""

from __future__ import annotations

import math
import time
from dataclasses import replace

import numpy as np

from ..errors import InputError
from ..progress import SILENT, Progress
from ..case import MonteCarloSpec
from ..solver import ToleranceSpread

def draw(spec: MonteCarloSpec, nominal: dict[str, float]) -> list[dict[str, float]]:
    """``spec.samples`` draws of every toleranced length about its ``nominal`` value."""
    rng = np.random.default_rng(spec.seed)
    columns = {}
    for name in sorted(spec.tolerances):        # the order of the table does not matter
        tol = spec.tolerances[name]
        columns[name] = (rng.uniform(-tol, tol, spec.samples)
                         if spec.distributions[name] == "uniform"
                         else rng.normal(0.0, tol, spec.samples)) + nominal[name]
    return [{name: float(columns[name][k]) for name in columns} for k in range(spec.samples)]


def nominal_lengths(case, names) -> dict[str, float]:
    out = {}
    for name in names:
        key, _, index = name.partition("[")
        value = case.geometry.parameters[key]
        out[name] = float(value[int(index[:-1])] if index else value)
    return out


def mode_keys(result) -> list[tuple]:
    """Each mode's identity across samples: (m, rank within m) on a section, (rank,) in 3D."""
    seen: dict = {}
    keys = []
    for mode in result.modes:
        m = getattr(mode, "m", None)
        seen[m] = seen.get(m, -1) + 1
        keys.append((m, seen[m]) if m is not None else (seen[m],))
    return keys


def solve_sample(task) -> list[tuple[tuple, float]]:
    """A sample solved (here or as a cluster task): [(mode key, frequency in Hz)]. The
    fingerprint is checked as a sweep point's is (femcav.study.sweep.solve_point_task)."""
    from ..runner import solve_case
    from .fingerprint import point_fingerprint
    from .sweep import study_case

    data, path, settings, fingerprint = task
    if point_fingerprint(data, path, _options(settings)) != fingerprint:
        raise RuntimeError("this worker computes another fingerprint for the sample (another "
                           "femcav results version, or another mesh file at the case's path)")
    # the sample's frequencies only: no temperature drift (its morphed solves)
    result = solve_case(replace(study_case(data, path), temperature=None), settings, SILENT)
    return [(key, mode.frequency_hz) for key, mode in zip(mode_keys(result), result.modes)]


def _options(settings) -> dict:
    """The solve settings as fingerprint options (the command line may override the case)."""
    return {"monte_carlo_settings": repr(settings)}


def with_monte_carlo(case, result, settings, *, pool=None, progress: Progress = SILENT):
    """``result`` with each mode's ``tolerance["monte_carlo"]`` spread over the samples,
    solved here or, given a femcav.study.cluster.ClusterPool, on its cluster."""
    from ..case import read_case_data
    from .fingerprint import point_fingerprint
    from ..case_parameters import with_value
    from .sweep import study_case

    spec: MonteCarloSpec = case.tolerance_samples
    data = read_case_data(case.path)
    draws = draw(spec, nominal_lengths(case, spec.tolerances))
    tasks, digests = {}, {}
    for k, lengths in enumerate(draws):
        sample = data
        for name, value in lengths.items():
            sample = with_value(sample, f"geometry.{name}", value)
        try:
            study_case(sample, case.path)
        except InputError as exc:
            raise InputError(f"sample {k + 1} of the draw is refused ({exc.field}: "
                             f"{exc.message}); use smaller tolerances",
                             field="tolerances", source=str(case.path)) from None
        tasks[k] = (sample, case.path, settings,
                    point_fingerprint(sample, case.path, _options(settings), digests))
    progress.step(f"tolerances: {spec.samples} Monte-Carlo samples of "
                  f"{', '.join(sorted(spec.tolerances))} (seed {spec.seed})")
    solved, failed = _run(tasks, pool, progress)
    spreads = _spreads(result, solved)
    modes = []
    for mode, key in zip(result.modes, mode_keys(result)):
        entry = dict(spreads.get(key, {"samples": 0}), samples_failed=len(failed),
                     distributions=dict(spec.distributions), seed=spec.seed,
                     linear_std_hz=_linear_std(mode, spec))
        modes.append(replace(mode, tolerance=replace(mode.tolerance or ToleranceSpread(),
                                                     monte_carlo=entry)))
    return replace(result, modes=modes)


def _run(tasks: dict, pool, progress: Progress):
    solved: dict[int, list] = {}
    if pool is None:
        t0 = time.perf_counter()
        for k, task in tasks.items():
            solved[k] = solve_sample(task)
            if (k + 1) % max(1, len(tasks) // 10) == 0:
                progress.step(f"tolerances: {k + 1} of {len(tasks)} samples solved "
                              f"({time.perf_counter() - t0:.1f} s)")
        return solved, {}
    failed = pool.run(solve_sample, tasks, solved.__setitem__, progress, noun="sample")
    for k in sorted(failed)[:5]:
        progress.warn(f"Monte-Carlo sample {k + 1} failed: {failed[k]}")
    return solved, failed


def _spreads(result, solved: dict[int, list]) -> dict[tuple, dict]:
    by_key: dict[tuple, list[float]] = {}
    for rows in solved.values():
        for key, f in rows:
            by_key.setdefault(tuple(key), []).append(f)
    out = {}
    for key, values in by_key.items():
        f = np.array(values)
        out[key] = {"samples": int(f.size), "mean_hz": float(f.mean()),
                    "std_hz": float(f.std(ddof=1)) if f.size > 1 else None,
                    "p01_hz": float(np.percentile(f, 1)),
                    "p99_hz": float(np.percentile(f, 99))}
    return out


def _linear_std(mode, spec: MonteCarloSpec) -> float | None:
    derivatives = mode.tolerance.df_dp_hz_per_m if mode.tolerance else None
    if not derivatives:
        return None
    return math.sqrt(sum((derivatives[n] * spec.standard_deviation(n)) ** 2
                         for n in spec.tolerances))
