"""Named dielectric and magnetic materials for ``material = "NAME"`` in a region.

Each entry is a set of region keys as a case file writes them, merged under the region's
own keys (a key given in the region overrides the library's), with where its numbers come
from. All values are typical figures for the material near 10 GHz, **from memory** unless
said otherwise, and vary from grade to grade and supplier to supplier: for a design, measure
the material or take the supplier's data. Loss tangents of good crystals and ceramics fall
with temperature and depend on frequency (tan δ roughly ∝ f for sapphire at room
temperature); the entries hold one value.
"""

from __future__ import annotations

from dataclasses import dataclass

from .errors import InputError


@dataclass(frozen=True)
class LibraryMaterial:
    keys: dict          # region keys, as in a case file
    source: str


_C_AXIS = [0, 0, 1]     # the crystal's c axis along z unless the region gives another

LIBRARY: dict[str, LibraryMaterial] = {
    # J. Krupka, K. Derzakowski, M. Tobar, J. Hartnett, R. G. Geyer, Meas. Sci. Technol. 10
    # (1999) 387 (whispering-gallery measurements of single-crystal sapphire), from memory:
    # ε⊥ 9.3899, ε∥ 11.5866 at 296 K; loss tangents of the order of 1e-5 near 10 GHz;
    # (1/ε) dε/dT about +1.1e-4 /K (⊥) and +1.4e-4 /K (∥) at room temperature (one mean
    # value here); linear expansion about 5 to 6 ppm/K (one mean value).
    "sapphire": LibraryMaterial(
        {"eps_r": {"perpendicular": 9.39, "parallel": 11.59, "axis": _C_AXIS},
         "tan_delta": {"perpendicular": 9e-6, "parallel": 5e-6},
         "tce": "120 ppm/K", "expansion": "5.5 ppm/K"},
        "single-crystal Al2O3, c axis along z, about 296 K; Krupka et al. 1999, from memory"),
    # Same source, at liquid-helium temperature: ε⊥ 9.2725, ε∥ 11.3486 (4.2 K); loss tangents
    # of 1e-9 and below; permittivity and size nearly constant with temperature there.
    "sapphire_cryogenic": LibraryMaterial(
        {"eps_r": {"perpendicular": 9.2725, "parallel": 11.3486, "axis": _C_AXIS},
         "tan_delta": {"perpendicular": 1e-9, "parallel": 1e-9},
         "tce": "0 ppm/K", "expansion": "0 ppm/K"},
        "single-crystal Al2O3 near 4 K, c axis along z; Krupka et al. 1999, from memory"),
    # Polycrystalline 99.5 % alumina: ε_r 9.7 to 9.9, tan δ 1e-4 (ordinary) to 2e-5 (best),
    # τf about -60 ppm/K, so (1/ε) dε/dT ≈ -2 (τf + α) ≈ +110 ppm/K; α about 7 ppm/K.
    "alumina": LibraryMaterial(
        {"eps_r": 9.8, "tan_delta": 1e-4, "tce": "110 ppm/K", "expansion": "7 ppm/K"},
        "99.5 % Al2O3 ceramic; common practice, from memory"),
    # PTFE: ε_r 2.05 to 2.1, tan δ 1e-4 to 3e-4; its density, and with it ε_r, falls as it
    # expands (about 100 to 200 ppm/K near room temperature, more across its 19 °C phase
    # change): (1/ε) dε/dT of a few hundred ppm/K, negative.
    "ptfe": LibraryMaterial(
        {"eps_r": 2.08, "tan_delta": 2e-4, "tce": "-300 ppm/K", "expansion": "120 ppm/K"},
        "polytetrafluoroethylene, away from its 19 °C transition; from memory"),
    # Fused quartz (amorphous SiO2): ε_r 3.78, tan δ 1e-4 (ordinary) to 1e-5 (best grades),
    # (1/ε) dε/dT about +13 ppm/K, expansion 0.55 ppm/K.
    "fused_quartz": LibraryMaterial(
        {"eps_r": 3.78, "tan_delta": 1e-4, "tce": "13 ppm/K", "expansion": "0.55 ppm/K"},
        "amorphous SiO2; from memory"),
    # An illustration of a lossy magnetic material (a ferrite tile well above its
    # gyromagnetic resonance, unbiased): the numbers are of the right order, not a product's.
    "ferrite_example": LibraryMaterial(
        {"eps_r": 13.0, "tan_delta": 5e-4, "mu_r": 1.2, "mu_tan_delta": 0.05,
         "expansion": "9 ppm/K"},
        "illustrative unbiased microwave ferrite; order-of-magnitude values, not a product"),
}


def with_library_values(spec: dict, where: str) -> dict:
    """The region table ``spec`` with its named material's keys under its own (a region
    key overrides the library's; a uniaxial library value is replaced whole)."""
    name = spec.get("material")
    if name is None:
        return spec
    if name not in LIBRARY:      # the schema checked it; a direct caller may not have
        raise InputError(f"unknown material {name!r}; known: {', '.join(LIBRARY)}",
                         field=f"{where}.material")
    merged = {**LIBRARY[name].keys, **spec}
    if "eps_r" in spec and "tan_delta" not in spec and isinstance(
            LIBRARY[name].keys.get("tan_delta"), dict) and not isinstance(spec["eps_r"], dict):
        merged.pop("tan_delta")   # directional tangents belong to the library's uniaxial eps_r
    del merged["material"]
    return merged
