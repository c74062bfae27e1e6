"""Anisotropic media as a case file writes them: a uniaxial crystal (two values and an axis)
or a full 3 x 3 tensor, turned into the constant tensor the forms take (fem.coefficients).

A uniaxial medium with unit axis a has

    ε = ε⊥ (I - a aᵀ) + ε∥ a aᵀ,

so that Ē·ε E = ε⊥ |E - (a·E) a|² + ε∥ |a·E|²: the stored energy splits exactly into a part
across the axis and a part along it, and each part has its own loss tangent,
ε⊥ (1 - j tan δ⊥) and ε∥ (1 - j tan δ∥) (common practice for sapphire and other uniaxial
crystals; e.g. J. Krupka et al., Meas. Sci. Technol. 10 (1999) 387, from memory). A full
tensor must be real symmetric, complex Hermitian (lossless, gyrotropic) or complex symmetric
(lossy, reciprocal), with a positive-definite Hermitian part (a passive medium).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .schema import Key, Range, check_range

AXIS_NAMES = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}


@dataclass(frozen=True)
class Uniaxial:
    """ε⊥, ε∥ (or μ⊥, μ∥) about a unit ``axis``, with a loss tangent for each direction."""

    perpendicular: float
    parallel: float
    axis: tuple[float, float, float]
    tan_delta_perpendicular: float = 0.0
    tan_delta_parallel: float = 0.0

    @property
    def projector(self) -> np.ndarray:
        """a aᵀ: the part of a vector along the axis."""
        a = np.asarray(self.axis, dtype=float)
        return np.outer(a, a)

    def tensor(self, *, lossy: bool = False) -> np.ndarray:
        """The real tensor, or with ``lossy`` ε⊥ (1 - j t⊥) (I - aaᵀ) + ε∥ (1 - j t∥) aaᵀ."""
        perpendicular, parallel = self.perpendicular, self.parallel
        if lossy:
            perpendicular = perpendicular * (1 - 1j * self.tan_delta_perpendicular)
            parallel = parallel * (1 - 1j * self.tan_delta_parallel)
        along = self.projector
        return perpendicular * (np.eye(3) - along) + parallel * along

    @property
    def lossy(self) -> bool:
        return self.tan_delta_perpendicular > 0 or self.tan_delta_parallel > 0


def unit_axis(value, field: str) -> tuple[float, float, float]:
    """"x", "y", "z" or three finite numbers, not all zero, as a unit vector."""
    if isinstance(value, str):
        if value not in AXIS_NAMES:
            raise InputError(f'must be "x", "y", "z" or three numbers, got {value!r}',
                             field=field)
        return AXIS_NAMES[value]
    if (not isinstance(value, list) or len(value) != 3
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value)):
        raise InputError('must be "x", "y", "z" or a list of three numbers', field=field)
    vector = np.array(value, dtype=float)
    length = float(np.linalg.norm(vector)) if np.all(np.isfinite(vector)) else math.nan
    if not length > 0 or not math.isfinite(length):
        raise InputError(f"the axis must be a finite vector that is not zero, got {value!r}",
                         field=field)
    return tuple(float(v) for v in vector / length)


def parse_uniaxial(spec: dict, value_key: Key, tan_key: Key, where: str,
                   tan_delta=None) -> Uniaxial:
    """{perpendicular, parallel, axis} (the values checked against ``value_key``'s range) and
    a tan_delta that is a number (both directions) or {perpendicular, parallel}."""
    allowed = ("perpendicular", "parallel", "axis")
    for name in spec:
        if name not in allowed:
            raise InputError(f"unknown key; a uniaxial value takes {', '.join(allowed)}",
                             field=f"{where}.{name}")
    for name in allowed:
        if name not in spec:
            raise InputError(f"a uniaxial value needs perpendicular, parallel and axis; "
                             f"{name} is missing", field=f"{where}.{name}")
    values = [_number(spec[name], value_key, f"{where}.{name}") for name in allowed[:2]]
    losses = _directional_tangents(tan_delta, tan_key, where.rsplit(".", 1)[0] + ".tan_delta")
    return Uniaxial(*values, axis=unit_axis(spec["axis"], f"{where}.axis"),
                    tan_delta_perpendicular=losses[0], tan_delta_parallel=losses[1])


def _directional_tangents(value, key: Key, field: str) -> tuple[float, float]:
    if value is None:
        return 0.0, 0.0
    if not isinstance(value, dict):
        number = _number(value, key, field)
        return number, number
    for name in value:
        if name not in ("perpendicular", "parallel"):
            raise InputError("unknown key; a loss tangent per direction takes perpendicular "
                             "and parallel", field=f"{field}.{name}")
    return tuple(_number(value.get(name, 0.0), key, f"{field}.{name}")
                 for name in ("perpendicular", "parallel"))


def _number(value, key: Key, field: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"must be a number, got {value!r}", field=field)
    check_range(value, key, field)
    return float(value)


def parse_tensor(rows, key: Key, field: str) -> np.ndarray:
    """[[..], [..], [..]]: numbers, or strings such as "0.5j" or "11.3-0.001j" for complex
    entries. Real: symmetric. Complex: Hermitian or symmetric. The Hermitian part's
    eigenvalues within ``key``'s range (so positive definite)."""
    if (not isinstance(rows, list) or len(rows) != 3
            or not all(isinstance(r, list) and len(r) == 3 for r in rows)):
        raise InputError("a tensor is three rows of three entries, [[..], [..], [..]]",
                         field=field)
    tensor = np.empty((3, 3), dtype=complex)
    for i, row in enumerate(rows):
        for j, entry in enumerate(row):
            tensor[i, j] = _entry(entry, f"{field}[{i}][{j}]")
    if not np.all(np.isfinite(tensor)):
        raise InputError("every entry of the tensor must be finite", field=field)
    scale = float(np.max(np.abs(tensor)))
    symmetric = np.allclose(tensor, tensor.T, rtol=0, atol=1e-12 * scale)
    hermitian = np.allclose(tensor, tensor.conj().T, rtol=0, atol=1e-12 * scale)
    if not np.any(tensor.imag):
        if not symmetric:
            raise InputError("a real tensor must be symmetric (entry [i][j] equal to [j][i])",
                             field=field)
        tensor = tensor.real
    elif not (symmetric or hermitian):
        raise InputError("a complex tensor must be Hermitian (lossless: [j][i] the conjugate "
                         "of [i][j]) or symmetric (lossy, reciprocal: [j][i] equal to [i][j])",
                         field=field)
    eigenvalues = np.linalg.eigvalsh((tensor + np.conj(tensor).T) / 2)
    rng: Range = key.range
    if not (eigenvalues[0] > 0 and rng.contains(float(eigenvalues[0]))
            and rng.contains(float(eigenvalues[-1]))):
        raise InputError(f"the tensor's Hermitian part must be positive definite with "
                         f"eigenvalues {rng.describe()}; they are "
                         f"{', '.join(f'{v:g}' for v in eigenvalues)}", field=field)
    return tensor


def _entry(value, field: str) -> complex:
    if isinstance(value, bool):
        raise InputError("must be a number or a complex number string such as \"0.5j\"",
                         field=field)
    if isinstance(value, (int, float)):
        return complex(value)
    if isinstance(value, str):
        try:
            return complex(value.replace(" ", ""))
        except ValueError:
            pass
    raise InputError(f"must be a number or a complex number string such as \"0.5j\", got "
                     f"{value!r}", field=field)


def _plain(value):
    """A number or tensor as JSON data: tensors as nested lists, complex entries as
    [real, imaginary]."""
    if np.ndim(value) == 0:
        value = complex(value)
        return value.real if not value.imag else [value.real, value.imag]
    return [_plain(v) for v in value]


def material_summary(material) -> dict:
    """A region's material for modes.json's ``model``: eps_r, mu_r, tan_delta as before
    (an expression as "expression", a tensor as rows) and, where set, the uniaxial
    description and the magnetic loss tangent."""
    out = {"eps_r": "expression" if callable(material.eps_r) else _plain(material.eps_r),
           "mu_r": _plain(material.mu_r), "tan_delta": material.tan_delta}
    if material.uniaxial is not None:
        u = material.uniaxial
        out["uniaxial"] = {"perpendicular": u.perpendicular, "parallel": u.parallel,
                           "axis": list(u.axis),
                           "tan_delta_perpendicular": u.tan_delta_perpendicular,
                           "tan_delta_parallel": u.tan_delta_parallel}
    if material.mu_tan_delta:
        out["mu_tan_delta"] = material.mu_tan_delta
    return out


def check_mirror_symmetry(materials: dict, cut_axes) -> None:
    """A symmetry cut normal to an axis needs every tensor unchanged by that mirror
    (R ε Rᵀ = ε with R = I - 2 n nᵀ): a crystal whose axis is tilted against the cut plane
    breaks the part's symmetry, and the cut model would solve another part."""
    for name, material in materials.items():
        for key, tensor in (("eps_r", material.eps_tensor), ("mu_r", material.mu_tensor)):
            if tensor is None:
                continue
            for axis in cut_axes:
                mirror = np.diag([-1.0 if c == axis else 1.0 for c in "xyz"])
                if not np.allclose(mirror @ tensor @ mirror, tensor, rtol=0,
                                   atol=1e-12 * float(np.max(np.abs(tensor)))):
                    raise InputError(f"the tensor is not symmetric about the cut plane normal "
                                     f"to {axis}, so the part is not either: drop "
                                     f"[symmetry] {axis}, or align the axis with the cut",
                                     field=f"regions.{name}.{key}")
