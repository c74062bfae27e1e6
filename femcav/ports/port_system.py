"""The terminated problem at one iterate of the loaded solve: K, M and the kernel basis over
the space whose port faces are restricted to their terminated modes (ports.termination).

With homogeneous port faces the mode patterns do not depend on the frequency, so this is one
problem for the whole solve. A layered face's hybrid patterns do (ports.layered_face): the
face is solved again at the real part of each iterate's λ and the part terminated with
those patterns. K and M are then assembled once over the unrestricted space and reduced by
each termination's prolongation (the restricted DOFs are a recombination of kept DOFs only),
so an iterate costs the face solves and a sparse triple product, no new assembly.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..fem.assembly import assemble
from ..fem.gradient import kernel_basis
from ..fem.space import EdgeSpace
from .cross_section import facet_filling, is_layered, port_facets, port_modes
from .layered_face import LayeredFace, layered_face
from .termination import PortTermination, terminate


@dataclass(frozen=True)
class TerminatedProblem:
    K: sp.csr_matrix
    M: sp.csr_matrix
    G: sp.csr_matrix            # kernel basis over the restricted DOFs
    termination: PortTermination


def port_face(space: EdgeSpace, name: str, terminated: int):
    """PortModes of a homogeneous face, or the LayeredFace of a layered one."""
    eps, inverse_mu = facet_filling(space, name, port_facets(space, name))
    if is_layered(eps, inverse_mu):
        return layered_face(space, name, terminated)
    return port_modes(space, name, terminated)


class PortSystem:
    def __init__(self, space: EdgeSpace, faces: list):
        self.space, self.faces = space, faces
        self.layered = any(isinstance(f, LayeredFace) for f in faces)
        self._cache: dict[float, TerminatedProblem] = {}
        if self.layered:
            self._full = assemble(space)
        else:
            termination = terminate(space, faces)
            K, M = assemble(termination.space)
            self._fixed = TerminatedProblem(K, M, kernel_basis(termination.space), termination)

    def at(self, value: complex) -> TerminatedProblem:
        """The terminated problem for the iterate λ = ``value``."""
        if not self.layered:
            return self._fixed
        reference = float(np.real(value))
        if reference not in self._cache:
            ports = [f.port_at(reference) if isinstance(f, LayeredFace) else f
                     for f in self.faces]
            termination = terminate(self.space, ports)
            # the restricted DOFs as combinations of the unrestricted space's kept DOFs
            Q = termination.space.constraint.P[self.space.constraint.kept].tocsc()
            K, M = (sp.csr_matrix(Q.T @ A @ Q) for A in self._full)
            self._cache = {reference: TerminatedProblem(K, M, kernel_basis(termination.space),
                                                        termination)}
        return self._cache[reference]
