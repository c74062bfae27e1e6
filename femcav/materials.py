"""Materials per region: relative permittivity (a number, a function of position, or a
constant 3x3 tensor) and relative permeability (a number or a constant 3x3 tensor).

Isotropic loss is a loss tangent: eps_r (1 - j tan_delta). A complex scalar eps_r is taken
apart into that pair, so that every isotropic material is one real eps_r and one tan δ, as
the perturbation formulas for Q want it. Tensors may be complex (lossy crystals, gyrotropic
ferrites): they enter the operator as they are (fem.coefficients), and the solve then finds
complex frequencies.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Union

import numpy as np

from .anisotropy import Uniaxial
from .errors import InputError
from .schema import REGION, check_range

# A permittivity is a number or a vectorised callable f(x, y, z) of coordinates in metres,
# or a constant tensor (3x3 nested sequence or array)
Permittivity = Union[float, complex, Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray],
                     np.ndarray]


@dataclass(frozen=True)
class Material:
    """eps_r (real part) and mu_r; ``tan_delta`` is the dielectric loss tangent, so that the
    complex permittivity is eps_r (1 - j tan_delta) with time dependence e^{jωt}. A tensor
    eps_r or mu_r is kept as a tuple of rows (hashable); ``eps_tensor``/``mu_tensor`` give
    it as an array."""

    eps_r: Permittivity = 1.0
    mu_r: float = 1.0
    tan_delta: float = 0.0
    # a uniaxial eps_r (femcav.anisotropy): eps_r is then its real tensor, and its two loss
    # tangents replace tan_delta
    uniaxial: Uniaxial | None = None
    # magnetic loss tangent: mu_r (1 - j mu_tan_delta); a complex scalar mu_r becomes this
    mu_tan_delta: float = 0.0

    def __post_init__(self):
        if self.uniaxial is not None:
            if self.tan_delta:
                raise InputError("a uniaxial eps_r carries its own loss tangents",
                                 field="tan_delta")
            object.__setattr__(self, "eps_r", self.uniaxial.tensor())
        for name in ("eps_r", "mu_r"):
            value = getattr(self, name)
            if callable(value) or np.ndim(value) == 0:
                continue
            tensor = np.asarray(value)
            if tensor.shape != (3, 3) or not np.issubdtype(tensor.dtype, np.number):
                raise InputError(f"{name} must be a number or a 3 x 3 tensor, got shape "
                                 f"{tensor.shape}", field=name)
            object.__setattr__(self, name, tuple(tuple(row) for row in tensor.tolist()))
        if np.iscomplexobj(self.eps_r) and np.ndim(self.eps_r) == 0:
            eps = complex(self.eps_r)
            if eps.real <= 0:
                raise InputError(f"a complex eps_r needs a positive real part, got {eps}",
                                 field="eps_r")
            if self.tan_delta:
                raise InputError("give the loss either as a complex eps_r or as tan_delta, "
                                 "not both", field="tan_delta")
            object.__setattr__(self, "eps_r", eps.real)
            object.__setattr__(self, "tan_delta", -eps.imag / eps.real)
        if np.iscomplexobj(self.mu_r) and np.ndim(self.mu_r) == 0:
            mu = complex(self.mu_r)
            if mu.real <= 0 or self.mu_tan_delta:
                raise InputError("a complex mu_r needs a positive real part, and no "
                                 "mu_tan_delta beside it", field="mu_r")
            object.__setattr__(self, "mu_r", mu.real)
            object.__setattr__(self, "mu_tan_delta", -mu.imag / mu.real)

    @property
    def lossy(self) -> bool:
        """Any loss tangent set: dielectric (one, or per direction) or magnetic."""
        return bool(self.tan_delta > 0 or self.mu_tan_delta > 0
                    or (self.uniaxial is not None and self.uniaxial.lossy))

    def lossy_eps(self, eps):
        """eps_r with its loss inside: eps (1 - j tan δ), or the uniaxial tensor with a loss
        tangent per direction (``eps``: this material's eps_r at some points)."""
        if self.uniaxial is not None:
            return self.uniaxial.tensor(lossy=True)
        return eps * (1 - 1j * self.tan_delta)

    @property
    def is_uniform(self) -> bool:
        return not callable(self.eps_r)

    @property
    def is_isotropic(self) -> bool:
        return self.eps_tensor is None and self.mu_tensor is None

    @property
    def eps_tensor(self) -> np.ndarray | None:
        return None if callable(self.eps_r) or np.ndim(self.eps_r) == 0 \
            else np.array(self.eps_r)

    @property
    def mu_tensor(self) -> np.ndarray | None:
        return None if np.ndim(self.mu_r) == 0 else np.array(self.mu_r)

    def eps_at(self, x: np.ndarray, y: np.ndarray, z: np.ndarray) -> np.ndarray:
        """The real, isotropic eps_r at the given points (arrays of one shape); for a tensor,
        the real part of its trace / 3 (where one number per point is enough)."""
        if callable(self.eps_r):
            value = np.asarray(self.eps_r(x, y, z), dtype=float)
            return np.broadcast_to(value, np.shape(x))
        tensor = self.eps_tensor
        value = float(self.eps_r) if tensor is None else float(np.trace(tensor).real) / 3
        return np.full(np.shape(x), value)

    @property
    def mu_scalar(self) -> float:
        """mu_r, or for a tensor the real part of its trace / 3 (for estimates such as mesh
        sizes, never for a field)."""
        tensor = self.mu_tensor
        return float(self.mu_r) if tensor is None else float(np.trace(tensor).real) / 3

    def require_isotropic(self, region: str, what: str = "this output") -> None:
        """Refuse a tensor eps_r or mu_r where ``what`` (a field output, the body-of-
        revolution solver) needs one number per point: not available for anisotropic
        regions yet."""
        for name, tensor in (("eps_r", self.eps_tensor), ("mu_r", self.mu_tensor)):
            if tensor is not None:
                raise InputError(f"{what} is not available yet for a region with a tensor "
                                 f"{name}", field=f"regions.{region}.{name}")

    def check(self, points: np.ndarray, *, field: str) -> None:
        """Refuse eps_r, mu_r or tan_delta outside their ranges (femcav.schema) or not
        finite; ``points`` is (n, 3), where an eps_r expression is evaluated. A tensor's
        Hermitian part must be positive definite (a passive, stable medium)."""
        check_range(self.tan_delta, REGION.keys["tan_delta"], f"{field}.tan_delta")
        check_range(self.mu_tan_delta, REGION.keys["mu_tan_delta"], f"{field}.mu_tan_delta")
        for name, tensor in (("eps_r", self.eps_tensor), ("mu_r", self.mu_tensor)):
            if tensor is not None:
                check_tensor(tensor, field=f"{field}.{name}")
        if self.mu_tensor is None:
            check_range(self.mu_r, REGION.keys["mu_r"], f"{field}.mu_r")
        if self.eps_tensor is None:
            check_permittivity(self.eps_at(points[:, 0], points[:, 1], points[:, 2]),
                               points.T, field=f"{field}.eps_r")


def check_tensor(tensor: np.ndarray, *, field: str) -> None:
    if not np.all(np.isfinite(tensor)):
        raise InputError("every entry of the tensor must be finite", field=field)
    hermitian = (tensor + tensor.conj().T) / 2
    lowest = float(np.linalg.eigvalsh(hermitian)[0])
    if lowest <= 0:
        raise InputError(f"the tensor's Hermitian part must be positive definite; its lowest "
                         f"eigenvalue is {lowest:g}", field=field)


def check_permittivity(eps: np.ndarray, coordinates, *, field: str) -> None:
    """Refuse eps_r values (an expression's, at mesh nodes or quadrature points) outside the
    range of schema.REGION's eps_r or not finite; ``coordinates``: x, y, z arrays like eps."""
    rng = REGION.keys["eps_r"].range
    eps = np.asarray(eps, dtype=float)
    with np.errstate(invalid="ignore"):
        bad = ~(np.isfinite(eps) & (eps >= rng.low) & (eps <= rng.high))
    if np.any(bad):
        first = int(np.argmax(bad.reshape(-1)))
        x, y, z = (float(np.asarray(c, dtype=float).reshape(-1)[first]) for c in coordinates)
        raise InputError(
            f"eps_r must be {rng.describe()} everywhere in the region; it is "
            f"{eps.reshape(-1)[first]:g} at (x, y, z) = ({x:g}, {y:g}, {z:g}) m", field=field)


VACUUM = Material()


def tan_delta_by_cell(materials: dict[str, Material], region_names: dict[str, int],
                      cell_region: np.ndarray, like: np.ndarray) -> np.ndarray:
    """tan δ of each cell's material, broadcast like ``like`` (cells first, e.g. the
    quadrature-point arrays of a space)."""
    out = np.zeros_like(like, dtype=float)
    for name, rid in region_names.items():
        out[cell_region == rid] = materials[name].tan_delta
    return out
