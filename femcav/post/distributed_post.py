"""A distributed solve's per-mode integrals, each process over the elements it assembled.

The Q factors by perturbation (post.losses) and the resolution check (post.resolution) are
sums over elements and wall faces: every process evaluates the mode on its own METIS part
(femcav.fem.distributed_assembly) and the partial sums are added over the processes
(MPI allreduce), so the volume work is split instead of repeated on every process. Only
surface data travel whole: each metal face's loss (for the per-wall shares and
wall_loss.vtu) is gathered, a few numbers per boundary face. The dielectric terms of
uniaxial regions and the magnetic loss tangent (post.material_losses) are still evaluated
over the whole mesh on every process.
"""

from __future__ import annotations

import math

import numpy as np

from ..fem.quadrature_fields import quadrature_map
from .losses import (
    electric_energy_by_region,
    face_power,
    has_losses,
    losses_from_integrals,
    metal_faces,
)
from .resolution import edge_space_energy, edge_space_scales, resolution_from_sums, \
    resolution_sums


class OwnElementsPost:
    """The post-processing inputs of one process: its elements, their quadrature map and
    metal faces; ``losses`` and ``resolution`` are collective (every process, same modes,
    same order)."""

    def __init__(self, space, elements: np.ndarray, comm):
        self.space, self.comm = space, comm
        self.part = (elements, quadrature_map(space, elements))
        self.lossy = has_losses(space)
        self.faces = metal_faces(space, elements) if self.lossy else None
        self.metal = any(comm.allgather(self.faces is not None))
        sizes, index = edge_space_scales(space)
        self.optical_size = (sizes * index)[elements]
        self.largest = max(comm.allgather(float(np.max(self.optical_size, initial=0.0))))

    @classmethod
    def of(cls, space) -> "OwnElementsPost":
        from ..eigen.petsc_stack import load
        from ..fem.distributed_assembly import element_parts

        stack = load()
        parts = element_parts(stack, space.mesh)
        return cls(space, np.flatnonzero(parts == stack.rank), stack.comm)

    def losses(self, space, dofs: np.ndarray, frequency_hz: float):
        omega = 2 * math.pi * frequency_hz
        own = electric_energy_by_region(space, dofs, omega, self.part)
        names = list(own)
        summed = self.comm.allreduce(np.array([own[name] for name in names]))
        walls = self._wall_faces(dofs, omega) if self.metal else None
        return losses_from_integrals(space, dofs, frequency_hz,
                                     dict(zip(names, map(float, summed))), walls)

    def _wall_faces(self, dofs: np.ndarray, omega: float) -> tuple:
        """(wall name, power, area) of every metal face, ascending facet as in
        metal_faces, gathered from the processes that own them."""
        faces = self.faces
        own = ((np.empty(0, dtype=np.int64), np.empty(0, dtype=str), np.empty(0), np.empty(0))
               if faces is None else
               (faces.facets, faces.wall, face_power(self.space, faces, dofs, omega),
                faces.area))
        facets, wall, power, area = (np.concatenate(column)
                                     for column in zip(*self.comm.allgather(own)))
        order = np.argsort(facets, kind="stable")
        return wall[order], power[order], area[order]

    def resolution(self, space, dofs: np.ndarray, frequency_hz: float, k0_squared: float):
        energy = edge_space_energy(space, dofs, k0_squared, self.part)
        sums = resolution_sums(space.order, self.optical_size, self.largest, energy)
        weighted, total = self.comm.allreduce(np.array(sums))
        return resolution_from_sums(frequency_hz, space.order, self.largest, weighted, total)
