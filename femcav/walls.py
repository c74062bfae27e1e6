"""Wall kinds and which field form treats them as essential."""

from __future__ import annotations

from dataclasses import dataclass

PEC, PMC, METAL = "pec", "pmc", "metal"
# a planar face where a waveguide leaves the part: its lowest modes are terminated by their
# modal admittance, the others see a short (femcav.ports); natural in the E form
PORT = "port"
KINDS = (PEC, PMC, METAL, PORT)
# A boundary face that no wall names is metal: the enclosure of a cavity (common practice).
DEFAULT_KIND = PEC


@dataclass(frozen=True)
class Wall:
    """A wall condition. A metal wall is PEC for the lossless mode and adds loss through its
    surface resistance (conductivity in S/m, optional rms roughness in m; or the surface
    resistance itself in ohms; or a superconducting ``metal`` at ``temperature`` (K) with its
    residual resistance in ohms: femcav.wall_resistance)."""

    kind: str = DEFAULT_KIND
    conductivity: float | None = None
    roughness: float | None = None
    metal: str | None = None   # the preset name, when the conductivity came from one
    surface_resistance: float | None = None    # ohms, the same at every frequency
    temperature: float | None = None           # K, of a superconducting metal
    residual_resistance: float | None = None   # ohms, added to a superconductor's BCS part
    port_modes: int = 1    # a port: how many of its lowest waveguide modes are terminated


def essential_kinds(form: str) -> tuple[str, ...]:
    """The wall kinds whose condition is imposed on the space (n x field = 0) in ``form``.

    E form: n x E = 0 on PEC (and metal) walls is essential, PMC is natural. H form: the
    reverse.
    """
    return {"E": (PEC, METAL), "H": (PMC,)}[form]


def kind_of(walls: dict[str, Wall], name: str) -> str:
    """The kind of the wall ``name``; an unnamed or unlisted boundary is DEFAULT_KIND."""
    return walls.get(name, Wall(DEFAULT_KIND)).kind


class WallKinds:
    """``wall_kind`` for a model (3D or axisymmetric) with a ``walls`` mapping."""

    walls: dict[str, Wall]

    def wall_kind(self, wall_name: str) -> str:
        return kind_of(self.walls, wall_name)
