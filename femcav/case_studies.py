"""The study tables of a case file ([sweep], [tune], [extract]) read into typed specs.

The case layer alone reads keys: the studies (femcav.study) receive these specs, and the
varied parameters' paths are resolved by femcav.case_parameters.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .case_parameters import Axis, parameter_kind, parse_axis, varied_value
from .errors import InputError
from . import schema
from .schema import EXTRACT, SWEEP, TUNE, check_table, read

# The most points a sweep may have (each parameter is capped at case_parameters.MAX_VALUES).
MAX_GRID_POINTS = 100_000


@dataclass(frozen=True)
class SweepSpec:
    axes: tuple[Axis, ...]          # one or two

    def points(self) -> list[tuple[float, ...]]:
        if len(self.axes) == 1:
            return [(v,) for v in self.axes[0].values]
        return [(a, b) for b in self.axes[1].values for a in self.axes[0].values]


def parse_sweep(data: dict) -> SweepSpec:
    spec = data.get("sweep")
    if spec is None:
        raise InputError("the case has no [sweep] table (parameter and values, or from, to "
                         "and points)", field="sweep")
    check_table(spec, SWEEP, "sweep")
    first = {k: v for k, v in spec.items() if k != "second"}
    axes = [parse_axis(first, "sweep")]
    if "second" in spec:
        axes.append(parse_axis(spec["second"], "sweep.second"))
        if axes[1].path == axes[0].path:
            raise InputError("the second parameter is the first one again", field="sweep.second")
        size = len(axes[0].values) * len(axes[1].values)
        if size > MAX_GRID_POINTS:
            raise InputError(f"{len(axes[0].values)} x {len(axes[1].values)} = {size} points; "
                             f"at most {MAX_GRID_POINTS} in a sweep", field="sweep.second")
    return SweepSpec(axes=tuple(axes))


@dataclass(frozen=True)
class TuneSpec:
    path: str
    kind: str
    bracket: tuple[float, float]
    target_hz: float | None     # the target frequency (quantity "frequency")
    mode: int                   # 1-based, at the reference point
    tolerance: float
    bracket_keys: tuple[str, str] = ("tune.bracket", "tune.bracket")   # where each end is
    quantity: str = "frequency"     # or "q_external" (of ``port``) or "coupling" (k)
    port: str | None = None
    target_value: float | None = None   # the target Q_ext or k (other quantities)
    # compensation ([tune] target_tau_f, 1/K): put the mode's τf there instead of its
    # frequency on target_hz (femcav.temperature); stop within tau_f_tolerance
    target_tau_f: float | None = None
    tau_f_tolerance: float = 1e-7

    @property
    def target(self) -> float:
        return self.target_hz if self.quantity == "frequency" else self.target_value


def parse_tune(data: dict) -> TuneSpec:
    spec = data.get("tune")
    if spec is None:
        raise InputError("the case has no [tune] table (parameter, bracket, target, mode)",
                         field="tune")
    check_table(spec, TUNE, "tune")
    # target_tau_f (compensation) stands in for target
    missing = [k for k in ("parameter", "bracket", "target") if k not in spec
               and not (k == "target" and "target_tau_f" in spec)]
    if missing:
        raise InputError(f"missing {', '.join(missing)}", field="tune")
    if "target" in spec and "target_tau_f" in spec:
        raise InputError("give either target (a frequency) or target_tau_f (compensation), "
                         "not both", field="tune.target_tau_f")
    kind = parameter_kind(spec["parameter"], "tune.parameter")
    ends = sorted((varied_value(spec["parameter"], b, f"tune.bracket[{i}]"), f"tune.bracket[{i}]")
                  for i, b in enumerate(spec["bracket"]))
    if ends[0][0] == ends[1][0]:
        raise InputError("the two ends of the bracket are equal", field="tune.bracket")
    quantity = read(spec, "quantity", TUNE, "tune")
    if "target_tau_f" in spec and quantity != "frequency":
        raise InputError("target_tau_f tunes the mode's τf; it takes no quantity",
                         field="tune.quantity")
    target_hz, target_value, port = (_tune_target(spec, quantity, data) if "target" in spec
                                     else (None, None, None))
    return TuneSpec(path=spec["parameter"], kind=kind, bracket=(ends[0][0], ends[1][0]),
                    target_hz=target_hz, mode=read(spec, "mode", TUNE, "tune"),
                    tolerance=read(spec, "tolerance", TUNE, "tune"),
                    bracket_keys=(ends[0][1], ends[1][1]), quantity=quantity, port=port,
                    target_value=target_value,
                    target_tau_f=read(spec, "target_tau_f", TUNE, "tune"),
                    tau_f_tolerance=read(spec, "tau_f_tolerance", TUNE, "tune"))


def _tune_target(spec: dict, quantity: str, data: dict):
    """(target frequency, target Q_ext or k, port) of a [tune] table."""
    if quantity == "frequency":
        if "port" in spec:
            raise InputError('port is for quantity = "q_external"', field="tune.port")
        return schema.parse_value(spec["target"], schema.FREQ, "tune.target"), None, None
    value = spec["target"]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value):
        raise InputError(f"the target {quantity.replace('_', ' ')} is a plain number, got "
                         f"{value!r}", field="tune.target")
    if quantity == "coupling":
        if not 0 < abs(value) < 1:
            raise InputError(f"a coupling coefficient lies between -1 and 1 (and is not 0), "
                             f"got {value!r}", field="tune.target")
        return None, float(value), None
    if not value > 0:
        raise InputError(f"a Q_ext is positive, got {value!r}", field="tune.target")
    ports = [name for name, wall in data.get("walls", {}).items()
             if isinstance(wall, dict) and str(wall.get("kind", "")).lower() == "port"]
    port = spec.get("port", ports[0] if len(ports) == 1 else None)
    if port not in ports:
        raise InputError(f"name the port whose Q_ext is tuned; the case's ports are "
                         f"{', '.join(map(repr, ports)) or '(none)'}", field="tune.port")
    return None, float(value), port


@dataclass(frozen=True)
class ExtractSpec:
    sample: str
    mode: int
    empty_hz: float
    empty_q: float
    loaded_hz: float
    loaded_q: float
    eps_bracket: tuple[float, float]
    tolerance: float


def parse_extract(data: dict) -> ExtractSpec:
    spec = data.get("extract")
    if spec is None:
        raise InputError("the case has no [extract] table", field="extract")
    check_table(spec, EXTRACT, "extract")
    missing = sorted(k for k, key in EXTRACT.keys.items() if key.default is None
                     and k not in spec)
    if missing:
        raise InputError(f"missing {', '.join(missing)}", field="extract")
    sample = spec["sample"]
    if not re.fullmatch(r"\w+", sample):
        raise InputError("must be the name of the sample's region", field="extract.sample")
    if sample not in data.get("regions", {}):
        raise InputError(f"give [regions.{sample}] with eps_r (the starting guess)",
                         field="extract.sample")
    v = {k: read(spec, k, EXTRACT, "extract") for k in EXTRACT.keys}
    if not v["loaded_q"] < v["empty_q"]:
        raise InputError("a lossless-or-lossy sample cannot raise the Q: loaded_q must be "
                         f"below empty_q ({v['empty_q']:g})", field="extract.loaded_q")
    bracket = [float(b) for b in read(spec, "eps_bracket", EXTRACT, "extract")]
    if bracket[0] == bracket[1]:
        raise InputError("the two ends are equal; give two different numbers, e.g. [1.5, 20]",
                         field="extract.eps_bracket")
    return ExtractSpec(sample=sample, mode=v["mode"], empty_hz=v["empty_frequency"],
                       empty_q=v["empty_q"], loaded_hz=v["loaded_frequency"],
                       loaded_q=v["loaded_q"], eps_bracket=tuple(sorted(bracket)),
                       tolerance=v["tolerance"])


WHERE = "dispersion"    # the [dispersion] table (femcav dispersion)


@dataclass(frozen=True)
class DispersionSpec:
    phases_rad: tuple[float, ...]     # ascending
    pair: int                         # 0-based index into the case's periodic pairs


def parse_dispersion(spec) -> DispersionSpec:
    """[dispersion]: ``values``, or ``from``, ``to`` and ``points`` (phases); ``pair``."""
    if spec is None:
        raise InputError("the case has no [dispersion] table; add one with from, to and points "
                         '(e.g. from = "0 deg", to = "180 deg", points = 7) or values',
                         field=WHERE)
    schema.check_table(spec, schema.DISPERSION, WHERE)
    table = schema.DISPERSION
    if "values" in spec:
        extra = sorted({"from", "to", "points"} & set(spec))
        if extra:
            raise InputError(f"give values, or from, to and points, not both ({extra[0]})",
                             field=f"{WHERE}.{extra[0]}")
        phases = schema.read(spec, "values", table, WHERE)
        if not phases:
            raise InputError("needs at least one phase", field=f"{WHERE}.values")
    else:
        for key in ("from", "to", "points"):
            if key not in spec:
                raise InputError(f"needs {key} (or values)", field=f"{WHERE}.{key}")
        start, stop = (schema.read(spec, k, table, WHERE) for k in ("from", "to"))
        phases = list(np.linspace(start, stop, schema.read(spec, "points", table, WHERE)))
    unique = sorted(set(float(p) for p in phases))
    return DispersionSpec(phases_rad=tuple(unique),
                          pair=schema.read(spec, "pair", table, WHERE) - 1)
