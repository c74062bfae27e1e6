"""Tuning: the value of one parameter that puts a chosen mode on a target frequency.

The case file's [tune] table names the parameter, a bracket (two values the answer lies
between), the target frequency and the mode: its index in the case as written (the
reference point, whose parameter value is the case's own). Brent's method (scipy's brentq:
R. P. Brent, Algorithms for Minimization without Derivatives, 1973) brackets the root of
f_mode(value) - target; at every value the chosen mode is found by field overlap with the
nearest value already solved (femcav.study.tracking), never by its place in the list. The
result is solved once more with error bars (three meshes, femcav.post.error_estimate) so the
final frequency carries its discretisation error.

With a cluster (``cluster``, femcav.study.cluster) the case's own value and the two ends of
the bracket are solved at once as three tasks, and each later value of Brent's method
(which needs the one before) as a task of its own; the final solve with error bars runs here.
"""

from __future__ import annotations

import math
import time
from dataclasses import replace
from pathlib import Path

from scipy.optimize import brentq

from ..case import in_case
from ..errors import InputError
from ..io import strict_json
from ..io.atomic import check_output_folder, staged_output
from ..progress import SILENT, Progress
from ..case_studies import TuneSpec, parse_tune
from ..units import format_frequency
from ..case_parameters import check_scalar_material, format_value, with_value
from .sweep import TRACKING_SPARE, checked_for_tracking, load_study, study_case
from ..post.mode_matching import result_partners



def tune_trials(spec: TuneSpec):
    """The two ends of the bracket, validated as cases before the first solve (every value
    Brent's method tries lies between them)."""
    axis = _axis(spec)
    return [((axis, value, key),) for value, key in zip(spec.bracket, spec.bracket_keys)]


def _reference_value(data: dict, spec: TuneSpec, case) -> float:
    """The parameter's value in the case as written (SI)."""
    head, _, rest = spec.path.partition(".")
    if head == "geometry":
        name, _, index = rest.partition("[")
        value = case.geometry.parameters[name]
        return float(value[int(index[:-1])] if index else value)
    if head == "regions":
        region, _, prop = rest.partition(".")
        material = case.regions.get(region)
        if material is None:
            raise InputError(f"region {region!r} has no table in the case",
                             field="tune.parameter")
        check_scalar_material(case, region, prop, "tune.parameter")
        if prop == "eps_r" and callable(material.eps_r):
            raise InputError(f"{spec.path} is given as an expression; only a number can be "
                             "tuned", field="tune.parameter")
        return float(getattr(material, prop))
    wall = case.walls.get(rest.partition(".")[0])
    if wall is None or wall.conductivity is None:
        raise InputError("the wall has no conductivity to start from", field="tune.parameter")
    return float(wall.conductivity)


def solve_at(task):
    """The case solved at one value of the tuned parameter (here or as a cluster task)."""
    from ..runner import solve_case

    data, path, spec, value = task
    case = study_case(with_value(data, spec.path, value), path)
    if spec.target_tau_f is None:   # a frequency only: no temperature drift (morphed solves)
        case = replace(case, temperature=None)
    elif case.temperature is None:
        raise InputError("target_tau_f needs the case's thermal data: a tce or an expansion "
                         "in a region, or the walls' expansion", field="tune.target_tau_f")
    checked_for_tracking(case)
    settings = replace(case.solve, modes=max(case.solve.modes, spec.mode) + TRACKING_SPARE)
    return solve_case(case, settings, SILENT)


