"""Beam figures of one mode: what a particle crossing the part on a straight line gains from it.

Conventions (T. P. Wangler, RF Linear Accelerators, 2nd ed., ch. 2 and 5; H. Padamsee et
al., RF Superconductivity for Accelerators, ch. 1; from memory; common practice), with the
mode scaled to W = 1 J stored and s the distance along the line from its start:

- voltage            V = |∫ E_s(s) e^{jωs/(βc)} ds|, E_s the field along the line (its phase
                     origin drops out of the modulus: the best phase of a passing charge);
- transit-time factor T = V / ∫ |E_s| ds (≤ 1; for a single gap with E_s of one sign this
                     is the usual |∫E e^{jωs/βc}| / ∫E);
- accelerating field E_acc = V / L, L the active length if given, else the length of the
                     line (the trade quotes a chain of cells with beam pipes over N cell
                     lengths, with V over the whole axis, pipes included);
- R/Q = V² / (ω W), the linac convention (the circuit convention is half of it);
- shunt impedance R = (R/Q) Q_0, Q_0 the mode's wall and dielectric Q;
- peak surface fields E_pk / E_acc and B_pk / E_acc (mT per MV/m) on the conducting walls.

The field samplers (post.beam_fields in 3D, axisymmetric.beam_fields on a section) give the
line integrals and the peaks; this module only combines them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import c as C0

from ..errors import InputError

# T per (V/m) -> mT per (MV/m)
MT_PER_MV_PER_M = 1e9


@dataclass(frozen=True)
class BeamRequest:
    """[beam] as the case gives it: both ends (m) or neither (the default line), β, and the
    length E_acc is quoted over (m; None: the line's)."""

    start: tuple[float, float, float] | None = None
    end: tuple[float, float, float] | None = None
    velocity: float = 1.0
    active_length: float | None = None


@dataclass(frozen=True)
class BeamLine:
    start: np.ndarray        # (3,) m
    end: np.ndarray          # (3,) m
    velocity: float          # β, a fraction of c
    active_length: float | None = None     # m, what E_acc is quoted over (None: length)

    @property
    def length(self) -> float:
        return float(np.linalg.norm(self.end - self.start))

    @property
    def acceleration_length(self) -> float:
        return self.length if self.active_length is None else self.active_length

    @property
    def direction(self) -> np.ndarray:
        return (self.end - self.start) / self.length

    def summary(self) -> dict:
        return {"from_m": self.start.tolist(), "to_m": self.end.tolist(),
                "length_m": self.length, "velocity": self.velocity,
                "active_length_m": self.acceleration_length}


def beam_line(request: BeamRequest, default_start, default_end) -> BeamLine:
    """The line of ``request``, its ends from the defaults where it gives none."""
    start = np.asarray(request.start if request.start is not None else default_start, float)
    end = np.asarray(request.end if request.end is not None else default_end, float)
    if not np.linalg.norm(end - start) > 0:
        raise InputError("the beam line's two ends are the same point", field="beam.to")
    return BeamLine(start=start, end=end, velocity=request.velocity,
                    active_length=request.active_length)


@dataclass(frozen=True)
class LineIntegrals:
    """Of the field along the line at 1 J stored: ∫ E_s e^{jωs/(βc)} ds and ∫ |E_s| ds."""

    phased: complex          # V·m/m = V
    absolute: float          # V


def line_integrals(s: np.ndarray, weights: np.ndarray, e_along: np.ndarray, omega: float,
                   velocity: float) -> LineIntegrals:
    """From quadrature points ``s`` (m from the start), their ``weights`` (m) and the field
    along the line there (V/m)."""
    phase = np.exp(1j * omega * s / (velocity * C0))
    return LineIntegrals(phased=complex(np.sum(weights * e_along * phase)),
                         absolute=float(np.sum(weights * np.abs(e_along))))


@dataclass(frozen=True)
class SurfacePeaks:
    """The largest |E| and μ0 |H_t| on the conducting walls at 1 J stored, and where."""

    e_peak_v_per_m: float
    e_peak_at: np.ndarray    # (3,) m
    b_peak_t: float
    b_peak_at: np.ndarray    # (3,) m


@dataclass(frozen=True)
class BeamFigures:
    voltage_v: float
    transit_time_factor: float | None
    e_acc_v_per_m: float
    r_over_q_ohm: float
    shunt_impedance_ohm: float | None
    e_peak_over_e_acc: float | None
    b_peak_over_e_acc_mt_per_mv_per_m: float | None
    e_peak_at_m: tuple[float, float, float] | None
    b_peak_at_m: tuple[float, float, float] | None
    line: BeamLine

    def as_dict(self) -> dict:
        return {"voltage_v": self.voltage_v, "transit_time_factor": self.transit_time_factor,
                "e_acc_v_per_m": self.e_acc_v_per_m, "r_over_q_ohm": self.r_over_q_ohm,
                "shunt_impedance_ohm": self.shunt_impedance_ohm,
                "e_peak_over_e_acc": self.e_peak_over_e_acc,
                "b_peak_over_e_acc_mt_per_mv_per_m": self.b_peak_over_e_acc_mt_per_mv_per_m,
                "e_peak_at_m": list(self.e_peak_at_m) if self.e_peak_at_m else None,
                "b_peak_at_m": list(self.b_peak_at_m) if self.b_peak_at_m else None}


def beam_figures(line: BeamLine, integrals: LineIntegrals, peaks: SurfacePeaks | None,
                 omega: float, stored_energy_j: float, q0: float | None) -> BeamFigures:
    """The figures of one mode from its line integrals and wall peaks, all at
    ``stored_energy_j`` (the energy the fields were scaled to). A mode with no field along
    the line (V = 0 exactly, as for m >= 1 on the axis of a body of revolution) has no
    transit-time factor and no peak ratios."""
    voltage = abs(integrals.phased)
    e_acc = voltage / line.acceleration_length
    r_over_q = voltage**2 / (omega * stored_energy_j)
    has_field = integrals.absolute > 0 and voltage > 0
    e_ratio = b_ratio = None
    if peaks is not None and has_field:
        e_ratio = peaks.e_peak_v_per_m / e_acc
        b_ratio = peaks.b_peak_t / e_acc * MT_PER_MV_PER_M
    return BeamFigures(
        voltage_v=voltage,
        transit_time_factor=voltage / integrals.absolute if has_field else None,
        e_acc_v_per_m=e_acc, r_over_q_ohm=r_over_q,
        shunt_impedance_ohm=r_over_q * q0 if q0 else None,
        e_peak_over_e_acc=e_ratio, b_peak_over_e_acc_mt_per_mv_per_m=b_ratio,
        e_peak_at_m=_point(peaks.e_peak_at) if peaks is not None else None,
        b_peak_at_m=_point(peaks.b_peak_at) if peaks is not None else None, line=line)


def _point(p) -> tuple[float, float, float]:
    return tuple(float(v) for v in p)


def gauss_points_on(intervals: np.ndarray, count: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre points and weights on each (start, end) row of ``intervals``:
    (n_intervals, count) arrays."""
    x, w = np.polynomial.legendre.leggauss(count)
    a, b = intervals[:, :1], intervals[:, 1:2]
    return (a + b) / 2 + (b - a) / 2 * x, (b - a) / 2 * w


def points_per_interval(order: int, longest: float, omega: float, velocity: float) -> int:
    """Gauss points enough for a polynomial of the element ``order`` times the phase factor
    over an interval of length ``longest``: the degree plus the phase turns, with margin."""
    turns = omega * longest / (velocity * C0)
    return int(order + 4 + math.ceil(2 * turns))
