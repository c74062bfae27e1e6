"""External and loaded Q of a mode seen through its ports.

The complex frequency of a port-terminated solve (lossless materials inside) holds every
port's loss together: 1/Q_ext = 2 Im f / Re f summed over the ports. Each port's share is
the power its terminated modes carry away, P_p ∝ Σ_m Re(y_m) |a_m|² (the time-averaged
power of a mode of amplitude a, ½ Re(Y) |a|², y = ωμ0 Y: β/μ_r for TE and TEM, k0² ε_r/β for
TM; Pozar, Microwave Engineering, 4th ed., §3.1), so 1/Q_ext,p = (1/Q_ext) P_p / Σ P. With the unloaded Q_0 of the
walls and dielectrics (perturbation, post.losses): 1/Q_L = 1/Q_0 + Σ_p 1/Q_ext,p and the
coupling factor β_p = Q_0/Q_ext,p (Pozar, §6.7; post.response).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..post.response import coupling_factors, loaded_q


@dataclass(frozen=True)
class PortLoading:
    q_external: dict[str, float]            # port name -> Q_ext
    q_loaded: float
    coupling_factor: dict[str, float] | None    # port -> β = Q_0/Q_ext (None without Q_0)
    # port -> β (1/m) of each terminated mode at the resonance (complex)
    propagation_constant: dict[str, list[complex]]

    def as_dict(self) -> dict:
        """The fields of modes.json: q_external, q_loaded, coupling_factor,
        propagation_constant_per_m ([real, imaginary] per terminated mode)."""
        return {"q_external": self.q_external,
                "q_loaded": self.q_loaded if math.isfinite(self.q_loaded) else None,
                "coupling_factor": self.coupling_factor,
                "propagation_constant_per_m": {
                    p: [[b.real, b.imag] for b in betas]
                    for p, betas in self.propagation_constant.items()}}


def port_loading(frequency: complex, port_power: dict[str, float], q_unloaded: float | None,
                 propagation: dict[str, list[complex]]) -> PortLoading:
    """Split 1/Q_ext = 2 Im f / Re f among the ports by ``port_power`` (any common scale)."""
    inverse_total = 2 * frequency.imag / frequency.real
    total_power = sum(port_power.values())
    if len(port_power) == 1:     # one port carries all the loss, whatever its amplitude
        port_power, total_power = {p: 1.0 for p in port_power}, 1.0
    q_external = {}
    for port, power in port_power.items():
        share = inverse_total * power / total_power if total_power > 0 else 0.0
        q_external[port] = 1.0 / share if share > 0 else math.inf
    return PortLoading(q_external=q_external, q_loaded=loaded_q(q_unloaded, q_external),
                       coupling_factor=coupling_factors(q_unloaded, q_external),
                       propagation_constant=propagation)