class _Evaluations:
    """Solved values and, at each, the position of the tuned mode in its mode list."""

    def __init__(self, data, path, spec: TuneSpec, progress: Progress, pool=None):
        self.data, self.path, self.spec, self.progress = data, path, spec, progress
        self.pool = pool            # a femcav.study.cluster.ClusterPool, or None: solve here
        self.points: list[tuple[float, object, int]] = []   # (value, result, mode index)
        self._ready: dict[float, object] = {}
        # Brent's method starts by evaluating the bracket ends that run_tune has already
        # solved to check the bracket: each value is solved once (issue 25: the two ends
        # were solved twice, 22 s of a 105 s tune).
        self._solved: dict[float, float] = {}

    def prefetch(self, values) -> None:
        """Solve ``values`` at once on the cluster, for the calls to come (no-op here)."""
        if self.pool is not None:
            tasks = [(self.data, self.path, self.spec, v) for v in values]
            self._ready.update(zip(values, self.pool.gather(solve_at, tasks)))

    def solve(self, value: float):
        if value in self._ready:
            return self._ready.pop(value)
        task = (self.data, self.path, self.spec, value)
        return solve_at(task) if self.pool is None else self.pool.gather(solve_at, [task])[0]

    def start(self, reference: float) -> None:
        result = self.solve(reference)
        if len(result.modes) < self.spec.mode:
            raise InputError(f"the case has only {len(result.modes)} modes", field="tune.mode")
        self.points.append((reference, result, self.spec.mode - 1))
        self._solved[reference] = result.modes[self.spec.mode - 1].frequency_hz

    def frequency(self, value: float) -> float:
        if value in self._solved:
            return self._solved[value]
        t0 = time.perf_counter()
        result = self.solve(value)
        near_value, near_result, near_index = min(self.points, key=lambda p: abs(p[0] - value))
        partner = result_partners(near_result, result)
        found = [j for j, p in enumerate(partner) if p == near_index]
        if not found:
            raise InputError(f"mode {self.spec.mode} could not be followed from "
                             f"{format_value(_axis(self.spec), near_value)} to "
                             f"{format_value(_axis(self.spec), value)} (its field changed "
                             "too much); narrow the bracket", field="tune.bracket")
        index = found[0]
        self.points.append((value, result, index))
        f = result.modes[index].frequency_hz
        self._solved[value] = f
        self.progress.step(f"tune: {self.spec.path} = {format_value(_axis(self.spec), value)}"
                           f": mode at {format_frequency(f, 9)}"
                           + ("" if self.spec.quantity == "frequency" else
                              f", {_shown(self.spec, self.quantity(value))}")
                           + f" ({time.perf_counter() - t0:.1f} s)")
        return f

    def quantity(self, value: float) -> float:
        """The tuned quantity at ``value``: the followed mode's frequency, its Q_ext at the
        spec's port, or the coupling coefficient of the pair it belongs to."""
        f = self.frequency(value)
        if self.spec.quantity == "frequency":
            return f
        _, result, index = next(p for p in reversed(self.points) if p[0] == value)
        return tuned_quantity(self.spec, result, index)


def tuned_quantity(spec: TuneSpec, result, index: int) -> float:
    """Q_ext (at ``spec.port``) or k of mode ``index`` (0-based) of ``result``."""
    mode = result.modes[index]
    if spec.quantity == "q_external":
        if mode.loading is None or spec.port not in mode.loading.q_external:
            raise InputError(f"the mode has no external Q at port {spec.port!r}",
                             field="tune.port")
        return mode.loading.q_external[spec.port]
    pairs = [c for c in result.coupling if index + 1 in c.modes] or list(result.coupling)
    if not pairs:
        raise InputError('no coupling coefficient to tune: cut the pair with [symmetry] '
                         'AXIS = "both", or name two modes in [coupling]',
                         field="tune.quantity")
    return pairs[0].k


def _shown(spec: TuneSpec, value: float) -> str:
    """A value of the tuned quantity, with its name or unit."""
    if spec.quantity == "frequency":
        return format_frequency(value, 9)
    return (f"Q_ext {value:.6g} at {spec.port}" if spec.quantity == "q_external"
            else f"k {value:.6g}")


def _axis(spec: TuneSpec):
    from ..case_parameters import Axis
    return Axis(path=spec.path, values=spec.bracket, kind=spec.kind, where="tune")


def run_tune(path: str | Path, *, out: str | Path | None = None, cluster: str | None = None,
             progress: Progress = SILENT) -> tuple[dict, Path]:
    path = Path(path)
    data, spec, base = load_study(path, parse_tune, tune_trials)
    from .cluster import optional_cluster_pool, parse_cluster_address
    if cluster is not None:
        parse_cluster_address(cluster)          # a mistake is said before anything
    folder = check_output_folder(Path(out) if out is not None
                                 else path.parent / f"{path.stem}-tune")
    with optional_cluster_pool(cluster, progress) as pool:
        return _tune(data, path, spec, base, folder, pool, progress)


