"""Where the perturbation estimates of Q stop being valid, said per mode.

Q_wall and Q_d are computed from the lossless mode (post.losses): the loss is assumed too
small to change the field. That holds for a good conductor (skin depth small against the
part) and a small loss tangent, i.e. a large Q; it fails for a poor conductor or a very lossy
dielectric, and then the printed Q is not a measurement of anything.

Skin depth against the part: for a metal wall w, Q_w = ω W / P_w with W = (μ0/2)∫μ_r|H|²dV
and P_w = (R_s/2)∮_w |H_t|² dS gives Q_w = ω μ0 L_w / R_s, where

    L_w = ∫ μ_r |H|² dV / ∮_w |H_t|² dS

is the mode's own volume-to-surface length as seen by that wall; with R_s = ω μ0 δ / 2 this
is the classic Q_w = 2 L_w / δ (common practice; R. E. Collin, Foundations for Microwave
Engineering, 2nd ed., §7.1, from memory). So L_w comes from the computed Q_w and R_s at no
extra cost, and the wall is flagged when δ > SKIN_DEPTH_SHARE · L_w. Any Q (wall, dielectric
or total) under Q_LIMIT is flagged too.
"""

from __future__ import annotations

import math

from scipy.constants import mu_0

from ..metals import skin_depth, surface_resistance

SKIN_DEPTH_SHARE = 0.1      # δ / L_w above this: the wall is not a good conductor here
Q_LIMIT = 10.0              # a Q below this is not a small loss (common practice)
# The direct complex solve and the perturbation estimate of Q_d should agree for a small
# loss; beyond this relative difference in 1/Q_d the perturbation estimate is not trusted.
COMPLEX_DISAGREEMENT = 0.1


def loss_warnings(frequency_hz: float, losses, walls: dict) -> list[str]:
    """Short phrases on the Q factors of one mode that the perturbation formulas do not
    support; [] when they are all within their validity."""
    if losses is None:
        return []
    omega = 2 * math.pi * frequency_hz
    out = []
    if losses.q_wall:
        for name, share in sorted(losses.wall_loss_share.items()):
            wall = walls.get(name)
            if wall is None or not wall.conductivity or not share > 0:
                continue
            q_w = losses.q_wall / share
            length = q_w * surface_resistance(omega, wall.conductivity, wall.roughness) / (
                omega * mu_0)
            delta = skin_depth(omega, wall.conductivity)
            if delta > SKIN_DEPTH_SHARE * length:
                out.append(f"wall {name}: skin depth {_length(delta)} not small against the "
                           f"mode's volume/surface length {_length(length)}, Q_wall by "
                           "perturbation not valid")
    low = [(label, q) for label, q in (("Q_wall", losses.q_wall),
                                        ("Q_dielectric", losses.q_dielectric)) if q and q < Q_LIMIT]
    if not low and losses.q_total and losses.q_total < Q_LIMIT:
        low = [("Q_total", losses.q_total)]
    out += [f"{label} = {q:.3g} < {Q_LIMIT:g}: loss not small, {label} by perturbation not "
            "valid" for label, q in low]
    return out


def complex_check_warnings(mode) -> list[str]:
    """Phrases on a mode after the complex check: unpaired, or in disagreement with the
    perturbation estimate of Q_d."""
    losses = mode.losses
    if mode.q_dielectric_complex is None:
        return ["no complex eigenvalue left to pair with this mode (one mode each at most)"]
    if losses is None or not losses.q_dielectric:
        return []
    exact, estimate = 1.0 / mode.q_dielectric_complex, 1.0 / losses.q_dielectric
    if abs(estimate - exact) > COMPLEX_DISAGREEMENT * max(exact, estimate):
        return [f"Q_dielectric {losses.q_dielectric:.4g} by perturbation against "
                f"{mode.q_dielectric_complex:.4g} from the complex solve: more than "
                f"{COMPLEX_DISAGREEMENT:.0%} apart, trust the complex solve (if the pairing "
                "is clear)"]
    return []


def _length(metres: float) -> str:
    if metres >= 1:
        return f"{metres:.3g} m"
    if metres >= 1e-3:
        return f"{metres * 1e3:.3g} mm"
    return f"{metres * 1e6:.3g} µm"


ADVICE = ("the perturbation formulas need a good conductor (skin depth much smaller than "
          "the part) and a small loss (Q much above 10); [solve] complex_check = true solves "
          "a lossy dielectric directly")


def loss_validity_summary(modes) -> list[str]:
    """One line per mode with warnings and one line of advice, for stderr."""
    lines = [f"mode {m.index}: " + "; ".join(m.loss_warnings) for m in modes
             if m.loss_warnings]
    return lines + [ADVICE] if lines else []


def with_loss_warnings(modes: list, walls: dict) -> list:
    """The modes (dataclasses with frequency_hz, losses, loss_warnings) with their
    perturbation-validity warnings."""
    from dataclasses import replace

    return [replace(m, loss_warnings=tuple(loss_warnings(m.frequency_hz, m.losses, walls)))
            for m in modes]


def with_complex_warnings(modes: list) -> list:
    """The modes after the complex check, with its warnings added."""
    from dataclasses import replace

    return [replace(m, loss_warnings=tuple(m.loss_warnings) + tuple(complex_check_warnings(m)))
            for m in modes]
