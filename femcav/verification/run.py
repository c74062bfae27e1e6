"""Run the catalogue: every case at its element sizes through femcav's own runner (case file
text -> load_case -> run_case), compared with its references; errors, observed rates,
error-bar coverage, DOFs and times; pass or fail per case.

The case files are written into a temporary folder and solved exactly as `femcav solve`
would solve them (their result files go there too and are removed afterwards). Each case's
numbers come back as a plain dict, so that cases can run in worker processes (--jobs).
"""

from __future__ import annotations

import math
import os
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from .. import __version__
from ..errors import InputError
from .catalogue import catalogue
from .environment import environment
from .reference_case import ReferenceCase

# An observed rate passes when it reaches this share of the expected one: two or three
# unnested gmsh meshes give rates that scatter by about ±30 % around the asymptotic value
# (measured on the pillbox section: 3.6 to 4.0 for an expected 4, tests/test_axisymmetric),
# while a wrong operator does not converge to the reference at all (rate near 0).
RATE_SHARE = 0.6
# Below this relative error the error is no longer a clean function of the mesh: the
# references' own accuracy (shooting with rtol 1e-12) and the eigen solver's convergence come
# within reach (measured: the section pillbox's TM010 error falls from 1.6e-11 to 4e-13 with
# pairwise rates from 5.1 to 7.7). No rate is judged from such errors.
ERROR_FLOOR = 1e-9

FORMAT = "femcav-verify"
FORMAT_VERSION = 1


@dataclass(frozen=True)
class Request:
    """What to run: the catalogue's ``mode`` ("quick" or "full"), an optional subset by
    name, worker processes, and an optional change to every loaded case before it is solved
    (a test's way of planting a wrong material; with jobs > 1 it must be picklable)."""

    mode: str = "quick"
    only: tuple[str, ...] | None = None
    jobs: int = 1
    adjust_case: Callable | None = None
    quiet: bool = False


def selected_cases(only: tuple[str, ...] | None) -> list[ReferenceCase]:
    cases = catalogue()
    if only is None:
        return cases
    known = [c.name for c in cases]
    unknown = [name for name in only if name not in known]
    if unknown:
        raise InputError(f"no verification case named {', '.join(map(repr, unknown))}; "
                         f"the catalogue has {', '.join(known)}", field="--only")
    return [c for c in cases if c.name in only]


def run_verification(request: Request) -> dict:
    """The verify.json document of one run (cases in catalogue order)."""
    cases = selected_cases(request.only)
    started = time.time()
    t0 = time.perf_counter()
    say = _say(request.quiet)
    jobs = max(1, min(request.jobs, os.cpu_count() or 1, len(cases)))
    if jobs < request.jobs:
        print(f"femcav: warning: --jobs {request.jobs} lowered to {jobs} (CPU cores, cases)",
              file=sys.stderr)
    if jobs == 1:
        results = []
        for i, case in enumerate(cases, start=1):
            say(f"case {i} of {len(cases)}: {case.name} ({len(case.sizes[request.mode])} "
                f"meshes)")
            results.append(run_one(case, request.mode, request.adjust_case))
            say(f"case {i} of {len(cases)}: {case.name} "
                f"{'passed' if results[-1]['passed'] else 'FAILED'} in "
                f"{results[-1]['time_s']:.1f} s")
    else:
        results = _run_in_workers(cases, request, jobs, say)
    return {
        "format": FORMAT, "format_version": FORMAT_VERSION, "femcav_version": __version__,
        "mode": request.mode, "started_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ",
                                                           time.gmtime(started)),
        "wall_time_s": time.perf_counter() - t0, "jobs": jobs,
        "rules": {"rate_share": RATE_SHARE, "error_floor": ERROR_FLOOR},
        "environment": environment(),
        "passed": all(r["passed"] for r in results),
        "cases": results,
    }


def _say(quiet: bool):
    def say(message: str) -> None:
        if not quiet:
            print(f"[verify] {message}", file=sys.stderr, flush=True)
    return say


def _run_in_workers(cases, request: Request, jobs: int, say) -> list[dict]:
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor, as_completed

    # spawn: a fresh interpreter per worker, no copy of gmsh's or a BLAS library's state
    with ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context("spawn")) as pool:
        futures = {pool.submit(run_named, c.name, request.mode, request.adjust_case): i
                   for i, c in enumerate(cases)}
        results: list[dict | None] = [None] * len(cases)
        for done, future in enumerate(as_completed(futures), start=1):
            i = futures[future]
            results[i] = future.result()
            say(f"case {done} of {len(cases)} done: {cases[i].name} "
                f"{'passed' if results[i]['passed'] else 'FAILED'} in "
                f"{results[i]['time_s']:.1f} s")
    return results


def run_named(name: str, mode: str, adjust_case=None) -> dict:
    """run_one for the case of that name (what a worker process receives)."""
    return run_one(selected_cases((name,))[0], mode, adjust_case)