def _tune(data, path: Path, spec: TuneSpec, base, folder: Path, pool, progress: Progress):
    try:
        reference = _reference_value(data, spec, base)
        runs = _Evaluations(data, path, spec, progress, pool)
        runs.prefetch([reference, *spec.bracket])
        runs.start(reference)
        progress.step(f"tune: mode {spec.mode} at the case's own {spec.path} = "
                      f"{format_value(_axis(spec), reference)}: "
                      f"{format_frequency(runs.points[0][1].modes[spec.mode - 1].frequency_hz, 9)}")
        lo, hi = spec.bracket
        if spec.target_tau_f is not None:
            return _compensate(data, path, spec, runs, folder, progress)
        q_lo, q_hi = runs.quantity(lo), runs.quantity(hi)
        if (q_lo - spec.target) * (q_hi - spec.target) > 0:
            raise InputError(f"the mode is at {_shown(spec, q_lo)} and {_shown(spec, q_hi)} "
                             f"at the two ends of the bracket: {_shown(spec, spec.target)} "
                             "is not between them; widen or move the bracket",
                             field="tune.bracket")
        before = len(runs.points)
        value = _root(runs, spec)
        iterations = len(runs.points) - before
        final = _final_with_error_bar(runs, value, progress)
    except InputError as exc:
        raise in_case(exc, str(path)) from None
    document = {"format": "femcav-tune", "format_version": 1, "case": str(path),
                "parameter": spec.path, "unit": _axis(spec).unit,
                "target_hz": spec.target_hz, "mode": spec.mode, "value": value,
                "bracket": list(spec.bracket), "iterations": iterations,
                "evaluations": [{"value": v, "frequency_hz": r.modes[j].frequency_hz,
                                 **_evaluated(spec, r, j)} for v, r, j in runs.points],
                **final}
    if spec.quantity != "frequency":
        document.update(quantity=spec.quantity, target=spec.target, port=spec.port,
                        reached=runs.quantity(value))
    with staged_output(folder, kind="tune") as files:
        files.write_text("tune.json", strict_json.dumps(document, indent=1))
    return document, folder


def _evaluated(spec: TuneSpec, result, index: int) -> dict:
    """The tuned quantity at one evaluation, when it is not the frequency."""
    if spec.quantity == "frequency":
        return {}
    return {spec.quantity: tuned_quantity(spec, result, index)}


def _compensate(data, path: Path, spec: TuneSpec, runs: _Evaluations, folder: Path,
                progress: Progress):
    """The value that puts the mode's τf on target_tau_f: Brent's method on τf(value) -
    target, each value solved with its temperature drift (femcav.temperature), the mode
    followed as for a frequency; stopped within tau_f_tolerance."""
    def tau_f(value: float) -> float:
        f = runs.frequency(value)
        mode = next(r.modes[j] for v, r, j in reversed(runs.points) if v == value)
        progress.step(f"tune: τf {mode.temperature.tau_f_ppm_per_k:+.4g} ppm/K at "
                      f"{format_frequency(f, 9)}")
        return mode.temperature.tau_f_ppm_per_k * 1e-6

    def miss(value: float) -> float:
        error = tau_f(value) - spec.target_tau_f
        if abs(error) <= spec.tau_f_tolerance:
            raise _Close(value)
        return error
    lo, hi = spec.bracket
    ends = [tau_f(lo), tau_f(hi)]
    if (ends[0] - spec.target_tau_f) * (ends[1] - spec.target_tau_f) > 0:
        raise InputError(f"the mode's τf is {ends[0] * 1e6:+.4g} and {ends[1] * 1e6:+.4g} "
                         f"ppm/K at the two ends of the bracket: "
                         f"{spec.target_tau_f * 1e6:+.4g} ppm/K is not between them; widen "
                         "or move the bracket", field="tune.bracket")
    before = len(runs.points)
    try:
        value = brentq(miss, lo, hi, xtol=1e-12 * max(abs(lo), abs(hi)), rtol=1e-15,
                       maxiter=60)
    except _Close as close:
        value = close.value
    tau = tau_f(value)
    document = {"format": "femcav-tune", "format_version": 1, "case": str(path),
                "parameter": spec.path, "unit": _axis(spec).unit,
                "target_tau_f_ppm_per_k": spec.target_tau_f * 1e6, "mode": spec.mode,
                "value": value, "bracket": list(spec.bracket),
                "iterations": len(runs.points) - before, "tau_f_ppm_per_k": tau * 1e6,
                "frequency_hz": runs.frequency(value), "error_estimate_hz": None,
                "evaluations": [{"value": v, "frequency_hz": r.modes[j].frequency_hz,
                                 "tau_f_ppm_per_k": r.modes[j].temperature.tau_f_ppm_per_k}
                                for v, r, j in runs.points]}
    with staged_output(folder, kind="tune") as files:
        files.write_text("tune.json", strict_json.dumps(document, indent=1))
    return document, folder


