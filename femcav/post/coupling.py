"""Coupling coefficients between two resonators from pairs of eigenfrequencies.

Two coupled resonators have two modes where one resonator alone has one. When the pair is
symmetric about a plane, one mode of the pair has a magnetic wall (PMC: n×H = 0) on that
plane and the other an electric wall (PEC: n×E = 0); their frequencies f_m and f_e give the
coupling coefficient

    k = (f_m² − f_e²) / (f_m² + f_e²)

(J.-S. Hong and M. J. Lancaster, Microstrip Filters for RF/Microwave Applications, ch. 8,
from memory; common practice for coupled-resonator filters). Sign convention: k is as the
formula gives it, positive when the magnetic-wall mode lies higher (f_m > f_e), which is
electric coupling; magnetic coupling gives k < 0. Two boxes coupled through an iris in their
common wall (TE101, H tangential at the iris) couple magnetically: their magnetic-wall mode
lies lower and k < 0.

Pairing: a symmetric solve ([symmetry] AXIS = "both") solves the two classes apart; the
n-th mode of the magnetic-wall class is paired with the n-th mode of the electric-wall class
that differs from it only in the kind of that plane (order within each class). This is right
while the two resonators' modes stay in the same order in both classes, i.e. while
|k| is smaller than the relative spacing of the single resonator's modes; a pair whose
frequencies differ by more than MAX_PAIR_SPREAD is not reported.

A full model (no cut) may name two of its modes ([coupling] modes = [i, j]): then
k = (f_j² − f_i²) / (f_j² + f_i²), positive when mode j lies higher; the field alone does
not say which of the two has the magnetic wall, so the sign follows the order given.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

# Two modes whose frequencies differ by more than this share are not a coupled pair of
# the same resonance (k would exceed ~0.4, far beyond any filter coupling).
MAX_PAIR_SPREAD = 0.5


@dataclass(frozen=True)
class CouplingCoefficient:
    modes: tuple[int, int]       # the mode indices (1-based) of the pair in the result
    k: float
    f_first_hz: float            # f_m (symmetry classes) or f_i (named modes)
    f_second_hz: float           # f_e (symmetry classes) or f_j (named modes)
    source: str                  # "symmetry plane z" or "named modes"

    def as_dict(self) -> dict:
        row = asdict(self)
        row["modes"] = list(self.modes)
        return row


def coefficient(f_high_kind: float, f_other: float) -> float:
    """(f_a² − f_b²) / (f_a² + f_b²)."""
    return (f_high_kind**2 - f_other**2) / (f_high_kind**2 + f_other**2)


def _kinds(label: str) -> dict[str, str]:
    """"x:PMC z:PEC" -> {"x": "PMC", "z": "PEC"}."""
    return dict(part.split(":") for part in label.split())


def from_symmetry_classes(modes) -> list[CouplingCoefficient]:
    """The coupling coefficients of every plane whose two kinds were both solved: each
    magnetic-wall-class mode paired by order with the electric-wall-class mode whose class
    differs only on that plane. ``modes`` carry ``index``, ``frequency_hz`` and
    ``symmetry`` (the class label)."""
    by_class: dict[str, list] = {}
    for mode in sorted(modes, key=lambda m: m.frequency_hz):
        if mode.symmetry:
            by_class.setdefault(mode.symmetry, []).append(mode)
    found = []
    for label, members in by_class.items():
        kinds = _kinds(label)
        for axis, kind in kinds.items():
            if kind != "PMC":
                continue
            partner = " ".join(f"{a}:{'PEC' if a == axis else k}" for a, k in kinds.items())
            for magnetic, electric in zip(members, by_class.get(partner, [])):
                f_m, f_e = magnetic.frequency_hz, electric.frequency_hz
                if abs(f_m - f_e) > MAX_PAIR_SPREAD * min(f_m, f_e):
                    continue
                found.append(CouplingCoefficient(
                    modes=(magnetic.index, electric.index), k=coefficient(f_m, f_e),
                    f_first_hz=f_m, f_second_hz=f_e, source=f"symmetry plane {axis}"))
    return sorted(found, key=lambda c: c.modes)


def from_named_modes(modes, pair: tuple[int, int]) -> CouplingCoefficient:
    """k of the modes numbered ``pair`` (1-based indices of ``modes``); ValueError naming
    the missing one when the result has fewer modes."""
    by_index = {m.index: m for m in modes}
    for i in pair:
        if i not in by_index:
            raise ValueError(f"mode {i} was not solved (the result has {len(by_index)} "
                             "modes); ask for more modes")
    f_i, f_j = (by_index[i].frequency_hz for i in pair)
    return CouplingCoefficient(modes=tuple(pair), k=coefficient(f_j, f_i), f_first_hz=f_i,
                               f_second_hz=f_j, source="named modes")


def with_coupling(result, named: tuple[int, int] | None):
    """``result`` (a dataclass with ``modes`` and a ``coupling`` field) with the
    coefficients of its symmetry classes and of the ``named`` pair; InputError at
    coupling.modes when a named mode was not solved."""
    from dataclasses import replace

    from ..errors import InputError

    found = from_symmetry_classes(result.modes)
    if named is not None:
        try:
            found.append(from_named_modes(result.modes, named))
        except ValueError as exc:
            raise InputError(str(exc), field="coupling.modes") from None
    return replace(result, coupling=tuple(found)) if found else result