def run_one(case: ReferenceCase, mode: str, adjust_case=None) -> dict:
    """Solve ``case`` at its element sizes of ``mode`` and judge it."""
    t0 = time.perf_counter()
    meshes, failure = [], None
    try:
        with tempfile.TemporaryDirectory(prefix="femcav-verify-") as tmp:
            sizes = case.sizes[mode]
            for k, size in enumerate(sizes):
                bars = case.error_bars and k == len(sizes) - 1
                meshes.append(_solve_once(case, size, Path(tmp) / f"mesh{k + 1}", bars,
                                          adjust_case))
    except MemoryError:
        raise
    except Exception as exc:  # noqa: BLE001 - a case that cannot run has failed, the rest go on
        failure = f"{type(exc).__name__}: {exc}"
    return judge(case, mode, meshes, failure, time.perf_counter() - t0)


def _solve_once(case: ReferenceCase, size: float, folder: Path, bars: bool,
                adjust_case) -> dict:
    from ..case import load_case
    from ..solve_command import run_case

    folder.mkdir(parents=True)
    text = case.case_text(size) + ("error_estimate = true\n" if bars else "")
    path = folder / f"{case.name}.toml"
    path.write_text(text, encoding="utf-8")
    if case.files is not None:
        case.files(folder, size)
    loaded = load_case(path)
    if adjust_case is not None:
        loaded = adjust_case(loaded)
    t0 = time.perf_counter()
    _, result, _ = run_case(loaded, out=folder / "results")
    elapsed = time.perf_counter() - t0
    return {"size_m": size, "dofs": int(result.dofs), "elements": int(result.elements),
            "time_s": elapsed, "error_bars": bars,
            "checks_passed": bool(result.passed), "resolved": bool(result.resolved),
            "comparisons": case.compare(result)}


def observed_rate(dofs: list[int], errors: list[float], section: bool) -> float | None:
    """The exponent p of error ∝ h^p, h = DOFs^(-1/dimension), by least squares over the
    meshes (None with fewer than two meshes or an error that is zero or not finite)."""
    if len(errors) < 2 or not all(math.isfinite(e) and e > 0 for e in errors):
        return None
    slope = np.polyfit(np.log(dofs), np.log(errors), 1)[0]
    return float(-slope * (2 if section else 3))


def judge(case: ReferenceCase, mode: str, meshes: list[dict], failure: str | None,
          elapsed: float) -> dict:
    failures = [failure] if failure else []
    quantities = []
    complete = failure is None and len(meshes) == len(case.sizes[mode])
    for q in case.quantities:
        comparisons = [m["comparisons"][q.name] for m in meshes]
        errors = [c.error for c in comparisons]
        dofs = [m["dofs"] for m in meshes]
        rate = observed_rate(dofs, errors, case.section)
        judged = (complete and q.expected_rate is not None and rate is not None
                  and min(errors) > ERROR_FLOOR)
        finest = comparisons[-1] if comparisons else None
        coverage = finest.coverage if finest is not None else None
        checks = {   # each with what to say when it fails
            "tolerance": (bool(errors) and errors[-1] <= q.tolerance, lambda: (
                f"error {errors[-1]:.2e} on the finest mesh, above the tolerance "
                f"{q.tolerance:.1e}")),
            "rate": (not judged or rate >= RATE_SHARE * q.expected_rate, lambda: (
                f"observed rate {rate:.2f} below {RATE_SHARE:g} x {q.expected_rate:g}")),
            "bars": (coverage is None or coverage == 1.0, lambda: (
                f"the error bars hold only {coverage:.0%} of the reference values")),
        }
        if complete:
            failures += [f"{q.name}: {say()}" for ok, say in checks.values() if not ok]
        quantities.append({
            "name": q.name, "unit": finest.unit if finest else None,
            "tolerance": q.tolerance, "expected_rate": q.expected_rate,
            "observed_rate": rate, "rate_judged": judged, "errors": errors,
            "computed": [list(c.computed) for c in comparisons],
            "reference": [list(c.reference) for c in comparisons],
            "error_bars": [None if c.bars is None else list(c.bars) for c in comparisons],
            "coverage": coverage, "passed": complete and all(ok for ok, _ in checks.values()),
        })
    for m in meshes:
        if not m["checks_passed"]:
            failures.append(f"a mode failed femcav's own checks at {m['size_m'] * 1e3:g} mm")
        if not m["resolved"]:
            failures.append(f"a mode is not resolved at {m['size_m'] * 1e3:g} mm")
    return {
        "name": case.name, "title": case.title, "covers": case.covers, "source": case.source,
        "order": case.order, "section": case.section, "time_s": elapsed,
        "meshes": [{k: v for k, v in m.items() if k != "comparisons"} for m in meshes],
        "quantities": quantities, "failures": failures,
        "passed": complete and not failures,
    }