class _Close(Exception):
    def __init__(self, value: float):
        self.value = value


def _root(runs: _Evaluations, spec: TuneSpec) -> float:
    """Brent's method on f(value) - target, stopped as soon as a solved frequency is within
    the relative tolerance of the target, or once the value is known to within the change
    that moves the frequency by that tolerance (at the bracket's mean slope): each point is a
    new mesh, so below the mesh noise (1e-5 to 1e-4 at usual sizes) further steps only chase
    it."""
    measure = runs.frequency if spec.quantity == "frequency" else runs.quantity

    def miss(v: float) -> float:
        q = measure(v)
        if abs(q - spec.target) <= spec.tolerance * abs(spec.target):
            raise _Close(v)
        return q - spec.target
    lo, hi = spec.bracket
    slope = abs(measure(hi) - measure(lo)) / (hi - lo)
    floor = 1e-12 * max(abs(lo), abs(hi))
    xtol = max(spec.tolerance * abs(spec.target) / slope, floor) if slope > 0 else floor
    try:
        return brentq(miss, lo, hi, xtol=xtol, rtol=1e-15, maxiter=60)
    except _Close as close:
        return close.value


def _final_with_error_bar(runs: _Evaluations, value: float, progress: Progress) -> dict:
    """The tuned mode at ``value`` with an error bar from three meshes (builders only)."""
    from ..runner import solve_case

    case = study_case(with_value(runs.data, runs.spec.path, value), runs.path)
    _, last_result, last_index = min(runs.points, key=lambda p: abs(p[0] - value))
    f_last = last_result.modes[last_index].frequency_hz
    if case.geometry.builder is None:
        return {"frequency_hz": f_last, "error_estimate_hz": None}
    settings = replace(case.solve, error_estimate=True,
                       modes=max(case.solve.modes, runs.spec.mode) + TRACKING_SPARE)
    result = solve_case(case, settings, SILENT)
    partner = result_partners(last_result, result)
    found = [j for j, p in enumerate(partner) if p == last_index]
    mode = result.modes[found[0]] if found else min(
        result.modes, key=lambda m: abs(m.frequency_hz - f_last))
    progress.step(f"tune: final {format_frequency(mode.frequency_hz, 9)} ± "
                  f"{format_frequency(mode.error_estimate_hz or math.nan, 3)}")
    return {"frequency_hz": mode.frequency_hz, "error_estimate_hz": mode.error_estimate_hz,
            "error_estimate_dofs": result.dofs}


def summary_lines(document: dict) -> list[str]:
    """What `femcav tune` prints of a tune document (tune.json)."""
    from ..units import format_frequency

    unit = document["unit"]
    shown = (f"{document['value'] * 1e3:.7g} mm" if unit == "m"
             else f"{document['value']:.7g} {unit}".rstrip())
    bar = document["error_estimate_hz"]
    if "target_tau_f_ppm_per_k" in document:      # compensation (femcav.temperature)
        return [f"{document['parameter']} = {shown} puts mode {document['mode']}'s tau_f at "
                f"{document['tau_f_ppm_per_k']:+.4g} ppm/K (target "
                f"{document['target_tau_f_ppm_per_k']:+.4g} ppm/K; "
                f"{format_frequency(document['frequency_hz'], 9)}; {document['iterations']} "
                "root-finder steps)"]
    quantity = document.get("quantity", "frequency")
    if quantity != "frequency":
        what = "Q_ext" if quantity == "q_external" else "k"
        where = f" at port {document['port']}" if document.get("port") else ""
        return [f"{document['parameter']} = {shown} gives mode {document['mode']} {what} = "
                f"{document['reached']:.6g}{where} (target {document['target']:.6g}; "
                f"{document['iterations']} root-finder steps), at "
                f"{format_frequency(document['frequency_hz'], 9)}"
                + (f" ± {format_frequency(bar, 3)}" if bar is not None else "")]
    return [f"{document['parameter']} = {shown} puts mode {document['mode']} at "
            f"{format_frequency(document['frequency_hz'], 9)}"
            + (f" ± {format_frequency(bar, 3)}" if bar is not None else "")
            + f" (target {format_frequency(document['target_hz'], 9)}; "
            f"{document['iterations']} root-finder steps)"]
