"""The response of one resonance seen through its ports: the single-pole model.

A mode of complex frequency with unloaded Q_0 and external Q_e,p at each port p behaves near
its resonance f_0 like one lumped resonator coupled to the ports (coupled-mode theory: H. A.
Haus, Waves and Fields in Optoelectronics, ch. 7, from memory; the coupling factor
β_p = Q_0/Q_e,p and the loaded Q, 1/Q_L = 1/Q_0 + Σ 1/Q_e,p, as in D. M. Pozar, Microwave
Engineering, 4th ed., §6.7):

    S_pq(f) = −δ_pq + (2 / √(Q_e,p Q_e,q)) / (1/Q_L + j 2 (f − f_0)/f_0)

so that at resonance S_pp = (β_p − 1 − Σ_{q≠p} β_q)/(1 + Σ β) (a one-port: (β − 1)/(β + 1),
zero at critical coupling β = 1), |S_pq| falls to 1/√2 of its peak at f_0 ± f_0/(2 Q_L) (the
loaded 3 dB bandwidth f_0/Q_L), and far from f_0 every port sees a short (S_pp → −1: the
phase reference is the detuned short at the port face). The group delay is
τ = −d arg S/dω.

Validity: one mode only. Where another mode lies within a few loaded bandwidths, or the
band reaches a neighbour, the true response is a sum of poles and this model is wrong there;
``neighbour_bandwidths`` says how far the nearest other mode is, in bandwidths. The detuning
is taken linear in f (narrowband): fine within the band of a few bandwidths it is drawn over
when Q_L ≫ 1.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

# The band drawn around each resonance, in loaded bandwidths f_0/Q_L either side.
BAND_BANDWIDTHS = 5.0
POINTS = 401
# A neighbouring mode closer than this many loaded bandwidths makes the one-pole model
# doubtful inside the band (its own pole then shapes the response there).
NEIGHBOUR_LIMIT = 10.0


@dataclass(frozen=True)
class Resonance:
    f0_hz: float
    q_unloaded: float | None               # None or inf: no loss but the ports
    q_external: dict[str, float]           # port name -> Q_e

    @property
    def q_loaded(self) -> float:
        return loaded_q(self.q_unloaded, self.q_external)


def loaded_q(q_unloaded: float | None, q_external: dict[str, float]) -> float:
    """1/Q_L = 1/Q_0 + Σ 1/Q_e,p (Pozar, §6.7); no loss at all: inf."""
    inverse = sum(1.0 / q for q in q_external.values() if q and math.isfinite(q))
    if q_unloaded and math.isfinite(q_unloaded):
        inverse += 1.0 / q_unloaded
    return 1.0 / inverse if inverse > 0 else math.inf


def coupling_factors(q_unloaded: float | None, q_external: dict[str, float]
                     ) -> dict[str, float] | None:
    """β_p = Q_0/Q_e,p per port; None when Q_0 is unknown (no loss in the model)."""
    if not q_unloaded or not math.isfinite(q_unloaded):
        return None
    return {p: q_unloaded / q for p, q in q_external.items()}


def s_parameter(resonance: Resonance, to_port: str, from_port: str,
                f_hz: np.ndarray) -> np.ndarray:
    """S_{to, from} at the frequencies ``f_hz`` (complex)."""
    q = resonance.q_external
    f0 = resonance.f0_hz
    denominator = 1.0 / resonance.q_loaded + 2j * (np.asarray(f_hz) - f0) / f0
    return (-(1.0 if to_port == from_port else 0.0)
            + 2.0 / math.sqrt(q[to_port] * q[from_port]) / denominator)


def group_delay_s(resonance: Resonance, to_port: str, from_port: str,
                  f_hz: np.ndarray) -> np.ndarray:
    """τ = −d arg S/dω of S_{to, from} (s), from the derivative of the pole term."""
    q = resonance.q_external
    f0 = resonance.f0_hz
    denominator = 1.0 / resonance.q_loaded + 2j * (np.asarray(f_hz) - f0) / f0
    numerator = 2.0 / math.sqrt(q[to_port] * q[from_port])
    s = s_parameter(resonance, to_port, from_port, f_hz)
    ds_domega = -numerator * (2j / (2 * math.pi * f0)) / denominator**2
    with np.errstate(divide="ignore", invalid="ignore"):   # undefined where S = 0
        return -np.imag(ds_domega / s)


@dataclass(frozen=True)
class ResponseRow:
    mode: int
    frequency_hz: float
    to_port: str
    from_port: str
    magnitude_db: float
    phase_deg: float
    group_delay_s: float


def band(resonance: Resonance, bandwidths: float = BAND_BANDWIDTHS,
         points: int = POINTS) -> np.ndarray:
    """``points`` frequencies over f_0 ± ``bandwidths`` f_0/Q_L."""
    half = bandwidths * resonance.f0_hz / resonance.q_loaded
    return np.linspace(resonance.f0_hz - half, resonance.f0_hz + half, points)


def response_rows(mode_index: int, resonance: Resonance, f_hz: np.ndarray | None = None
                  ) -> list[ResponseRow]:
    """Every S_pq of the resonance's ports over ``f_hz`` (default: its band): the
    reflection at each port and the transmission between each ordered pair."""
    f = band(resonance) if f_hz is None else np.asarray(f_hz)
    rows = []
    ports = list(resonance.q_external)
    for to_port in ports:
        for from_port in ports:
            s = s_parameter(resonance, to_port, from_port, f)
            tau = group_delay_s(resonance, to_port, from_port, f)
            magnitude = 20 * np.log10(np.maximum(np.abs(s), 1e-300))
            phase = np.degrees(np.angle(s))
            rows += [ResponseRow(mode_index, float(fi), to_port, from_port, float(m),
                                 float(p), float(t))
                     for fi, m, p, t in zip(f, magnitude, phase, tau)]
    return rows


def neighbour_bandwidths(f0_hz: float, q_loaded: float, others_hz) -> float:
    """Distance of the nearest other mode from f_0, in loaded bandwidths f_0/Q_L (inf when
    there is none)."""
    gaps = [abs(f - f0_hz) for f in others_hz if f != f0_hz]
    if not gaps or not math.isfinite(q_loaded):
        return math.inf
    return min(gaps) / (f0_hz / q_loaded)
