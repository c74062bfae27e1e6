"""Field probes: a named point or line of points where every mode reports E and H.

Each probe gives, per point, the complex E and H for 1 J stored in the whole part and for
1 W dissipated (the same field times sqrt(Q / ω): at 1 J the mode dissipates ω / Q watts,
and fields scale with the square root of power), and the conversion factor
B1 / sqrt(P) = μ0 μ_r |H| at 1 W, in T/sqrt(W). |·| of a complex vector is
sqrt(Σ |v_i|²), the peak amplitude of a linearly polarised field; the rotating component
that drives a magnetic resonance is half of it (common practice). Without losses (no metal
wall, no tan δ) nothing is dissipated and the 1 W values are null.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0


@dataclass(frozen=True)
class ProbeSpec:
    """A probe as the case file gives it: a point (``kind`` "point") or a line of evenly
    spaced points from its first to its last (``kind`` "line"); SI units."""

    name: str
    kind: str
    points: np.ndarray    # (n, 3) m

    @property
    def distance(self) -> np.ndarray:
        """Distance of each point from the first, m."""
        return np.linalg.norm(self.points - self.points[0], axis=1)


@dataclass(frozen=True)
class ProbeValues:
    """One probe's values for one mode, per point (complex vectors (n, 3))."""

    name: str
    kind: str
    points: np.ndarray
    distance: np.ndarray
    E: np.ndarray                        # V/m at 1 J stored
    H: np.ndarray                        # A/m at 1 J stored
    mu_r: np.ndarray
    watt_scale: float | None             # fields at 1 W = fields at 1 J times this

    @property
    def e_abs(self) -> np.ndarray:
        return np.sqrt(np.sum(np.abs(self.E) ** 2, axis=1))

    @property
    def h_abs(self) -> np.ndarray:
        return np.sqrt(np.sum(np.abs(self.H) ** 2, axis=1))

    @property
    def b1_per_sqrt_watt(self) -> np.ndarray | None:
        """μ0 μ_r |H| at 1 W dissipated, T/sqrt(W)."""
        if self.watt_scale is None:
            return None
        return mu_0 * self.mu_r * self.h_abs * self.watt_scale


def watt_scale(frequency_hz: float, q_total: float | None) -> float | None:
    """Factor from 1 J stored to 1 W dissipated: P = ω W / Q, so sqrt(Q / ω)."""
    if not q_total:
        return None
    return math.sqrt(q_total / (2 * math.pi * frequency_hz))


def probe_values(spec: ProbeSpec, fields, frequency_hz: float,
                 q_total: float | None) -> ProbeValues:
    """``fields``: the mode's fields at ``spec.points`` (post.point_fields.PointFields or the
    axisymmetric equivalent: E, H, mu_r)."""
    return ProbeValues(name=spec.name, kind=spec.kind, points=spec.points,
                       distance=spec.distance, E=fields.E, H=fields.H, mu_r=fields.mu_r,
                       watt_scale=watt_scale(frequency_hz, q_total))


def _complex_rows(values: np.ndarray) -> dict:
    return {"re": np.real(values).tolist(), "im": np.imag(values).tolist()}


def probe_document(values: ProbeValues) -> dict:
    """What modes.json holds of one probe of one mode (lists over the points)."""
    scale = values.watt_scale
    document = {
        "kind": values.kind, "points_m": values.points.tolist(),
        "distance_m": values.distance.tolist(),
        "e_v_per_m": _complex_rows(values.E), "e_abs_v_per_m": values.e_abs.tolist(),
        "h_a_per_m": _complex_rows(values.H), "h_abs_a_per_m": values.h_abs.tolist(),
        "e_at_1w_v_per_m": None, "e_abs_at_1w_v_per_m": None,
        "h_at_1w_a_per_m": None, "h_abs_at_1w_a_per_m": None,
        "b1_per_sqrt_p_t_per_sqrt_w": None,
    }
    if scale is not None:
        document.update({
            "e_at_1w_v_per_m": _complex_rows(values.E * scale),
            "e_abs_at_1w_v_per_m": (values.e_abs * scale).tolist(),
            "h_at_1w_a_per_m": _complex_rows(values.H * scale),
            "h_abs_at_1w_a_per_m": (values.h_abs * scale).tolist(),
            "b1_per_sqrt_p_t_per_sqrt_w": values.b1_per_sqrt_watt.tolist(),
        })
    return document
